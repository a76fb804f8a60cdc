"""Re-running a saved evaluation: today's equipment (the saved copy standing in for what is gone or
retired, so indices keep their meaning), the answer now, and what changed against the saved one.
Nothing is stored by a re-run."""

from __future__ import annotations

from typing import Any

from pydantic import BaseModel, Field

from api.accounts.keys import Principal
from api.evaluations.request import MAX_FRONT_ROWS
from api.evaluations.saved import (
    KINDS,
    StoredEntry,
    compute,
    report_path,
    saved_components,
    saved_request,
)
from api.storage.models import SavedEvaluationRow
from calculators.batch import AXES
from calculators.evaluation_schemas import EvaluationResult, Indices
from calculators.ownership import as_owned, is_owned

#: Most value changes listed in a re-run's answer (the whole new answer is there too).
MAX_VALUE_CHANGES = 200


class ValueChange(BaseModel):
    indices: Indices
    key: str
    saved: float | None
    now: float | None


class AnswerChanges(BaseModel):
    """How a re-run's answer differs from the saved one; combinations are named by their indices."""

    evaluated: tuple[int, int] = Field(description="Saved, now.")
    feasible: tuple[int, int] = Field(description="Saved, now.")
    front_added: list[Indices] = Field(description="On the front now, not when saved.")
    front_removed: list[Indices] = Field(description="On the front when saved, not now.")
    best_saved: Indices | None = Field(description="First row of `top` when saved.")
    best_now: Indices | None = Field(description="First row of `top` now.")
    values: list[ValueChange] = Field(
        description=f"Rows of the front or top both then and now whose values changed (at most "
        f"{MAX_VALUE_CHANGES})."
    )


class Rerun(BaseModel):
    """A saved evaluation computed again with the equipment as it is now (nothing is stored)."""

    id: int
    report_url: str
    stored_equipment: list[StoredEntry]
    changes: AnswerChanges
    result: EvaluationResult = Field(description="The answer now.")



def rerun_components(row: SavedEvaluationRow, current: dict[tuple[str, int], Any]):
    """Today's equipment where it is still readable and in service, the saved copy elsewhere; and
    the stored id of each entry (None for inline ones)."""
    lists = saved_components(row)
    for (kind, index, position), model in current.items():
        # Owned as it was when saved (the request said so, or it was the saver's own item).
        if position is None:
            was = lists[KINDS.index(kind)][index]
            lists[KINDS.index(kind)][index] = as_owned(model, is_owned(was))
        else:  # an element of a train
            was = lists[KINDS.index(kind)][index][position]
            lists[KINDS.index(kind)][index][position] = as_owned(model, is_owned(was))
    ids = {kind: [None] * len(items) for kind, items in zip(KINDS, lists)}
    ids["train"] = [[None] * len(train) for train in lists[KINDS.index("train")]]
    for entry in row.spec.get("stored", []):
        if entry.get("position") is None:
            ids[entry["kind"]][entry["index"]] = entry["id"]
        else:
            ids[entry["kind"]][entry["index"]][entry["position"]] = entry["id"]
    return lists, ids


def changes(saved: EvaluationResult, now: EvaluationResult) -> AnswerChanges:
    def key(row) -> tuple[int, ...]:
        # A combination is also told apart by its binning factor (a result saved before binning
        # existed reads as 1) and its eyepiece; sorted with -1 for "none".
        ix = row.indices
        return (*(-1 if getattr(ix, k) is None else getattr(ix, k) for k in AXES),
                ix.binning or 1 if ix.eyepiece is None else -1,
                -1 if ix.eyepiece is None else ix.eyepiece)

    before = {key(r): r for r in [*saved.front, *saved.top]}
    after = {key(r): r for r in [*now.front, *now.top]}
    front_before = [key(r) for r in saved.front]
    front_after = [key(r) for r in now.front]
    moved = []
    for k in sorted(before.keys() & after.keys()):
        for name in sorted(before[k].values.keys() & after[k].values.keys()):
            a, b = before[k].values[name], after[k].values[name]
            if a != b and len(moved) < MAX_VALUE_CHANGES:
                moved.append(ValueChange(indices=before[k].indices, key=name, saved=a, now=b))

    def indices(keys) -> list[Indices]:
        names = (*AXES, "binning", "eyepiece")
        return [Indices(**{n: None if v == -1 else v for n, v in zip(names, k)}) for k in keys]

    was, is_now = set(front_before), set(front_after)
    return AnswerChanges(
        evaluated=(saved.evaluated, now.evaluated), feasible=(saved.feasible, now.feasible),
        front_added=indices(k for k in front_after if k not in was),
        front_removed=indices(k for k in front_before if k not in is_now),
        best_saved=saved.top[0].indices if saved.top else None,
        best_now=now.top[0].indices if now.top else None,
        values=moved,
    )


def rerun(state, principal: Principal | None, row: SavedEvaluationRow, entries: list[StoredEntry],
          current: dict[tuple[str, int], Any]):
    """The saved evaluation computed again now (the site read again too, its conditions may have
    changed like the equipment); also the components and the spec it was computed from."""
    components, ids = rerun_components(row, current)
    components, _ids, spec, now = compute(
        state.engine, principal, saved_request(row), registry=state.registry,
        maximum=state.settings.max_combinations, max_front_rows=MAX_FRONT_ROWS, components=components, ids=ids,
    )
    before = EvaluationResult.model_validate(row.result)
    answer = Rerun(id=row.id, report_url=report_path(row.id), stored_equipment=entries,
                   changes=changes(before, now), result=now)
    return answer, components, spec
