"""Database tables (SQLModel). Each change here needs an Alembic migration (see DEVELOPERS.md).

Equipment and rigs keep their validated spec as JSON (the pydantic model's dump, canonical units)
plus the indexed columns that lists filter on. A rig's component slots are either inline in its spec
or references to stored equipment; references are mirrored in foreign-key columns so the database
itself refuses to delete equipment a rig still uses.
"""

from __future__ import annotations

from datetime import UTC, datetime
from enum import StrEnum
from typing import Any

from sqlalchemy import JSON, BigInteger, Column, DateTime, ForeignKey, Integer, String
from sqlmodel import Field, SQLModel


def utcnow() -> datetime:
    return datetime.now(UTC)


class AccountKind(StrEnum):
    person = "person"
    club = "club"


class Visibility(StrEnum):
    private = "private"
    public = "public"
    members = "members"  # a club's members (and officers) only


class KeyScope(StrEnum):
    read = "read"
    write = "write"


# 64-bit ids on PostgreSQL (path ids go up to 2**63-1); on SQLite an INTEGER primary key is already
# 64-bit and must stay INTEGER to remain the rowid alias that autoincrements.
ID = BigInteger().with_variant(Integer(), "sqlite")


def _timestamp() -> Any:
    # sa_type rather than sa_column: a Column object cannot be shared by the tables of a mixin.
    return Field(default_factory=utcnow, sa_type=DateTime(timezone=True), nullable=False)


class Account(SQLModel, table=True):
    __tablename__ = "accounts"

    id: int | None = Field(default=None, primary_key=True, sa_type=ID)
    name: str = Field(sa_column=Column(String(40), unique=True, nullable=False, index=True))
    kind: str = Field(default=AccountKind.person.value, sa_column=Column(String(10), nullable=False))
    display_name: str = Field(default="", sa_column=Column(String(120), nullable=False))
    location: str = Field(default="", sa_column=Column(String(200), nullable=False))
    contact_url: str = Field(default="", sa_column=Column(String(500), nullable=False))
    created_at: datetime = _timestamp()
    # The site a club's page and comparisons use by default (SET NULL: deleting the site clears it).
    default_site_id: int | None = Field(
        default=None,
        sa_column=Column(ID, ForeignKey("sites.id", ondelete="SET NULL", use_alter=True,
                                        name="fk_accounts_default_site_id_sites"), index=True),
    )


class ApiKey(SQLModel, table=True):
    __tablename__ = "api_keys"

    id: int | None = Field(default=None, primary_key=True, sa_type=ID)
    account_id: int = Field(
        sa_column=Column(ID, ForeignKey("accounts.id", ondelete="CASCADE"), nullable=False, index=True)
    )
    # sha256 hex of the whole key; the key itself is shown once and never stored.
    key_hash: str = Field(sa_column=Column(String(64), unique=True, nullable=False))
    # The first characters of the key, not secret, so a person can tell their keys apart.
    prefix: str = Field(sa_column=Column(String(16), nullable=False))
    scope: str = Field(default=KeyScope.write.value, sa_column=Column(String(10), nullable=False))
    created_at: datetime = _timestamp()
    revoked_at: datetime | None = Field(default=None, sa_column=Column(DateTime(timezone=True)))


class StoredItem(SQLModel):
    """Columns every stored telescope, camera, modifier, mount and rig has."""

    id: int | None = Field(default=None, primary_key=True, sa_type=ID)
    owner_id: int = Field(foreign_key="accounts.id", index=True, ondelete="CASCADE", sa_type=ID)
    visibility: str = Field(default=Visibility.private.value, max_length=10, index=True)
    name: str | None = Field(default=None, max_length=120, index=True)
    spec: dict = Field(sa_type=JSON, nullable=False)
    version: int = Field(default=1, sa_type=BigInteger, nullable=False)
    created_at: datetime = _timestamp()
    updated_at: datetime = _timestamp()
    # Set when the owner retires the item (api.equipment.retire): gone from lists and new rigs.
    retired_at: datetime | None = Field(default=None, sa_type=DateTime(timezone=True), nullable=True)


class TelescopeRow(StoredItem, table=True):
    __tablename__ = "telescopes"


class CameraRow(StoredItem, table=True):
    __tablename__ = "cameras"


class ModifierRow(StoredItem, table=True):
    __tablename__ = "modifiers"


class MountRow(StoredItem, table=True):
    __tablename__ = "mounts"


class SiteRow(StoredItem, table=True):
    """An observing site (its conditions in ``spec``, see calculators.site.Site)."""

    __tablename__ = "sites"


def _reference(table: str) -> Any:
    # RESTRICT: deleting equipment a rig uses must fail rather than lose part of the rig.
    return Field(
        default=None,
        sa_column=Column(ID, ForeignKey(f"{table}.id", ondelete="RESTRICT"), index=True),
    )


class RigRow(StoredItem, table=True):
    __tablename__ = "rigs"

    telescope_id: int | None = _reference("telescopes")
    camera_id: int | None = _reference("cameras")
    modifier_id: int | None = _reference("modifiers")
    mount_id: int | None = _reference("mounts")
    # Parts copied into the rig when their owner retired them or made them private
    # (api.equipment.copies): [{"slot", "kind", "id", "reason", "taken_at"}].
    copied_parts: list = Field(default_factory=list, sa_type=JSON, nullable=False)


class SavedEvaluationRow(StoredItem, table=True):
    """A purchase evaluation kept with its answer (api/evaluations/saved.py).

    ``spec`` holds the request as sent, the components it was computed from (stored ones copied at
    saving) and which entries were stored ids; ``result`` the answer as it was then.
    """

    __tablename__ = "saved_evaluations"

    result: dict = Field(sa_type=JSON, nullable=False)


# Memberships, loans and history live in their own module; imported here so every table is on
# SQLModel.metadata whenever the models are.
from api.storage.club_models import HistoryRow, LoanRow, MembershipRow  # noqa: E402,F401
