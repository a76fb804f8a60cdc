"""No lost update: 8 clients x 200 read-modify-write updates of one rig with If-Match, against real servers.

Each client reads the rig (ETag), then PATCHes its name with ``If-Match``. A 2xx means the change was
applied on top of exactly the version read; a 412 means someone else got there first. If no update is
lost, the versions handed out by the 2xx answers are exactly 2, 3, …, N+1 (each once), the rig ends at
version N+1, and its name is the one written by the answer that got version N+1. Run on SQLite (WAL,
busy timeout), on PostgreSQL, on ``rigbench serve --workers 2`` (two processes behind one socket) over
either, and on two server processes sharing one PostgreSQL (how rigbench scales past one machine; the
API keeps no state between requests).
"""

from __future__ import annotations

import json
import threading
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field

import httpx
import pytest

from rigbench_testing import INLINE_RIG
from servers import Server, database

CLIENTS = 8
ROUNDS = 200

pytestmark = pytest.mark.slow


@dataclass
class Tally:
    applied: list[tuple[int, str]] = field(default_factory=list)  # (version answered, name written)
    conflicts: int = 0
    unexpected: list[tuple[int, str]] = field(default_factory=list)


def read_modify_write(base_urls: list[str], key: str, path: str) -> list[Tally]:
    start = threading.Barrier(CLIENTS)

    def client(n: int) -> Tally:
        tally = Tally()
        headers = {"Authorization": f"Bearer {key}"}
        with httpx.Client(base_url=base_urls[n % len(base_urls)], headers=headers, timeout=60) as http:
            start.wait()
            for i in range(ROUNDS):
                current = http.get(path)
                if current.status_code != 200:
                    tally.unexpected.append((current.status_code, current.text[:300]))
                    continue
                name = f"client {n} round {i}"
                answer = http.patch(path, json={"name": name}, headers={"If-Match": current.headers["etag"]})
                if answer.status_code == 200:
                    tally.applied.append((answer.json()["version"], name))
                    assert answer.headers["etag"] == f'"{answer.json()["version"]}"'
                elif answer.status_code == 412:
                    tally.conflicts += 1
                else:
                    tally.unexpected.append((answer.status_code, answer.text[:300]))
        return tally

    with ThreadPoolExecutor(CLIENTS) as pool:
        return list(pool.map(client, range(CLIENTS)))


def check_nothing_lost(tallies: list[Tally], final: dict) -> None:
    unexpected = [u for t in tallies for u in t.unexpected]
    assert not unexpected, unexpected[:5]
    applied = sorted(a for t in tallies for a in t.applied)
    conflicts = sum(t.conflicts for t in tallies)
    assert len(applied) + conflicts == CLIENTS * ROUNDS
    # Every 2xx moved the rig by exactly one version; no two answers claim the same version.
    assert [version for version, _ in applied] == list(range(2, len(applied) + 2))
    assert final["version"] == len(applied) + 1
    assert final["name"] == applied[-1][1]
    # The trial really raced: some updates lost the race and were told so with a 412.
    assert conflicts > 0
    print(f"{len(applied)} updates applied, {conflicts} refused with 412, final version {final['version']}")


def run_trial(base_urls: list[str], key: str) -> None:
    headers = {"Authorization": f"Bearer {key}"}
    created = httpx.post(f"{base_urls[0]}/v1/rigs", json=INLINE_RIG, headers=headers, timeout=30)
    assert created.status_code == 201, created.text
    path = f"/v1/rigs/{created.json()['id']}"
    tallies = read_modify_write(base_urls, key, path)
    final = httpx.get(f"{base_urls[-1]}{path}", headers=headers, timeout=30).json()
    check_nothing_lost(tallies, final)


def check_the_log_holds_no_key(server: Server, key: str) -> None:
    """The server's own JSON request log: one line per request, each with an id, never the key."""
    lines = [json.loads(line) for line in server.log().splitlines() if line.startswith("{")]
    requests = [line for line in lines if line.get("logger") == "rigbench.access"]
    assert len(requests) >= CLIENTS * ROUNDS and all(line["request_id"] for line in requests)
    assert key not in server.log() and key[3:] not in server.log()


@pytest.mark.parametrize("backend", ["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def test_no_update_is_lost_with_if_match_on_one_server(backend, tmp_path):
    with database(backend, tmp_path) as data, Server(data.url, tmp_path) as server:
        run_trial([server.url], data.key)
        check_the_log_holds_no_key(server, data.key)


@pytest.mark.parametrize("backend", ["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def test_no_update_is_lost_with_two_workers_of_one_server(backend, tmp_path):
    with database(backend, tmp_path) as data, Server(data.url, tmp_path, workers=2) as server:
        run_trial([server.url], data.key)
        check_the_log_holds_no_key(server, data.key)
        # Both workers took updates: the request log's PATCH lines come from two processes.
        assert len(server.worker_pids("PATCH")) == 2, server.log()[-2000:]


@pytest.mark.postgres
def test_no_update_is_lost_with_two_servers_sharing_one_postgres(tmp_path):
    with database("postgres", tmp_path) as data:
        with Server(data.url, tmp_path, name="first") as first, Server(data.url, tmp_path, name="second") as second:
            run_trial([first.url, second.url], data.key)
            for server in (first, second):
                assert data.key not in server.log()
