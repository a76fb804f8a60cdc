"""Reading and writing stored items with owner checks and optimistic concurrency.

Every change is one ``UPDATE … SET version = version + 1 WHERE id = ? AND version = ?``: when two
clients change the same item at once, exactly one wins and the other learns it (412 with ``If-Match``,
or a fresh retry without it), so no update is silently lost.
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import UTC, datetime
from typing import Any

from sqlalchemy import and_, func, or_, update
from sqlalchemy.sql import ColumnElement
from sqlmodel import Session, select

from api.accounts.keys import Principal
from api.http.problems import ApiProblem
from api.storage import history
from api.storage.db import BEGIN_IMMEDIATE
from api.storage.models import Account, StoredItem, Visibility, utcnow


def begin_write(session: Session) -> None:
    """Start the writing transaction in which a rule is checked and the change is made.

    On SQLite this is ``BEGIN IMMEDIATE``: the database's one write lock is taken before the first
    read, so no other writer can change what the rule reads before this transaction commits. On
    PostgreSQL it is an ordinary transaction; the rows a rule reads are locked as they are read
    (:func:`lock_rows`, and ``lock=True`` when resolving a rig's references).
    """
    if session.in_transaction():
        session.commit()
    session.connection(execution_options={BEGIN_IMMEDIATE: True})


def lock_rows(
    session: Session, table: type[StoredItem], ids: Sequence[int], *, share: bool = False
) -> dict[int, StoredItem]:
    """The rows with these ids, locked until the transaction ends (``SELECT … FOR UPDATE``, or
    ``FOR SHARE`` with ``share``), read fresh. On SQLite, which has no row locks, :func:`begin_write`
    already holds the whole database's write lock and this is a plain read."""
    if not ids:
        return {}
    statement = (
        select(table).where(table.id.in_(sorted(set(ids)))).order_by(table.id)
        .with_for_update(read=share).execution_options(populate_existing=True)
    )
    return {row.id: row for row in session.exec(statement).all()}


def aware(moment: datetime) -> datetime:
    """SQLite hands back naive datetimes; everything we store is UTC."""
    return moment if moment.tzinfo is not None else moment.replace(tzinfo=UTC)


def readable_by(table: type[StoredItem], principal: Principal | None) -> ColumnElement[bool]:
    """Public items; with a key also one's own, a club's items for its officers, members-only ones for members."""
    from api.clubs.roles import member_clubs, officer_clubs

    public = table.visibility == Visibility.public.value
    if principal is None:
        return public
    me = principal.account.id
    return or_(
        public, table.owner_id == me, table.owner_id.in_(officer_clubs(me)),
        and_(table.visibility == Visibility.members.value, table.owner_id.in_(member_clubs(me))),
    )


def not_found(label: str, item_id: int) -> ApiProblem:
    # The same answer whether the item does not exist or is someone else's private item.
    return ApiProblem(404, f"no {label} with id {item_id} that you can read")


def fetch_readable(
    session: Session, table: type[StoredItem], item_id: int, principal: Principal | None, label: str
) -> tuple[StoredItem, str]:
    """The item and its owner's handle, or a 404 problem."""
    found = session.exec(
        select(table, Account.name)
        .join(Account, table.owner_id == Account.id)
        .where(table.id == item_id, readable_by(table, principal))
        # Fresh column values even if this session already holds the row (e.g. between retries).
        .execution_options(populate_existing=True)
    ).first()
    if found is None:
        raise not_found(label, item_id)
    return found[0], found[1]


def fetch_owned(
    session: Session, table: type[StoredItem], item_id: int, principal: Principal, label: str
) -> tuple[StoredItem, str]:
    """The item if the caller owns it: 404 when they cannot read it, 403 when they only can read it."""
    from api.clubs.roles import may_manage

    row, owner = fetch_readable(session, table, item_id, principal, label)
    if not may_manage(session, row.owner_id, principal):
        raise ApiProblem(403, f"{label} {item_id} belongs to {owner!r}; only its owner (or a club's officer) may change it")
    return row, owner


def list_items(
    session: Session,
    table: type[StoredItem],
    principal: Principal | None,
    *,
    owner: str | None,
    visibility: Visibility | None,
    limit: int,
    offset: int,
) -> tuple[list[tuple[StoredItem, str]], int]:
    # Retired items are gone from every list (their owner still reads them by id).
    conditions = [readable_by(table, principal), table.retired_at.is_(None)]
    if owner is not None:
        conditions.append(Account.name == owner)
    if visibility is not None:
        conditions.append(table.visibility == visibility.value)
    base = select(table, Account.name).join(Account, table.owner_id == Account.id).where(*conditions)
    total = session.exec(
        select(func.count()).select_from(table).join(Account, table.owner_id == Account.id).where(*conditions)
    ).one()
    rows = session.exec(base.order_by(table.id).limit(limit).offset(offset)).all()
    return [(r, name) for r, name in rows], int(total)


def insert(session: Session, table: type[StoredItem], principal: Principal, values: dict[str, Any]) -> StoredItem:
    now = utcnow()
    owner_id = values.pop("owner_id", principal.account.id)  # an officer may store for their club
    row = table(owner_id=owner_id, version=1, created_at=now, updated_at=now, **values)
    session.add(row)
    session.flush()
    history.record(session, kind=table.__tablename__, item_id=row.id, owner_id=owner_id, version=1,
                   action="create", actor=principal.account, changed=history.changed_fields(None, history.item_values(row)))
    session.commit()
    session.refresh(row)
    return row


def update_if_version(
    session: Session, table: type[StoredItem], item_id: int, version: int, values: dict[str, Any],
    *, commit: bool = True, actor: Principal | None = None, before: StoredItem | None = None,
    action: str = "update",
) -> bool:
    """Apply ``values`` only if the stored version is still ``version``; True when it was.

    With ``commit=False`` the caller commits, so it can read its own write first (under the row lock).
    With ``before`` (the row as read), the change is recorded in the history in the same transaction.
    """
    # Read before the UPDATE: the ORM brings the session's row object up to date with what it sets.
    old = history.item_values(before) if before is not None else None
    result = session.execute(
        update(table)
        .where(table.id == item_id, table.version == version)
        .values(**values, version=table.version + 1, updated_at=utcnow())
    )
    if before is not None and result.rowcount == 1:
        new = {**(values.get("spec", old) or {}), "visibility": values.get("visibility", old["visibility"])}
        new = {**new, "visibility": values.get("visibility", old["visibility"])}
        history.record(session, kind=table.__tablename__, item_id=item_id, owner_id=before.owner_id,
                       version=version + 1, action=action, actor=actor.account if actor else None,
                       changed=history.changed_fields(old, new))
    if commit:
        session.commit()
    return result.rowcount == 1


def delete_if_version(
    session: Session, table: type[StoredItem], item_id: int, version: int | None,
    *, actor: Principal | None = None, before: StoredItem | None = None,
) -> bool:
    from sqlalchemy import delete

    statement = delete(table).where(table.id == item_id)
    if version is not None:
        statement = statement.where(table.version == version)
    result = session.execute(statement)
    if before is not None and result.rowcount == 1:
        history.record(session, kind=table.__tablename__, item_id=item_id, owner_id=before.owner_id,
                       version=before.version, action="delete", actor=actor.account if actor else None,
                       changed=history.changed_fields(history.item_values(before), None))
    session.commit()
    return result.rowcount == 1


def fetch_by_ids(session: Session, table: type[StoredItem], ids: Sequence[int]) -> dict[int, StoredItem]:
    if not ids:
        return {}
    return {row.id: row for row in session.exec(select(table).where(table.id.in_(set(ids)))).all()}
