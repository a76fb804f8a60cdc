"""The stored resources (four kinds of equipment and rigs) and the rules that tie rigs to equipment.

The kinds are telescopes, cameras, train elements (``/v1/train-elements``; the old ``/v1/modifiers``
serves the same items for one release) and mounts. A rig's train is a list of slots: each element
inline or ``{"id": N}``, mirrored in the rig's ``train_<position>_id`` columns.

Rules, enforced here and documented in README:

* a rig slot may reference only equipment its owner can read (their own, or someone's public item);
* a public rig may reference only public equipment, so a public rig never shows a private item;
  likewise a club's members-only rig may reference only public or members-only equipment, so it never
  shows the club's members an item the club keeps private;
* equipment a rig references cannot be deleted (409 naming the rigs); the database's foreign keys
  refuse it too, should two requests race;
* equipment that the owner's own public rigs use cannot be made private or members-only, nor what its
  own members-only rigs use private (409); rigs of other accounts
  never block it: they keep a copy of the item's spec (api.equipment.copies), as they do when the
  owner retires it; a change that would make a rig using it invalid (e.g. a focal ratio below the
  physical minimum with that rig's reducer) is refused (409 naming the rigs);
* a retired item cannot go into a new rig.

Every rule holds under concurrent requests, from any number of server processes: each is checked
inside the writing transaction (:func:`api.storage.store.begin_write`) on rows locked as they are
read. A rig's write locks every equipment row it references ``FOR SHARE`` (:func:`resolve_slots`
with ``lock=True``); an equipment change locks that row ``FOR UPDATE``, then the rigs that use it.
So the two cannot both pass their checks on what the other is about to change: one waits for the
other's commit and checks what it made. Locks are taken in one order (equipment by kind and id,
then rigs by id), so two writers never wait on each other. SQLite has no row locks:
``BEGIN IMMEDIATE`` holds its single write lock from the first read instead.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

from pydantic import BaseModel, ValidationError
from sqlmodel import Session, select

from api import schemas
from api.accounts.keys import Principal
from api.equipment.readable import present as present_item
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
from api.storage.store import aware, fetch_by_ids, lock_rows, readable_by
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
        "retired_at": aware(row.retired_at) if row.retired_at is not None else None,
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
    # Whether what the item shows besides its own row (a rig's stored equipment) is unchanged
    # since the item's own last change: only then may If-None-Match on its version give a 304.
    parts_unchanged: Callable[[Session, StoredItem], bool] = lambda *a: True
    tags: list[str] = field(default_factory=list)
    deprecated: bool = False


# --- equipment ------------------------------------------------------------------------------------

def _equipment_prepare(_session: Session, _principal: Principal, body: BaseModel) -> dict[str, Any]:
    spec = body.model_dump(mode="json", exclude={"visibility"})
    return {"spec": spec, "name": spec.get("name"), "visibility": body.visibility.value}


def _equipment_present(public: type[BaseModel]):
    def present(_session: Session, rows: Sequence[tuple[StoredItem, str]]) -> list[BaseModel]:
        return [present_item(public, {**row.spec, **meta(row, owner)}) for row, owner in rows]

    return present


def _rigs_using(session: Session, slot: str, item_id: int) -> list[RigRow]:
    if slot == TRAIN:
        used = or_(*(getattr(RigRow, column) == item_id for column in TRAIN_COLUMNS))
    else:
        used = getattr(RigRow, f"{slot}_id") == item_id
    return list(session.exec(select(RigRow).where(used).order_by(RigRow.id)).all())


def _locked_rigs_using(session: Session, slot: str, row: StoredItem) -> list[RigRow]:
    """The rigs using this item, read after locking the item (so no rig can start using it until
    this transaction ends), each locked too (so no change of their other equipment can be checked
    against what this one is about to change)."""
    lock_rows(session, type(row), [row.id])
    columns = TRAIN_COLUMNS if slot == TRAIN else (f"{slot}_id",)
    users = [r.id for r in _rigs_using(session, slot, row.id)]
    locked = lock_rows(session, RigRow, users)
    return [r for r in locked.values() if any(getattr(r, c) == row.id for c in columns)]


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


#: Who may read an item, narrowest first: a rig may not be seen by more people than its parts.
_WIDTH = {Visibility.private.value: 0, Visibility.members.value: 1, Visibility.public.value: 2}


def _equipment_hooks(label: str, slot: str):
    def before_change(session: Session, principal: Principal, row: StoredItem, values: dict[str, Any]) -> None:
        rigs = _locked_rigs_using(session, slot, row)
        if not rigs:
            return
        narrower = values["visibility"]
        if _WIDTH[narrower] < _WIDTH[row.visibility]:  # fewer people may read it now
            wider = [r for r in rigs if r.owner_id == row.owner_id and _WIDTH[r.visibility] > _WIDTH[narrower]]
            if wider:
                first = "private" if narrower == Visibility.private.value else "members-only or private"
                raise _used_by(label, row.id, wider, principal, f"make those rigs {first} first")
            others = [r for r in rigs if r.owner_id != row.owner_id]
            if others:
                # Other accounts' rigs keep a copy of the item as it is now; they cannot block its owner.
                from api.equipment import copies

                copies.copy_into(session, f"{label}s", row, others, copies.MADE_PRIVATE, principal)
                rigs = [r for r in rigs if r.owner_id == row.owner_id]
        if values["spec"] != row.spec:
            after = stored_rig_specs(session, rigs, override={(slot, row.id): values["spec"]})
            broken = [rig for rig, spec in zip(rigs, after) if not _valid(spec)]
            if broken:  # a rig that was invalid already does not hold up a change (a repair, say)
                before = stored_rig_specs(session, broken)
                broken = [rig for rig, spec in zip(broken, before) if _valid(spec)]
            if broken:
                raise _used_by(label, row.id, broken, principal, "the change would make them invalid")

    def before_delete(session: Session, principal: Principal, row: StoredItem) -> None:
        rigs = _locked_rigs_using(session, slot, row)
        if rigs:
            raise _used_by(label, row.id, rigs, principal, "change or delete those rigs first")

    return before_change, before_delete


def _valid(spec: dict) -> bool:
    try:
        Rig.model_validate(spec)
    except ValidationError:
        return False
    return True


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
    members_only: bool = False  # a members-only rig: public or members-only equipment, not private
    # False when ``loc`` already names the item (a list entry such as ("telescopes", 3)), so
    # errors read "telescopes.3.id" rather than "telescopes.3.telescope.id".
    slot_in_path: bool = True


def resolve_slots(
    session: Session, principal: Principal | None, requests: Sequence[SlotRequest], *, lock: bool = False,
    mine: set[tuple[str, int]] | None = None,
) -> list[dict]:
    """Replace ``{"id": N}`` slots by the stored specs the caller may read; 422 naming each bad one.

    One query per kind of equipment, however many rigs are given. With ``lock`` (a write that will
    store references) each row read is locked ``FOR SHARE`` until the transaction ends, so its
    visibility and spec cannot change before the write commits. ``mine``, when given, receives
    ``(slot, id)`` of each item read that is stored under the caller's own account.
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
        statement = select(table).where(table.id.in_(sorted(ids)), readable_by(table, principal))
        if lock:
            statement = (statement.order_by(table.id).with_for_update(read=True)
                         .execution_options(populate_existing=True))
        found[slot] = {} if not ids else {row.id: row for row in session.exec(statement).all()}
    errors: list[FieldError] = []
    resolved = []
    def one(slot: str, value: Any, where: str) -> Any:
        if not isinstance(value, schemas.Ref):
            return value  # None, or already validated: Rig reuses the instance as it is
        what = "train element" if slot == TRAIN else slot
        row = found[slot].get(value.id)
        if row is None:
            errors.append(FieldError(field=where, message=f"no {what} with id {value.id} that you can read"))
        elif row.retired_at is not None:
            errors.append(FieldError(field=where, message=f"{what} {value.id} is retired"))
        elif request.public_only and row.visibility != Visibility.public.value:
            errors.append(FieldError(
                field=where,
                message=f"{what} {value.id} is {row.visibility}; a public rig may use only public equipment",
            ))
        elif request.members_only and row.visibility == Visibility.private.value:
            errors.append(FieldError(
                field=where, message=f"{what} {value.id} is private; a members-only rig may use only "
                "public or members-only equipment",
            ))
        else:
            if mine is not None and principal is not None and row.owner_id == principal.account.id:
                mine.add((slot, value.id))
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
        "binning": getattr(body, "binning", 1),
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
    session: Session, rigs: Sequence[RigRow], override: dict[tuple[str, int], dict] | None = None,
    *, owners: dict[tuple[str, int], int] | None = None,
) -> list[dict]:
    """Stored rigs with their references filled in (no access check: the rules above keep them
    readable). ``owners``, when given, receives the owner's account id of each item referenced,
    by ``(slot, id)``."""
    override = override or {}
    def items(spec: dict, slot: str) -> list:
        return list(spec.get(slot) or []) if slot == TRAIN else [spec.get(slot)]

    wanted = {slot: [v["id"] for r in rigs for v in items(r.spec, slot) if _is_ref(v)] for slot in SLOT_TABLES}
    rows = {slot: fetch_by_ids(session, SLOT_TABLES[slot], ids) for slot, ids in wanted.items()}
    if owners is not None:
        owners.update({(slot, i): row.owner_id for slot, found in rows.items() for i, row in found.items()})

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
    public, members = body.visibility == Visibility.public, body.visibility == Visibility.members
    given = body_slots(body)
    [slots] = resolve_slots(session, principal, [SlotRequest(given, public_only=public, members_only=members)],
                            lock=True)
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
        present_item(schemas.RigPublic, {
            **row.spec, **meta(row, owner), "resolved": spec, "copied_parts": row.copied_parts or [],
            "uses_retired_equipment": any(p.get("reason") == "retired" for p in row.copied_parts or []),
        })
        for (row, owner), spec in zip(rows, specs)
    ]


def _rig_parts_unchanged(session: Session, rig: StoredItem) -> bool:
    """No equipment the rig references changed after the rig itself did."""
    since = aware(rig.updated_at)
    for slot, table in SLOT_TABLES.items():
        value = rig.spec.get(slot)
        if _is_ref(value):
            part = fetch_by_ids(session, table, [value["id"]]).get(value["id"])
            if part is None or aware(part.updated_at) > since:
                return False
    return True


RIGS = Resource(
    path="rigs", label="rig", table=RigRow, create=schemas.RigCreate, update=schemas.RigUpdate,
    public=schemas.RigPublic, list=schemas.RigList, prepare=_rig_prepare, present=_rig_present,
    parts_unchanged=_rig_parts_unchanged,
    tags=["rigs"],
)
