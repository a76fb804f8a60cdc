"""The ``rigbench`` command: serve the API, manage accounts, migrate the database.

Each subcommand is a pair of functions: ``add_<name>(subparsers)`` declares it and sets
``handler`` to the function that runs it. To add one, write the pair and list the adder in
``COMMANDS`` (or in a group's adder for ``accounts …``).
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable, Sequence

from api.clubs.cli import add_clubs
from api.evaluations.command import add_evaluate
from api.settings import Settings

Handler = Callable[[argparse.Namespace, Settings], int]


# --- serve ----------------------------------------------------------------------------------------

def run_serve(args: argparse.Namespace, settings: Settings) -> int:
    import uvicorn

    from api.http.ratelimit import shared_between_processes
    from api.storage import db

    workers = args.workers or (1 if args.demo else settings.worker_count)
    # Everything that must happen once happens here, before any worker starts: the SQLite schema
    # and the demo data. The workers then only check the schema (api.app's lifespan).
    engine = db.make_engine(settings.database_url)
    if settings.is_sqlite:
        db.upgrade_if_behind(engine)
    base = f"http://{args.host if ':' not in args.host else f'[{args.host}]'}:{args.port}"
    print(f"rigbench is serving at {base} ({workers} worker process{'es' if workers > 1 else ''})")
    print(f"API documentation:   {base}/docs")
    if args.demo:
        from api.demo import seed_demo

        demo = seed_demo(engine)
        print(f"Demo club page:      {base}/clubs/{demo.club}")
        print(f"Demo member ({demo.member}) key: {demo.member_key}")
        print(f"Demo club ({demo.club}) key: {demo.club_key}")
    engine.dispose()
    if workers > 1 and not shared_between_processes(settings.rate_limit_storage):
        print(f"Warning: rate limits are counted by each of the {workers} workers on its own "
              f"(RIGBENCH_RATE_LIMIT_STORAGE={settings.rate_limit_storage}), so a key or an address may "
              f"make up to {workers} times each limit. Share them with "
              "RIGBENCH_RATE_LIMIT_STORAGE=redis://host:6379/0.")
    sys.stdout.flush()
    # rigbench writes its own JSON request log (api.http.request_log); uvicorn's would repeat each line.
    import os

    from api.http.server_timeouts import ENVIRONMENT, HeaderTimeoutProtocol

    os.environ[ENVIRONMENT] = str(settings.header_timeout_s)  # read by each worker's protocol
    # proxy_headers off: X-Forwarded-For is believed only from RIGBENCH_TRUSTED_PROXIES (api.http.edge).
    options = {"host": args.host, "port": args.port, "log_level": args.log_level,
               "access_log": not settings.request_log, "proxy_headers": False, "http": HeaderTimeoutProtocol}
    if workers == 1:
        from api.app import create_app

        uvicorn.run(create_app(settings), **options)
    else:
        if not settings.session_secret:
            # One signing key for every worker, or a members' page sign-in made on one worker would
            # not be recognised by the next (api.clubs.members_page). Set it yourself to outlive restarts.
            import os
            import secrets

            os.environ["RIGBENCH_SESSION_SECRET"] = secrets.token_urlsafe(32)
        # Each worker is a fresh process that builds its own app from the same RIGBENCH_* settings;
        # uvicorn's supervisor shares the listening socket and restarts a worker that dies.
        uvicorn.run("api.app:create_app", factory=True, workers=workers, **options)
    return 0


def _workers(text: str) -> int:
    value = int(text)
    if not 1 <= value <= 512:
        raise argparse.ArgumentTypeError(f"{value} is not a number of workers between 1 and 512")
    return value


def add_serve(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser("serve", help="run the HTTP API")
    parser.add_argument("--host", default="127.0.0.1", help="address to listen on (default 127.0.0.1)")
    parser.add_argument("--port", type=int, default=8000, help="port (default 8000)")
    parser.add_argument("--workers", type=_workers, default=None,
                        help="server processes (default RIGBENCH_WORKERS, whose 0 means one per CPU core; "
                        "1 with --demo)")
    parser.add_argument("--demo", action="store_true", help="seed an invented demo club and print its keys")
    parser.add_argument("--log-level", default="info", choices=["critical", "error", "warning", "info", "debug"])
    parser.set_defaults(handler=run_serve)


# --- accounts -------------------------------------------------------------------------------------

def run_accounts_create(args: argparse.Namespace, settings: Settings) -> int:
    from sqlmodel import Session

    from api.accounts.keys import AccountError, create_account
    from api.storage import db

    engine = db.make_engine(settings.database_url)
    if settings.is_sqlite:
        db.upgrade(engine)
    try:
        with Session(engine) as session:
            account, key = create_account(
                session, args.name, args.kind, display_name=args.display_name or "",
                location=args.location or "", contact_url=args.contact_url or "",
            )
    except AccountError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    finally:
        engine.dispose()
    print(f"Created {account.kind} account {account.name!r}. Its API key (shown only now):")
    print(key)
    return 0


def add_accounts(subparsers: argparse._SubParsersAction) -> None:
    group = subparsers.add_parser("accounts", help="manage accounts and keys")
    commands = group.add_subparsers(dest="accounts_command", required=True, metavar="COMMAND")
    create = commands.add_parser("create", help="create an account; prints its key alone on the last line")
    create.add_argument("name", help="URL-safe handle, e.g. lakeside-astro")
    create.add_argument("--kind", choices=["person", "club"], default="person")
    create.add_argument("--display-name")
    create.add_argument("--location")
    create.add_argument("--contact-url")
    create.set_defaults(handler=run_accounts_create)

    from api.accounts.cli import add_key_commands

    add_key_commands(commands)


# --- db -------------------------------------------------------------------------------------------

def run_db_upgrade(args: argparse.Namespace, settings: Settings) -> int:
    from api.storage import db

    engine = db.make_engine(settings.database_url)
    try:
        db.upgrade(engine, args.revision)
        print(f"database at revision {db.current_revision(engine)}")
    finally:
        engine.dispose()
    return 0


def add_db(subparsers: argparse._SubParsersAction) -> None:
    group = subparsers.add_parser("db", help="database schema")
    commands = group.add_subparsers(dest="db_command", required=True, metavar="COMMAND")
    upgrade = commands.add_parser("upgrade", help="apply Alembic migrations")
    upgrade.add_argument("revision", nargs="?", default="head")
    upgrade.set_defaults(handler=run_db_upgrade)


# --- openapi --------------------------------------------------------------------------------------

def run_openapi(args: argparse.Namespace, settings: Settings) -> int:
    from api.openapi import render

    sys.stdout.write(render())
    return 0


def add_openapi(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser("openapi", help="print the OpenAPI document (JSON)")
    parser.set_defaults(handler=run_openapi)


COMMANDS: list[Callable[[argparse._SubParsersAction], None]] = [
    add_serve, add_accounts, add_db, add_openapi, add_evaluate, add_clubs,
]


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="rigbench", description="Store and compare astrophotography rigs.")
    subparsers = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    for add in COMMANDS:
        add(subparsers)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    return args.handler(args, Settings())


if __name__ == "__main__":
    sys.exit(main())
