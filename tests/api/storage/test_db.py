"""api/storage/db.py and the Alembic migrations: the migrated schema is exactly what the models declare."""

from __future__ import annotations

import pytest
from alembic.autogenerate import compare_metadata
from alembic.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import inspect, text
from sqlmodel import SQLModel

from api.storage import db


def test_migrations_build_exactly_the_models_schema(app):
    with app.state.engine.connect() as connection:
        differences = compare_metadata(MigrationContext.configure(connection), SQLModel.metadata)
    assert differences == [], "write a migration for: " + repr(differences)


def test_database_is_at_the_newest_revision(app):
    head = ScriptDirectory.from_config(db.alembic_config()).get_current_head()
    assert db.current_revision(app.state.engine) == head


def test_migrations_go_down_and_up_again(app):
    engine = app.state.engine
    app.state.engine.dispose()
    from alembic import command

    command.downgrade(db.alembic_config(engine), "base")
    assert set(inspect(engine).get_table_names()) <= {"alembic_version"}
    db.upgrade(engine)
    assert {"accounts", "api_keys", "telescopes", "cameras", "train_elements", "mounts", "rigs"} <= set(
        inspect(engine).get_table_names()
    )


def test_sqlite_runs_in_wal_mode_with_foreign_keys_and_a_busy_timeout(app, on_postgres):
    if on_postgres:
        pytest.skip("SQLite pragmas")
    with app.state.engine.connect() as connection:
        assert connection.execute(text("PRAGMA journal_mode")).scalar() == "wal"
        assert connection.execute(text("PRAGMA foreign_keys")).scalar() == 1
        assert connection.execute(text("PRAGMA busy_timeout")).scalar() == db.SQLITE_BUSY_TIMEOUT_MS


def test_a_missing_data_folder_is_created(tmp_path):
    engine = db.make_engine(f"sqlite:///{tmp_path / 'deep' / 'er' / 'rigbench.db'}")
    db.upgrade(engine)
    assert (tmp_path / "deep" / "er" / "rigbench.db").exists()
    engine.dispose()


def test_schema_warning_names_the_fix(app, tmp_path):
    assert db.schema_warning(app.state.engine) is None
    fresh = db.make_engine(f"sqlite:///{tmp_path / 'empty.db'}")
    assert "rigbench db upgrade" in db.schema_warning(fresh)
    fresh.dispose()
    unreachable = db.make_engine("postgresql+psycopg://nobody:x@127.0.0.1:9/none")
    assert "cannot reach the database" in db.schema_warning(unreachable)
