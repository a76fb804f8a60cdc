"""Alembic environment: runs against the engine handed over by :func:`api.storage.db.upgrade`, or the URL
given with ``-x``/``sqlalchemy.url``, or the service settings."""

from __future__ import annotations

from alembic import context
from sqlmodel import SQLModel

import api.storage.models  # noqa: F401  (registers the tables on SQLModel.metadata)

config = context.config
target_metadata = SQLModel.metadata


def _engine():
    engine = config.attributes.get("engine")
    if engine is not None:
        return engine
    from api.storage.db import make_engine

    url = config.get_main_option("sqlalchemy.url")
    if not url:
        from api.settings import Settings

        url = Settings().database_url
    return make_engine(url)


def run_migrations_offline() -> None:
    context.configure(
        url=config.get_main_option("sqlalchemy.url"),
        target_metadata=target_metadata,
        literal_binds=True,
        render_as_batch=True,
    )
    with context.begin_transaction():
        context.run_migrations()


def _sqlite_foreign_keys(connection, on: bool) -> None:
    # Straight to the driver: the pragma does nothing inside a transaction, and a statement through
    # SQLAlchemy would begin one first (api.storage.db begins every transaction itself).
    connection.connection.driver_connection.execute(f"PRAGMA foreign_keys={'ON' if on else 'OFF'}")


def run_migrations_online() -> None:
    engine = _engine()
    with engine.connect() as connection:
        # Batch mode copies a table, drops the old one and renames the copy. With foreign keys on,
        # SQLite runs the drop's ON DELETE CASCADE: copying `accounts` would delete every item its
        # rows own. So foreign keys are off while migrating (as SQLite's ALTER TABLE guide advises)
        # and checked before the migration's transaction commits.
        sqlite = connection.dialect.name == "sqlite"
        if sqlite:
            _sqlite_foreign_keys(connection, False)
        try:
            # render_as_batch: SQLite cannot ALTER most things in place; batch mode copies the table.
            context.configure(connection=connection, target_metadata=target_metadata, render_as_batch=True)
            with context.begin_transaction():
                context.run_migrations()
                if sqlite:
                    broken = connection.exec_driver_sql("PRAGMA foreign_key_check").fetchall()
                    if broken:
                        raise RuntimeError(f"the migration leaves rows with broken references: {broken[:5]}")
            connection.commit()
        finally:
            if sqlite:
                _sqlite_foreign_keys(connection, True)


if context.is_offline_mode():
    run_migrations_offline()
else:
    run_migrations_online()
