"""The sweep's refusals: each an :class:`EvaluationError` whose ``loc`` names the field."""

from __future__ import annotations

from collections.abc import Sequence

from pydantic import ValidationError

from calculators.errors import CalculationError, RigbenchError


class EvaluationError(RigbenchError, ValueError):
    """An evaluation request that cannot be answered; ``loc`` names the offending field."""

    status = 422
    title = "Invalid evaluation"

    def __init__(self, message: str, loc: Sequence[str | int] = ()):
        super().__init__(message)
        self.loc = tuple(loc)


class UnknownOutput(EvaluationError):
    title = "Unknown output"


class NotNumeric(EvaluationError):
    title = "Output is not numeric"


class ContradictoryBounds(EvaluationError):
    title = "Contradictory bounds"


class TooManyCombinations(EvaluationError):
    """The product of the candidate lists is above the maximum: ``combinations`` is how many the
    request asked for and ``maximum`` the limit; the message shows the product, factor by factor
    (``product``, e.g. ``"3 × (2 × 2) × 4 × 1"``), and which list each factor is."""

    title = "Too many combinations"

    def __init__(self, product: str, combinations: int, maximum: int, *, factors: int = 1,
                 eyepieces: int = 0):
        self.combinations = combinations
        self.maximum = maximum
        super().__init__(
            f"the request asks for {product} = {combinations:,} combinations "
            f"({product_legend(factors, eyepieces)}), more than the maximum of {maximum:,}; "
            "shorten a list of candidates",
            loc=(),
        )


def product_legend(factors: int = 1, eyepieces: int = 0) -> str:
    """Which list each factor of the product is, in the product's own grouping."""
    cameras = "cameras × binning factors" if factors > 1 else "cameras"
    if eyepieces:
        cameras = f"({cameras} + eyepieces)"
    elif factors > 1:
        cameras = f"({cameras})"
    return f"telescopes × {cameras} × trains × mounts"


class FrontTooLarge(EvaluationError):
    title = "Front too large"


class InvalidCalculatorParams(EvaluationError):
    """Params for a calculator failed validation; ``errors`` holds pydantic's error list."""

    title = "Invalid calculator params"

    def __init__(self, calculator: str, error: ValidationError):
        self.errors = [
            {**e, "loc": ("params", calculator, *e["loc"])}
            for e in error.errors(include_url=False, include_context=False, include_input=False)
        ]
        super().__init__(
            f"params for {calculator!r}: "
            + "; ".join(f"{'.'.join(map(str, e['loc'][2:])) or '(root)'}: {e['msg']}"
                        for e in self.errors),
            loc=("params", calculator),
        )


class CalculatorFailed(EvaluationError, CalculationError):
    """A calculator refused or failed on these components (e.g. prices in several currencies)."""

    title = "Cannot compute"
