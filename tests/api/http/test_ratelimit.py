"""api/http/ratelimit.py: writes limited per key and per address, failed keys per address; 429 with Retry-After.

The memory store is tested always; the Redis store (counters shared by several server processes) when a
``redis-server`` binary is installed (CI installs it, see .ci/run).
"""

from __future__ import annotations

import shutil
import socket
import subprocess
import time

import pytest
from fastapi.testclient import TestClient
from rigbench_testing import TELESCOPE, assert_problem

from api.app import create_app
from api.settings import Settings

NO_LIMITS = {"rate_limit_writes_per_key": "", "rate_limit_writes_per_address": "",
             "rate_limit_failed_auth": ""}


def limited(settings: Settings, **limits: str) -> Settings:
    return settings.model_copy(update={**NO_LIMITS, **limits})


def client_at(app, address: str) -> TestClient:
    return TestClient(app, client=(address, 50000))


def assert_rate_limited(response, window_s: int) -> None:
    assert_problem(response, 429)
    wait = int(response.headers["retry-after"])
    # RFC 9110 section 10.2.3: Retry-After as delay-seconds; never more than the window.
    assert 1 <= wait <= window_s


@pytest.fixture
def make_app(settings, make_account):
    def make(**limits: str):
        return create_app(limited(settings, **limits))
    return make


def test_writes_are_limited_per_key(make_app, alice, bob):
    app = make_app(rate_limit_writes_per_key="3/minute")
    with TestClient(app) as client:
        for _ in range(3):
            assert client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).status_code == 201
        assert_rate_limited(client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers), 60)
        # Another key from the same address has its own allowance; reads are not limited.
        assert client.post("/v1/telescopes", json=TELESCOPE, headers=bob.headers).status_code == 201
        for _ in range(10):
            assert client.get("/v1/telescopes", headers=alice.headers).status_code == 200


def test_writes_are_limited_per_client_address(make_app, alice, bob):
    app = make_app(rate_limit_writes_per_address="3/minute")
    with client_at(app, "192.0.2.10") as first, client_at(app, "192.0.2.20") as second:
        assert first.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).status_code == 201
        assert first.post("/v1/telescopes", json=TELESCOPE, headers=bob.headers).status_code == 201
        assert first.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).status_code == 201
        assert_rate_limited(first.post("/v1/telescopes", json=TELESCOPE, headers=bob.headers), 60)
        # The same key from another address is still served.
        assert second.post("/v1/telescopes", json=TELESCOPE, headers=bob.headers).status_code == 201


def test_every_kind_of_change_counts(make_app, alice):
    app = make_app(rate_limit_writes_per_key="4/minute")
    with TestClient(app) as client:
        created = client.post("/v1/mounts", json={"capacity_kg": 20}, headers=alice.headers)
        url = created.headers["location"]
        assert client.patch(url, json={"capacity_kg": 21}, headers=alice.headers).status_code == 200
        assert client.put(url, json={"capacity_kg": 22}, headers=alice.headers).status_code == 200
        assert client.delete(url, headers=alice.headers).status_code == 204
        assert_rate_limited(client.post("/v1/mounts", json={"capacity_kg": 20}, headers=alice.headers), 60)


def test_failed_keys_are_limited_per_address_but_never_a_valid_key(make_app, alice):
    app = make_app(rate_limit_failed_auth="3/minute")
    wrong = {"Authorization": "Bearer rb_guessed-key"}
    with client_at(app, "192.0.2.30") as guesser, client_at(app, "192.0.2.40") as other:
        for _ in range(3):
            assert_problem(guesser.get("/v1/telescopes", headers=wrong), 401)
        assert_rate_limited(guesser.get("/v1/telescopes", headers=wrong), 60)
        assert_rate_limited(guesser.post("/v1/comparisons", json={"rigs": []}, headers=wrong), 60)
        # Many people may share one address (a NAT): a valid key from it is still accepted.
        assert guesser.get("/v1/accounts/me", headers=alice.headers).status_code == 200
        # Anonymous reads and other addresses are unaffected.
        assert guesser.get("/v1/telescopes").status_code == 200
        assert other.get("/v1/accounts/me", headers=alice.headers).status_code == 200


def test_the_default_limits_are_on_and_generous(settings):
    limits = create_app(Settings(database_url=settings.database_url)).state.rate_limits
    assert limits.writes_per_key.amount >= 60 and limits.failed_auth_per_address.amount >= 5
    assert limits.storage_uri == "memory://"


@pytest.mark.parametrize("variable", ["RIGBENCH_RATE_LIMIT_WRITES_PER_KEY", "RIGBENCH_RATE_LIMIT_FAILED_AUTH"])
def test_a_rate_that_cannot_be_read_is_refused_at_start(monkeypatch, variable):
    monkeypatch.setenv(variable, "lots")
    with pytest.raises(ValueError, match="lots"):
        Settings()


def test_an_unreachable_store_lets_requests_through(make_app, alice, caplog):
    with socket.socket() as s:  # a port nothing listens on
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    app = make_app(rate_limit_writes_per_key="1/minute", rate_limit_storage=f"redis://127.0.0.1:{port}/0")
    with TestClient(app) as client:
        for _ in range(2):
            assert client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).status_code == 201
    assert "rate limit store unavailable" in caplog.text


# --- Redis: the counters several server processes share ---------------------------------------------

@pytest.fixture
def redis_url(tmp_path):
    binary = shutil.which("redis-server")
    if binary is None:
        pytest.skip("redis-server is not installed (apt-get install redis-server); .ci/run installs it")
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    server = subprocess.Popen(
        [binary, "--port", str(port), "--bind", "127.0.0.1", "--save", "", "--appendonly", "no",
         "--dir", str(tmp_path)], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
    )
    try:
        deadline = time.monotonic() + 10
        while True:
            try:
                with socket.create_connection(("127.0.0.1", port), timeout=0.5):
                    break
            except OSError:
                if time.monotonic() > deadline:
                    raise
                time.sleep(0.05)
        yield f"redis://127.0.0.1:{port}/0"
    finally:
        server.terminate()
        server.wait(timeout=10)


def test_a_redis_store_shares_counters_between_server_processes(make_app, alice, redis_url):
    # Two apps stand for two server processes: each has its own limiter, the counters are in Redis.
    first = make_app(rate_limit_writes_per_key="3/minute", rate_limit_storage=redis_url)
    second = make_app(rate_limit_writes_per_key="3/minute", rate_limit_storage=redis_url)
    with TestClient(first) as one, TestClient(second) as two:
        assert one.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).status_code == 201
        assert two.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).status_code == 201
        assert one.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).status_code == 201
        assert_rate_limited(two.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers), 60)
        assert_rate_limited(one.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers), 60)


def test_the_memory_store_counts_per_process(make_app, alice):
    # Without a shared store each process allows the whole rate: why several processes need Redis.
    first = make_app(rate_limit_writes_per_key="2/minute")
    second = make_app(rate_limit_writes_per_key="2/minute")
    with TestClient(first) as one, TestClient(second) as two:
        for client in (one, one, two, two):
            assert client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).status_code == 201
        assert_rate_limited(one.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers), 60)

