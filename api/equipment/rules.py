"""The stored resources (four kinds of equipment and rigs) and the rules that tie rigs to equipment.

The kinds are telescopes, cameras, train elements (``/v1/train-elements``; the old ``/v1/modifiers``
serves the same items for one release) and mounts. A rig's train is a list of slots: each element
inline or ``{"id": N}``, mirrored in the rig's ``train_<position>_id`` columns.

Rules, enforced here and documented in README:

* a rig slot may reference only equipment its owner can read (their own, or someone's public item);
* a public rig may reference only public equipment, so a public rig never shows a private item;
* equipment a rig references cannot be deleted (409 naming the rigs); the database's foreign keys
  refuse it too, should two requests race;
* equipment that rigs of other accounts or public rigs use cannot be made private (409), and a change
  that would make a rig using it invalid (e.g. a focal ratio below the physical minimum with that
  rig's reducer) is refused (409 naming the rigs).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

from pydantic import BaseModel, ValidationError
from sqlmodel import Session, select

from api import schemas
from api.accounts.keys import Principal
from api.http.problems import ApiProblem, FieldError, from_validation_error
from sqlalchemy import or_

from api.storage.models import (
    TRAIN_COLUMNS,
    CameraRow,
    MountRow,
    RigRow,
    StoredItem,
    TelescopeRow,
    TrainElementRow,
    Visibility,
)
from api.storage.store import aware, fetch_by_ids, readable_by
from calculators.schemas import Rig
from calculators.train_elements import train_element

SLOT_TABLES: dict[str, type[StoredItem]] = {
    "telescope": TelescopeRow,
    "train": TrainElementRow,  # a list of slots: the rig's train
    "camera": CameraRow,
    "mount": MountRow,
}
#: The slot name each kind of equipment fills in a rig.
TRAIN = "train"


def meta(row: StoredItem, owner: str) -> dict[str, Any]:
    return {
        "id": row.id, "owner": owner, "visibility": row.visibility, "version": row.version,
        "created_at": aware(row.created_at), "updated_at": aware(row.updated_at),
    }


@dataclass(frozen=True)
class Resource:
    """Everything the generic CRUD router needs to serve one kind of stored item."""

    path: str  # URL segment, e.g. "telescopes"
    label: str  # one item, e.g. "telescope"
    table: type[StoredItem]
    create: type[BaseModel]
    update: type[BaseModel]
    public: type[BaseModel]
    list: type[BaseModel]
    # body (a validated `create` model) -> column values to store
    prepare: Callable[[Session, Principal, BaseModel], dict[str, Any]]
    # rows with their owner's handle -> public models
    present: Callable[[Session, Sequence[tuple[StoredItem, str]]], list[BaseModel]]
    before_change: Callable[[Session, Principal, StoredItem, dict[str, Any]], None] = lambda *a: None
    before_delete: Callable[[Session, Principal, StoredItem], None] = lambda *a: None
    tags: list[str] = field(default_factory=list)
    deprecated: bool = False


# --- equipment ------------------------------------------------------------------------------------

def _equipment_prepare(_session: Session, _principal: Principal, body: BaseModel) -> dict[str, Any]:
    spec = body.model_dump(mode="json", exclude={"visibility"})
    return {"spec": spec, "name": spec.get("name"), "visibility": body.visibility.value}


def _equipment_present(public: type[BaseModel]):
    def present(_session: Session, rows: Sequence[tuple[StoredItem, str]]) -> list[BaseModel]:
        return [public.model_validate({**row.spec, **meta(row, owner)}) for row, owner in rows]

    return present


def _rigs_using(session: Session, slot: str, item_id: int) -> list[RigRow]:
    if slot == TRAIN:
        used = or_(*(getattr(RigRow, column) == item_id for column in TRAIN_COLUMNS))
    else:
        used = getattr(RigRow, f"{slot}_id") == item_id
    return list(session.exec(select(RigRow).where(used).order_by(RigRow.id)).all())


def _rig_list(rigs: Sequence[RigRow], principal: Principal) -> tuple[list[int], int]:
    """Ids of the rigs the caller may see, and how many others there are."""
    shown = [r.id for r in rigs if r.visibility == Visibility.public.value or r.owner_id == principal.account.id]
    return shown, len(rigs) - len(shown)


def _used_by(label: str, item_id: int, rigs: Sequence[RigRow], principal: Principal, what: str) -> ApiProblem:
    shown, hidden = _rig_list(rigs, principal)
    names = ", ".join(map(str, shown)) or "none you can see"
    more = f" and {hidden} private rig(s) of other accounts" if hidden else ""
    return ApiProblem(
        409, f"{label} {item_id} is used by rig(s) {names}{more}; {what}",
        title="Equipment in use", type="/problems/equipment-in-use", rigs=shown, hidden_rigs=hidden,
    )


def _equipment_hooks(label: str, slot: str):
    def before_change(session: Session, principal: Principal, row: StoredItem, values: dict[str, Any]) -> None:
        rigs = _rigs_using(session, slot, row.id)
        if not rigs:
            return
        if values["visibility"] == Visibility.private.value:
            exposed = [r for r in rigs if r.visibility == Visibility.public.value or r.owner_id != row.owner_id]
            if exposed:
                raise _used_by(
                    label, row.id, exposed, principal,
                    "public rigs and other accounts' rigs need it to stay public",
                )
        if values["spec"] != row.spec:
            broken = []
            specs = stored_rig_specs(session, rigs, override={(slot, row.id): values["spec"]})
            for rig, spec in zip(rigs, specs):
                try:
                    Rig.model_validate(spec)
                except ValidationError:
                    broken.append(rig)
            if broken:
                raise _used_by(label, row.id, broken, principal, "the change would make them invalid")

    def before_delete(session: Session, principal: Principal, row: StoredItem) -> None:
        rigs = _rigs_using(session, slot, row.id)
        if rigs:
            raise _used_by(label, row.id, rigs, principal, "change or delete those rigs first")

    return before_change, before_delete


def _element_prepare(session: Session, principal: Principal, body: BaseModel) -> dict[str, Any]:
    return _equipment_prepare(session, principal, body.root)  # a root model over the kinds


def _equipment(path: str, label: str, table: type[StoredItem], bodies, slot: str | None = None,
               deprecated: bool = False) -> Resource:
    before_change, before_delete = _equipment_hooks(label, slot or label)
    rooted = bodies is schemas.TRAIN_ELEMENT
    return Resource(
        path=path, label=label, table=table, create=bodies.create, update=bodies.update,
        public=bodies.public, list=bodies.list,
        prepare=_element_prepare if rooted else _equipment_prepare,
        present=_equipment_present(bodies.public), before_change=before_change,
        before_delete=before_delete, tags=["equipment"], deprecated=deprecated,
    )


TELESCOPES = _equipment("telescopes", "telescope", TelescopeRow, schemas.TELESCOPE)
CAMERAS = _equipment("cameras", "camera", CameraRow, schemas.CAMERA)
TRAIN_ELEMENTS = _equipment("train-elements", "train element", TrainElementRow,
                            schemas.TRAIN_ELEMENT, slot=TRAIN)
# The old name of the same items, served for one release.
MODIFIERS = _equipment("modifiers", "modifier", TrainElementRow, schemas.TRAIN_ELEMENT, slot=TRAIN,
                       deprecated=True)
MOUNTS = _equipment("mounts", "mount", MountRow, schemas.MOUNT)


# --- rigs -----------------------------------------------------------------------------------------

@dataclass
class SlotRequest:
    """One rig's slots to resolve for a caller: ``loc`` prefixes error paths (e.g. ("rigs", 3))."""

    slots: dict[str, Any]  # slot -> Ref | inline model | None
    loc: tuple[Any, ...] = ()
    public_only: bool = False
    # False when ``loc`` already names the item (a list entry such as ("telescopes", 3)), so
    # errors read "telescopes.3.id" rather than "telescopes.3.telescope.id".
    slot_in_path: bool = True


def resolve_slots(session: Session, principal: Principal | None, requests: Sequence[SlotRequest]) -> list[dict]:
    """Replace ``{"id": N}`` slots by the stored specs the caller may read; 422 naming each bad one.

    One query per kind of equipment, however many rigs are given.
    """
    wanted: dict[str, set[int]] = {slot: set() for slot in SLOT_TABLES}
    for request in requests:
        for slot, value in request.slots.items():
            for item in (value if slot == TRAIN else [value]):
                if isinstance(item, schemas.Ref):
                    wanted[slot].add(item.id)
    found: dict[str, dict[int, StoredItem]] = {}
    for slot, ids in wanted.items():
        table = SLOT_TABLES[slot]
        found[slot] = {} if not ids else {
            row.id: row
            for row in session.exec(select(table).where(table.id.in_(ids), readable_by(table, principal))).all()
        }
    errors: list[FieldError] = []
    resolved = []
    def one(slot: str, value: Any, where: str) -> Any:
        if not isinstance(value, schemas.Ref):
            return value  # None, or already validated: Rig reuses the instance as it is
        what = "train element" if slot == TRAIN else slot
        row = found[slot].get(value.id)
        if row is None:
            errors.append(FieldError(field=where, message=f"no {what} with id {value.id} that you can read"))
        elif request.public_only and row.visibility != Visibility.public.value:
            errors.append(FieldError(
                field=where,
                message=f"{what} {value.id} is private; a public rig may use only public equipment",
            ))
        else:
            return row.spec
        return None

    for request in requests:
        out: dict[str, Any] = {}
        for slot, value in request.slots.items():
            named = (slot,) if request.slot_in_path else ()
            if slot == TRAIN:
                out[slot] = [one(slot, item, ".".join(map(str, (*request.loc, *named, i, "id"))))
                             for i, item in enumerate(value)]
            else:
                out[slot] = one(slot, value, ".".join(map(str, (*request.loc, *named, "id"))))
        resolved.append(out)
    if errors:
        raise ApiProblem(
            422, "; ".join(f"{e.field}: {e.message}" for e in errors[:5]),
            title="Invalid input", type="/problems/invalid-input", errors=errors,
        )
    return resolved


def full_rig(body: BaseModel, slots: dict[str, Any], loc: tuple[Any, ...] = ()) -> Rig:
    """The calculator's Rig from a rig body and its resolved slots; 422 naming fields if invalid."""
    data = {
        "name": body.name,
        **slots,
        "accessories": body.accessories,
        "geometry": body.geometry,
    }
    try:
        return Rig.model_validate(data)
    except ValidationError as exc:
        raise from_validation_error(exc, prefix=loc) from None


def body_slots(body: BaseModel, loc: tuple[Any, ...] = ()) -> dict[str, Any]:
    """A rig body's slots; the deprecated ``modifier`` is read as a one-element train."""
    slots = {slot: getattr(body, slot, None) for slot in SLOT_TABLES}
    slots[TRAIN] = list(slots[TRAIN] or [])
    modifier = body.__dict__.get("modifier")  # not getattr: the field is deprecated
    if modifier is not None:
        if slots[TRAIN]:
            where = ".".join(map(str, (*loc, "modifier")))
            raise ApiProblem(
                422, f"{where}: give the train, or the deprecated modifier, not both",
                title="Invalid input", type="/problems/invalid-input",
                errors=[FieldError(field=where, message="give the train, or the deprecated "
                                   "modifier, not both")],
            )
        if not isinstance(modifier, schemas.Ref):
            modifier = train_element(modifier.to_element())
        slots[TRAIN] = [modifier]
    return slots


def has_refs(slots: dict[str, Any]) -> bool:
    """Whether any slot (or train element) names stored equipment."""
    return any(isinstance(item, schemas.Ref)
               for slot, value in slots.items() for item in (value if slot == TRAIN else [value]))


def stored_rig_specs(
    session: Session, rigs: Sequence[RigRow], override: dict[tuple[str, int], dict] | None = None
) -> list[dict]:
    """Stored rigs with their references filled in (no access check: the rules above keep them readable)."""
    override = override or {}
    def items(spec: dict, slot: str) -> list:
        return list(spec.get(slot) or []) if slot == TRAIN else [spec.get(slot)]

    wanted = {slot: [v["id"] for r in rigs for v in items(r.spec, slot) if _is_ref(v)] for slot in SLOT_TABLES}
    rows = {slot: fetch_by_ids(session, SLOT_TABLES[slot], ids) for slot, ids in wanted.items()}

    def filled(slot: str, value: Any) -> Any:
        if not _is_ref(value):
            return value
        key = (slot, value["id"])
        return override[key] if key in override else rows[slot][value["id"]].spec

    specs = []
    for rig in rigs:
        spec = dict(rig.spec)
        for slot in SLOT_TABLES:
            if slot == TRAIN:
                spec[slot] = [filled(slot, v) for v in items(spec, slot)]
            else:
                spec[slot] = filled(slot, spec.get(slot))
        specs.append(spec)
    return specs


def _is_ref(value: Any) -> bool:
    return isinstance(value, dict) and set(value) == {"id"}


def _rig_prepare(session: Session, principal: Principal, body: BaseModel) -> dict[str, Any]:
    public = body.visibility == Visibility.public
    given = body_slots(body)
    [slots] = resolve_slots(session, principal, [SlotRequest(given, public_only=public)])
    full_rig(body, slots)
    spec = body.model_dump(mode="json", exclude={"visibility", "modifier", TRAIN})
    spec[TRAIN] = [item.model_dump(mode="json") for item in given[TRAIN]]
    refs = {
        f"{slot}_id": (value.id if isinstance(value, schemas.Ref) else None)
        for slot, value in given.items() if slot != TRAIN
    }
    train_ids = [item.id if isinstance(item, schemas.Ref) else None for item in given[TRAIN]]
    refs.update({column: train_ids[i] if i < len(train_ids) else None
                 for i, column in enumerate(TRAIN_COLUMNS)})
    return {"spec": spec, "name": body.name, "visibility": body.visibility.value, **refs}


def _rig_present(session: Session, rows: Sequence[tuple[StoredItem, str]]) -> list[BaseModel]:
    specs = stored_rig_specs(session, [row for row, _ in rows])
    return [
        schemas.RigPublic.model_validate({**row.spec, **meta(row, owner), "resolved": spec})
        for (row, owner), spec in zip(rows, specs)
    ]


RIGS = Resource(
    path="rigs", label="rig", table=RigRow, create=schemas.RigCreate, update=schemas.RigUpdate,
    public=schemas.RigPublic, list=schemas.RigList, prepare=_rig_prepare, present=_rig_present,
    tags=["rigs"],
)
