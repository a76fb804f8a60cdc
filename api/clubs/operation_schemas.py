"""Bodies of club operations: members and roles, loans and loan requests (``/v1/clubs/{handle}/…``)."""

from __future__ import annotations

from datetime import date, datetime
from enum import StrEnum
from typing import Annotated

from pydantic import BaseModel, Field, field_validator, model_validator

from api.schemas import HANDLE_PATTERN, Id, ListMeta, refuse_nul
from api.storage.club_models import LoanStatus, Role
from calculators.schemas import Strict

Handle = Annotated[str, Field(pattern=HANDLE_PATTERN, description="An account's handle.")]
Note = Annotated[str, Field(default="", max_length=500)]


class ItemKind(StrEnum):
    """What a club lends: equipment of one kind, or a whole rig."""

    telescopes = "telescopes"
    cameras = "cameras"
    modifiers = "modifiers"
    mounts = "mounts"
    rigs = "rigs"


class Availability(StrEnum):
    available = "available"
    on_loan = "on loan"
    retired = "retired"


# --- members ----------------------------------------------------------------------------------------

class MemberSet(Strict):
    role: Role = Field(description="officer: manages the club's equipment, rigs, loans and members; "
                       "member: sees members-only items and borrows.")


class MemberPublic(BaseModel):
    person: str = Field(description="The person's handle.")
    role: Role
    since: datetime


class MemberList(BaseModel):
    club: str
    items: list[MemberPublic]


# --- loans ------------------------------------------------------------------------------------------

class ItemRef(Strict):
    kind: ItemKind
    id: Id


class _Period(Strict):
    start: date = Field(description="First day of the loan (YYYY-MM-DD).")
    due: date = Field(description="Last day: the item is due back on this day (YYYY-MM-DD).")

    @model_validator(mode="after")
    def _due_not_before_start(self):
        if self.due < self.start:
            from pydantic_core import PydanticCustomError

            raise PydanticCustomError("due_before_start", "due {due} is before start {start}",
                                      {"due": str(self.due), "start": str(self.start)})
        return self


class LoanCreate(_Period):
    """An officer lends a club item to a member."""

    item: ItemRef
    borrower: Handle
    condition: Note = Field(default="", max_length=500, description="The item's condition when lent.")
    note: Note = ""

    _no_nul = field_validator("condition", "note")(refuse_nul)


class LoanAsk(_Period):
    """A member asks to borrow a club item; an officer accepts or declines."""

    item: ItemRef
    note: Note = ""

    _no_nul = field_validator("note")(refuse_nul)


class LoanReturn(Strict):
    returned_on: date | None = Field(default=None, description="Default: today (UTC).")
    condition: Note = Field(default="", max_length=500, description="The item's condition when returned.")

    _no_nul = field_validator("condition")(refuse_nul)


class LoanAccept(Strict):
    condition: Note = Field(default="", max_length=500, description="The item's condition when lent.")

    _no_nul = field_validator("condition")(refuse_nul)


class LoanPublic(BaseModel):
    id: int
    club: str
    item: ItemRef
    item_name: str | None
    borrower: str
    status: LoanStatus
    start: date
    due: date
    returned_on: date | None
    condition_out: str
    condition_in: str
    note: str
    overdue: bool = Field(description="Out past its due date.")
    version: int
    created_at: datetime
    updated_at: datetime


class LoanList(ListMeta):
    items: list[LoanPublic]
