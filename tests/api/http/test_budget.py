"""api/http/budget.py: a heavy request stops at its CPU budget (422) or deadline (503), waits for one of
the process's heavy-request slots (503 with Retry-After when none frees up), stops when the client is
gone, and computing requests are rate-limited, without a key more strictly."""

from __future__ import annotations

import asyncio

import pytest
from fastapi.testclient import TestClient
from rigbench_testing import assert_problem

from api.app import create_app
from api.http.budget import Budget, ClientGone
from api.storage import db

SCOPES = [{"aperture_mm": 100 + i, "focal_length_mm": 500 + 7 * i} for i in range(40)]
CAMERAS = [{"pixel_size_um": 2 + i / 10, "width_px": 4000, "height_px": 3000} for i in range(40)]
EVALUATION = {"telescopes": SCOPES, "cameras": CAMERAS, "modifiers": [None] * 5,
              "objectives": {"light_grasp.clear_area_mm2": "max", "sampling.pixel_scale_arcsec": "min",
                             "speed.time_factor_per_arcsec2": "min"}}


def client_for(settings, **changes) -> TestClient:
    app = create_app(settings.model_copy(update={"rate_limit_compute_anonymous": "", **changes}))
    db.upgrade(app.state.engine)
    return TestClient(app)


def test_an_evaluation_within_its_budget_answers(settings):
    with client_for(settings) as client:
        assert client.post("/v1/evaluations", json=EVALUATION).status_code == 200


def test_an_evaluation_past_its_cpu_budget_is_a_422_too_costly(settings):
    with client_for(settings, request_cpu_s=1e-6) as client:
        body = assert_problem(client.post("/v1/evaluations", json=EVALUATION), 422)
    assert body["type"] == "/problems/too-costly" and "CPU-seconds" in body["detail"]


def test_an_evaluation_past_the_deadline_is_a_503_with_retry_after(settings):
    with client_for(settings, request_deadline_s=1e-9) as client:
        answer = client.post("/v1/evaluations", json=EVALUATION)
    body = assert_problem(answer, 503)
    assert body["type"] == "/problems/deadline-passed" and int(answer.headers["retry-after"]) >= 1


def test_no_free_heavy_slot_is_a_503_with_retry_after(settings):
    with client_for(settings, heavy_queue_s=0.05) as client:
        client.app.state.heavy_slots = asyncio.Semaphore(0)  # every slot taken
        answer = client.post("/v1/evaluations", json=EVALUATION)
    body = assert_problem(answer, 503)
    assert body["type"] == "/problems/busy" and answer.headers["retry-after"] == "2"


def test_a_key_may_be_allowed_more_cpu_than_anonymous_callers(settings, alice):
    with client_for(settings, request_cpu_s=1e-6, request_cpu_s_with_key=60) as client:
        assert client.post("/v1/evaluations", json=EVALUATION).status_code == 422
        assert client.post("/v1/evaluations", json=EVALUATION, headers=alice.headers).status_code == 200


def test_the_work_stops_at_its_next_check_once_the_client_is_gone():
    budget = Budget(deadline_s=None, cpu_s=None)
    budget.check()
    budget.cancelled = True
    with pytest.raises(ClientGone):
        budget.check()


def test_computing_requests_are_limited_per_address_without_a_key_and_per_key_with_one(settings, alice):
    with client_for(settings, rate_limit_compute_anonymous="2/minute", rate_limit_compute_per_key="3/minute") as client:
        for _ in range(2):
            assert client.post("/v1/evaluations", json=EVALUATION).status_code == 200
        limited = client.post("/v1/evaluations", json=EVALUATION)
        assert_problem(limited, 429)
        assert "without a key" in limited.json()["detail"] and int(limited.headers["retry-after"]) >= 1
        for _ in range(3):  # the key has its own, larger allowance
            assert client.post("/v1/evaluations", json=EVALUATION, headers=alice.headers).status_code == 200
        assert_problem(client.post("/v1/evaluations", json=EVALUATION, headers=alice.headers), 429)
