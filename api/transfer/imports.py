"""Storing many items at once, all or nothing: a JSON list or a CSV file of equipment.

Every row is validated first with the same bodies as ``POST /v1/<kind>``; if any row fails, the answer
is one 422 naming each failing row and field (at most 50) and nothing is stored. Otherwise every row is
inserted, with its history line, in one transaction.
"""

from __future__ import annotations

from typing import Any

from pydantic import ValidationError
from sqlmodel import Session

from api.accounts.keys import Principal
from api.clubs.roles import may_manage
from api.equipment.rules import CAMERAS, MODIFIERS, MOUNTS, TELESCOPES
from api.http.problems import ApiProblem, FieldError, field_path
from api.storage import history
from api.storage.models import Account, utcnow
from api.storage.store import begin_write

RESOURCES = {r.path: r for r in (TELESCOPES, CAMERAS, MODIFIERS, MOUNTS)}
#: Most rows one import may hold (a bound on the work one request can cause).
MAX_ROWS = 10_000
MAX_ERRORS = 50


def invalid(errors: list[FieldError], detail: str | None = None) -> ApiProblem:
    return ApiProblem(422, detail or "; ".join(f"{e.field}: {e.message}" for e in errors[:5]),
                      title="Invalid input", type="/problems/invalid-input", errors=errors[:MAX_ERRORS])


def check_count(count: int, field: str) -> None:
    if count > MAX_ROWS:
        raise invalid([FieldError(field=field, message=f"{count} rows; at most {MAX_ROWS} per import")],
                      f"{field}: {count} rows; one import holds at most {MAX_ROWS} (split the file)")
    if count == 0:
        raise invalid([FieldError(field=field, message="no rows to import")])


def owner_account(session: Session, principal: Principal, owner: str | None) -> Account:
    """The caller, or the club they name when they are its officer (403 otherwise)."""
    if owner is None or owner == principal.account.name:
        return principal.account
    from sqlmodel import select

    account = session.exec(select(Account).where(Account.name == owner)).first()
    if account is None or not may_manage(session, account.id, principal):
        raise ApiProblem(403, f"you may import only for yourself or a club you are an officer of, not {owner[:60]!r}",
                         errors=[FieldError(field="owner", message="not yours to import for")])
    return account


def store_all(session: Session, principal: Principal, owner: Account,
              rows: list[tuple[str, str, dict[str, Any]]]) -> dict[str, list[int]]:
    """``rows`` as (where, kind, body): validate every one, then insert all; kind -> new ids."""
    errors: list[FieldError] = []
    prepared = []
    for where, kind, body in rows:
        resource = RESOURCES.get(kind)
        if resource is None:
            errors.append(FieldError(field=f"{where}.kind", message=f"{kind!r} is not one of {', '.join(RESOURCES)}"))
            continue
        extra = body.pop("__extra_cells__", None)
        if extra:
            errors.append(FieldError(field=where, message=f"{extra} cell(s) more than the header names"))
            continue
        try:
            model = resource.create.model_validate(body)
        except ValidationError as exc:
            for e in exc.errors(include_url=False, include_context=False, include_input=False):
                errors.append(FieldError(field=f"{where}.{field_path(e['loc'])}".rstrip("."), message=e["msg"]))
            continue
        prepared.append((resource, resource.prepare(session, principal, model)))
    if errors:
        raise invalid(errors, f"{len(errors)} problem(s), nothing stored; first: {errors[0].field}: {errors[0].message}")
    begin_write(session)
    now = utcnow()
    stored: dict[str, list[int]] = {kind: [] for kind in RESOURCES}
    new = []
    for resource, values in prepared:
        row = resource.table(owner_id=owner.id, version=1, created_at=now, updated_at=now, **values)
        session.add(row)
        new.append((resource, row))
    session.flush()
    for resource, row in new:
        history.record(session, kind=resource.path, item_id=row.id, owner_id=owner.id, version=1, action="import",
                       actor=principal.account, changed=history.changed_fields(None, history.item_values(row)))
        stored[resource.path].append(row.id)
    session.commit()
    return stored
