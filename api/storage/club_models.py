"""Tables of club operations: memberships (who acts for a club), loans of club items, and history.

Two loans of one item never overlap: the database refuses it (an exclusion constraint on PostgreSQL,
a trigger on SQLite; both made by migration 0005_club_operations), whatever the Python code checked.
"""

from __future__ import annotations

from datetime import date, datetime
from enum import StrEnum

from sqlalchemy import JSON, BigInteger, Column, Date, DateTime, ForeignKey, Index, Integer, String, UniqueConstraint
from sqlmodel import Field, SQLModel

ID = BigInteger().with_variant(Integer(), "sqlite")


def _now() -> datetime:
    from api.storage.models import utcnow

    return utcnow()


class Role(StrEnum):
    officer = "officer"  # manages the club's equipment, rigs, loans and members
    member = "member"  # sees members-only items, borrows


class LoanStatus(StrEnum):
    requested = "requested"  # a member asked; an officer accepts or declines
    declined = "declined"
    out = "out"  # lent, not yet back
    returned = "returned"


#: Loans that hold the item for their days (the overlap rule covers these only).
HOLDING = (LoanStatus.out.value, LoanStatus.returned.value)


def _account_fk(ondelete: str = "CASCADE", nullable: bool = False, index: bool = True) -> Column:
    return Column(ID, ForeignKey("accounts.id", ondelete=ondelete), nullable=nullable, index=index)


class MembershipRow(SQLModel, table=True):
    __tablename__ = "memberships"
    __table_args__ = (UniqueConstraint("club_id", "person_id", name="uq_memberships_club_person"),)

    id: int | None = Field(default=None, primary_key=True, sa_type=ID)
    club_id: int = Field(sa_column=_account_fk())
    person_id: int = Field(sa_column=_account_fk())
    role: str = Field(sa_column=Column(String(10), nullable=False))
    created_at: datetime = Field(default_factory=_now, sa_type=DateTime(timezone=True), nullable=False)


class LoanRow(SQLModel, table=True):
    """A loan (or a request for one) of one club item: equipment of a kind, or a rig.

    ``until`` is the last day the loan holds the item: the due date while it is out, the return day
    (never past the due date) once back, so a return never runs into the next booking.
    """

    __tablename__ = "loans"
    __table_args__ = (Index("ix_loans_item", "item_kind", "item_id"),)

    id: int | None = Field(default=None, primary_key=True, sa_type=ID)
    club_id: int = Field(sa_column=_account_fk())
    item_kind: str = Field(sa_column=Column(String(20), nullable=False))
    item_id: int = Field(sa_column=Column(ID, nullable=False))
    borrower_id: int = Field(sa_column=_account_fk())
    status: str = Field(sa_column=Column(String(10), nullable=False))
    start: date = Field(sa_column=Column(Date, nullable=False))
    due: date = Field(sa_column=Column(Date, nullable=False))
    until: date = Field(sa_column=Column(Date, nullable=False))
    returned_on: date | None = Field(default=None, sa_column=Column(Date))
    condition_out: str = Field(default="", sa_column=Column(String(500), nullable=False))
    condition_in: str = Field(default="", sa_column=Column(String(500), nullable=False))
    note: str = Field(default="", sa_column=Column(String(500), nullable=False))
    version: int = Field(default=1, sa_type=BigInteger, nullable=False)
    created_at: datetime = Field(default_factory=_now, sa_type=DateTime(timezone=True), nullable=False)
    updated_at: datetime = Field(default_factory=_now, sa_type=DateTime(timezone=True), nullable=False)


class HistoryRow(SQLModel, table=True):
    """One change to a stored item, membership or loan: who, when, which version, which fields.

    ``owner_id`` is the account whose data changed: deleting that account deletes its history
    (ON DELETE CASCADE). The actor is kept by handle as well, so a departed actor's entries still read.
    """

    __tablename__ = "history"
    __table_args__ = (Index("ix_history_item", "kind", "item_id"),)

    id: int | None = Field(default=None, primary_key=True, sa_type=ID)
    owner_id: int = Field(sa_column=_account_fk())
    kind: str = Field(sa_column=Column(String(20), nullable=False))
    item_id: int = Field(sa_column=Column(ID, nullable=False))
    version: int = Field(sa_column=Column(BigInteger, nullable=False))
    action: str = Field(sa_column=Column(String(20), nullable=False))
    actor_id: int | None = Field(default=None, sa_column=_account_fk("SET NULL", nullable=True, index=False))
    actor: str = Field(sa_column=Column(String(40), nullable=False))
    changed: dict = Field(default_factory=dict, sa_column=Column(JSON, nullable=False))
    at: datetime = Field(default_factory=_now, sa_type=DateTime(timezone=True), nullable=False)
