"""Everything of one account that the caller may read, as JSON (importable as it is), CSV per kind or a ZIP."""

from __future__ import annotations

import io
import zipfile
from typing import Any

from sqlmodel import Session, select

from api.accounts.keys import Principal
from api.http.problems import ApiProblem, FieldError
from api.storage.models import Account
from api.storage.store import readable_by
from api.transfer import rows as csv_rows
from api.transfer.imports import MAX_ROWS, RESOURCES


def owner_named(session: Session, principal: Principal, owner: str | None) -> Account:
    if owner is None:
        return principal.account
    account = session.exec(select(Account).where(Account.name == owner)).first()
    if account is None:
        raise ApiProblem(404, f"no account named {owner[:60]!r}", errors=[FieldError(field="owner", message="unknown")])
    return account


def items(session: Session, principal: Principal, owner: Account, kind: str) -> list[dict[str, Any]]:
    """The owner's items of one kind in use that the caller may read, oldest first: spec plus visibility."""
    table = RESOURCES[kind].table
    found = session.exec(
        select(table).where(table.owner_id == owner.id, table.retired_at.is_(None), readable_by(table, principal))
        .order_by(table.id).limit(MAX_ROWS + 1)
    ).all()
    if len(found) > MAX_ROWS:
        raise ApiProblem(422, f"{owner.name!r} has more than {MAX_ROWS} {kind}; export one kind at a time "
                         "as CSV is bounded the same way", errors=[FieldError(field="kind", message="too many to export")])
    return [{**row.spec, "visibility": row.visibility} for row in found]


def as_json(session: Session, principal: Principal, owner: Account) -> dict[str, Any]:
    listed = [{"equipment": kind, **item} for kind in RESOURCES for item in items(session, principal, owner, kind)]
    return {"owner": owner.name, "items": listed}


def as_zip(session: Session, principal: Principal, owner: Account) -> bytes:
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        for kind in RESOURCES:
            archive.writestr(f"{owner.name}-{kind}.csv", csv_rows.to_csv(kind, items(session, principal, owner, kind)))
    return buffer.getvalue()
