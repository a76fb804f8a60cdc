"""Run calculators on a batch, one at a time, so that one failing calculator spoils only its own result."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from pydantic import BaseModel, ValidationError

from calculators.base import Calculator
from calculators.batch import RigBatch
from calculators.errors import RigbenchError


class InvalidParams(RigbenchError, ValueError):
    """Params for a calculator failed validation; ``errors`` holds pydantic's error list."""

    status = 422
    title = "Invalid calculator params"

    def __init__(self, calculator: str, error: ValidationError):
        self.errors = [
            {**e, "loc": ("params", calculator, *e["loc"])}
            for e in error.errors(include_url=False, include_context=False, include_input=False)
        ]
        super().__init__(f"params for {calculator!r}: " + "; ".join(
            f"{'.'.join(map(str, e['loc'][2:])) or '(root)'}: {e['msg']}" for e in self.errors
        ))


def parse_params(calculator: Calculator, raw: Mapping[str, Any] | BaseModel | None) -> BaseModel:
    if isinstance(raw, calculator.Params):
        return raw
    try:
        return calculator.Params.model_validate(raw or {})
    except ValidationError as exc:
        raise InvalidParams(calculator.name, exc) from None


@dataclass
class Run:
    """What one calculator produced for a batch: arrays broadcast to the batch's shape."""

    calculator: Calculator
    values: dict[str, np.ndarray] = field(default_factory=dict)
    units: dict[str, str] = field(default_factory=dict)
    error: str | None = None


def run(calculator: Calculator, batch: RigBatch, params: BaseModel) -> Run:
    """Compute and check one calculator; any failure becomes ``Run.error`` rather than an exception."""
    result = Run(calculator)
    try:
        raw = calculator.compute(batch, params)
        units = calculator.output_units(batch, params)
        result.values = {o.name: _checked(o, raw, batch.shape) for o in calculator.outputs}
        result.units = {o.name: units.get(o.name, o.unit) for o in calculator.outputs}
    except RigbenchError as exc:
        result.values, result.error = {}, str(exc)
    except Exception as exc:  # isolation: a broken calculator must not take the request down
        result.values, result.error = {}, f"{calculator.name} failed: {type(exc).__name__}: {exc}"
    return result


def _checked(output, raw: Mapping[str, Any], shape: tuple[int, ...]) -> np.ndarray:
    if output.name not in raw:
        raise ValueError(f"did not return its declared output {output.name!r}")
    values = np.asarray(raw[output.name])
    try:
        values = np.broadcast_to(values, shape)
    except ValueError:
        raise ValueError(
            f"output {output.name!r} has shape {values.shape}, which does not fit the batch's {shape}"
        ) from None
    if output.kind == "number":
        if not np.issubdtype(values.dtype, np.number):
            raise ValueError(f"output {output.name!r} is not numeric")
        if not output.nullable and not np.isfinite(values).all():
            raise ValueError(f"output {output.name!r} has non-finite values but is declared finite")
    return values


def to_json_values(values: np.ndarray) -> list:
    """A 1-D array as JSON-ready values: NaN and infinities become null."""
    flat = np.ravel(values)
    if np.issubdtype(flat.dtype, np.floating):
        out = flat.astype(object)
        out[~np.isfinite(flat)] = None
        return out.tolist()
    return flat.tolist()
