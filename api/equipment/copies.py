"""Copies of equipment kept in rigs, so no other account's rig can stop an owner.

When an owner retires an item, or makes private an item that rigs of other accounts use, each of those
rigs gets a copy of the item's spec as it is at that moment in place of its reference (and the foreign
key is cleared). The rig keeps computing the same results from the copy; ``copied_parts`` says which
part was copied, from which item, why and when, so the rig is shown as using retired equipment.
"""

from __future__ import annotations

from collections.abc import Sequence

from typing import Any

from sqlalchemy import or_, update
from sqlmodel import Session, select

from api.accounts.keys import Principal
from api.http.problems import ApiProblem
from api.storage import history
from api.storage.models import TRAIN_COLUMNS, CameraRow, MountRow, RigRow, StoredItem, TelescopeRow, TrainElementRow, utcnow

RETIRED = "retired"
MADE_PRIVATE = "made private"


#: The rig slot each table's items fill; a train element may stand in any of the train's places.
SLOTS: dict[type[StoredItem], str] = {
    TelescopeRow: "telescope", CameraRow: "camera", MountRow: "mount", TrainElementRow: "train",
}


def _columns(table: type[StoredItem]) -> tuple[str, ...]:
    return TRAIN_COLUMNS if table is TrainElementRow else (f"{SLOTS[table]}_id",)


def rigs_using(session: Session, table: type[StoredItem], item_id: int, *, lock: bool = False) -> list[RigRow]:
    used = or_(*(getattr(RigRow, column) == item_id for column in _columns(table)))
    query = select(RigRow).where(used).order_by(RigRow.id)
    if lock:
        query = query.with_for_update()
    return list(session.exec(query).all())


def _with_copy(spec: dict[str, Any], slot: str, item: StoredItem) -> dict[str, Any]:
    """The rig's spec with the reference to ``item`` replaced by a copy of its spec."""
    if slot != "train":
        return {**spec, slot: dict(item.spec)}
    train = [dict(item.spec) if isinstance(e, dict) and set(e) == {"id"} and e["id"] == item.id else e
             for e in spec.get("train") or []]
    return {**spec, "train": train}


def copy_into(session: Session, kind: str, item: StoredItem, rigs: Sequence[RigRow], reason: str,
              actor: Principal) -> list[int]:
    """Put a copy of ``item``'s spec in place of each rig's reference to it (not committed); the rigs' ids."""
    now = utcnow()
    slot = SLOTS[type(item)]
    for rig in rigs:
        # Read before the UPDATE: the ORM brings the row object up to date with what it sets.
        version, parts = rig.version, list(rig.copied_parts or [])
        cleared = {c: None for c in _columns(type(item)) if getattr(rig, c) == item.id}
        part = {"slot": slot, "kind": kind, "id": item.id, "reason": reason, "taken_at": now.isoformat()}
        result = session.execute(
            update(RigRow).where(RigRow.id == rig.id, RigRow.version == version)
            .values(spec=_with_copy(rig.spec, slot, item), copied_parts=[*parts, part],
                    version=RigRow.version + 1, updated_at=now, **cleared)
        )
        if result.rowcount != 1:
            raise ApiProblem(409, f"rig {rig.id} that uses {kind} {item.id} is being changed; try again")
        history.record(session, kind="rigs", item_id=rig.id, owner_id=rig.owner_id, version=version + 1,
                       action="copy", actor=actor.account,
                       changed={slot: {"from": {"id": item.id}, "to": f"copy of {kind} {item.id} ({reason})"}})
    return [rig.id for rig in rigs]
