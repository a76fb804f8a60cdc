"""Shared fixtures: a fresh app on a fresh database for every test.

The database is a new SQLite file in the test's temporary folder, or, when
``RIGBENCH_TEST_POSTGRES_URL`` names a PostgreSQL server (``postgresql+psycopg://…``), a new schema
there that is dropped afterwards. Either way the schema is built by the Alembic migrations.
"""

from __future__ import annotations

import os
import sys
import uuid
import warnings
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest
from starlette.exceptions import StarletteDeprecationWarning

with warnings.catch_warnings():
    # Starlette now prefers the httpx2 package for its TestClient; httpx is what we ship and use.
    warnings.simplefilter("ignore", StarletteDeprecationWarning)
    from fastapi.testclient import TestClient
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url
from sqlmodel import Session

from api.accounts.keys import add_key, create_account
from api.app import create_app
from api.settings import Settings
from api.storage import db
from api.storage.models import AccountKind, KeyScope

# Plain helper modules (request bodies, problem assertions) for tests in any folder.
sys.path.insert(0, str(Path(__file__).parent / "support"))

POSTGRES_URL = os.environ.get("RIGBENCH_TEST_POSTGRES_URL", "")


def pytest_report_header(config) -> str:
    return f"rigbench API tests against: {'PostgreSQL' if POSTGRES_URL else 'SQLite files'}"


@pytest.fixture
def on_postgres() -> bool:
    return bool(POSTGRES_URL)


@pytest.fixture
def database_url(tmp_path) -> Iterator[str]:
    if not POSTGRES_URL:
        yield f"sqlite:///{(tmp_path / 'rigbench.db').as_posix()}"
        return
    schema = f"test_{uuid.uuid4().hex[:16]}"
    admin = create_engine(POSTGRES_URL, isolation_level="AUTOCOMMIT")
    with admin.connect() as connection:
        connection.execute(text(f'CREATE SCHEMA "{schema}"'))
    # Every connection of the app sees only this test's schema.
    url = make_url(POSTGRES_URL).update_query_dict({"options": f"-csearch_path={schema}"})
    try:
        yield url.render_as_string(hide_password=False)
    finally:
        with admin.connect() as connection:
            connection.execute(text(f'DROP SCHEMA "{schema}" CASCADE'))
        admin.dispose()


@pytest.fixture
def settings(database_url, tmp_path) -> Settings:
    return Settings(database_url=database_url, data_dir=tmp_path / "data")


@pytest.fixture
def app(settings):
    app = create_app(settings)
    db.upgrade(app.state.engine)  # both backends: the schema comes from the migrations
    yield app
    app.state.engine.dispose()


@pytest.fixture
def client(app) -> Iterator[TestClient]:
    with TestClient(app) as test_client:
        yield test_client


@dataclass
class Account:
    name: str
    key: str

    @property
    def headers(self) -> dict[str, str]:
        return {"Authorization": f"Bearer {self.key}"}


@pytest.fixture
def make_account(app):
    """``make_account("name", kind="club", scope="read")``: an account and one key of that scope."""

    def make(name: str, kind: str = "person", scope: str = "write") -> Account:
        with Session(app.state.engine) as session:
            account, key = create_account(session, name, AccountKind(kind))
            if scope == "read":
                key = add_key(session, account, KeyScope.read)
                session.commit()
        return Account(name, key)

    return make


@pytest.fixture
def alice(make_account) -> Account:
    return make_account("alice")


@pytest.fixture
def bob(make_account) -> Account:
    return make_account("bob")
