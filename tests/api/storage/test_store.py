"""api/storage/store.py: versioned updates lose nothing when clients race (a small version of issue 8's trial)."""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor

from rigbench_testing import TELESCOPE
from sqlmodel import Session

from api.storage.models import TelescopeRow
from api.storage.store import update_if_version

THREADS = 4
ROUNDS = 15


def test_if_match_updates_from_racing_clients_are_all_counted(client, alice):
    item = client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).json()
    url = f"/v1/telescopes/{item['id']}"

    def worker(n: int) -> tuple[int, int]:
        ok = conflicts = 0
        for i in range(ROUNDS):
            current = client.get(url, headers=alice.headers)
            response = client.patch(url, json={"name": f"t{n}-{i}"},
                                    headers={**alice.headers, "If-Match": current.headers["etag"]})
            assert response.status_code in (200, 412), response.text
            ok += response.status_code == 200
            conflicts += response.status_code == 412
        return ok, conflicts

    with ThreadPoolExecutor(THREADS) as pool:
        results = list(pool.map(worker, range(THREADS)))
    successes = sum(ok for ok, _ in results)
    assert successes + sum(c for _, c in results) == THREADS * ROUNDS
    # Every 2xx update is one version step: none was lost, none counted twice.
    assert client.get(url, headers=alice.headers).json()["version"] == 1 + successes


def test_updates_without_if_match_retry_and_all_land(client, alice):
    item = client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).json()
    url = f"/v1/telescopes/{item['id']}"

    def worker(n: int) -> None:
        for i in range(ROUNDS):
            response = client.patch(url, json={"name": f"t{n}-{i}"}, headers=alice.headers)
            assert response.status_code == 200, response.text

    with ThreadPoolExecutor(THREADS) as pool:
        list(pool.map(worker, range(THREADS)))
    assert client.get(url, headers=alice.headers).json()["version"] == 1 + THREADS * ROUNDS


def test_a_stale_version_changes_nothing(app, client, alice):
    item = client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).json()
    with Session(app.state.engine) as session:
        assert update_if_version(session, TelescopeRow, item["id"], 1, {"name": "first"}) is True
        assert update_if_version(session, TelescopeRow, item["id"], 1, {"name": "stale"}) is False
        row = session.get(TelescopeRow, item["id"])
        assert (row.name, row.version) == ("first", 2)
