"""Accounts and API keys: creation, hashing and lookup.

A key is ``rb_`` plus 43 URL-safe characters from :func:`secrets.token_urlsafe` (256 random bits). Only
its SHA-256 is stored: with that much entropy a fast hash is enough (no dictionary to attack), and
lookup stays a single indexed query. The key is shown once, when it is made.
"""

from __future__ import annotations

import hashlib
import hmac
import re
import secrets
from dataclasses import dataclass

from sqlmodel import Session, select

from api.schemas import HANDLE_PATTERN
from api.storage.models import Account, AccountKind, ApiKey, KeyScope

KEY_PREFIX = "rb_"


class AccountError(ValueError):
    """An account cannot be created as asked (bad handle, handle taken)."""


@dataclass(frozen=True)
class Principal:
    """Who is calling, and with which kind of key."""

    account: Account
    scope: KeyScope
    key_id: int | None = None  # which key was used: rate limits count per key

    @property
    def can_write(self) -> bool:
        return self.scope == KeyScope.write


def hash_key(key: str) -> str:
    return hashlib.sha256(key.encode("utf-8")).hexdigest()


def new_key() -> str:
    return KEY_PREFIX + secrets.token_urlsafe(32)


def check_handle(name: str) -> str:
    if not re.fullmatch(HANDLE_PATTERN, name):
        raise AccountError(
            f"name {name!r}: use 1-40 lower-case letters, digits and inner hyphens, e.g. 'lakeside-astro'"
        )
    return name


def create_account(
    session: Session,
    name: str,
    kind: AccountKind = AccountKind.person,
    *,
    display_name: str = "",
    location: str = "",
    contact_url: str = "",
) -> tuple[Account, str]:
    """Create an account and its first read-write key; returns the account and the key (shown once)."""
    check_handle(name)
    if session.exec(select(Account).where(Account.name == name)).first() is not None:
        raise AccountError(f"name {name!r} is already taken")
    account = Account(
        name=name, kind=AccountKind(kind).value, display_name=display_name or name,
        location=location, contact_url=contact_url,
    )
    session.add(account)
    session.flush()
    key = add_key(session, account)
    session.commit()
    session.refresh(account)
    return account, key


def add_key(session: Session, account: Account, scope: KeyScope = KeyScope.write) -> str:
    """Store a new key's hash for ``account`` and return the key itself (not committed)."""
    key = new_key()
    session.add(ApiKey(account_id=account.id, key_hash=hash_key(key), prefix=key[:10], scope=scope.value))
    return key


def authenticate(session: Session, key: str) -> Principal | None:
    """The account a key belongs to, or None for an unknown or revoked key."""
    digest = hash_key(key)
    row = session.exec(select(ApiKey).where(ApiKey.key_hash == digest)).first()
    # The lookup matched on the hash already; the constant-time comparison keeps the final check free
    # of timing differences should the lookup ever become a prefix search.
    if row is None or row.revoked_at is not None or not hmac.compare_digest(row.key_hash, digest):
        return None
    account = session.get(Account, row.account_id)
    if account is None:
        return None
    return Principal(account=account, scope=KeyScope(row.scope), key_id=row.id)


@dataclass(frozen=True)
class KeyInfo:
    """What may be shown about a key after its creation: never the key, never its hash."""

    prefix: str
    scope: str
    created_at: str
    revoked: bool


def _account(session: Session, name: str) -> Account:
    account = session.exec(select(Account).where(Account.name == name)).first()
    if account is None:
        raise AccountError(f"no account named {name!r}")
    return account


def list_keys(session: Session, name: str) -> list[KeyInfo]:
    account = _account(session, name)
    rows = session.exec(select(ApiKey).where(ApiKey.account_id == account.id).order_by(ApiKey.id)).all()
    return [KeyInfo(r.prefix, r.scope, r.created_at.isoformat(timespec="seconds"), r.revoked_at is not None)
            for r in rows]


def new_account_key(session: Session, name: str, scope: KeyScope = KeyScope.write) -> str:
    """A further key for the account (e.g. a read-only one for a club web page); shown once."""
    key = add_key(session, _account(session, name), KeyScope(scope))
    session.commit()
    return key


def _find_key(session: Session, account: Account, key_or_prefix: str) -> ApiKey:
    """The account's live key named by its shown prefix or by the whole key (then matched by hash)."""
    rows = session.exec(
        select(ApiKey).where(ApiKey.account_id == account.id, ApiKey.revoked_at.is_(None))
    ).all()
    if key_or_prefix.startswith(KEY_PREFIX) and len(key_or_prefix) > 16:
        digest = hash_key(key_or_prefix)
        found = [r for r in rows if hmac.compare_digest(r.key_hash, digest)]
    else:
        found = [r for r in rows if r.prefix == key_or_prefix]
    if not found:
        raise AccountError(f"account {account.name!r} has no live key {key_or_prefix[:10]!r}…")
    if len(found) > 1:
        raise AccountError(f"several keys of {account.name!r} start with {key_or_prefix!r}; give the whole key")
    return found[0]


def revoke_key(session: Session, name: str, key_or_prefix: str) -> KeyInfo:
    """Revoke one key; it is refused (401) from the next request on, by every server process."""
    from api.storage.models import utcnow

    row = _find_key(session, _account(session, name), key_or_prefix)
    row.revoked_at = utcnow()
    session.add(row)
    session.commit()
    return KeyInfo(row.prefix, row.scope, row.created_at.isoformat(timespec="seconds"), True)


def rotate_key(session: Session, name: str, key_or_prefix: str) -> str:
    """Replace a key by a new one of the same scope, in one transaction; returns the new key."""
    from api.storage.models import utcnow

    account = _account(session, name)
    old = _find_key(session, account, key_or_prefix)
    old.revoked_at = utcnow()
    session.add(old)
    key = add_key(session, account, KeyScope(old.scope))
    session.commit()
    return key
