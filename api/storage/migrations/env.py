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


def run_migrations_online() -> None:
    engine = _engine()
    with engine.connect() as connection:
        sqlite = connection.dialect.name == "sqlite"
        if sqlite:
            # Batch mode copies a table and drops the old one; with foreign keys on, that DROP deletes
            # every row that references it ON DELETE CASCADE (all equipment, when the table is
            # accounts). Off for the migration (it cannot change inside a transaction), checked after.
            connection.connection.driver_connection.execute("PRAGMA foreign_keys=OFF")
        # render_as_batch: SQLite cannot ALTER most things in place; batch mode copies the table.
        context.configure(connection=connection, target_metadata=target_metadata, render_as_batch=True)
        try:
            with context.begin_transaction():
                context.run_migrations()
                if sqlite:
                    broken = connection.exec_driver_sql("PRAGMA foreign_key_check").fetchall()
                    if broken:
                        raise RuntimeError(f"migration left rows whose references are missing: {broken[:5]}")
            connection.commit()
        finally:
            if sqlite:
                connection.connection.driver_connection.execute("PRAGMA foreign_keys=ON")


if context.is_offline_mode():
    run_migrations_offline()
else:
    run_migrations_online()
