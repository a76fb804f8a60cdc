"""api/comparisons/fast_lane.py: anonymous JSON comparisons skip FastAPI's machinery and answer alike.

A query string sends a request the ordinary way (the route ignores it), so each check asks the same
question both ways and compares status, media type and body, byte for byte.
"""

from __future__ import annotations

import json

import fastapi.routing
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from rigbench_testing import CAMERA, INLINE_RIG, TELESCOPE

from plugins.testing import rig_dicts

ORDINARY = "/v1/comparisons?lane=ordinary"
CORE = ["light_grasp", "etendue", "speed", "sampling", "payload", "cost"]


def both_ways(client, content: bytes, headers: dict[str, str] | None = None):
    headers = {"Content-Type": "application/json", **(headers or {})}
    lane = client.post("/v1/comparisons", content=content, headers=headers)
    ordinary = client.post(ORDINARY, content=content, headers=headers)
    return lane, ordinary


def assert_alike(lane, ordinary):
    assert lane.status_code == ordinary.status_code, (lane.text, ordinary.text)
    assert lane.headers["content-type"] == ordinary.headers["content-type"]
    if lane.headers["content-type"].startswith("application/problem+json"):
        # A problem names the request path it answers ("instance"); the query string is not part of it.
        assert lane.json() == ordinary.json()
    else:
        assert lane.content == ordinary.content


@pytest.fixture
def count_dependency_solving(monkeypatch):
    calls = []
    original = fastapi.routing.solve_dependencies

    async def counting(*args, **kwargs):
        calls.append(1)
        return await original(*args, **kwargs)

    monkeypatch.setattr(fastapi.routing, "solve_dependencies", counting)
    return calls


def test_an_anonymous_json_comparison_takes_the_lane_and_answers_as_the_route(client, count_dependency_solving):
    content = json.dumps({"rigs": [INLINE_RIG, {**INLINE_RIG, "name": "second"}], "calculators": CORE}).encode()
    lane = client.post("/v1/comparisons", content=content, headers={"Content-Type": "application/json"})
    assert lane.status_code == 200 and not count_dependency_solving  # FastAPI's machinery never ran
    ordinary = client.post(ORDINARY, content=content, headers={"Content-Type": "application/json"})
    assert count_dependency_solving  # ... and the ordinary way did
    assert_alike(lane, ordinary)
    assert set(lane.json()["results"]) == set(CORE)


@given(rigs=st.lists(rig_dicts(), min_size=1, max_size=5), baseline=st.integers(0, 4))
@settings(deadline=None, max_examples=25, suppress_health_check=[HealthCheck.function_scoped_fixture])
def test_both_ways_answer_byte_for_byte_alike(client, rigs, baseline):
    body = {"rigs": rigs, "calculators": CORE, "baseline": min(baseline, len(rigs) - 1)}
    assert_alike(*both_ways(client, json.dumps(body).encode()))


@pytest.mark.parametrize("content", [
    b'{"rigs": [',                                                     # malformed JSON
    b'{"rigs": []}',                                                   # no rig
    json.dumps({"rigs": [{"name": "x", "telescope": {**TELESCOPE, "aperture_mm": -1},
                          "camera": CAMERA}]}).encode(),               # a field out of range
    json.dumps({"rigs": [INLINE_RIG], "calculators": ["no_such"]}).encode(),
    json.dumps({"rigs": [INLINE_RIG], "baseline": 3}).encode(),
    json.dumps({"rigs": [INLINE_RIG], "params": {"cost": {"currency": "eur"}}, "calculators": ["cost"]}).encode(),
    b"",                                                               # no body at all
    "\u00e9".encode("latin-1"),                                        # not UTF-8
], ids=["malformed", "no-rig", "out-of-range", "unknown-calculator", "baseline", "bad-params", "empty",
        "not-utf8"])
def test_a_request_the_lane_refuses_is_answered_by_the_route_with_the_same_problem(client, content):
    lane, ordinary = both_ways(client, content)
    assert lane.status_code >= 400
    assert_alike(lane, ordinary)


def test_csv_a_key_and_other_media_types_go_the_ordinary_way(client, alice, count_dependency_solving):
    content = json.dumps({"rigs": [INLINE_RIG]}).encode()
    csv = client.post("/v1/comparisons", content=content,
                      headers={"Content-Type": "application/json", "Accept": "text/csv"})
    assert csv.status_code == 200 and csv.headers["content-type"].startswith("text/csv")
    keyed = client.post("/v1/comparisons", content=content,
                        headers={"Content-Type": "application/json", "Authorization": f"Bearer {alice.key}"})
    text = client.post("/v1/comparisons", content=content, headers={"Content-Type": "text/plain"})
    assert text.status_code == 415
    assert len(count_dependency_solving) == 3
    anonymous = client.post("/v1/comparisons", content=content, headers={"Content-Type": "application/json"})
    assert keyed.content == anonymous.content  # inline rigs: the key changes nothing in the answer
