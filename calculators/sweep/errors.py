"""The sweep's refusals: each an :class:`EvaluationError` whose ``loc`` names the field."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

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
    """The product of the candidate lists is above the maximum; ``counts`` gives each list's length
    (by the request's list name), ``combinations`` their product and ``maximum`` the limit."""

    title = "Too many combinations"

    def __init__(self, counts: Mapping[str, int], maximum: int):
        self.counts = dict(counts)
        self.combinations = math.prod(self.counts.values())
        self.maximum = maximum
        asked = " × ".join(f"{name} ({n:,})" for name, n in self.counts.items())
        super().__init__(
            f"the request asks for {asked} = {self.combinations:,} combinations, more than the "
            f"maximum of {maximum:,}; shorten a list of candidates",
            loc=(),
        )


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
