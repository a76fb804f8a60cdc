"""The sweep's entry points: :func:`evaluate` checks the request, runs the passes and builds
the answer's rows (how it works: :mod:`calculators.sweep`)."""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from typing import Any

import numpy as np
from pydantic import BaseModel, ValidationError

from calculators.base import Calculator
from calculators.batch import AXES, RigBatch, as_train
from calculators.evaluation_schemas import (
    Bounds,
    EvaluationResult,
    EvaluationRow,
    EvaluationSpec,
    Ids,
    Indices,
)
from calculators.pareto import FrontLimitReached
from calculators.schemas import Accessory, Camera, Geometry, Mount, Telescope, one_currency
from calculators.train_elements import train_element
from calculators.rig_cautions import rig_cautions
from calculators.sweep.chunks import guarded, row_batch, row_values
from calculators.sweep.detectors import check_visual_trains, entries, product_text
from calculators.sweep.errors import EvaluationError, FrontTooLarge, TooManyCombinations
from calculators.sweep.passes import run_passes
from calculators.sweep.plan import baseline_indices, plan_calculators, stored_ids

#: Default largest cartesian product one evaluation may sweep.
DEFAULT_MAX_COMBINATIONS = 5_000_000

#: Default largest number of combinations computed at once (memory is about 8 bytes per
#: combination for each output that depends on all four kinds, plus the masks).
DEFAULT_CHUNK_ROWS = 1 << 20

Progress = Callable[[int, int], None]

def evaluate(
    telescopes: Sequence[Telescope],
    cameras: Sequence[Camera],
    trains: Sequence[Any] = ((),),
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
    check: Callable[[], None] | None = None,
    allow_incompatible: bool = False,
    accessories: Sequence[Accessory | Mapping[str, Any]] = (),
    geometry: Geometry | Mapping[str, Any] | None = None,
    binning: Sequence[int] = (1,),
    eyepieces: Sequence[Any] = (),
) -> EvaluationResult:
    """Sweep telescopes × cameras × trains × mounts; return counts, the front and the top rows.

    A train is a list of elements (``[]``: nothing between telescope and camera); an old
    :class:`Modifier` or None is read as a one-element or empty train (see :func:`as_train`).
    Every camera is swept at each ``binning`` factor, and each of ``eyepieces`` (eyepiece train
    elements) is a camera-free entry beside them: visual combinations telescope × train ×
    eyepiece × mount (see :mod:`calculators.sweep.detectors`). ``cameras`` may be empty when
    ``eyepieces`` are given, or when every train ends in an eyepiece (a visual sweep of explicit
    trains); a train ending in an eyepiece is refused beside cameras or ``eyepieces``.

    ``accessories`` and ``geometry`` (as a rig's) belong to every combination: they count in
    its payload, price and moments as they do in a rig compared on its own.

    ``calculators`` maps names to calculators (e.g. ``registry.calculators``); ``ids`` optionally
    gives stored ids per kind (``{"telescope": [7, None, ...], ..., "eyepiece": [...]}``, aligned
    with the lists);
    ``progress(done, total)`` is called after each chunk computed; ``max_front_rows`` refuses
    (:class:`FrontTooLarge`) a front of more rows than an answer should hold, before they are
    built (combinations with equal objective values are all on the front, so ties can make it as
    large as the product), as soon as the front is known to pass it; ``check()`` is called
    between chunks and between blocks of the front's work (a request's deadline raises from it).
    Every bad input raises an
    :class:`EvaluationError` (a :class:`RigbenchError` and ``ValueError``) whose ``loc`` names the
    field, before any heavy work; a calculator that refuses or fails on the components raises
    :class:`CalculatorFailed` (also a :class:`CalculationError`).
    """
    lists = (list(telescopes), list(cameras), [as_train(t) for t in trains], list(mounts))
    eyepieces = [train_element(e) if isinstance(e, dict) else e for e in eyepieces]
    sizes = tuple(len(items) for items in lists)
    visual_trains = check_visual_trains(lists[2], bool(lists[1]), bool(eyepieces))
    for kind, size in zip(AXES, sizes):
        if size == 0 and not (kind == "camera" and (eyepieces or visual_trains)):
            hint = {"train": " ([] means none)", "mount": " (null means none)",
                    "camera": " or eyepiece (`eyepieces`)"}.get(kind, "")
            raise EvaluationError(f"{kind}s: give at least one {kind}{hint}", loc=(f"{kind}s",))
    axis = entries(lists[1], binning, eyepieces, visual_trains)
    shape = (sizes[0], axis.size, sizes[2], sizes[3])
    evaluated = math.prod(shape)
    if evaluated > max_combinations:
        raise TooManyCombinations(
            product_text(sizes, len(axis.factors), len(eyepieces)), evaluated, max_combinations,
            factors=len(axis.factors), eyepieces=len(eyepieces),
        )
    base = baseline_indices(baseline, shape, axis)
    accessories, geometry = shared_parts(accessories, geometry)
    if isinstance(limit, bool) or not isinstance(limit, int) or limit < 0:
        raise EvaluationError(f"limit: must be a whole number ≥ 0, got {limit!r}", loc=("limit",))
    if chunk_rows < 1:
        raise ValueError("chunk_rows must be at least 1")
    ids = dict(ids or {})
    eyepiece_ids = list(ids.pop("eyepiece", None) or [None] * len(eyepieces))
    ids.setdefault("train", [[None] * len(train) for train in lists[2]])  # one per element
    id_lists = stored_ids(ids, sizes)
    bounds, directions, nullable, plans = plan_calculators(
        constraints or {}, objectives, params or {}, calculators
    )
    if any(c is None for c in axis.cameras):
        # Visual combinations have no pixels: an imaging output is undefined (null) for them,
        # which makes them infeasible rather than the calculator broken.
        nullable = set(directions)

    batch = RigBatch.from_components(lists[0], axis.cameras, lists[2], lists[3], baseline=base,
                                     binning=axis.binning, eyepieces=axis.eyepieces,
                                     accessories=accessories, geometry=geometry)
    units: dict[str, str] = {}
    labels: dict[str, str] = {}
    for name, plan in plans.items():
        shown = {o.name: o.shown_label for o in plan.calculator.outputs}
        labels.update({f"{name}.{out}": shown[out] for out in plan.outputs})
        # Called on the whole sweep batch first, so a calculator that refuses a batch as a whole
        # (prices in several currencies) refuses it whatever the chunking.
        given = guarded(plan, lambda p=plan: dict(p.calculator.output_units(batch, p.params)))
        declared = {o.name: o.unit for o in plan.calculator.outputs}
        units.update({f"{name}.{out}": str(given.get(out, declared[out])) for out in plan.outputs})

    try:
        excluded = None if allow_incompatible else {}
        feasible, front, top, base_score = run_passes(
            batch, plans, bounds, directions, nullable, chunk_rows, limit, progress,
            max_front_rows=max_front_rows, check=check, excluded=excluded,
        )
    except FrontLimitReached as exc:
        raise _front_too_large(exc.at_least, max_front_rows, exact=False) from None
    if max_front_rows is not None and front.positions.size > max_front_rows:
        raise _front_too_large(front.positions.size, max_front_rows, exact=True)

    base_flat = int(np.ravel_multi_index(base, shape))
    rows_flat = np.unique(np.concatenate(([base_flat], front.positions, top.positions)))
    values = row_values(batch, plans, rows_flat, shape, base_flat)
    row_cautions = rig_cautions(row_batch(batch, rows_flat, shape, base_flat))
    keys = list(dict.fromkeys([*bounds, *directions]))
    # Read into plain Python lists once: the front can hold thousands of rows, and per-row numpy
    # scalar access costs more than building the row.
    value_lists = {key: [_number(v) for v in values[key].tolist()] for key in keys}
    index_lists = [ix.tolist() for ix in np.unravel_index(rows_flat, shape)]
    splits = [axis.split(k) for k in range(axis.size)]

    def rows(positions, scores) -> list[EvaluationRow]:
        # Built without re-validation: trusted numbers, and many of them.
        out = []
        for at, score in zip(np.searchsorted(rows_flat, positions).tolist(), scores):
            index = {kind: index_lists[a][at] for a, kind in enumerate(AXES)}
            index.update(splits[index["camera"]])
            eyepiece = index["eyepiece"]
            out.append(EvaluationRow.model_construct(
                indices=Indices.model_construct(**index),
                ids=Ids.model_construct(
                    **{kind: None if index[kind] is None else id_lists[kind][index[kind]]
                       for kind in AXES},
                    eyepiece=None if eyepiece is None else eyepiece_ids[eyepiece]),
                values={key: value_lists[key][at] for key in keys},
                cautions=row_cautions[at],
                score=score,
            ))
        return out

    return EvaluationResult(
        evaluated=evaluated,
        considered=evaluated - sum((excluded or {}).values()),
        excluded=excluded or {},
        feasible=feasible,
        front=rows(front.positions, front.scores.tolist()),
        top=rows(top.positions, top.scores.tolist()),
        baseline=rows(np.array([base_flat]), [base_score])[0],
        baseline_feasible=base_score is not None,
        units={key: units[key] for key in keys},
        labels={key: labels[key] for key in keys},
        cautions={name: list(p.calculator.cautions) for name, p in plans.items()
                  if p.calculator.cautions},
    )


def shared_parts(accessories, geometry) -> tuple[list[Accessory], Geometry | None]:
    """The accessories and geometry every combination shares, validated (EvaluationError naming
    the field otherwise)."""
    items = []
    for i, item in enumerate(accessories):
        items.append(_valid(Accessory, item, ("accessories", i)))
    try:
        one_currency(items)
    except ValueError as exc:
        raise EvaluationError(f"accessories: {exc}", loc=("accessories",)) from None
    if geometry is not None:
        geometry = _valid(Geometry, geometry, ("geometry",))
    return items, geometry


def _valid(model, value, loc: tuple):
    if isinstance(value, model):
        return value
    try:
        return model.model_validate(value)
    except ValidationError as exc:
        first = exc.errors()[0]
        where = (*loc, *first["loc"])
        raise EvaluationError(f"{'.'.join(map(str, where))}: {first['msg']}", loc=where) from None


def _front_too_large(count: int, limit: int, exact: bool) -> FrontTooLarge:
    return FrontTooLarge(
        f"objectives: {'' if exact else 'at least '}{count:,} combinations are on the Pareto front, "
        f"more than the {limit:,} an answer may hold (combinations with equal objective values "
        "are all on it); add an objective or a constraint that tells them apart, or shorten "
        "a list of candidates",
        loc=("objectives",),
    )


def evaluate_spec(
    telescopes: Sequence[Telescope],
    cameras: Sequence[Camera],
    trains: Sequence[Any],
    mounts: Sequence[Mount | None],
    spec: EvaluationSpec,
    **options: Any,
) -> EvaluationResult:
    """:func:`evaluate` with the choices of a validated request model (``options``: calculators,
    ids, max_combinations, chunk_rows, progress, max_front_rows, eyepieces)."""
    # An inline request's eyepieces (a service passes them resolved, stored ids read).
    options.setdefault("eyepieces", getattr(spec, "eyepieces", ()))
    return evaluate(
        telescopes, cameras, trains, mounts,
        objectives=spec.objectives, constraints=spec.constraints, params=spec.params,
        baseline=spec.baseline, limit=spec.limit, allow_incompatible=spec.allow_incompatible,
        accessories=spec.accessories, geometry=spec.geometry, binning=spec.binning, **options,
    )


def _number(value) -> float | None:
    value = float(value)
    return value if math.isfinite(value) else None
