"""Members of a club and their roles: add, change, remove, list (API and ``rigbench clubs``).

A member is a person account; a club account cannot be a member of anything. Every change is recorded
in the club's history (kind ``memberships``) in the same transaction.
"""

from __future__ import annotations

from sqlalchemy.exc import IntegrityError
from sqlmodel import Session, select

from api.http.problems import ApiProblem, FieldError
from api.storage import history
from api.storage.club_models import MembershipRow, Role
from api.storage.models import Account, AccountKind
from api.storage.store import aware, begin_write


def invalid(field: str, message: str, status: int = 422) -> ApiProblem:
    return ApiProblem(status, f"{field}: {message}", title="Invalid input", type="/problems/invalid-input",
                      errors=[FieldError(field=field, message=message)])


def find_person(session: Session, handle: str, field: str = "person") -> Account:
    account = session.exec(select(Account).where(Account.name == handle)).first()
    if account is None:
        raise invalid(field, f"no account named {handle[:60]!r}")
    if account.kind != AccountKind.person.value:
        raise invalid(field, f"{handle!r} is a club account; only person accounts can be members")
    return account


def set_role(session: Session, club: Account, handle: str, role: Role, actor: Account) -> tuple[MembershipRow, bool]:
    """Add ``handle`` to the club with ``role``, or change their role; True when newly added."""
    begin_write(session)
    person = find_person(session, handle)
    row = session.exec(
        select(MembershipRow).where(MembershipRow.club_id == club.id, MembershipRow.person_id == person.id)
        .with_for_update()
    ).first()
    created = row is None
    if created:
        row = MembershipRow(club_id=club.id, person_id=person.id, role=Role(role).value)
        session.add(row)
    elif row.role == role:
        return row, False
    else:
        old = row.role
        row.role = Role(role).value
        session.add(row)
    try:
        session.flush()
    except IntegrityError:
        # Someone added the same person a moment ago (the unique constraint said no).
        session.rollback()
        raise ApiProblem(409, f"{handle!r} was just added to {club.name!r} by someone else; try again") from None
    history.record(session, kind="memberships", item_id=row.id, owner_id=club.id, version=1, action=
                   "add" if created else "change", actor=actor,
                   changed={"person": handle, "role": {"from": None if created else old, "to": row.role}})
    session.commit()
    session.refresh(row)
    return row, created


def remove(session: Session, club: Account, handle: str, actor: Account) -> None:
    begin_write(session)
    person = find_person(session, handle)
    row = session.exec(
        select(MembershipRow).where(MembershipRow.club_id == club.id, MembershipRow.person_id == person.id)
    ).first()
    if row is None:
        raise ApiProblem(404, f"{handle!r} is not a member of {club.name!r}")
    history.record(session, kind="memberships", item_id=row.id, owner_id=club.id, version=1, action="remove",
                   actor=actor, changed={"person": handle, "role": {"from": row.role, "to": None}})
    session.delete(row)
    session.commit()


def listing(session: Session, club: Account) -> list[tuple[str, str, object]]:
    rows = session.exec(
        select(Account.name, MembershipRow.role, MembershipRow.created_at)
        .join(Account, MembershipRow.person_id == Account.id)
        .where(MembershipRow.club_id == club.id).order_by(Account.name)
    ).all()
    return [(name, role, aware(since)) for name, role, since in rows]
