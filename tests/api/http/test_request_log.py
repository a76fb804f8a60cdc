"""api/http/request_log.py: one JSON line per request with a request id; no key ever reaches the logs."""

from __future__ import annotations

import io
import json
import logging

import pytest
from fastapi.testclient import TestClient
from rigbench_testing import INLINE_RIG, TELESCOPE, assert_problem

from api.app import create_app
from api.http.request_log import JsonLines


@pytest.fixture
def log_lines():
    """Everything the rigbench loggers write, as parsed JSON lines."""
    stream = io.StringIO()
    handler = logging.StreamHandler(stream)
    handler.setFormatter(JsonLines())
    logger = logging.getLogger("rigbench")
    logger.addHandler(handler)
    try:
        yield lambda: [json.loads(line) for line in stream.getvalue().splitlines()], stream
    finally:
        logger.removeHandler(handler)


def requests_of(lines):
    return [line for line in lines if line["logger"] == "rigbench.access"]


def test_each_request_is_one_json_line_with_the_id_the_response_carries(client, alice, log_lines):
    read, _ = log_lines
    response = client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers)
    [line] = requests_of(read())
    assert line["request_id"] == response.headers["x-request-id"]
    assert (line["method"], line["path"], line["status"]) == ("POST", "/v1/telescopes", 201)
    assert line["account"] == "alice" and line["duration_ms"] >= 0 and line["level"] == "info"


def test_a_plain_request_id_from_the_caller_is_kept_and_an_odd_one_replaced(client, log_lines):
    read, _ = log_lines
    assert client.get("/healthz", headers={"X-Request-Id": "club-site.42"}).headers["x-request-id"] == "club-site.42"
    odd = client.get("/healthz", headers={"X-Request-Id": "a b\"c" + "x" * 100})
    assert odd.headers["x-request-id"] != "a b\"c" and len(odd.headers["x-request-id"]) == 32
    assert [line["request_id"] for line in requests_of(read())] == ["club-site.42", odd.headers["x-request-id"]]


def test_ids_differ_from_request_to_request(client):
    ids = {client.get("/healthz").headers["x-request-id"] for _ in range(20)}
    assert len(ids) == 20


def test_problems_and_refused_bodies_are_logged_with_their_status(app, settings, log_lines):
    read, _ = log_lines
    # `app` has migrated the database; this second app on it has a smaller body limit.
    small = create_app(settings.model_copy(update={"max_body_bytes": 100}))
    with TestClient(small) as client:
        too_big = client.post("/v1/comparisons", json={"rigs": [INLINE_RIG] * 3})
        assert_problem(too_big, 413)
        assert too_big.headers["x-request-id"]
        assert_problem(client.get("/v1/rigs/99"), 404)
    assert [line["status"] for line in requests_of(read())] == [413, 404]


def test_an_unexpected_error_is_logged_with_its_request_id_and_traceback(settings, log_lines):
    read, _ = log_lines
    app = create_app(settings)

    @app.get("/explode")
    def explode():
        raise RuntimeError("boom")

    with TestClient(app, raise_server_exceptions=False) as client:
        assert_problem(client.get("/explode", headers={"X-Request-Id": "trace-me"}), 500)
    lines = read()
    [error] = [line for line in lines if line["level"] == "error"]
    assert error["request_id"] == "trace-me" and "RuntimeError: boom" in error["exception"]
    assert requests_of(lines)[0]["status"] == 500


def test_keys_never_reach_the_logs(client, make_account, log_lines):
    _, stream = log_lines
    writer = make_account("carol")
    reader = make_account("dave", scope="read")
    revoked_looking = "rb_" + "Q" * 43
    with_key = {"Authorization": f"Bearer {writer.key}"}
    answers = [
        client.post("/v1/telescopes", json=TELESCOPE, headers=with_key),
        client.post("/v1/telescopes", json={**TELESCOPE, "aperture_mm": -1}, headers=with_key),
        client.post("/v1/telescopes", content=b"{", headers={**with_key, "Content-Type": "application/json"}),
        client.patch("/v1/telescopes/1", json={"name": "x"}, headers={"Authorization": f"Bearer {reader.key}"}),
        client.get("/v1/accounts/me", headers={"Authorization": f"Bearer {revoked_looking}"}),
        client.get("/v1/accounts/me", headers=with_key),
        client.get(f"/v1/telescopes?owner={writer.key[:8]}", headers=with_key),
    ]
    text = stream.getvalue()
    assert text.count('"rigbench.access"') == len(answers)
    for key in (writer.key, reader.key, revoked_looking):
        assert key not in text and key[3:] not in text
        # Nor is a key ever echoed back, in a body or a header, once it was made.
        for answer in answers:
            assert key[3:] not in answer.text and key[3:] not in str(answer.headers)


def test_the_log_can_be_switched_off(settings, log_lines):
    read, _ = log_lines
    app = create_app(settings.model_copy(update={"request_log": False}))
    with TestClient(app) as client:
        response = client.get("/healthz")
    assert response.headers["x-request-id"]  # the id is still given
    assert requests_of(read()) == []
