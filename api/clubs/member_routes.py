"""`/v1/clubs/{handle}/members`: who acts for a club. Officers (and the club's own key) manage them."""

from typing import Annotated

from fastapi import APIRouter, Path, Response

from api.clubs import members
from api.clubs import queries as clubs
from api.clubs.operation_schemas import MemberList, MemberPublic, MemberSet
from api.clubs.roles import BELONGS, MANAGES, require
from api.deps import Caller, SessionDep, Writer
from api.http import problems
from api.schemas import HANDLE_PATTERN
from api.storage.store import aware

router = APIRouter(prefix="/v1/clubs", tags=["club operations"])

ClubName = Annotated[str, Path(pattern=HANDLE_PATTERN, description="The club's handle.")]
Person = Annotated[str, Path(pattern=HANDLE_PATTERN, description="The person's handle.")]


@router.get(
    "/{name}/members", response_model=MemberList, operation_id="list_club_members",
    summary="The club's members and their roles (for the club's members and officers)",
    responses=problems.responses(401, 403, 404, 422),
)
def list_members(name: ClubName, session: SessionDep, caller: Caller) -> MemberList:
    club = clubs.find_club(session, name)
    require(session, club, caller, BELONGS, "listing the members")
    items = [MemberPublic(person=p, role=r, since=s) for p, r, s in members.listing(session, club)]
    return MemberList(club=club.name, items=items)


@router.put(
    "/{name}/members/{person}", response_model=MemberPublic, operation_id="set_club_member",
    summary="Add a person to the club, or change their role (officers only)",
    responses={201: {"description": "The person was added."},
               **problems.responses(400, 401, 403, 404, 409, 413, 415, 422)},
)
def set_member(
    name: ClubName, person: Person, body: MemberSet, session: SessionDep, principal: Writer, response: Response,
) -> MemberPublic:
    club = clubs.find_club(session, name)
    require(session, club, principal, MANAGES, "changing the members")
    row, created = members.set_role(session, club, person, body.role, principal.account)
    response.status_code = 201 if created else 200
    return MemberPublic(person=person, role=row.role, since=aware(row.created_at))


@router.delete(
    "/{name}/members/{person}", status_code=204, operation_id="remove_club_member",
    summary="Remove a person from the club (officers; or the person themselves)",
    responses=problems.responses(401, 403, 404, 422),
)
def remove_member(name: ClubName, person: Person, session: SessionDep, principal: Writer) -> Response:
    club = clubs.find_club(session, name)
    if principal.account.name == person:
        require(session, club, principal, BELONGS, "leaving the club")
    else:
        require(session, club, principal, MANAGES, "removing a member")
    members.remove(session, club, person, principal.account)
    return Response(status_code=204)
