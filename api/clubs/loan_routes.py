"""`/v1/clubs/{handle}/loans`: officers lend the club's items and record returns; members ask to borrow.

Officers (and the club's own key) see every loan; a member sees their own. The overlap rule is the
database's (see api.clubs.loans); every write counts against the rate limits like any other.
"""

from typing import Annotated

from fastapi import APIRouter, Path, Query

from api.clubs import loans
from api.clubs import queries as clubs
from api.clubs.operation_schemas import LoanAccept, LoanAsk, LoanCreate, LoanList, LoanPublic, LoanReturn
from api.clubs.roles import BELONGS, MANAGES, Standing, require
from api.deps import Reader, SessionDep, SettingsDep, Writer
from api.http import problems
from api.http.problems import ApiProblem
from api.schemas import HANDLE_PATTERN, MAX_ID
from api.storage.club_models import LoanStatus
from api.storage.history_schemas import HistoryList, history_page

router = APIRouter(prefix="/v1/clubs", tags=["club operations"])

ClubName = Annotated[str, Path(pattern=HANDLE_PATTERN, description="The club's handle.")]
LoanId = Annotated[int, Path(ge=1, le=MAX_ID, description="Loan id.")]
Limit = Annotated[int, Query(ge=1, le=10_000, description="Page size (at most the server's max_page_size).")]
Offset = Annotated[int, Query(ge=0, le=MAX_ID)]
MEMBERS = (Standing.officer, Standing.member)
WRITE = problems.responses(400, 401, 403, 404, 409, 413, 415, 422)


def _one(session, club, loan) -> LoanPublic:
    [public] = loans.present(session, club, [loan])
    return public


def _readable_loan(session, name: str, loan_id: int, caller):
    club = clubs.find_club(session, name)
    standing = require(session, club, caller, BELONGS, "reading a loan")
    loan = loans.find_loan(session, club, loan_id)
    if standing not in MANAGES and loan.borrower_id != caller.account.id:
        raise ApiProblem(404, f"{club.name!r} has no loan with id {loan_id} that you can read")
    return club, loan


@router.get(
    "/{name}/loans", response_model=LoanList, operation_id="list_club_loans",
    summary="The club's loans and loan requests (officers: all; a member: their own)",
    responses=problems.responses(401, 403, 404, 422),
)
def list_loans(
    name: ClubName, session: SessionDep, caller: Reader, settings: SettingsDep,
    status: Annotated[LoanStatus | None, Query(description="Only loans in this state.")] = None,
    limit: Limit = 50, offset: Offset = 0,
) -> LoanList:
    club = clubs.find_club(session, name)
    standing = require(session, club, caller, BELONGS, "listing loans")
    if limit > settings.max_page_size:
        raise clubs.invalid("limit", f"must be at most {settings.max_page_size}")
    mine = None if standing in MANAGES else caller.account.id
    rows, total = loans.listing(session, club, mine, status.value if status else None, limit, offset)
    return LoanList(items=loans.present(session, club, rows), total=total, limit=limit, offset=offset)


@router.post(
    "/{name}/loans", status_code=201, response_model=LoanPublic, operation_id="lend_club_item",
    summary="Lend a club item to a member (officers)",
    description="409 when another loan of the item holds any of the days from `start` to `due`, "
    "or when the item is retired.",
    responses={201: {"description": "The loan."}, **WRITE},
)
def lend(name: ClubName, body: LoanCreate, session: SessionDep, principal: Writer) -> LoanPublic:
    club = clubs.find_club(session, name)
    require(session, club, principal, MANAGES, "lending")
    loan = loans.lend(session, club, body.item, body.borrower, body.start, body.due, body.condition, body.note,
                      principal.account)
    return _one(session, club, loan)


@router.post(
    "/{name}/loan-requests", status_code=201, response_model=LoanPublic, operation_id="ask_to_borrow",
    summary="Ask to borrow a club item (members); an officer accepts or declines",
    responses={201: {"description": "The request, status 'requested'."}, **WRITE},
)
def ask(name: ClubName, body: LoanAsk, session: SessionDep, principal: Writer) -> LoanPublic:
    club = clubs.find_club(session, name)
    require(session, club, principal, MEMBERS, "asking to borrow")
    loan = loans.ask(session, club, body.item, body.start, body.due, body.note, principal.account)
    return _one(session, club, loan)


@router.get(
    "/{name}/loans/{loan_id}", response_model=LoanPublic, operation_id="get_club_loan",
    summary="One loan (officers, or its borrower)", responses=problems.responses(401, 403, 404, 422),
)
def get_loan(name: ClubName, loan_id: LoanId, session: SessionDep, caller: Reader) -> LoanPublic:
    club, loan = _readable_loan(session, name, loan_id, caller)
    return _one(session, club, loan)


@router.get(
    "/{name}/loans/{loan_id}/history", response_model=HistoryList, operation_id="get_club_loan_history",
    summary="Every change to one loan (officers, or its borrower)", responses=problems.responses(401, 403, 404, 422),
)
def loan_history(
    name: ClubName, loan_id: LoanId, session: SessionDep, caller: Reader, settings: SettingsDep,
    limit: Limit = 50, offset: Offset = 0,
) -> HistoryList:
    _readable_loan(session, name, loan_id, caller)
    return history_page(session, "loans", loan_id, limit, offset, settings.max_page_size)


def _decide(name: str, loan_id: int, session, principal, accept: bool, condition: str) -> LoanPublic:
    club = clubs.find_club(session, name)
    require(session, club, principal, MANAGES, "deciding a loan request")
    loan = loans.decide(session, loans.find_loan(session, club, loan_id), accept, condition, principal.account)
    return _one(session, club, loan)


@router.post(
    "/{name}/loans/{loan_id}/accept", response_model=LoanPublic, operation_id="accept_loan_request",
    summary="Accept a member's request: it becomes a loan (officers)", responses=WRITE,
)
def accept(name: ClubName, loan_id: LoanId, body: LoanAccept, session: SessionDep, principal: Writer) -> LoanPublic:
    return _decide(name, loan_id, session, principal, True, body.condition)


@router.post(
    "/{name}/loans/{loan_id}/decline", response_model=LoanPublic, operation_id="decline_loan_request",
    summary="Decline a member's request (officers)", responses=WRITE,
)
def decline(name: ClubName, loan_id: LoanId, session: SessionDep, principal: Writer) -> LoanPublic:
    return _decide(name, loan_id, session, principal, False, "")


@router.post(
    "/{name}/loans/{loan_id}/return", response_model=LoanPublic, operation_id="return_club_item",
    summary="Record that a lent item came back, with its condition (officers)", responses=WRITE,
)
def give_back(name: ClubName, loan_id: LoanId, body: LoanReturn, session: SessionDep, principal: Writer) -> LoanPublic:
    club = clubs.find_club(session, name)
    require(session, club, principal, MANAGES, "recording a return")
    loan = loans.give_back(session, loans.find_loan(session, club, loan_id), body.returned_on, body.condition,
                           principal.account)
    return _one(session, club, loan)
