"""Nothing answered with a 2xx is lost when the server is killed: SIGKILL during a write load, restart, check.

Four writers create telescopes and change them (with If-Match) as fast as the server lets them; the
server process is killed with SIGKILL (no shutdown, nothing flushed by us) while they write. After a
restart on the same database every create and every change that got a 2xx must be there: the item
exists, at least at the version the answer gave, with the written name when nothing later changed it.
Then the database itself is checked: SQLite's ``PRAGMA integrity_check`` and ``foreign_key_check``;
on PostgreSQL, every acknowledged row is read back.
"""

from __future__ import annotations

import sqlite3
import threading
import time
from concurrent.futures import ThreadPoolExecutor

import httpx
import pytest

from rigbench_testing import TELESCOPE
from servers import Server, database

WRITERS = 4
ACKED_BEFORE_KILL = 150  # kill once this many writes were acknowledged (or after KILL_AFTER_S)
KILL_AFTER_S = 20

pytestmark = pytest.mark.slow


def write_until_refused(base_url: str, key: str, n: int, acked: list, stop: threading.Event) -> None:
    """Create then change telescopes; record every 2xx as (id, version, name)."""
    headers = {"Authorization": f"Bearer {key}"}
    with httpx.Client(base_url=base_url, headers=headers, timeout=30) as http:
        i = 0
        while not stop.is_set():
            i += 1
            name = f"writer {n} item {i}"
            try:
                created = http.post("/v1/telescopes", json={**TELESCOPE, "name": name})
                if created.status_code != 201:
                    continue
                item = created.json()
                acked.append((item["id"], item["version"], name))
                renamed = f"{name} renamed"
                changed = http.patch(f"/v1/telescopes/{item['id']}", json={"name": renamed},
                                     headers={"If-Match": created.headers["etag"]})
                if changed.status_code == 200:
                    acked.append((item["id"], changed.json()["version"], renamed))
            except httpx.HTTPError:
                return  # the server is gone: whatever was in flight got no 2xx


def latest_per_item(acked: list) -> dict[int, tuple[int, str]]:
    latest: dict[int, tuple[int, str]] = {}
    for item_id, version, name in acked:
        if item_id not in latest or version > latest[item_id][0]:
            latest[item_id] = (version, name)
    return latest


@pytest.mark.parametrize("backend", ["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def test_every_acknowledged_write_survives_a_sigkill(backend, tmp_path):
    with database(backend, tmp_path) as data:
        server = Server(data.url, tmp_path).start()
        acked: list = []
        stop = threading.Event()
        try:
            with ThreadPoolExecutor(WRITERS) as pool:
                writers = [pool.submit(write_until_refused, server.url, data.key, n, acked, stop)
                           for n in range(WRITERS)]
                deadline = time.monotonic() + KILL_AFTER_S
                while len(acked) < ACKED_BEFORE_KILL and time.monotonic() < deadline:
                    time.sleep(0.01)
                server.kill()  # mid-load: the writers still have requests in flight
                stop.set()
                for writer in writers:
                    writer.result()
        finally:
            stop.set()
            server.stop()
        assert len(acked) >= 20, f"too few writes before the kill to show anything:\n{server.log()}"

        if data.sqlite_file is not None:
            with sqlite3.connect(data.sqlite_file) as connection:
                # Opening the file replays the write-ahead log the killed process left behind.
                assert connection.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
                assert connection.execute("PRAGMA foreign_key_check").fetchall() == []

        with Server(data.url, tmp_path, name="restarted") as restarted:
            headers = {"Authorization": f"Bearer {data.key}"}
            latest = latest_per_item(acked)
            with httpx.Client(base_url=restarted.url, headers=headers, timeout=30) as http:
                for item_id, (version, name) in latest.items():
                    stored = http.get(f"/v1/telescopes/{item_id}")
                    assert stored.status_code == 200, f"acknowledged item {item_id} is gone"
                    body = stored.json()
                    # A change in flight at the kill may have landed without its answer: never less.
                    assert body["version"] >= version
                    if body["version"] == version:
                        assert body["name"] == name
                listed = http.get("/v1/telescopes", params={"limit": 1}).json()["total"]
                assert listed >= len(latest)
                # The restarted server takes writes again.
                assert http.post("/v1/telescopes", json=TELESCOPE).status_code == 201
        print(f"{backend}: {len(acked)} writes acknowledged before SIGKILL, {len(latest)} items, all there")
