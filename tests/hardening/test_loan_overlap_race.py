"""Two loans of one item never overlap, even when officers race: real servers, concurrent requests.

For each of ROUNDS telescopes, CLIENTS officers' clients wait at a barrier and then all lend the same
telescope for overlapping days at once. Exactly one loan per telescope may be stored (201); every other
answer is a 409 problem; nothing is a 5xx. The database decides (an exclusion constraint on PostgreSQL,
triggers on SQLite: migration 0005_club_operations), not a read in Python followed by a write.
"""

from __future__ import annotations

import threading
from concurrent.futures import ThreadPoolExecutor

import httpx
import pytest
from sqlmodel import Session, func, select

from api.accounts.keys import create_account
from api.storage import db
from api.storage.club_models import LoanRow
from api.storage.models import AccountKind
from rigbench_testing import TELESCOPE
from servers import Server, database

CLIENTS = 8
ROUNDS = 15
CLUB = "kestrel-ridge"

pytestmark = pytest.mark.slow


def people(url: str) -> tuple[str, list[str]]:
    """The club's key and one key per racing officer (each officer a member to lend to as well)."""
    engine = db.make_engine(url)
    with Session(engine) as session:
        _club, club_key = create_account(session, CLUB, AccountKind.club)
        keys = [create_account(session, f"officer-{n}")[1] for n in range(CLIENTS)]
    engine.dispose()
    return club_key, keys


def race(base_urls: list[str], club_key: str, keys: list[str]) -> list[list[int]]:
    club = {"Authorization": f"Bearer {club_key}"}
    with httpx.Client(base_url=base_urls[0], timeout=60) as http:
        for n in range(CLIENTS):
            assert http.put(f"/v1/clubs/{CLUB}/members/officer-{n}", json={"role": "officer"},
                            headers=club).status_code == 201
        scopes = [http.post("/v1/telescopes", json={**TELESCOPE, "visibility": "public"}, headers=club).json()["id"]
                  for _ in range(ROUNDS)]
    barrier = threading.Barrier(CLIENTS)
    by_database: list[int] = []

    def officer(n: int) -> list[int]:
        statuses = []
        with httpx.Client(base_url=base_urls[n % len(base_urls)], timeout=60,
                          headers={"Authorization": f"Bearer {keys[n]}"}) as http:
            for scope in scopes:
                barrier.wait()
                # Every client's days overlap every other's (all contain 2026-12-10).
                body = {"item": {"kind": "telescopes", "id": scope}, "borrower": f"officer-{n}",
                        "start": f"2026-12-{1 + n:02d}", "due": f"2026-12-{10 + n:02d}"}
                answer = http.post(f"/v1/clubs/{CLUB}/loans", json=body)
                if answer.status_code not in (201, 409):
                    raise AssertionError(f"{answer.status_code}: {answer.text[:300]}")
                if answer.status_code == 409:
                    assert answer.headers["content-type"].startswith("application/problem+json")
                    # Refused by the database (no clashing loan was visible to the check in Python).
                    if "(loan " not in answer.json()["detail"]:
                        by_database.append(scope)
                statuses.append(answer.status_code)
        return statuses

    with ThreadPoolExecutor(CLIENTS) as pool:
        by_client = list(pool.map(officer, range(CLIENTS)))
    print(f"{len(by_database)} of the refusals came from the database's own rule")
    return [[by_client[n][r] for n in range(CLIENTS)] for r in range(ROUNDS)]


def check(rounds: list[list[int]], url: str) -> None:
    for statuses in rounds:
        assert sorted(statuses) == [201] + [409] * (CLIENTS - 1), statuses
    engine = db.make_engine(url)
    with Session(engine) as session:
        stored = session.exec(select(func.count()).select_from(LoanRow)).one()
    engine.dispose()
    assert stored == ROUNDS
    print(f"{ROUNDS} telescopes x {CLIENTS} racing officers: {ROUNDS} loans stored, "
          f"{ROUNDS * (CLIENTS - 1)} refused with 409")


@pytest.mark.parametrize("backend", ["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def test_racing_officers_store_one_loan_per_item(backend, tmp_path):
    with database(backend, tmp_path) as data:
        club_key, keys = people(data.url)
        with Server(data.url, tmp_path) as server:
            check(race([server.url], club_key, keys), data.url)


@pytest.mark.postgres
def test_racing_officers_on_two_servers_sharing_one_postgres(tmp_path):
    with database("postgres", tmp_path) as data:
        club_key, keys = people(data.url)
        with Server(data.url, tmp_path, name="first") as first, Server(data.url, tmp_path, name="second") as second:
            check(race([first.url, second.url], club_key, keys), data.url)
