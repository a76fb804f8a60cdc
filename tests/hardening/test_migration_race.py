"""Two schemas of one PostgreSQL database migrated at the same moment both reach head.

The loan migration (0005_club_operations) creates the btree_gist extension, which belongs to the
database, not to a schema. Two migrations racing on ``CREATE EXTENSION IF NOT EXISTS`` used to fail
the second on pg_extension's unique index (seen in CI: two pytest workers migrating their first
schemas). The migration now takes a transaction-scoped advisory lock first. Each round makes a new
database, so the extension is missing, migrates two schemas up to the revision before the loan
migration, then runs the loan migration in both at once from behind a barrier, each in its own
process (Alembic's ``op`` is one module-level proxy, so two migrations in one process would mix).
"""

from __future__ import annotations

import multiprocessing
import uuid

import pytest
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url

from api.storage import db
from servers import POSTGRES_URL

ROUNDS = 4
BEFORE_LOANS = "0004_observing_sites"
LOANS = "0005_club_operations"

pytestmark = [pytest.mark.postgres, pytest.mark.slow]


@pytest.fixture
def fresh_database():
    """A new, empty database on the test server (dropped afterwards); its URL."""
    if not POSTGRES_URL:
        pytest.skip("set RIGBENCH_TEST_POSTGRES_URL to run this against PostgreSQL (.ci/run does)")
    name = f"rb_race_{uuid.uuid4().hex[:12]}"
    admin = create_engine(POSTGRES_URL, isolation_level="AUTOCOMMIT")
    with admin.connect() as connection:
        connection.execute(text(f'CREATE DATABASE "{name}"'))
    try:
        yield make_url(POSTGRES_URL).set(database=name)
    finally:
        with admin.connect() as connection:
            connection.execute(text(f'DROP DATABASE "{name}" WITH (FORCE)'))
        admin.dispose()


def _schema_engine(url, schema: str):
    admin = create_engine(url, isolation_level="AUTOCOMMIT")
    with admin.connect() as connection:
        connection.execute(text(f'CREATE SCHEMA "{schema}"'))
    admin.dispose()
    scoped = url.update_query_dict({"options": f"-csearch_path={schema}"})
    return db.make_engine(scoped.render_as_string(hide_password=False))


def _migrate(url: str, barrier, answers) -> None:
    """In a process of its own: the loan migration once every racer is ready; its outcome."""
    engine = db.make_engine(url)
    barrier.wait(timeout=60)
    try:
        db.upgrade(engine, LOANS)
        answers.put(db.current_revision(engine))
    except Exception as exc:  # reported to the test, which fails naming it
        answers.put(f"failed: {type(exc).__name__}: {exc}".splitlines()[0])
    finally:
        engine.dispose()


def test_two_schemas_migrating_the_loan_rule_at_once_both_reach_head(fresh_database):
    for round_ in range(ROUNDS):
        url = fresh_database
        admin = create_engine(url, isolation_level="AUTOCOMMIT")
        with admin.connect() as connection:
            connection.execute(text("DROP EXTENSION IF EXISTS btree_gist CASCADE"))
        admin.dispose()
        engines = [_schema_engine(url, f"s{round_}_{n}") for n in range(2)]
        for engine in engines:
            db.upgrade(engine, BEFORE_LOANS)
        urls = [engine.url.render_as_string(hide_password=False) for engine in engines]
        context = multiprocessing.get_context("spawn")
        barrier, answers = context.Barrier(len(urls)), context.Queue()
        workers = [context.Process(target=_migrate, args=(u, barrier, answers)) for u in urls]
        for worker in workers:
            worker.start()
        outcomes = sorted(answers.get(timeout=120) for _ in workers)
        for worker in workers:
            worker.join(timeout=60)
        assert outcomes == [LOANS, LOANS]
        for n, engine in enumerate(engines):
            with engine.connect() as connection:
                constraint = connection.execute(text(
                    "SELECT count(*) FROM pg_constraint c JOIN pg_namespace s ON s.oid = c.connamespace "
                    "WHERE c.conname = 'loans_no_overlap' AND s.nspname = :schema"
                ), {"schema": f"s{round_}_{n}"}).scalar_one()
            assert constraint == 1
            engine.dispose()
