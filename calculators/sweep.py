"""Purchase evaluation: every combination of candidate equipment, filtered by constraints, with the
Pareto front and a ranking on the objectives — without one Python object per combination.

How it works:

1. The component lists become one sweep batch (:meth:`RigBatch.from_components`): telescope columns
   lie along axis 0, cameras along 1, modifiers along 2, mounts along 3. A calculator's output is
   computed over the axes it depends on only (a focal ratio over telescopes × modifiers), and
   broadcasting builds the full product only where an output needs all four kinds.
2. Only the calculators named in the constraints and objectives run, in chunks of whole telescopes
   (at most ``chunk_rows`` combinations each, one telescope at least) to bound memory. A chunk that
   does not hold the baseline telescope gets it prepended, so relative outputs keep their meaning,
   and its row is dropped after computing; results do not depend on the chunk size.
3. Each constraint becomes a boolean mask at its output's own shape; the masks are combined by
   broadcasting. A combination is **feasible** when every constrained output and every objective
   output is a finite number and every constraint holds (bounds are inclusive). A combination
   whose effective focal ratio is below the physical minimum the ``Rig`` schema enforces is not a
   rig, so it is never feasible (it still counts in ``evaluated``).
4. Over the feasible combinations: the exact Pareto front of the objectives
   (:mod:`calculators.pareto`; equal objective values are all on the front), found after an exact
   reduction — where an objective varies along axes no other objective does (the price over
   cameras and mounts, when the exposure time depends on telescope and modifier only), only the
   best value along those axes can be on the front.
5. The ``limit`` best feasible combinations by **score** (lower is better): each objective is
   scaled linearly to 0 at the ideal point (its best feasible value) and 1 at the nadir point (its
   worst value among the front rows), and the scaled values are added; an objective on which all
   front rows agree does not count. Equal scores go to the better objective values in the order
   given, then to the lower indices. The weights are positive, so no combination ranks before one
   that dominates it and the first ``top`` row is always on the front. (Ideal and nadir points are
   the usual normalisation of multi-objective decision making, e.g. Miettinen, *Nonlinear
   Multiobjective Optimization*, 1999 — from memory.) With several chunks this needs the
   whole front first, so the chunks are computed a second time; one chunk is reused.
6. The returned rows' values are computed once more on a small one-row-per-combination batch, the
   same way a comparison of those rigs computes them.

Indices order combinations telescope-major: ``(telescope, camera, modifier, mount)`` compared in
that order.

Example::

    >>> from calculators.builtin.light_grasp import LightGrasp
    >>> from calculators.schemas import Camera, Telescope
    >>> scopes = [Telescope(aperture_mm=a, focal_length_mm=1000) for a in (100, 200, 150)]
    >>> result = evaluate(scopes, [Camera(pixel_size_um=3.76, width_px=6248, height_px=4176)],
    ...                   objectives={"light_grasp.clear_area_mm2": "max"},
    ...                   constraints={"light_grasp.area_ratio": {"max": 3}},
    ...                   calculators={"light_grasp": LightGrasp()})
    >>> result.evaluated, result.feasible, [row.indices.telescope for row in result.front]
    (3, 2, [2])
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from pydantic import BaseModel, ValidationError

from calculators.base import Calculator, Output
from calculators.batch import AXES, RigBatch
from calculators.errors import CalculationError, RigbenchError
from calculators.evaluation_schemas import (
    Bounds,
    EvaluationResult,
    EvaluationRow,
    EvaluationSpec,
    Ids,
    Indices,
)
from calculators.pareto import front_of
from calculators.schemas import MIN_FOCAL_RATIO, Camera, Modifier, Mount, Telescope

#: Default largest cartesian product one evaluation may sweep.
DEFAULT_MAX_COMBINATIONS = 5_000_000

#: Default largest number of combinations computed at once (memory is about 8 bytes per
#: combination for each output that depends on all four kinds, plus the masks).
DEFAULT_CHUNK_ROWS = 1 << 20

Progress = Callable[[int, int], None]

# Bounds used for a side left open: comparing with the largest finite float also refuses NaN and
# infinities, so a feasible row's constrained values are always finite numbers.
_LARGEST = float(np.finfo(np.float64).max)


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
    title = "Too many combinations"


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


@dataclass(frozen=True)
class OutputKey:
    """A resolved ``"<calculator>.<output>"`` key."""

    key: str
    calculator: str
    output: Output


@dataclass
class _Plan:
    """One calculator to run: its params and the outputs the evaluation reads."""

    calculator: Calculator
    params: BaseModel
    outputs: list[str] = field(default_factory=list)
    first_loc: tuple[str, str] = ("objectives", "")


def evaluate(
    telescopes: Sequence[Telescope],
    cameras: Sequence[Camera],
    modifiers: Sequence[Modifier | None] = (None,),
    mounts: Sequence[Mount | None] = (None,),
    *,
    objectives: Mapping[str, str],
    constraints: Mapping[str, Bounds | Mapping[str, float | None]] | None = None,
    params: Mapping[str, Mapping[str, Any] | BaseModel] | None = None,
    baseline: Indices | Sequence[int] | None = None,
    limit: int = 20,
    calculators: Mapping[str, Calculator],
    ids: Mapping[str, Sequence[int | None]] | None = None,
    max_combinations: int = DEFAULT_MAX_COMBINATIONS,
    chunk_rows: int = DEFAULT_CHUNK_ROWS,
    progress: Progress | None = None,
    max_front_rows: int | None = None,
) -> EvaluationResult:
    """Sweep telescopes × cameras × modifiers × mounts; return counts, the front and the top rows.

    ``calculators`` maps names to calculators (e.g. ``registry.calculators``); ``ids`` optionally
    gives stored ids per kind (``{"telescope": [7, None, ...], ...}``, aligned with the lists);
    ``progress(done, total)`` is called after each chunk computed; ``max_front_rows`` refuses
    (:class:`FrontTooLarge`) a front of more rows than an answer should hold, before they are
    built (combinations with equal objective values are all on the front, so ties can make it as
    large as the product). Every bad input raises an
    :class:`EvaluationError` (a :class:`RigbenchError` and ``ValueError``) whose ``loc`` names the
    field, before any heavy work; a calculator that refuses or fails on the components raises
    :class:`CalculatorFailed` (also a :class:`CalculationError`).
    """
    lists = (list(telescopes), list(cameras), list(modifiers), list(mounts))
    sizes = tuple(len(items) for items in lists)
    for kind, size in zip(AXES, sizes):
        if size == 0:
            hint = " (null means none)" if kind in ("modifier", "mount") else ""
            raise EvaluationError(f"{kind}s: give at least one {kind}{hint}", loc=(f"{kind}s",))
    evaluated = math.prod(sizes)
    if evaluated > max_combinations:
        raise TooManyCombinations(
            f"{' × '.join(map(str, sizes))} = {evaluated:,} combinations exceed the maximum of "
            f"{max_combinations:,}; shorten a list of candidates",
            loc=(),
        )
    base = _baseline(baseline, sizes)
    if isinstance(limit, bool) or not isinstance(limit, int) or limit < 0:
        raise EvaluationError(f"limit: must be a whole number ≥ 0, got {limit!r}", loc=("limit",))
    if chunk_rows < 1:
        raise ValueError("chunk_rows must be at least 1")
    id_lists = _ids(ids, sizes)
    bounds, directions, nullable, plans = _plan(
        constraints or {}, objectives, params or {}, calculators
    )

    batch = RigBatch.from_components(*lists, baseline=base)
    units: dict[str, str] = {}
    for name, plan in plans.items():
        # Called on the whole sweep batch first, so a calculator that refuses a batch as a whole
        # (prices in several currencies) refuses it whatever the chunking.
        given = _guarded(plan, lambda p=plan: dict(p.calculator.output_units(batch, p.params)))
        declared = {o.name: o.unit for o in plan.calculator.outputs}
        units.update({f"{name}.{out}": str(given.get(out, declared[out])) for out in plan.outputs})

    feasible, front, top, base_score = _sweep(
        batch, plans, bounds, directions, nullable, chunk_rows, limit, progress
    )

    if max_front_rows is not None and front.positions.size > max_front_rows:
        raise FrontTooLarge(
            f"objectives: {front.positions.size:,} combinations are on the Pareto front, more than "
            f"the {max_front_rows:,} an answer may hold (combinations with equal objective values "
            "are all on it); add an objective or a constraint that tells them apart, or shorten "
            "a list of candidates",
            loc=("objectives",),
        )

    base_flat = int(np.ravel_multi_index(base, sizes))
    rows_flat = np.unique(np.concatenate(([base_flat], front.positions, top.positions)))
    values = _row_values(batch, plans, rows_flat, sizes, base_flat)
    keys = list(dict.fromkeys([*bounds, *directions]))
    # Read into plain Python lists once: the front can hold thousands of rows, and per-row numpy
    # scalar access costs more than building the row.
    value_lists = {key: [_number(v) for v in values[key].tolist()] for key in keys}
    index_lists = [ix.tolist() for ix in np.unravel_index(rows_flat, sizes)]

    def rows(positions, scores) -> list[EvaluationRow]:
        # Built without re-validation: trusted numbers, and many of them.
        out = []
        for at, score in zip(np.searchsorted(rows_flat, positions).tolist(), scores):
            index = {kind: index_lists[axis][at] for axis, kind in enumerate(AXES)}
            out.append(EvaluationRow.model_construct(
                indices=Indices.model_construct(**index),
                ids=Ids.model_construct(**{kind: id_lists[kind][i] for kind, i in index.items()}),
                values={key: value_lists[key][at] for key in keys},
                score=score,
            ))
        return out

    return EvaluationResult(
        evaluated=evaluated,
        feasible=feasible,
        front=rows(front.positions, front.scores.tolist()),
        top=rows(top.positions, top.scores.tolist()),
        baseline=rows(np.array([base_flat]), [base_score])[0],
        baseline_feasible=base_score is not None,
        units={key: units[key] for key in keys},
        cautions={name: list(p.calculator.cautions) for name, p in plans.items()
                  if p.calculator.cautions},
    )


def evaluate_spec(
    telescopes: Sequence[Telescope],
    cameras: Sequence[Camera],
    modifiers: Sequence[Modifier | None],
    mounts: Sequence[Mount | None],
    spec: EvaluationSpec,
    **options: Any,
) -> EvaluationResult:
    """:func:`evaluate` with the choices of a validated request model (``options``: calculators,
    ids, max_combinations, chunk_rows, progress, max_front_rows)."""
    return evaluate(
        telescopes, cameras, modifiers, mounts,
        objectives=spec.objectives, constraints=spec.constraints, params=spec.params,
        baseline=spec.baseline, limit=spec.limit, **options,
    )


# --- validation -----------------------------------------------------------------------------


def _baseline(baseline: Indices | Sequence[int] | None, sizes: tuple[int, ...]) -> tuple[int, ...]:
    if baseline is None:
        return (0, 0, 0, 0)
    if isinstance(baseline, Indices):
        values = tuple(getattr(baseline, kind) for kind in AXES)
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


def _ids(ids: Mapping[str, Sequence[int | None]] | None, sizes) -> dict[str, list[int | None]]:
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


def _plan(constraints, objectives, params, calculators):
    if not objectives:
        raise EvaluationError("objectives: name at least one output to optimise",
                              loc=("objectives",))
    bounds: dict[str, tuple[float, float]] = {}
    directions: dict[str, str] = {}
    nullable: set[str] = set()
    plans: dict[str, _Plan] = {}

    def need(resolved: OutputKey, where: str) -> None:
        plan = plans.get(resolved.calculator)
        if plan is None:
            plan = plans[resolved.calculator] = _Plan(
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


# --- computing ------------------------------------------------------------------------------


def _guarded(plan: _Plan, call: Callable[[], Any]) -> Any:
    """Run a calculator call; any failure becomes a :class:`CalculatorFailed` naming the field."""
    name = plan.calculator.name
    try:
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            return call()
    except RigbenchError as exc:
        raise CalculatorFailed(f"{name}: {exc}", loc=plan.first_loc) from exc
    except Exception as exc:  # isolation: a broken plugin must not become a server error
        raise CalculatorFailed(
            f"{name} failed: {type(exc).__name__}: {exc}", loc=plan.first_loc
        ) from exc


def _compute(plans: Mapping[str, _Plan], batch: RigBatch) -> dict[str, np.ndarray]:
    """The needed outputs of every planned calculator, each as an array with the batch's number
    of axes that broadcasts to the batch's shape (never expanded)."""
    out: dict[str, np.ndarray] = {}
    ndim = len(batch.shape)
    for name, plan in plans.items():
        raw = _guarded(plan, lambda p=plan: p.calculator.compute(batch, p.params))
        for output in plan.outputs:
            problem = None
            if not isinstance(raw, Mapping) or output not in raw:
                problem = f"did not return its declared output {output!r}"
            else:
                values = np.asarray(raw[output])
                if not np.issubdtype(values.dtype, np.number) or np.iscomplexobj(values):
                    problem = f"output {output!r} is not numeric"
                elif not _fits(values.shape, batch.shape):
                    problem = (f"output {output!r} has shape {values.shape}, which does not fit "
                               f"the batch's {batch.shape}")
            if problem:
                raise CalculatorFailed(f"{name} failed: {problem}", loc=plan.first_loc)
            out[f"{name}.{output}"] = values.reshape((1,) * (ndim - values.ndim) + values.shape)
    return out


def _fits(shape: tuple[int, ...], target: tuple[int, ...]) -> bool:
    """Whether an array of ``shape`` broadcasts to ``target`` without growing it."""
    if len(shape) > len(target):
        return False
    try:
        return np.broadcast_shapes(shape, target) == target
    except ValueError:
        return False


def _chunk(batch: RigBatch, start: int, stop: int) -> tuple[RigBatch, int]:
    """Telescopes ``start:stop`` of a sweep batch, with the baseline telescope prepended when it
    lies outside; returns the batch and how many leading telescope rows to drop afterwards."""
    n_telescopes = batch.shape[0]
    if start == 0 and stop == n_telescopes:
        return batch, 0
    bt = batch.baseline[0]
    inside = start <= bt < stop
    columns = {}
    for name, column in batch.columns.items():
        if np.ndim(column) and np.shape(column)[0] > 1:  # varies along the telescope axis
            part = column[start:stop]
            columns[name] = part if inside else np.concatenate((column[bt:bt + 1], part))
        else:
            columns[name] = column
    baseline = (bt - start if inside else 0, *batch.baseline[1:])
    return RigBatch(columns=columns, baseline=baseline), 0 if inside else 1


@dataclass
class _Chunk:
    """One chunk's computed outputs: telescopes ``start:`` of the sweep, ``shape`` combinations."""

    start: int
    shape: tuple[int, ...]
    full: np.ndarray  # feasibility, broadcast to ``shape`` (a view)
    oriented: list[np.ndarray]  # objective values, smaller is better, each at its own shape
    feasible: int
    masked: dict[int, np.ndarray] = field(default_factory=dict)

    def masked_values(self, j: int) -> np.ndarray:
        """Objective ``j`` at its own shape, +inf where no feasible combination has it."""
        if j not in self.masked:
            o = self.oriented[j]
            self.masked[j] = np.where(_reduce_mask(self.full, o.shape), o, np.inf)
        return self.masked[j]


@dataclass
class _Ranked:
    """Rows picked out of the sweep: flat positions, oriented objective values, scores."""

    positions: np.ndarray
    columns: list[np.ndarray]
    scores: np.ndarray | None = None

    def take(self, pick: np.ndarray) -> _Ranked:
        return _Ranked(self.positions[pick], [c[pick] for c in self.columns],
                       None if self.scores is None else self.scores[pick])


def _sweep(batch, plans, bounds, directions, nullable, chunk_rows, limit, progress):
    """Pass 1 over the chunks: counts and the front. Pass 2: the top rows by score, whose scale
    comes from the whole front (with a single chunk, its arrays are reused instead)."""
    n_telescopes, *rest = batch.shape
    per_telescope = math.prod(rest)
    step = max(1, chunk_rows // per_telescope)
    spans = [(s, min(n_telescopes, s + step)) for s in range(0, n_telescopes, step)]
    single = len(spans) == 1
    total = len(spans) * (1 if single or not limit else 2)
    done = 0

    def chunks():
        nonlocal done
        for start, stop in spans:
            chunk = _evaluate_chunk(batch, plans, bounds, directions, nullable, start, stop)
            done += 1
            if progress is not None:
                progress(done, total)
            yield chunk

    k = len(directions)
    feasible = 0
    fronts: list[_Ranked] = []
    base_flat = int(np.ravel_multi_index(batch.baseline, batch.shape))
    base_columns = None  # the baseline's oriented objective values when it is feasible
    kept = None
    for chunk in chunks():
        feasible += chunk.feasible
        kept = chunk if single else None
        if not chunk.feasible:
            continue
        offset = chunk.start * per_telescope
        local = _front_candidates(chunk)
        candidates = _Ranked(local + offset, _gather(chunk.oriented, chunk.shape, local))
        fronts.append(candidates.take(front_of(candidates.columns)))
        base_at = base_flat - offset
        if 0 <= base_at < math.prod(chunk.shape) and chunk.full[
                np.unravel_index(base_at, chunk.shape)]:
            base_columns = _gather(chunk.oriented, chunk.shape, np.array([base_at]))

    front = _merge(fronts, k)
    front = front.take(front_of(front.columns) if front.positions.size else np.zeros(0, bool))
    front = front.take(np.lexsort([front.positions] + front.columns[::-1]))
    # Scale of the score: the ideal point (best value of each objective) and the nadir point
    # (worst value of each objective on the front).
    low = [float(c.min()) if c.size else 0.0 for c in front.columns]
    high = [float(c.max()) if c.size else 0.0 for c in front.columns]
    front.scores = _row_scores(front.columns, low, high)

    tops: list[_Ranked] = []
    if limit and feasible:
        for chunk in ([kept] if single else chunks()):
            if chunk.feasible:
                tops.append(_chunk_best(chunk, low, high, limit, per_telescope))
    top = _best(_merge(tops, k), limit)
    if progress is not None and done < total:  # nothing feasible: no second pass to report
        progress(total, total)
    base_score = None if base_columns is None else float(_row_scores(base_columns, low, high)[0])
    return feasible, front, top, base_score


def _evaluate_chunk(batch, plans, bounds, directions, nullable, start, stop) -> _Chunk:
    chunk_batch, drop = _chunk(batch, start, stop)
    values = _compute(plans, chunk_batch)
    if drop:
        values = {k: v[drop:] if v.shape[0] > 1 else v for k, v in values.items()}
    shape = (stop - start, *batch.shape[1:])
    # A telescope and modifier giving an effective focal ratio below the physical minimum do not
    # make a rig (the Rig schema refuses it), so that combination is never feasible.
    focal_ratio = (batch["focal_length_mm"][start:stop] * batch["modifier_factor"]
                   / batch["aperture_mm"][start:stop])
    masks = [focal_ratio >= MIN_FOCAL_RATIO]
    for key, (low, high) in bounds.items():
        v = values[key]
        masks.append((v >= low) & (v <= high))  # also refuses NaN and infinities
    oriented = []
    for key, direction in directions.items():
        v = values[key].astype(np.float64, copy=False)
        if key in nullable:
            if key not in bounds:  # a bound already refuses undefined values
                masks.append(np.isfinite(v))
        elif not np.isfinite(v).all():
            raise CalculatorFailed(
                f"{key} gave undefined or infinite values although it declares its values always "
                "defined", loc=("objectives", key))
        oriented.append(-v if direction == "max" else v)
    masks.sort(key=lambda m: m.size)  # combine the small masks before the big ones
    mask = np.ones((1,) * len(shape), dtype=bool)
    for m in masks:
        mask = mask & m
    feasible = int(np.count_nonzero(mask)) * (math.prod(shape) // mask.size)
    return _Chunk(start, shape, np.broadcast_to(mask, shape), oriented, feasible)


def _reduce_mask(full: np.ndarray, shape: tuple[int, ...]) -> np.ndarray:
    """Feasibility at an output's own shape: true where any combination it stands for is."""
    axes = tuple(a for a, (n, m) in enumerate(zip(full.shape, shape)) if m == 1 and n > 1)
    return full.any(axis=axes, keepdims=True) if axes else full


def _front_candidates(chunk: _Chunk) -> np.ndarray:
    """Flat positions in the chunk that may be on the front: feasible and, for an objective that
    varies along axes no other objective does, the best value along those axes. (Feasible rows
    that differ only along such axes share every other objective, so the better one dominates.)
    Drops only dominated rows; it shrinks what the exact front has to look at."""
    candidates = chunk.full
    varies = [{a for a, n in enumerate(o.shape) if n > 1} for o in chunk.oriented]
    for j in range(len(varies)):
        others = set().union(*(v for i, v in enumerate(varies) if i != j))
        own = tuple(sorted(varies[j] - others))
        if own:
            masked = chunk.masked_values(j)
            candidates = candidates & (masked == masked.min(axis=own, keepdims=True))
    return np.flatnonzero(np.broadcast_to(candidates, chunk.shape))


def _gather(oriented: list[np.ndarray], shape, local: np.ndarray) -> list[np.ndarray]:
    """Objective values at flat positions of the chunk, without expanding any array."""
    index = np.unravel_index(local, shape)
    out = []
    for o in oriented:
        picked = o[tuple(ix if n > 1 else 0 for ix, n in zip(index, o.shape))]
        out.append(picked if picked.shape == local.shape else np.full(local.shape, picked))
    return out


def _term(values: np.ndarray, low: float, high: float) -> np.ndarray | None:
    """One objective scaled to 0 at ``low`` and 1 at ``high``; None when they are equal."""
    if not high > low:
        return None
    span = high - low
    if not np.isfinite(span):  # the range overflows a float: scale in two steps
        return (values / 2 - low / 2) / (high / 2 - low / 2)
    term = values - low
    term /= span
    return term


def _score(columns, low, high) -> np.ndarray | None:
    """Sum of the scaled objectives, added in objective order: the same float operations whether
    ``columns`` are broadcast arrays or gathered rows, so both give the same scores."""
    score = None
    for c, lo, hi in zip(columns, low, high):
        term = _term(c, lo, hi)
        if term is None:
            continue
        if score is None:
            score = term
        elif np.broadcast_shapes(score.shape, term.shape) == score.shape:
            score += term
        else:
            score = score + term
    return score


def _row_scores(columns, low, high) -> np.ndarray:
    n = columns[0].shape[0]
    score = _score(columns, low, high)
    return np.zeros(n) if score is None else np.broadcast_to(score, (n,)).astype(np.float64)


def _chunk_best(chunk: _Chunk, low, high, limit: int, per_telescope: int) -> _Ranked:
    """The chunk's ``limit`` best rows (the whole sweep's best are among the chunks' best)."""
    # Scaling a +inf-masked full-size objective carries the infeasible rows' +inf into the score,
    # which then needs no masking of its own.
    columns = list(chunk.oriented)
    for j, o in enumerate(chunk.oriented):
        if j in chunk.masked and o.shape == chunk.shape and high[j] > low[j]:
            columns[j] = chunk.masked[j]
            break
    else:
        j = None
    score = _score(columns, low, high)
    if score is None:
        score = np.zeros((1,) * len(chunk.shape))
    if j is None:
        score = np.where(chunk.full, score, np.inf)
    flat = np.ascontiguousarray(np.broadcast_to(score, chunk.shape)).reshape(-1)
    if chunk.feasible > limit:
        kth = np.partition(flat, limit - 1)[limit - 1]
        local = np.flatnonzero(flat <= kth)
    else:
        local = np.flatnonzero(flat < np.inf)
    ranked = _Ranked(local + chunk.start * per_telescope,
                     _gather(chunk.oriented, chunk.shape, local), flat[local])
    return _best(ranked, limit)


def _merge(parts: list[_Ranked], k: int) -> _Ranked:
    if not parts:
        return _Ranked(np.zeros(0, np.int64), [np.zeros(0)] * k, np.zeros(0))
    scores = None if parts[0].scores is None else np.concatenate([p.scores for p in parts])
    return _Ranked(np.concatenate([p.positions for p in parts]).astype(np.int64, copy=False),
                   [np.concatenate([p.columns[j] for p in parts]) for j in range(k)], scores)


def _best(ranked: _Ranked, limit: int) -> _Ranked:
    """The ``limit`` best rows, in order: by score, then objective values in order, then position."""
    keys = [ranked.scores, *ranked.columns, ranked.positions]
    pick = _smallest(keys, np.arange(ranked.positions.shape[0]), limit)
    pick = pick[np.lexsort([key[pick] for key in keys[::-1]])]
    return ranked.take(pick)


def _smallest(keys: list[np.ndarray], rows: np.ndarray, limit: int) -> np.ndarray:
    """The ``limit`` lexicographically smallest ``rows`` by ``keys`` (unordered), without sorting
    them all: rows below the first key's cut-off are in; ties at it compete on the next keys."""
    if rows.shape[0] <= limit or not keys:
        return rows[:limit]
    if limit == 0:
        return rows[:0]
    values = keys[0][rows]
    kth = np.partition(values, limit - 1)[limit - 1]
    below = rows[values < kth]
    return np.concatenate((below, _smallest(keys[1:], rows[values == kth], limit - below.size)))


def _row_values(batch, plans, rows_flat, sizes, base_flat) -> dict[str, np.ndarray]:
    """Outputs for a few combinations, as a comparison of those rigs computes them: one row each."""
    index = np.unravel_index(rows_flat, sizes)
    columns = {}
    for name, column in batch.columns.items():
        column = np.asarray(column)
        picked = column[tuple(ix if n > 1 else 0 for ix, n in zip(index, column.shape))]
        columns[name] = np.broadcast_to(picked, rows_flat.shape)
    rows = RigBatch(columns=columns, baseline=(int(np.searchsorted(rows_flat, base_flat)),))
    values = _compute(plans, rows)
    return {key: np.broadcast_to(v, rows.shape) for key, v in values.items()}


def _number(value) -> float | None:
    value = float(value)
    return value if math.isfinite(value) else None
