"""Engine creation and schema migrations.

SQLite runs in WAL mode with a busy timeout so readers never block the writer and concurrent writers
wait instead of failing; foreign keys are switched on (SQLite leaves them off by default) so the
database itself refuses to delete equipment a rig still uses.

Transactions on SQLite are begun by us, not by the driver (which would begin one only before the
first write, leaving the reads before it outside): every transaction starts with ``BEGIN``, and a
writing request's with ``BEGIN IMMEDIATE`` (:func:`api.storage.store.begin_write`), which takes the
database's write lock before the first read, so what a rule checks cannot change before the write.
"""

from __future__ import annotations

from pathlib import Path

from alembic import command
from alembic.config import Config
from sqlalchemy import Engine, create_engine, event
from sqlalchemy.engine import make_url

MIGRATIONS = Path(__file__).parent / "migrations"
SQLITE_BUSY_TIMEOUT_MS = 10_000


def make_engine(database_url: str) -> Engine:
    url = make_url(database_url)
    if url.get_backend_name() != "sqlite":
        return create_engine(url, pool_pre_ping=True)
    if url.database and url.database != ":memory:":
        Path(url.database).parent.mkdir(parents=True, exist_ok=True)
    engine = create_engine(
        url, connect_args={"check_same_thread": False, "timeout": SQLITE_BUSY_TIMEOUT_MS / 1000}
    )
    event.listen(engine, "connect", _sqlite_pragmas)
    event.listen(engine, "begin", _sqlite_begin)
    return engine


#: Execution option of a connection whose transactions must begin with the write lock taken.
BEGIN_IMMEDIATE = "rigbench_begin_immediate"


def _sqlite_begin(connection) -> None:
    immediate = connection.get_execution_options().get(BEGIN_IMMEDIATE)
    connection.exec_driver_sql("BEGIN IMMEDIATE" if immediate else "BEGIN")


def _sqlite_pragmas(dbapi_connection, _record) -> None:
    cursor = dbapi_connection.cursor()
    cursor.execute("PRAGMA journal_mode=WAL")
    cursor.execute(f"PRAGMA busy_timeout={SQLITE_BUSY_TIMEOUT_MS}")
    cursor.execute("PRAGMA foreign_keys=ON")
    # FULL: a commit that was answered with 2xx survives a crash of the process or the machine.
    cursor.execute("PRAGMA synchronous=FULL")
    cursor.close()
    # The driver's own transaction handling off: _sqlite_begin emits BEGIN (see the module doc).
    dbapi_connection.isolation_level = None


def alembic_config(engine: Engine | None = None, database_url: str | None = None) -> Config:
    """An Alembic config that needs no alembic.ini: migrations ship inside the ``api`` package."""
    config = Config()
    config.set_main_option("script_location", str(MIGRATIONS))
    if database_url:
        config.set_main_option("sqlalchemy.url", database_url.replace("%", "%%"))
    config.attributes["engine"] = engine
    return config


def upgrade(engine: Engine, revision: str = "head") -> None:
    """Apply migrations up to ``revision`` on ``engine``'s database."""
    command.upgrade(alembic_config(engine), revision)


def upgrade_if_behind(engine: Engine) -> bool:
    """Apply migrations only when the database is not at the code's head revision; True if it ran.

    Checking first keeps the start of every worker of ``rigbench serve --workers N`` to a read: the
    command migrates once before it starts them, so none of them races another to migrate.
    """
    if current_revision(engine) == head_revision():
        return False
    upgrade(engine)
    return True


def current_revision(engine: Engine) -> str | None:
    from alembic.runtime.migration import MigrationContext

    with engine.connect() as connection:
        return MigrationContext.configure(connection).get_current_revision()


def head_revision() -> str | None:
    from alembic.script import ScriptDirectory

    return ScriptDirectory.from_config(alembic_config()).get_current_head()


def schema_warning(engine: Engine) -> str | None:
    """A sentence for the operator when the database is not at the code's schema revision."""
    from sqlalchemy.exc import SQLAlchemyError

    try:
        current = current_revision(engine)
    except SQLAlchemyError as exc:
        return f"cannot reach the database at start-up ({type(exc).__name__}); requests will fail until it answers"
    head = head_revision()
    if current != head:
        return f"the database schema is at revision {current}, this code needs {head}: run `rigbench db upgrade`"
    return None
