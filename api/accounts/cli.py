"""``rigbench accounts keys | add-key | revoke-key | rotate-key``: API keys from the command line.

A new key is printed once, alone on the last line; listings show only each key's prefix (its first
10 characters, not secret), scope, creation time and whether it is revoked.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable
from typing import Any

from api.settings import Settings


def with_session(settings: Settings, work: Callable[[Any], int]) -> int:
    """Run ``work`` in a session on the configured database; a refusal is printed, exit code 2.

    Refusals are the accounts' own (``AccountError``) and problems an API rule raises
    (``ApiProblem``, e.g. from the club membership rules), so every command reports them alike."""
    from sqlmodel import Session

    from api.accounts.keys import AccountError
    from api.http.problems import ApiProblem
    from api.storage import db

    engine = db.make_engine(settings.database_url)
    if settings.is_sqlite:
        db.upgrade(engine)
    try:
        with Session(engine) as session:
            return work(session)
    except AccountError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    except ApiProblem as problem:
        print(f"error: {problem.detail}", file=sys.stderr)
        return 2
    finally:
        engine.dispose()


def run_keys(args: argparse.Namespace, settings: Settings) -> int:
    from api.accounts.keys import list_keys

    def work(session) -> int:
        for key in list_keys(session, args.name):
            state = "revoked" if key.revoked else "live"
            print(f"{key.prefix}…  {key.scope:<5}  {key.created_at}  {state}")
        return 0

    return with_session(settings, work)


def run_add_key(args: argparse.Namespace, settings: Settings) -> int:
    from api.accounts.keys import new_account_key
    from api.storage.models import KeyScope

    def work(session) -> int:
        key = new_account_key(session, args.name, KeyScope(args.scope))
        print(f"New {args.scope} key for {args.name!r} (shown only now):")
        print(key)
        return 0

    return with_session(settings, work)


def run_revoke_key(args: argparse.Namespace, settings: Settings) -> int:
    from api.accounts.keys import revoke_key

    def work(session) -> int:
        info = revoke_key(session, args.name, args.key)
        print(f"Revoked key {info.prefix}… of {args.name!r}; it is refused from now on.")
        return 0

    return with_session(settings, work)


def run_rotate_key(args: argparse.Namespace, settings: Settings) -> int:
    from api.accounts.keys import rotate_key

    def work(session) -> int:
        key = rotate_key(session, args.name, args.key)
        print(f"Revoked {args.key[:10]}… of {args.name!r}. Its replacement (shown only now):")
        print(key)
        return 0

    return with_session(settings, work)


def add_key_commands(commands: argparse._SubParsersAction) -> None:
    """Declare the key subcommands inside the ``accounts`` group."""
    keys = commands.add_parser("keys", help="list an account's keys (prefix, scope, created, revoked)")
    keys.add_argument("name")
    keys.set_defaults(handler=run_keys)

    add = commands.add_parser("add-key", help="make a further key; prints it alone on the last line")
    add.add_argument("name")
    add.add_argument("--scope", choices=["read", "write"], default="write",
                     help="read: may read the account's private items but change nothing")
    add.set_defaults(handler=run_add_key)

    revoke = commands.add_parser("revoke-key", help="revoke a key at once")
    revoke.add_argument("name")
    revoke.add_argument("key", help="the key's prefix as `keys` shows it (rb_ and 7 characters), or the whole key")
    revoke.set_defaults(handler=run_revoke_key)

    rotate = commands.add_parser("rotate-key", help="revoke a key and make its replacement (same scope)")
    rotate.add_argument("name")
    rotate.add_argument("key", help="the key's prefix as `keys` shows it, or the whole key")
    rotate.set_defaults(handler=run_rotate_key)
