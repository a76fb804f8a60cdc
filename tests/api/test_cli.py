"""api/cli.py: the `rigbench` command, in-process and as the installed console script."""

from __future__ import annotations

import json
import os
import re
import socket
import subprocess
import sys
import time

import httpx
import pytest
from sqlmodel import Session

from api.accounts.keys import authenticate
from api.cli import main
from api.storage import db


@pytest.fixture
def env(monkeypatch, database_url, tmp_path):
    monkeypatch.setenv("RIGBENCH_DATABASE_URL", database_url)
    monkeypatch.setenv("RIGBENCH_DATA_DIR", str(tmp_path / "data"))
    engine = db.make_engine(database_url)
    db.upgrade(engine)
    yield engine
    engine.dispose()


def test_accounts_create_prints_the_key_alone_on_the_last_line(env, capsys):
    assert main(["accounts", "create", "lakeside-astro", "--kind", "club"]) == 0
    key = capsys.readouterr().out.strip().splitlines()[-1]
    assert re.fullmatch(r"rb_[A-Za-z0-9_-]{43}", key)
    with Session(env) as session:
        principal = authenticate(session, key)
        assert principal.account.name == "lakeside-astro" and principal.account.kind == "club"


def test_accounts_create_refuses_bad_and_taken_handles(env, capsys):
    assert main(["accounts", "create", "Not A Handle"]) == 2
    assert "lower-case" in capsys.readouterr().err
    assert main(["accounts", "create", "sam"]) == 0
    assert main(["accounts", "create", "sam"]) == 2
    assert "already taken" in capsys.readouterr().err


def test_db_upgrade_reports_the_revision(env, capsys):
    assert main(["db", "upgrade"]) == 0
    assert capsys.readouterr().out.strip() == f"database at revision {db.current_revision(env)}"


def test_openapi_prints_the_document(capsys):
    assert main(["openapi"]) == 0
    assert json.loads(capsys.readouterr().out)["info"]["title"] == "rigbench"


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def test_serve_demo_prints_urls_and_a_working_key(tmp_path, on_postgres):
    if on_postgres:
        pytest.skip("serve --demo is the SQLite quick start")
    port = _free_port()
    script = os.path.join(os.path.dirname(sys.executable), "rigbench")
    env = {**os.environ, "RIGBENCH_DATA_DIR": str(tmp_path / "data")}
    env.pop("RIGBENCH_DATABASE_URL", None)
    process = subprocess.Popen(
        [script, "serve", "--demo", "--port", str(port), "--log-level", "warning"],
        stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True, env=env, cwd=tmp_path,
    )
    try:
        lines = []
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline and not any("club (" in line for line in lines):
            line = process.stdout.readline()
            if not line:
                break
            lines.append(line)
        text = "".join(lines)
        base = f"http://127.0.0.1:{port}"
        assert base in text and f"{base}/docs" in text and f"{base}/clubs/kestrel-ridge-astro" in text, text
        key = re.findall(r"rb_[A-Za-z0-9_-]{43}", text)[-1]
        for _ in range(200):
            try:
                if httpx.get(f"{base}/healthz").status_code == 200:
                    break
            except httpx.TransportError:
                time.sleep(0.1)
        me = httpx.get(f"{base}/v1/accounts/me", headers={"Authorization": f"Bearer {key}"})
        assert me.status_code == 200 and me.json()["name"] == "kestrel-ridge-astro"
        assert httpx.get(f"{base}/v1/rigs").json()["total"] >= 3
        assert (tmp_path / "data" / "rigbench.db").exists()
    finally:
        process.terminate()
        process.wait(timeout=20)


def _serve_until(args: list[str], env: dict[str, str], cwd, marker: str) -> tuple[subprocess.Popen, str, str]:
    """Start `rigbench serve …` and read its output until a line holds ``marker``."""
    port = _free_port()
    script = os.path.join(os.path.dirname(sys.executable), "rigbench")
    process = subprocess.Popen(
        [script, "serve", "--port", str(port), "--log-level", "warning", *args],
        stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True, env=env, cwd=cwd,
    )
    lines: list[str] = []
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and not any(marker in line for line in lines):
        line = process.stdout.readline()
        if not line:
            break
        lines.append(line)
    return process, "".join(lines), f"http://127.0.0.1:{port}"


def test_serve_with_two_workers_migrates_once_and_says_each_counts_on_its_own(tmp_path, on_postgres):
    if on_postgres:
        pytest.skip("the SQLite file is migrated by the command itself")
    env = {**os.environ, "RIGBENCH_DATA_DIR": str(tmp_path / "data"), "RIGBENCH_RATE_LIMIT_STORAGE": "memory://"}
    env.pop("RIGBENCH_DATABASE_URL", None)
    process, text, base = _serve_until(["--workers", "2"], env, tmp_path, "Warning: rate limits")
    try:
        assert "(2 worker processes)" in text, text
        assert "each of the 2 workers on its own" in text and "redis://" in text, text
        # The command migrated the file before the workers started.
        engine = db.make_engine(f"sqlite:///{tmp_path / 'data' / 'rigbench.db'}")
        assert db.current_revision(engine) == db.head_revision()
        engine.dispose()
        for _ in range(300):
            try:
                if httpx.get(f"{base}/healthz").status_code == 200:
                    break
            except httpx.TransportError:
                time.sleep(0.1)
        assert httpx.get(f"{base}/v1/rigs").status_code == 200
    finally:
        process.terminate()
        process.wait(timeout=30)
    assert process.returncode == 0


def test_serve_with_a_shared_store_gives_no_warning(tmp_path, on_postgres):
    if on_postgres:
        pytest.skip("the SQLite file is migrated by the command itself")
    # Nothing listens there: the limits let requests through (api.http.ratelimit); start-up is what counts.
    env = {**os.environ, "RIGBENCH_DATA_DIR": str(tmp_path / "data"), "RIGBENCH_WORKERS": "2",
           "RIGBENCH_RATE_LIMIT_STORAGE": f"redis://127.0.0.1:{_free_port()}/0"}
    env.pop("RIGBENCH_DATABASE_URL", None)
    process, text, _ = _serve_until([], env, tmp_path, "API documentation")
    try:
        assert "(2 worker processes)" in text, text
    finally:
        process.terminate()
        out, _ = process.communicate(timeout=30)
    assert "Warning: rate limits" not in text + out


@pytest.mark.parametrize("workers", ["0", "-1", "many"])
def test_serve_refuses_a_number_of_workers_that_is_not_one_or_more(workers, capsys):
    with pytest.raises(SystemExit) as exit_:
        main(["serve", "--workers", workers])
    assert exit_.value.code == 2
    assert "--workers" in capsys.readouterr().err


def test_workers_default_to_one_per_core(monkeypatch):
    from api.settings import Settings

    monkeypatch.delenv("RIGBENCH_WORKERS", raising=False)
    assert Settings().worker_count == len(os.sched_getaffinity(0))
    monkeypatch.setenv("RIGBENCH_WORKERS", "3")
    assert Settings().worker_count == 3
