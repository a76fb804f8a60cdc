"""Copies of equipment kept in rigs, so no other account's rig can stop an owner.

When an owner retires an item, or makes private an item that rigs of other accounts use, each of those
rigs gets a copy of the item's spec as it is at that moment in place of its reference (and the foreign
key is cleared). The rig keeps computing the same results from the copy; ``copied_parts`` says which
part was copied, from which item, why and when, so the rig is shown as using retired equipment.
"""

from __future__ import annotations

from collections.abc import Sequence

from sqlalchemy import update
from sqlmodel import Session, select

from api.accounts.keys import Principal
from api.http.problems import ApiProblem
from api.storage import history
from api.storage.models import RigRow, StoredItem, utcnow

RETIRED = "retired"
MADE_PRIVATE = "made private"


def rigs_using(session: Session, slot: str, item_id: int, *, lock: bool = False) -> list[RigRow]:
    query = select(RigRow).where(getattr(RigRow, f"{slot}_id") == item_id).order_by(RigRow.id)
    if lock:
        query = query.with_for_update()
    return list(session.exec(query).all())


def copy_into(session: Session, slot: str, kind: str, item: StoredItem, rigs: Sequence[RigRow], reason: str,
              actor: Principal) -> list[int]:
    """Put a copy of ``item``'s spec in each rig's ``slot`` (not committed); the rigs' ids."""
    now = utcnow()
    for rig in rigs:
        # Read before the UPDATE: the ORM brings the row object up to date with what it sets.
        version, parts = rig.version, list(rig.copied_parts or [])
        spec = {**rig.spec, slot: dict(item.spec)}
        part = {"slot": slot, "kind": kind, "id": item.id, "reason": reason, "taken_at": now.isoformat()}
        result = session.execute(
            update(RigRow).where(RigRow.id == rig.id, RigRow.version == version)
            .values(spec=spec, copied_parts=[*parts, part], version=RigRow.version + 1,
                    updated_at=now, **{f"{slot}_id": None})
        )
        if result.rowcount != 1:
            raise ApiProblem(409, f"rig {rig.id} that uses {kind} {item.id} is being changed; try again")
        history.record(session, kind="rigs", item_id=rig.id, owner_id=rig.owner_id, version=version + 1,
                       action="copy", actor=actor.account,
                       changed={slot: {"from": {"id": item.id}, "to": f"copy of {kind} {item.id} ({reason})"}})
    return [rig.id for rig in rigs]
