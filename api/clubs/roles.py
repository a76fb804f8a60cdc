"""Who may act for a club: its owner (the club account's own key), officers and members.

Each person keeps their own key; acting for the club is a right of their role, checked on the
server for every route. ``officer`` manages the club's equipment, rigs, loans and members;
``member`` sees members-only items and borrows.
"""

from __future__ import annotations

from enum import StrEnum

from sqlalchemy import Select
from sqlmodel import Session, select

from api.accounts.keys import Principal
from api.http.problems import ApiProblem
from api.storage.club_models import MembershipRow, Role
from api.storage.models import Account


class Standing(StrEnum):
    """A caller's relation to one club, from most to least rights."""

    owner = "owner"
    officer = "officer"
    member = "member"
    other = "other"
    anonymous = "anonymous"


MANAGES = (Standing.owner, Standing.officer)
BELONGS = (Standing.owner, Standing.officer, Standing.member)


def officer_clubs(account_id: int) -> Select:
    """Ids of the clubs this account is an officer of (a subquery)."""
    return select(MembershipRow.club_id).where(
        MembershipRow.person_id == account_id, MembershipRow.role == Role.officer.value
    )


def member_clubs(account_id: int) -> Select:
    """Ids of the clubs this account belongs to, as member or officer (a subquery)."""
    return select(MembershipRow.club_id).where(MembershipRow.person_id == account_id)


def membership(session: Session, club_id: int, person_id: int) -> MembershipRow | None:
    return session.exec(
        select(MembershipRow).where(MembershipRow.club_id == club_id, MembershipRow.person_id == person_id)
    ).first()


def standing(session: Session, club: Account, principal: Principal | None) -> Standing:
    if principal is None:
        return Standing.anonymous
    if principal.account.id == club.id:
        return Standing.owner
    found = membership(session, club.id, principal.account.id)
    return Standing(found.role) if found is not None else Standing.other


def may_manage(session: Session, owner_id: int, principal: Principal) -> bool:
    """True when the caller owns ``owner_id``'s items or is an officer of that club."""
    if owner_id == principal.account.id:
        return True
    found = membership(session, owner_id, principal.account.id)
    return found is not None and found.role == Role.officer.value


def require(session: Session, club: Account, principal: Principal | None, allowed: tuple[Standing, ...],
            what: str) -> Standing:
    """The caller's standing if it is one of ``allowed``: 401 without a key, 403 otherwise."""
    found = standing(session, club, principal)
    if found in allowed:
        return found
    if found == Standing.anonymous:
        raise ApiProblem(401, f"{what}: send 'Authorization: Bearer <key>'", headers={"WWW-Authenticate": "Bearer"})
    who = " or ".join(s.value for s in allowed)
    raise ApiProblem(403, f"{what} needs the club's {who}; you are {found.value!r} of {club.name!r}")
