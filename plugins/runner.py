"""Run calculators on a batch, one at a time, so that one failing calculator spoils only its own result.

:func:`run` turns every way a calculator can fail into ``Run.error``: an exception, a result that
is not a mapping, a missing output, an array whose shape does not fit the batch, a value of the
wrong kind, NaN or infinity in an output declared finite, and — for third-party calculators — a
compute that exceeds its time budget.

Time budget, and its limits
---------------------------
Built-in calculators (rigbench's own) run inline in the caller's thread: they are ours, tested,
and a comparison of a few rigs must not pay for isolation. A third-party calculator loaded by the
registry runs in a fresh daemon thread that the caller waits on for at most its budget
(:func:`set_time_budget`, default :data:`DEFAULT_TIME_BUDGET_S`). This bounds the *request*, not the
plugin:

* Python cannot stop a thread. A compute that overruns keeps running in the background — holding
  its share of the GIL and of a core, and the batch it was given — until it returns on its own or the
  process ends. Its result is thrown away.
* So that a plugin which hangs does not pile up threads, a calculator whose earlier call is still
  running after overrunning is refused at once (an error naming it) instead of being started again.
  At most one runaway thread per third-party calculator and process exists.
* A compute that blocks in C code without releasing the GIL stalls the whole process, and the budget
  cannot help; an infinite pure-Python loop only slows the process down (the interpreter switches
  threads every few milliseconds).
* The thread costs about 0.1–0.2 ms per call. Worker processes would allow a real kill, but on a
  2-core machine each call would pay for pickling the batch and a process round trip, and memory
  for a pool per server worker; a plugin that needs that much isolation should not be loaded.

Third-party code sees the batch through read-only views of its columns, so a plugin that writes
into a column in place gets an error instead of corrupting the other calculators' inputs.
"""

from __future__ import annotations

import copy
import math
import threading
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from pydantic import BaseModel, ValidationError

from calculators.base import Calculator, Output
from calculators.batch import RigBatch
from calculators.errors import RigbenchError

#: Seconds a third-party ``compute`` may take on one batch before its result is given up.
DEFAULT_TIME_BUDGET_S = 2.0

# Attribute the registry sets on each calculator instance it loads; absent or None: run inline.
_BUDGET_ATTR = "_rigbench_time_budget_s"
# Attribute holding the thread of a call that overran its budget and is still running.
_RUNAWAY_ATTR = "_rigbench_runaway_thread"

# Below this many elements a Python loop over ``tolist()`` beats numpy's per-call overhead.
_SMALL = 64


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


class OutputContractError(ValueError):
    """A calculator returned something other than its declared outputs."""


class TimeBudgetExceeded(RuntimeError):
    """A third-party compute took longer than its time budget."""


class _Escaped(Exception):
    """Carries a BaseException that is not an Exception (SystemExit…) out of a worker thread."""

    def __init__(self, original: BaseException):
        super().__init__(original)
        self.original = original


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
    # Flat row index -> outputs declared finite that came out NaN or infinite for that row only
    # (an overflow on extreme inputs): those values are null, the other rows stand.
    row_errors: dict[int, list[str]] = field(default_factory=dict)


def set_time_budget(calculator: Calculator, seconds: float | None) -> None:
    """Run ``calculator`` in a worker thread bounded by ``seconds`` (None: inline, no budget)."""
    if seconds is not None and not seconds > 0:
        raise ValueError(f"a time budget must be a positive number of seconds, got {seconds!r}")
    # object.__setattr__ also works on frozen dataclasses and classes that guard __setattr__.
    object.__setattr__(calculator, _BUDGET_ATTR, seconds)


def time_budget(calculator: Calculator) -> float | None:
    """The calculator's time budget in seconds, or None when it runs inline."""
    return getattr(calculator, _BUDGET_ATTR, None)


def run(calculator: Calculator, batch: RigBatch, params: BaseModel) -> Run:
    """Compute and check one calculator; any failure becomes ``Run.error`` rather than an exception."""
    result = Run(calculator)
    budget = getattr(calculator, _BUDGET_ATTR, None)
    try:
        if budget is None:
            # Overflow and invalid operations give inf and NaN, checked below per row; numpy's
            # warnings about them would only reach stderr outside the request log.
            with np.errstate(all="ignore"):
                raw = calculator.compute(batch, params)
                units = calculator.output_units(batch, params)
        else:
            raw, units = _call_with_budget(calculator, batch, params, budget)
        result.values = _checked(calculator.outputs, raw, batch.shape, result.row_errors)
        result.units = {o.name: units.get(o.name, o.unit) for o in calculator.outputs}
    except RigbenchError as exc:
        result.values, result.error = {}, str(exc)
    except OutputContractError as exc:
        result.values, result.error = {}, f"{calculator.name} broke the output contract: {exc}"
    except TimeBudgetExceeded as exc:
        result.values, result.error = {}, f"{calculator.name} {exc}"
    except Exception as exc:  # isolation: a broken calculator must not take the request down
        shown = exc.original if isinstance(exc, _Escaped) else exc
        result.values, result.error = {}, f"{calculator.name} failed: {type(shown).__name__}: {shown}"
    return result


def _call_with_budget(
    calculator: Calculator, batch: RigBatch, params: BaseModel, budget: float
) -> tuple[Any, Mapping[str, str]]:
    runaway = getattr(calculator, _RUNAWAY_ATTR, None)
    if runaway is not None:
        if runaway.is_alive():
            raise TimeBudgetExceeded(
                "is still busy with an earlier call that exceeded its time budget; not started again"
            )
        object.__setattr__(calculator, _RUNAWAY_ATTR, None)
    batch = _read_only(batch)
    box: dict[str, Any] = {}

    def work() -> None:
        try:
            with np.errstate(all="ignore"):  # numpy's error state is per thread
                box["raw"] = calculator.compute(batch, params)
                box["units"] = calculator.output_units(batch, params)
        except BaseException as exc:  # reported to the caller, whatever it is (even SystemExit)
            box["error"] = exc

    worker = threading.Thread(target=work, name=f"rigbench-calculator-{calculator.name}", daemon=True)
    worker.start()
    worker.join(budget)
    if worker.is_alive():
        object.__setattr__(calculator, _RUNAWAY_ATTR, worker)
        raise TimeBudgetExceeded(f"exceeded its time budget of {budget:g} s")
    if "error" in box:
        error = box["error"]
        raise error if isinstance(error, Exception) else _Escaped(error)
    return box["raw"], box["units"]


def _read_only(batch: RigBatch) -> RigBatch:
    """The same batch, whose columns are read-only views (the caller's arrays stay writable).

    Views are made when a column is first read: a plugin reads a few of the batch's ~40 columns, and
    rebuilding the whole batch would cost more than the plugin's compute on a small comparison.
    """
    guarded = copy.copy(batch)  # a shallow copy skips the shape checks of __post_init__
    object.__setattr__(guarded, "columns", _ReadOnlyColumns(batch.columns))
    return guarded


class _ReadOnlyColumns(Mapping[str, Any]):
    __slots__ = ("_columns", "_views")

    def __init__(self, columns: Mapping[str, Any]):
        self._columns = columns
        self._views: dict[str, Any] = {}

    def __getitem__(self, name: str) -> Any:
        view = self._views.get(name)
        if view is None:
            view = self._columns[name]
            if isinstance(view, np.ndarray):
                view = view.view()
                view.flags.writeable = False
            self._views[name] = view
        return view

    def __iter__(self):
        return iter(self._columns)

    def __len__(self) -> int:
        return len(self._columns)


def _checked(
    outputs: tuple[Output, ...], raw: Any, shape: tuple[int, ...], row_errors: dict[int, list[str]]
) -> dict[str, np.ndarray]:
    if type(raw) is not dict and not isinstance(raw, Mapping):  # dict first: the ABC check is slower
        raise OutputContractError(
            f"compute returned a {type(raw).__name__}, not a mapping of output name to array"
        )
    return {o.name: _checked_output(o, raw, shape, row_errors) for o in outputs}


def _checked_output(
    output: Output, raw: Mapping[str, Any], shape: tuple[int, ...], row_errors: dict[int, list[str]]
) -> np.ndarray:
    try:
        values = np.asarray(raw[output.name])
    except KeyError:
        raise OutputContractError(f"did not return its declared output {output.name!r}") from None
    except Exception as exc:  # e.g. a ragged list numpy cannot make an array of
        raise OutputContractError(f"output {output.name!r} is not an array: {exc}") from None
    if values.shape != shape:  # the fast path (same shape) skips numpy's broadcasting machinery
        try:
            values = np.broadcast_to(values, shape)
        except ValueError:
            raise OutputContractError(
                f"output {output.name!r} has shape {values.shape}, which does not fit the batch's {shape}"
            ) from None
    kind = values.dtype.kind
    if output.kind == "number":
        if kind not in "fiu":
            raise OutputContractError(f"output {output.name!r} is not numeric (dtype {values.dtype})")
        if kind == "f" and not output.nullable and not _all_finite(values):
            finite = np.isfinite(values)
            if not finite.any():  # every row: a broken calculator, not an extreme input
                raise OutputContractError(
                    f"output {output.name!r} has NaN or infinite values but is declared finite"
                    " (declare nullable=True if a missing input makes it undefined)"
                )
            for row in np.flatnonzero(~finite).tolist():
                row_errors.setdefault(row, []).append(output.name)
    elif output.kind == "boolean" and kind != "b":
        raise OutputContractError(f"output {output.name!r} is not boolean (dtype {values.dtype})")
    elif output.kind == "text" and kind not in "US":
        raise OutputContractError(f"output {output.name!r} is not text (dtype {values.dtype})")
    return values


def _all_finite(values: np.ndarray) -> bool:
    if values.size <= _SMALL:
        flat = values if values.ndim == 1 else values.ravel()
        return all(map(math.isfinite, flat.tolist()))
    return bool(np.isfinite(values).all())


def to_json_values(values: np.ndarray) -> list:
    """An array as a flat list of JSON-ready values: NaN and infinities become null."""
    values = np.asarray(values)
    flat = values if values.ndim == 1 else values.ravel()
    if flat.dtype.kind != "f":
        return flat.tolist()
    if flat.size <= _SMALL:
        out = flat.tolist()
        if all(map(math.isfinite, out)):
            return out
        return [v if math.isfinite(v) else None for v in out]
    if np.isfinite(flat).all():
        return flat.tolist()
    out = flat.astype(object)
    out[~np.isfinite(flat)] = None
    return out.tolist()
