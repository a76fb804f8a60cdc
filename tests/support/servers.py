"""Real rigbench servers for tests: uvicorn processes on 127.0.0.1, and a database each can point at.

``database(backend, tmp_path)`` gives a SQLite file URL or a fresh PostgreSQL schema on the server named by
``RIGBENCH_TEST_POSTGRES_URL`` (dropped afterwards), migrated and holding one account whose key it
returns (``others=("bob",)`` adds more accounts, their keys in ``keys``). ``Server`` runs ``uvicorn --factory
api.app:create_app`` against it, or ``rigbench serve --workers N`` when given ``workers`` (N processes behind
one listening socket).
"""

from __future__ import annotations

import json
import os
import signal
import socket
import subprocess
import sys
import time
import uuid
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path

import httpx
import pytest
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url
from sqlmodel import Session

from api.accounts.keys import create_account
from api.storage import db

ROOT = Path(__file__).resolve().parents[2]
POSTGRES_URL = os.environ.get("RIGBENCH_TEST_POSTGRES_URL", "")
HOST = "127.0.0.1"

# Servers under test must not refuse the load we put on them.
NO_RATE_LIMITS = {"RIGBENCH_RATE_LIMIT_WRITES_PER_KEY": "", "RIGBENCH_RATE_LIMIT_WRITES_PER_ADDRESS": "",
                  "RIGBENCH_RATE_LIMIT_FAILED_AUTH": "", "RIGBENCH_RATE_LIMIT_COMPUTE_PER_KEY": "",
                  "RIGBENCH_RATE_LIMIT_COMPUTE_ANONYMOUS": ""}


def free_port() -> int:
    with socket.socket() as s:
        s.bind((HOST, 0))
        return s.getsockname()[1]


@dataclass
class Database:
    url: str
    key: str
    sqlite_file: Path | None
    keys: dict[str, str] = field(default_factory=dict)  # every account's key, by handle


@contextmanager
def database(
    backend: str, tmp_path: Path, account: str = "alice", others: tuple[str, ...] = ()
) -> Iterator[Database]:
    """A migrated database with one account; skips the test when PostgreSQL is asked for but not given."""
    if backend == "sqlite":
        path = tmp_path / "rigbench.db"
        url, cleanup, sqlite_file = f"sqlite:///{path.as_posix()}", None, path
    else:
        if not POSTGRES_URL:
            pytest.skip("set RIGBENCH_TEST_POSTGRES_URL to run this against PostgreSQL (.ci/run does)")
        schema = f"test_{uuid.uuid4().hex[:16]}"
        admin = create_engine(POSTGRES_URL, isolation_level="AUTOCOMMIT")
        with admin.connect() as connection:
            connection.execute(text(f'CREATE SCHEMA "{schema}"'))
        url = make_url(POSTGRES_URL).update_query_dict({"options": f"-csearch_path={schema}"})
        url = url.render_as_string(hide_password=False)
        sqlite_file = None

        def cleanup() -> None:
            with admin.connect() as connection:
                connection.execute(text(f'DROP SCHEMA "{schema}" CASCADE'))
            admin.dispose()
    engine = db.make_engine(url)
    try:
        db.upgrade(engine)
        keys = {}
        with Session(engine) as session:
            for name in (account, *others):
                _account, keys[name] = create_account(session, name)
        engine.dispose()
        yield Database(url, keys[account], sqlite_file, keys)
    finally:
        engine.dispose()
        if cleanup is not None:
            cleanup()


class Server:
    """One uvicorn process serving rigbench on a free loopback port."""

    def __init__(self, database_url: str, folder: Path, *, env: dict[str, str] | None = None, name: str = "server",
                 workers: int | None = None):
        self.database_url = database_url
        self.workers = workers
        self.folder = folder
        self.extra_env = {**NO_RATE_LIMITS, **(env or {})}
        self.name = name
        self.port = free_port()
        self.process: subprocess.Popen | None = None
        self.log_path = folder / f"{name}.log"

    @property
    def url(self) -> str:
        return f"http://{HOST}:{self.port}"

    def start(self, timeout_s: float = 60) -> Server:
        env = {**os.environ, "RIGBENCH_DATABASE_URL": self.database_url,
               "RIGBENCH_DATA_DIR": str(self.folder / "data"), **self.extra_env}
        log = open(self.log_path, "ab")
        if self.workers is None:
            command = [sys.executable, "-m", "uvicorn", "--factory", "api.app:create_app", "--host", HOST,
                       "--port", str(self.port), "--no-access-log", "--log-level", "warning",
                       # as `rigbench serve` runs it: no proxy headers, the header read timeout
                       "--no-proxy-headers", "--http", "api.http.server_timeouts:HeaderTimeoutProtocol"]
        else:
            command = [sys.executable, "-m", "api.cli", "serve", "--workers", str(self.workers), "--host", HOST,
                       "--port", str(self.port), "--log-level", "warning"]
        self.process = subprocess.Popen(
            command,
            cwd=ROOT, env=env, stdout=log, stderr=subprocess.STDOUT,
        )
        log.close()
        deadline = time.monotonic() + timeout_s
        while time.monotonic() < deadline:
            if self.process.poll() is not None:
                raise RuntimeError(f"{self.name} exited at start:\n{self.log()}")
            try:
                if httpx.get(f"{self.url}/healthz", timeout=1).status_code == 200 and self.all_workers_answer():
                    return self
            except httpx.HTTPError:
                time.sleep(0.1)
        self.stop()
        raise RuntimeError(f"{self.name} did not answer /healthz within {timeout_s} s:\n{self.log()}")

    def worker_pids(self, method: str | None = None) -> set[int]:
        """Processes that wrote a request log line (of ``method``, if given): each line has its pid."""
        lines = [json.loads(line) for line in self.log().splitlines() if line.startswith("{")]
        return {line["pid"] for line in lines
                if line.get("logger") == "rigbench.access" and method in (None, line["method"])}

    def all_workers_answer(self) -> bool:
        """With several workers, ready once each of them has answered a request (on a new connection)."""
        return self.workers is None or len(self.worker_pids()) >= self.workers

    def kill(self) -> None:
        """SIGKILL: no shutdown, no flushing, as in a crash or an out-of-memory kill."""
        assert self.process is not None
        self.process.send_signal(signal.SIGKILL)
        self.process.wait(timeout=30)

    def stop(self) -> None:
        if self.process is not None and self.process.poll() is None:
            self.process.terminate()
            try:
                self.process.wait(timeout=30)
            except subprocess.TimeoutExpired:
                self.process.kill()
                self.process.wait(timeout=30)

    def log(self) -> str:
        return self.log_path.read_text(errors="replace") if self.log_path.exists() else ""

    def __enter__(self) -> Server:
        return self.start()

    def __exit__(self, *exc) -> None:
        self.stop()
