"""Running the planned calculators on a sweep batch: whole-telescope chunks (the baseline
telescope prepended when outside), each output kept at its own broadcast shape, and the few
returned rows computed one row per combination as a comparison computes them."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

import numpy as np

from calculators.batch import RigBatch
from calculators.errors import RigbenchError
from calculators.sweep.errors import CalculatorFailed
from calculators.sweep.plan import Plan


def guarded(plan: Plan, call: Callable[[], Any]) -> Any:
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


def compute(plans: Mapping[str, Plan], batch: RigBatch) -> dict[str, np.ndarray]:
    """The needed outputs of every planned calculator, each as an array with the batch's number
    of axes that broadcasts to the batch's shape (never expanded)."""
    out: dict[str, np.ndarray] = {}
    ndim = len(batch.shape)
    for name, plan in plans.items():
        raw = guarded(plan, lambda p=plan: p.calculator.compute(batch, p.params))
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


def chunk_of(batch: RigBatch, start: int, stop: int) -> tuple[RigBatch, int]:
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


def row_batch(batch, rows_flat, sizes, base_flat) -> RigBatch:
    """A few combinations of a sweep batch as a comparison batch: one row each."""
    index = np.unravel_index(rows_flat, sizes)
    columns = {}
    for name, column in batch.columns.items():
        column = np.asarray(column)
        picked = column[tuple(ix if n > 1 else 0 for ix, n in zip(index, column.shape))]
        columns[name] = np.broadcast_to(picked, rows_flat.shape)
    return RigBatch(columns=columns, baseline=(int(np.searchsorted(rows_flat, base_flat)),))


def row_values(batch, plans, rows_flat, sizes, base_flat) -> dict[str, np.ndarray]:
    """Outputs for a few combinations, as a comparison of those rigs computes them: one row each."""
    rows = row_batch(batch, rows_flat, sizes, base_flat)
    values = compute(plans, rows)
    return {key: np.broadcast_to(v, rows.shape) for key, v in values.items()}
