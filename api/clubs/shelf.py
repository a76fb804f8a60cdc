"""A club's equipment as a visitor may see it, each item with its availability.

Anyone sees the club's public items in use, each "available" or "on loan" with its due date. The
club's members also see members-only items and retired ones ("retired"); officers (and the club's
own key) see everything the club owns, who has each item, and which loans are overdue. A borrower
sees their own name on what they borrowed; nobody else's.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import func
from sqlmodel import Session, select

from api.accounts.keys import Principal
from api.clubs import loans
from api.clubs.roles import BELONGS, standing
from api.storage.models import Account, Visibility
from api.storage.store import readable_by


def items(session: Session, club: Account, kinds: Any, limit: int, caller: Principal | None,
          schemas: dict[str, type]) -> tuple[dict[str, list[Any]], bool]:
    """Up to ``limit`` items of each kind, oldest first, as ``schemas[kind]``; and whether that is all."""
    viewer = standing(session, club, caller)
    lists: dict[str, list[Any]] = {}
    complete = True
    for path, resource in kinds:
        table = resource.table
        where = [table.owner_id == club.id]
        if viewer in BELONGS:
            where.append(readable_by(table, caller))
        else:
            where += [table.visibility == Visibility.public.value, table.retired_at.is_(None)]
        total = session.exec(select(func.count()).select_from(table).where(*where)).one()
        rows = list(session.exec(select(table).where(*where).order_by(table.id).limit(limit)).all())
        complete = complete and total <= len(rows)
        status = loans.availability(session, club, path, rows, viewer, caller.account.id if caller else None)
        shown = resource.present(session, [(row, club.name) for row in rows])
        lists[path] = [
            schemas[path].model_validate({**item.model_dump(), **vars(status[row.id])})
            for row, item in zip(rows, shown)
        ]
    return lists, complete
