"""History of stored data: who changed what, when, to which version, and which fields.

``record`` is called inside the writing transaction of each change (stored items in
api.storage.store, rig copies, memberships, loans), so a change and its history line commit
together or not at all. Each line belongs to the account whose data changed (``owner_id``):
deleting that account deletes its history with it (ON DELETE CASCADE).
"""

from __future__ import annotations

from typing import Any

from sqlmodel import Session, select

from api.storage.club_models import HistoryRow
from api.storage.models import Account

#: Longest value kept per changed field; a longer one is cut (the item itself holds the whole value).
MAX_VALUE_CHARS = 200


def _short(value: Any) -> Any:
    text = value if isinstance(value, str) else None
    if text is not None and len(text) > MAX_VALUE_CHARS:
        return text[:MAX_VALUE_CHARS] + "…"
    if isinstance(value, (dict, list)) and len(repr(value)) > MAX_VALUE_CHARS:
        return "(changed)"
    return value


def changed_fields(before: dict[str, Any] | None, after: dict[str, Any] | None) -> dict[str, Any]:
    """``{"field": {"from": old, "to": new}}`` for the top-level fields that differ."""
    before, after = before or {}, after or {}
    return {
        key: {"from": _short(before.get(key)), "to": _short(after.get(key))}
        for key in sorted(set(before) | set(after))
        if before.get(key) != after.get(key)
    }


def record(
    session: Session, *, kind: str, item_id: int, owner_id: int, version: int, action: str,
    actor: Account | None, changed: dict[str, Any],
) -> None:
    """Add one history line to the session (committed with the change it describes)."""
    session.add(HistoryRow(
        owner_id=owner_id, kind=kind, item_id=item_id, version=version, action=action,
        actor_id=actor.id if actor is not None else None,
        actor=actor.name if actor is not None else "(system)", changed=changed,
    ))


def item_values(row: Any) -> dict[str, Any]:
    """The fields of a stored item that history compares: its spec plus its visibility."""
    return {**(row.spec or {}), "visibility": row.visibility}


def for_item(session: Session, kind: str, item_id: int, limit: int, offset: int) -> tuple[list[HistoryRow], int]:
    from sqlalchemy import func

    where = (HistoryRow.kind == kind, HistoryRow.item_id == item_id)
    total = session.exec(select(func.count()).select_from(HistoryRow).where(*where)).one()
    rows = session.exec(
        select(HistoryRow).where(*where).order_by(HistoryRow.id).limit(limit).offset(offset)
    ).all()
    return list(rows), int(total)
