"""Lending a club's items: loans, loan requests, returns, and what is on loan now.

Two loans of one item never overlap. The database is what guarantees it: on PostgreSQL an exclusion
constraint over ``daterange(start, until, '[]')`` per item, on SQLite triggers that refuse an
overlapping insert or update (SQLite runs one writer at a time, so the trigger's check and the write
are one step). Writers of one item's loans take turns (the item's row is locked first, see
:func:`club_item`), so the check in Python, which gives the friendlier message, sees every loan
committed before it; should anything write a loan around it, the database refuses the overlap and
the caller gets the same 409.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from datetime import UTC, date, datetime

from sqlalchemy import and_, func, or_, select as sa_select, update
from sqlalchemy.exc import IntegrityError
from sqlmodel import Session, select

from api.clubs.members import find_person, invalid
from api.clubs.operation_schemas import Availability, ItemKind, ItemRef, LoanPublic
from api.clubs.roles import Standing, membership
from api.equipment.rules import SLOT_TABLES
from api.http.problems import ApiProblem, FieldError
from api.storage import history
from api.storage.club_models import HOLDING, LoanRow, LoanStatus
from api.storage.models import Account, RigRow, StoredItem, utcnow
from api.storage.store import aware, begin_write

TABLES: dict[str, type[StoredItem]] = {
    ItemKind.telescopes.value: SLOT_TABLES["telescope"], ItemKind.cameras.value: SLOT_TABLES["camera"],
    ItemKind.modifiers.value: SLOT_TABLES["train"], ItemKind.mounts.value: SLOT_TABLES["mount"],
    ItemKind.rigs.value: RigRow,
}


def today() -> date:
    return datetime.now(UTC).date()


def overlap_problem(item: ItemRef, other: LoanRow | None = None) -> ApiProblem:
    when = f" (loan {other.id}, {other.start} to {other.until})" if other is not None else ""
    return ApiProblem(
        409, f"{item.kind.value} {item.id} is already lent for some of those days{when}",
        title="Loan overlaps", type="/problems/loan-overlap",
        errors=[FieldError(field="start", message="overlaps another loan of this item"),
                FieldError(field="due", message="overlaps another loan of this item")],
    )


def club_item(session: Session, club: Account, item: ItemRef) -> StoredItem:
    """The club's item named by ``item``, locked until the transaction ends; 422 naming ``item.id``
    when the club has none such.

    The lock (``FOR UPDATE`` on PostgreSQL; SQLite's write lock is held already) makes writers of
    one item's loans take turns, so the check in Python sees the loan another officer just made.
    Without it, two loans racing on one item were inserted side by side, and PostgreSQL's
    exclusion constraint can then find each waiting for the other: one was aborted as a deadlock,
    a 503 instead of the 409 (seen once in CI, 8 officers lending one telescope). The constraint
    still stands behind the check.
    """
    table = TABLES[item.kind.value]
    row = session.exec(select(table).where(table.id == item.id, table.owner_id == club.id)
                       .with_for_update().execution_options(populate_existing=True)).first()
    if row is None:
        raise invalid("item.id", f"{club.name!r} has no {item.kind.value} with id {item.id}")
    if row.retired_at is not None:
        raise invalid("item.id", f"{item.kind.value} {item.id} is retired; a retired item cannot be lent", 409)
    return row


def _overlapping(session: Session, item: ItemRef, start: date, until: date, *, skip: int | None = None) -> LoanRow | None:
    query = select(LoanRow).where(
        LoanRow.item_kind == item.kind.value, LoanRow.item_id == item.id, LoanRow.status.in_(HOLDING),
        LoanRow.start <= until, LoanRow.until >= start,
    )
    if skip is not None:
        query = query.where(LoanRow.id != skip)
    return session.exec(query.limit(1)).first()


def _still_out(session: Session, item: ItemRef, start: date) -> LoanRow | None:
    """A loan out past its due date before ``start``: the item has not come back to be lent again."""
    return session.exec(select(LoanRow).where(
        LoanRow.item_kind == item.kind.value, LoanRow.item_id == item.id, LoanRow.status == LoanStatus.out.value,
        LoanRow.until < start, LoanRow.until < today(),
    ).limit(1)).first()


def _check_free(session: Session, item: ItemRef, start: date, due: date, skip: int | None = None) -> None:
    clash = _overlapping(session, item, start, due, skip=skip)
    if clash is not None:
        raise overlap_problem(item, clash)
    late = _still_out(session, item, start)
    if late is not None:
        raise ApiProblem(409, f"{item.kind.value} {item.id} is still out on loan {late.id}, due {late.due}; "
                         "record its return first", title="Item still out", type="/problems/loan-overlap",
                         errors=[FieldError(field="item", message="still out past its due date")])


def _borrower(session: Session, club: Account, handle: str) -> Account:
    person = find_person(session, handle, field="borrower")
    if membership(session, club.id, person.id) is None:
        raise invalid("borrower", f"{handle!r} is not a member of {club.name!r}")
    return person


def _commit_loan(session: Session, item: ItemRef) -> None:
    try:
        session.commit()
    except IntegrityError:
        # The database's own overlap rule (constraint or trigger): another loan got in first.
        session.rollback()
        raise overlap_problem(item) from None


def _log(session: Session, loan: LoanRow, action: str, actor: Account, changed: dict, version: int = 1) -> None:
    history.record(session, kind="loans", item_id=loan.id, owner_id=loan.club_id, version=version,
                   action=action, actor=actor, changed=changed)


def lend(session: Session, club: Account, item: ItemRef, borrower: str, start: date, due: date,
         condition: str, note: str, actor: Account) -> LoanRow:
    begin_write(session)  # the checks and the write in one transaction (SQLite: BEGIN IMMEDIATE)
    club_item(session, club, item)
    person = _borrower(session, club, borrower)
    _check_free(session, item, start, due)
    loan = LoanRow(club_id=club.id, item_kind=item.kind.value, item_id=item.id, borrower_id=person.id,
                   status=LoanStatus.out.value, start=start, due=due, until=due, condition_out=condition, note=note)
    session.add(loan)
    try:
        session.flush()
    except IntegrityError:
        session.rollback()
        raise overlap_problem(item) from None
    _log(session, loan, "lend", actor, {"status": {"from": None, "to": "out"}, "borrower": borrower,
                                        "start": str(start), "due": str(due)})
    _commit_loan(session, item)
    session.refresh(loan)
    return loan


def ask(session: Session, club: Account, item: ItemRef, start: date, due: date, note: str, person: Account) -> LoanRow:
    """A member's request to borrow; it holds nothing until an officer accepts it."""
    begin_write(session)  # the checks and the write in one transaction (SQLite: BEGIN IMMEDIATE)
    club_item(session, club, item)
    _borrower(session, club, person.name)
    loan = LoanRow(club_id=club.id, item_kind=item.kind.value, item_id=item.id, borrower_id=person.id,
                   status=LoanStatus.requested.value, start=start, due=due, until=due, note=note)
    session.add(loan)
    session.flush()
    _log(session, loan, "request", person, {"status": {"from": None, "to": "requested"},
                                            "start": str(start), "due": str(due)})
    session.commit()
    session.refresh(loan)
    return loan


def find_loan(session: Session, club: Account, loan_id: int) -> LoanRow:
    loan = session.exec(select(LoanRow).where(LoanRow.id == loan_id, LoanRow.club_id == club.id)).first()
    if loan is None:
        raise ApiProblem(404, f"{club.name!r} has no loan with id {loan_id}")
    return loan


def _move(session: Session, loan: LoanRow, expected: str, values: dict) -> int:
    """Change a loan's status only if it still is ``expected`` (a version check in the UPDATE); the new version."""
    version = loan.version  # read first: the ORM brings the object up to date with what the UPDATE sets
    result = session.execute(
        update(LoanRow).where(LoanRow.id == loan.id, LoanRow.version == version, LoanRow.status == expected)
        .values(**values, version=LoanRow.version + 1, updated_at=utcnow())
    )
    if result.rowcount != 1:
        session.rollback()
        raise ApiProblem(409, f"loan {loan.id} was changed by someone else a moment ago; fetch it again")
    return version + 1


def decide(session: Session, loan: LoanRow, accept: bool, condition: str, actor: Account) -> LoanRow:
    begin_write(session)  # the checks and the write in one transaction (SQLite: BEGIN IMMEDIATE)
    if loan.status != LoanStatus.requested.value:
        raise invalid("status", f"loan {loan.id} is {loan.status!r}, not a request", 409)
    item = ItemRef(kind=loan.item_kind, id=loan.item_id)
    if accept:
        club = session.get(Account, loan.club_id)
        club_item(session, club, item)
        _check_free(session, item, loan.start, loan.due, skip=loan.id)
    status = LoanStatus.out.value if accept else LoanStatus.declined.value
    version = _move(session, loan, LoanStatus.requested.value, {"status": status, "condition_out": condition})
    _log(session, loan, "accept" if accept else "decline", actor, {"status": {"from": "requested", "to": status}},
         version)
    _commit_loan(session, item)
    session.refresh(loan)
    return loan


def give_back(session: Session, loan: LoanRow, returned_on: date | None, condition: str, actor: Account) -> LoanRow:
    begin_write(session)  # the checks and the write in one transaction (SQLite: BEGIN IMMEDIATE)
    if loan.status != LoanStatus.out.value:
        raise invalid("status", f"loan {loan.id} is {loan.status!r}, not out", 409)
    returned_on = returned_on or today()
    if returned_on < loan.start:
        raise invalid("returned_on", f"{returned_on} is before the loan's start {loan.start}")
    # The loan now holds the item up to the return day, never past the due date, so an early return
    # frees the item and a late one cannot run into the next booking.
    until = min(returned_on, loan.due)
    version = _move(session, loan, LoanStatus.out.value, {"status": LoanStatus.returned.value, "returned_on": returned_on,
                                                "until": until, "condition_in": condition})
    _log(session, loan, "return", actor, {"status": {"from": "out", "to": "returned"}, "returned_on": str(returned_on)},
         version)
    session.commit()
    session.refresh(loan)
    return loan


def listing(session: Session, club: Account, borrower_id: int | None, status: str | None, limit: int,
            offset: int) -> tuple[list[LoanRow], int]:
    where = [LoanRow.club_id == club.id]
    if borrower_id is not None:
        where.append(LoanRow.borrower_id == borrower_id)
    if status is not None:
        where.append(LoanRow.status == status)
    total = session.exec(select(func.count()).select_from(LoanRow).where(*where)).one()
    rows = session.exec(select(LoanRow).where(*where).order_by(LoanRow.id).limit(limit).offset(offset)).all()
    return list(rows), int(total)


def present(session: Session, club: Account, loans: Iterable[LoanRow]) -> list[LoanPublic]:
    loans = list(loans)
    names = dict(session.exec(
        select(Account.id, Account.name).where(Account.id.in_({loan.borrower_id for loan in loans}))
    ).all()) if loans else {}
    items: dict[tuple[str, int], str | None] = {}
    for kind, table in TABLES.items():
        ids = {loan.item_id for loan in loans if loan.item_kind == kind}
        if ids:
            for row_id, name in session.exec(select(table.id, table.name).where(table.id.in_(ids))).all():
                items[(kind, row_id)] = name
    now = today()
    return [
        LoanPublic(
            id=loan.id, club=club.name, item=ItemRef(kind=loan.item_kind, id=loan.item_id),
            item_name=items.get((loan.item_kind, loan.item_id)), borrower=names.get(loan.borrower_id, "?"),
            status=loan.status, start=loan.start, due=loan.due, returned_on=loan.returned_on,
            condition_out=loan.condition_out, condition_in=loan.condition_in, note=loan.note,
            overdue=loan.status == LoanStatus.out.value and loan.due < now, version=loan.version,
            created_at=aware(loan.created_at), updated_at=aware(loan.updated_at),
        )
        for loan in loans
    ]


@dataclass(frozen=True)
class Status:
    """What a visitor may learn of one item's availability."""

    availability: Availability
    due: date | None = None
    borrower: str | None = None  # only for the club's officers and the borrower
    overdue: bool | None = None  # only for the club's officers


def availability(session: Session, club: Account, kind: str, rows: Iterable[StoredItem], viewer: Standing,
                 viewer_id: int | None) -> dict[int, Status]:
    """Each item as available, on loan (until its due date) or retired, shown as ``viewer`` may see it."""
    rows = list(rows)
    ids = [row.id for row in rows]
    now = today()
    out: dict[int, LoanRow] = {}
    if ids:
        for loan in session.exec(select(LoanRow).where(
            LoanRow.item_kind == kind, LoanRow.item_id.in_(ids), LoanRow.status == LoanStatus.out.value,
            LoanRow.start <= now,
        ).order_by(LoanRow.start)).all():
            out.setdefault(loan.item_id, loan)
    names = dict(session.exec(
        select(Account.id, Account.name).where(Account.id.in_({loan.borrower_id for loan in out.values()}))
    ).all()) if out else {}
    officer = viewer in (Standing.owner, Standing.officer)
    found: dict[int, Status] = {}
    for row in rows:
        loan = out.get(row.id)
        if row.retired_at is not None:
            found[row.id] = Status(Availability.retired)
        elif loan is None:
            found[row.id] = Status(Availability.available)
        else:
            mine = viewer_id is not None and loan.borrower_id == viewer_id
            found[row.id] = Status(
                Availability.on_loan, due=loan.due,
                borrower=names.get(loan.borrower_id) if officer or mine else None,
                overdue=(loan.due < now) if officer else None,
            )
    return found
