"""Checking an evaluation request and planning it: the baseline, stored ids, the
``"<calculator>.<output>"`` keys of constraints and objectives, their bounds and directions, and
each needed calculator's validated params."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
from pydantic import BaseModel, ValidationError

from calculators.base import Calculator, Output
from calculators.batch import AXES
from calculators.evaluation_schemas import Bounds, Indices
from calculators.sweep.detectors import Entries
from calculators.sweep.errors import (
    ContradictoryBounds,
    EvaluationError,
    InvalidCalculatorParams,
    NotNumeric,
    UnknownOutput,
)

# Bounds used for a side left open: comparing with the largest finite float also refuses NaN and
# infinities, so a feasible row's constrained values are always finite numbers.
_LARGEST = float(np.finfo(np.float64).max)


@dataclass(frozen=True)
class OutputKey:
    """A resolved ``"<calculator>.<output>"`` key."""

    key: str
    calculator: str
    output: Output


@dataclass
class Plan:
    """One calculator to run: its params and the outputs the evaluation reads."""

    calculator: Calculator
    params: BaseModel
    outputs: list[str] = field(default_factory=list)
    first_loc: tuple[str, str] = ("objectives", "")


def baseline_indices(
    baseline: Indices | Sequence[int] | None, sizes: tuple[int, ...], entries: Entries | None = None,
) -> tuple[int, ...]:
    """The baseline combination's four indices into the batch's axes (0, 0, 0, 0 by default), each
    checked. ``sizes`` is the batch's shape; an :class:`Indices` names a camera, binning factor or
    eyepiece, mapped to the camera axis's entry through ``entries`` (a plain sequence gives the
    batch's own axis indices)."""
    if baseline is None:
        return (0, 0, 0, 0)
    if isinstance(baseline, Indices):
        values = tuple(getattr(baseline, kind) for kind in AXES)
        if entries is not None:
            values = (values[0], _entry(baseline, entries), *values[2:])
    else:
        values = tuple(baseline)
        if len(values) != len(AXES):
            raise EvaluationError(
                f"baseline: give one index per kind ({', '.join(AXES)})", loc=("baseline",)
            )
    for kind, index, size in zip(AXES, values, sizes):
        if isinstance(index, bool) or not isinstance(index, (int, np.integer)) \
                or not 0 <= index < size:
            raise EvaluationError(
                f"baseline.{kind}: {index!r} is not an index into the {size} {kind}s "
                f"(0..{size - 1})",
                loc=("baseline", kind),
            )
    return tuple(int(i) for i in values)


def _entry(baseline: Indices, entries: Entries) -> int:
    """The camera axis's entry of the baseline's camera and binning, or of its eyepiece."""
    n_cameras, n_eyepieces = entries.camera_count, entries.eyepiece_count
    given = baseline.model_fields_set
    if baseline.eyepiece is not None:
        if baseline.eyepiece >= n_eyepieces:
            raise EvaluationError(
                f"baseline.eyepiece: {baseline.eyepiece} is not an index into the {n_eyepieces} "
                "eyepieces" + (f" (0..{n_eyepieces - 1})" if n_eyepieces else ""),
                loc=("baseline", "eyepiece"))
        for kind in ("camera", "binning"):
            if kind in given and getattr(baseline, kind) is not None:
                raise EvaluationError(
                    f"baseline.{kind}: a visual combination (an eyepiece) has no {kind}; "
                    "leave it out", loc=("baseline", kind))
        return entries.entry(None, None, baseline.eyepiece)
    if not n_cameras or baseline.camera is None:
        if "camera" in given and baseline.camera is not None:
            raise EvaluationError("baseline.camera: the request lists no cameras; name an eyepiece",
                                  loc=("baseline", "camera"))
        if n_cameras:
            raise EvaluationError("baseline: name a camera or an eyepiece", loc=("baseline",))
        return 0  # the first eyepiece
    if baseline.camera >= n_cameras:
        raise EvaluationError(
            f"baseline.camera: {baseline.camera} is not an index into the {n_cameras} cameras "
            f"(0..{n_cameras - 1})", loc=("baseline", "camera"))
    factor = entries.factors[0] if baseline.binning is None else baseline.binning
    if factor not in entries.factors:
        raise EvaluationError(
            f"baseline.binning: {factor} is not one of the request's binning factors "
            f"({', '.join(map(str, entries.factors))})", loc=("baseline", "binning"))
    return entries.entry(baseline.camera, factor, None)


def stored_ids(
    ids: Mapping[str, Sequence[int | None]] | None, sizes
) -> dict[str, list[int | None]]:
    """Stored ids per kind, aligned with the candidate lists (None where not given)."""
    out = {kind: [None] * size for kind, size in zip(AXES, sizes)}
    for kind, given in (ids or {}).items():
        if kind not in out:
            raise ValueError(f"ids: unknown kind {kind!r}; expected one of {', '.join(AXES)}")
        given = list(given)
        if len(given) != len(out[kind]):
            raise ValueError(f"ids[{kind!r}] has {len(given)} entries for {len(out[kind])} {kind}s")
        out[kind] = given
    return out


def resolve_key(key: str, where: str, calculators: Mapping[str, Calculator]) -> OutputKey:
    """Resolve ``"<calculator>.<output>"``; refuse unknown names and non-numeric outputs."""
    name, dot, output = key.partition(".")
    loc = (where, key)
    if not dot or not name or not output:
        raise UnknownOutput(
            f'{where}: {key!r} is not of the form "<calculator>.<output>", '
            'e.g. "light_grasp.clear_area_mm2"',
            loc=loc,
        )
    calculator = calculators.get(name)
    if calculator is None:
        known = ", ".join(sorted(calculators)) or "none"
        raise UnknownOutput(
            f"{where}: {key!r} names no loaded calculator {name!r}; available: {known}", loc=loc
        )
    # An output renamed in this release is still accepted by its old name (for one release).
    output = calculator.renamed_outputs.get(output, output)
    for declared in calculator.outputs:
        if declared.name == output:
            if declared.kind != "number":
                raise NotNumeric(
                    f"{where}: {key!r} is a {declared.kind} output; only numeric outputs can be "
                    "constrained or optimised",
                    loc=loc,
                )
            return OutputKey(f"{name}.{output}", name, declared)
    known = ", ".join(o.name for o in calculator.outputs)
    raise UnknownOutput(
        f"{where}: {key!r}: calculator {name!r} has no output {output!r}; its outputs: {known}",
        loc=loc,
    )


def plan_calculators(constraints, objectives, params, calculators):
    """Bounds per constraint, direction per objective, the nullable objectives, and one
    :class:`Plan` per calculator needed; refuses bad keys, directions, bounds and params."""
    if not objectives:
        raise EvaluationError("objectives: name at least one output to optimise",
                              loc=("objectives",))
    bounds: dict[str, tuple[float, float]] = {}
    directions: dict[str, str] = {}
    nullable: set[str] = set()
    plans: dict[str, Plan] = {}

    def need(resolved: OutputKey, where: str) -> None:
        plan = plans.get(resolved.calculator)
        if plan is None:
            plan = plans[resolved.calculator] = Plan(
                calculators[resolved.calculator], params=None, first_loc=(where, resolved.key)
            )
        if resolved.output.name not in plan.outputs:
            plan.outputs.append(resolved.output.name)

    for given, raw in constraints.items():
        resolved = resolve_key(given, "constraints", calculators)
        key = resolved.key  # the current name, also when the request used an old one
        bounds[key] = _bounds(given, raw)
        need(resolved, "constraints")
    for given, direction in objectives.items():
        resolved = resolve_key(given, "objectives", calculators)
        key = resolved.key
        if direction not in ("min", "max"):
            raise EvaluationError(
                f'objectives: {given!r} must be "min" or "max", got {direction!r}',
                loc=("objectives", given),
            )
        directions[key] = direction
        if resolved.output.nullable:
            nullable.add(key)
        need(resolved, "objectives")
    for name in params:
        if name not in plans:
            raise EvaluationError(
                f"params: {name!r} is not a calculator named in the constraints or objectives",
                loc=("params", name),
            )
    for name, plan in plans.items():
        plan.params = _params(plan.calculator, name, params.get(name))
    return bounds, directions, nullable, plans


def _bounds(key: str, raw: Bounds | Mapping[str, float | None]) -> tuple[float, float]:
    loc = ("constraints", key)
    if not isinstance(raw, Bounds):
        try:
            raw = Bounds.model_validate(raw)
        except ValidationError as exc:
            detail = "; ".join(f"{'.'.join(map(str, e['loc']))}: {e['msg']}" for e in exc.errors())
            raise EvaluationError(f"constraints: {key!r}: {detail}", loc=loc) from None
    if raw.min is None and raw.max is None:
        raise EvaluationError(f"constraints: {key!r}: give min, max or both", loc=loc)
    if raw.min is not None and raw.max is not None and raw.min > raw.max:
        raise ContradictoryBounds(
            f"constraints: {key!r}: min {raw.min:g} is greater than max {raw.max:g}, "
            "so no combination can meet it",
            loc=loc,
        )
    return (-_LARGEST if raw.min is None else raw.min, _LARGEST if raw.max is None else raw.max)


def _params(calculator: Calculator, name: str, raw) -> BaseModel:
    if isinstance(raw, calculator.Params):
        return raw
    try:
        return calculator.Params.model_validate(raw or {})
    except ValidationError as exc:
        raise InvalidCalculatorParams(name, exc) from None
