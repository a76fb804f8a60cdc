"""Saved evaluations: a purchase evaluation kept with its answer, its owner and its visibility.

What is kept (``SavedEvaluationRow``): the request as sent; a copy of every component it was
computed from, the candidate eyepieces among them (a stored ``{"id": N}`` entry copied as it was at
saving, so the report can always be drawn); which entries were stored ids; and the answer. Reading
one later compares each stored entry with the equipment as it is now (``unchanged``, ``changed``,
``retired`` or ``gone`` — deleted, or no longer readable by the caller), and a re-run computes the
answer again from today's equipment (the copy standing in for what is gone) and says what changed.

Privacy: a saved evaluation is read like other stored items (its owner, or anyone when public);
one that is private to someone else is a 404, never a 403. A public one may use only public stored
equipment (as a public rig), checked inside the writing transaction with the copies compared to
what is stored; it shows the names, specs and prices of that equipment as they were at saving.
"""

from __future__ import annotations

from datetime import datetime
from typing import Any, Literal

from pydantic import BaseModel, Field, TypeAdapter, ValidationError, field_validator
from sqlalchemy import Engine
from sqlmodel import Session, select

from api.accounts.keys import Principal
from api.evaluations.request import (
    LISTS,
    MODELS,
    entries_of,
    EvaluationRequest,
    as_problem,
    check_size,
    inline_components,
    needs_database,
    resolve_request,
    sizes,
    with_site,
)
from api.equipment.rules import SlotRequest, resolve_slots
from api.http.problems import ApiProblem, FieldError, from_validation_error
from api.schemas import Ref, Visible, refuse_nul
from api.sites.conditions import read_site
from api.storage import store
from api.storage.models import CameraRow, MountRow, SavedEvaluationRow, TelescopeRow, TrainElementRow, Visibility
from calculators.batch import AXES
from calculators.evaluation_schemas import EvaluationResult
from calculators.ownership import CandidateTrainElement, candidate_model
from calculators.schemas import Name
from calculators.sweep import EvaluationError, evaluate_spec
from calculators.train_elements import train_element

TABLES = {"telescope": TelescopeRow, "camera": CameraRow, "train": TrainElementRow, "mount": MountRow,
          "eyepiece": TrainElementRow}

#: What a saved evaluation keeps copies of: the engine's axes, then the candidate eyepieces
#: (``components`` here is a tuple in this order).
KINDS = (*AXES, "eyepiece")
SAVED_LISTS = {**LISTS, "eyepiece": "eyepieces"}


_CANDIDATE_ELEMENT = TypeAdapter(CandidateTrainElement)


def _model(kind: str, spec: dict) -> Any:
    """A component from its stored spec or saved copy (a copy keeps ``owned``, as it was computed)."""
    if kind in ("train", "eyepiece"):
        return _CANDIDATE_ELEMENT.validate_python(spec)
    return candidate_model(MODELS[kind]).model_validate(spec)


def _dump(item: Any) -> Any:
    return None if item is None else item.model_dump(mode="json", exclude_none=True)


def _spec(item: Any) -> Any:
    """What the item is, without whether the caller owns it (which is no property of the item)."""
    dumped = _dump(item)
    if isinstance(dumped, dict):
        dumped.pop("owned", None)
    return dumped
LABEL = "saved evaluation"


class SavedEvaluationCreate(EvaluationRequest):
    """An evaluation request to compute and keep, with a name and who may read it."""

    name: Name = Field(description="What this evaluation is for, e.g. 'first imaging rig'.")
    visibility: Visible = Visibility.private

    _name_has_no_nul = field_validator("name")(refuse_nul)


Status = Literal["unchanged", "changed", "retired", "gone"]


class StoredEntry(BaseModel):
    """One ``{"id": N}`` entry of the saved request, compared with that equipment now."""

    kind: Literal["telescope", "camera", "train", "mount", "eyepiece"]
    index: int = Field(description="Position in the request's list of that kind.")
    position: int | None = Field(default=None, description="For a train: the element's place in it.")
    id: int
    name: str | None = Field(description="The name it had when the evaluation was saved.")
    status: Status = Field(description="unchanged; changed (see `changed_fields`); retired; gone "
                           "(deleted, or no longer readable by you): the saved copy stands in for it.")
    changed_fields: list[str] = Field(default_factory=list)


class SavedEvaluationPublic(BaseModel):
    """A saved evaluation: its request, the answer it had when saved and its report's address."""

    id: int
    owner: str
    name: str | None
    visibility: Visibility
    version: int
    created_at: datetime
    updated_at: datetime
    report_url: str = Field(description="Path of the report page (HTML) on this server.")
    request: dict[str, Any] = Field(description="The request as it was sent.")
    stored_equipment: list[StoredEntry] = Field(
        description="Each stored {\"id\": N} entry of the request and how it stands now."
    )
    result: EvaluationResult = Field(description="The answer when the evaluation was saved.")


def report_path(item_id: int) -> str:
    return f"/evaluations/{item_id}"


# --- saving ---------------------------------------------------------------------------------------

def compute(engine: Engine, principal: Principal | None, body: EvaluationRequest, *, registry,
            maximum: int, max_front_rows: int, components=None, ids=None):
    """The components (telescopes, cameras, trains, mounts, eyepieces; stored ids resolved, unless
    given), their ids, the request with the site's conditions in its params, and the answer, as
    ``POST /v1/evaluations`` computes it; problems name the field."""
    check_size(body, maximum)
    if components is None and needs_database(body):
        four, ids, eyepieces = resolve_request(engine, principal, body)
        components = (*four, eyepieces)
    elif components is None:
        components, ids = (*inline_components(body), list(body.eyepieces)), None
    site, site_id = body.site, None
    if isinstance(site, Ref):
        site, site_id = read_site(engine, principal, site)
    spec, used = with_site(body, site, site_id, registry.calculators)
    try:
        result = evaluate_spec(*components[:4], spec, calculators=registry.calculators, ids=ids,
                               max_combinations=maximum, max_front_rows=max_front_rows,
                               eyepieces=components[4])
    except EvaluationError as exc:
        raise as_problem(exc, sizes(body)) from None
    if used is not None:
        result.site = used
    return components, ids, spec, result


def kept_entries(body: EvaluationRequest, kind: str):
    """(index, position in the train or None, value) of every candidate of one kind kept."""
    if kind == "eyepiece":
        return ((i, None, value) for i, value in enumerate(body.eyepieces))
    return entries_of(body, kind)


def snapshot(body: EvaluationRequest, components, params: dict[str, Any]) -> dict[str, Any]:
    """What the row's ``spec`` keeps: the request, a copy of every component, the stored entries,
    and the params the answer was computed with (a site's conditions filled in)."""
    request = body.model_dump(mode="json", exclude={"name", "visibility"}, exclude_unset=True)
    copies = {
        SAVED_LISTS[kind]: [[_dump(e) for e in c] if kind == "train" else _dump(c) for c in items]
        for kind, items in zip(KINDS, components)
    }
    stored = [
        {"kind": kind, "index": i, "id": value.id, **({} if j is None else {"position": j})}
        for kind in KINDS for i, j, value in kept_entries(body, kind) if isinstance(value, Ref)
    ]
    return {"request": request, "components": copies, "stored": stored, "params": params}


def check_copies(session: Session, principal: Principal, body: SavedEvaluationCreate, components) -> None:
    """Inside the writing transaction: every stored entry is still readable, in service and as it
    was copied (locked ``FOR SHARE`` on PostgreSQL; SQLite holds its write lock), and a public
    saved evaluation uses only public equipment, as a public rig does (a members-only one no private
    equipment, as a members-only rig). 422 naming the field for what the caller can fix; 409 when
    the equipment changed while the answer was computed."""
    public = body.visibility == Visibility.public
    shown = {"public_only": public, "members_only": body.visibility == Visibility.members}
    refs = [(kind, i, j, value) for kind in AXES for i, j, value in entries_of(body, kind)
            if isinstance(value, Ref)]
    eyepieces = [(i, value) for i, value in enumerate(body.eyepieces) if isinstance(value, Ref)]
    if not refs and not eyepieces:
        return
    requests = [
        SlotRequest({kind: ref}, loc=(LISTS[kind], i), slot_in_path=False, **shown)
        if j is None else
        SlotRequest({"train": [ref]}, loc=(LISTS[kind], i, j), slot_in_path=False, **shown)
        for kind, i, j, ref in refs
    ]
    if eyepieces:  # one list, so an error names its entry (eyepieces.N.id)
        requests.append(SlotRequest({"train": list(body.eyepieces)}, loc=("eyepieces",),
                                    slot_in_path=False, **shown))
    specs = resolve_slots(session, principal, requests, lock=True)
    checks = [(f"{LISTS[kind]}.{i}" if j is None else f"{LISTS[kind]}.{i}.{j}", kind, ref,
               _model(kind, spec[kind]) if j is None else train_element(spec["train"][0]),
               components[AXES.index(kind)][i] if j is None else components[AXES.index(kind)][i][j])
              for (kind, i, j, ref), spec in zip(refs, specs)]
    checks += [(f"eyepieces.{i}", "eyepiece", ref, train_element(specs[-1]["train"][i]), components[4][i])
               for i, ref in eyepieces]
    for where, kind, ref, now, copy in checks:
        if _spec(now) != _spec(copy):
            raise ApiProblem(409, f"{where}: {kind} {ref.id} changed while the evaluation was "
                             "computed; send the request again", errors=[
                                 FieldError(field=f"{where}.id", message="changed while computing")])


def save(session: Session, principal: Principal, body: SavedEvaluationCreate, components, params,
         result: EvaluationResult) -> SavedEvaluationRow:
    store.begin_write(session)
    check_copies(session, principal, body, components)
    return store.insert(session, SavedEvaluationRow, principal, {
        "name": body.name, "visibility": body.visibility.value,
        "spec": snapshot(body, components, params), "result": result.model_dump(mode="json"),
    })


# --- reading --------------------------------------------------------------------------------------

def fetch(session: Session, item_id: int, principal: Principal | None) -> tuple[SavedEvaluationRow, str]:
    """The saved evaluation and its owner's handle; 404 when missing or private to someone else."""
    return store.fetch_readable(session, SavedEvaluationRow, item_id, principal, LABEL)


def saved_components(row: SavedEvaluationRow) -> tuple[list[Any], ...]:
    """The components the saved answer was computed from, as calculator models (telescopes,
    cameras, trains, mounts, eyepieces; no eyepieces in one saved before they were kept)."""
    copies = row.spec["components"]
    return tuple(
        [[_model(kind, e) for e in c] if kind == "train" else None if c is None else _model(kind, c)
         for c in copies.get(SAVED_LISTS[kind], [])]
        for kind in KINDS
    )


def _retired(item: Any) -> bool:
    # Retiring equipment is planned (club operations); honour it wherever the table grows the column.
    return bool(getattr(item, "retired_at", None) or getattr(item, "retired", False))


def stored_equipment(session: Session, row: SavedEvaluationRow, principal: Principal | None
                     ) -> tuple[list[StoredEntry], dict[tuple[str, int], Any]]:
    """Each stored entry with its status now, and the current model of each one still usable."""
    entries, current = [], {}
    by_kind: dict[str, list[dict]] = {}
    for entry in row.spec.get("stored", []):
        by_kind.setdefault(entry["kind"], []).append(entry)
    copies = row.spec["components"]
    for kind, wanted in by_kind.items():
        table = TABLES[kind]
        found = {item.id: item for item in session.exec(
            select(table).where(table.id.in_({e["id"] for e in wanted}), store.readable_by(table, principal))
        ).all()}
        for entry in wanted:
            saved = copies[SAVED_LISTS[kind]][entry["index"]]
            position = entry.get("position")
            if position is not None:
                saved = saved[position]
            item = found.get(entry["id"])
            status, changed, model = "gone", [], None
            if item is not None and _retired(item):
                status = "retired"
            elif item is not None:
                try:
                    model = _model(kind, item.spec)
                except ValidationError:
                    model = None  # unreadable under today's schema: the saved copy stands in
                if model is not None:
                    now = _spec(model)
                    was = {k: v for k, v in saved.items() if k != "owned"}
                    changed = sorted(k for k in {*now, *was} if now.get(k) != was.get(k))
                    status = "changed" if changed else "unchanged"
                    if kind != "eyepiece" or now.get("kind") == "eyepiece":  # else the copy stands in
                        current[(kind, entry["index"], position)] = model
            entries.append(StoredEntry(kind=kind, index=entry["index"], position=position, id=entry["id"],
                                       name=saved.get("name"), status=status, changed_fields=changed))
    entries.sort(key=lambda e: (KINDS.index(e.kind), e.index, e.position or 0))
    return entries, current


def public(row: SavedEvaluationRow, owner: str, entries: list[StoredEntry]) -> SavedEvaluationPublic:
    return SavedEvaluationPublic(
        id=row.id, owner=owner, name=row.name, visibility=row.visibility, version=row.version,
        created_at=store.aware(row.created_at), updated_at=store.aware(row.updated_at),
        report_url=report_path(row.id), request=row.spec["request"], stored_equipment=entries,
        result=EvaluationResult.model_validate(row.result),
    )


def saved_request(row: SavedEvaluationRow) -> EvaluationRequest:
    """The saved request, validated again (422 naming the field if today's schema refuses it)."""
    try:
        return EvaluationRequest.model_validate(row.spec["request"])
    except ValidationError as exc:
        raise from_validation_error(exc, prefix=("request",)) from None


def saved_spec(row: SavedEvaluationRow) -> EvaluationRequest:
    """The saved request with the params its answer was computed with (what the report draws from)."""
    request = saved_request(row)
    params = row.spec.get("params")
    return request if params is None else request.model_copy(update={"params": params})
