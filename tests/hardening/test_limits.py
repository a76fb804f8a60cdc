"""Size limits at their edges: request body (413), rigs per comparison (default at least 1,000), page size.

(Rate limits are tested in tests/api/test_ratelimit.py; combinations per purchase evaluation in
tests/api/routes/test_evaluations.py, beside the evaluation route.)
"""

from __future__ import annotations

import json

from fastapi.testclient import TestClient

from api.app import create_app
from api.settings import Settings
from rigbench_testing import INLINE_RIG, TELESCOPE, assert_problem


def test_a_comparison_of_a_thousand_rigs_is_served_and_one_more_refused(client):
    assert Settings().max_rigs_per_comparison >= 1000
    limit = client.app.state.settings.max_rigs_per_comparison
    rigs = [{**INLINE_RIG, "name": f"rig {i}"} for i in range(limit)]
    served = client.post("/v1/comparisons", json={"rigs": rigs, "calculators": ["light_grasp"]})
    assert served.status_code == 200, served.text[:500]
    assert len(served.json()["results"]["light_grasp"]["outputs"]["clear_area_mm2"]["values"]) == limit
    refused = client.post("/v1/comparisons", json={"rigs": rigs + [INLINE_RIG], "calculators": ["light_grasp"]})
    body = assert_problem(refused, 422, "rigs")
    assert str(limit) in body["detail"]


def test_the_rig_limit_follows_its_setting(settings):
    with TestClient(create_app(settings.model_copy(update={"max_rigs_per_comparison": 3}))) as client:
        assert client.post("/v1/comparisons", json={"rigs": [INLINE_RIG] * 3}).status_code == 200
        assert_problem(client.post("/v1/comparisons", json={"rigs": [INLINE_RIG] * 4}), 422, "rigs")


def test_the_body_limit_is_exact(settings, make_account):
    limit = 4096
    app = create_app(settings.model_copy(update={"max_body_bytes": limit}))
    with TestClient(app) as client:
        base = json.dumps({**TELESCOPE, "name": ""}).encode()

        def body_of(size: int) -> bytes:
            # Pad the JSON with spaces: same content, exactly `size` bytes.
            return base[:-1] + b" " * (size - len(base)) + b"}"

        at_limit = client.post("/v1/comparisons", content=body_of(limit), headers={"Content-Type": "application/json"})
        assert at_limit.status_code != 413  # read, then refused for what it says (not a comparison)
        over = client.post("/v1/comparisons", content=body_of(limit + 1), headers={"Content-Type": "application/json"})
        body = assert_problem(over, 413)
        assert str(limit) in body["detail"]


def test_the_default_body_limit_refuses_a_body_of_three_megabytes(client):
    huge = b'{"rigs": [' + b",".join([b'{"id": 1}'] * 300_000) + b"]}"
    assert len(huge) > client.app.state.settings.max_body_bytes
    assert_problem(client.post("/v1/comparisons", content=huge, headers={"Content-Type": "application/json"}), 413)


def test_the_page_size_is_capped_by_its_setting(settings, make_account):
    app = create_app(settings.model_copy(update={"max_page_size": 5}))
    with TestClient(app) as client:
        assert client.get("/v1/telescopes", params={"limit": 5}).status_code == 200
        body = assert_problem(client.get("/v1/telescopes", params={"limit": 6}), 422, "limit")
        assert "5" in body["detail"]
