"""api/client.py against the real app: the calls the README shows."""

from __future__ import annotations

import pytest

from api.client import ProblemError, RigbenchClient
from rigbench_testing import CAMERA, TELESCOPE


def test_create_read_update_compare_delete(client, alice):
    rb = RigbenchClient(key=alice.key, http=client)
    scope = rb.create("telescopes", {**TELESCOPE, "visibility": "public"})
    assert rb.get("telescopes", scope["id"])["aperture_mm"] == TELESCOPE["aperture_mm"]
    changed = rb.update("telescopes", scope["id"], {"name": "renamed"}, version=scope["version"])
    assert changed["version"] == 2
    with pytest.raises(ProblemError) as stale:
        rb.update("telescopes", scope["id"], {"name": "again"}, version=1)
    assert stale.value.status == 412
    rig = rb.create("rigs", {"name": "r", "telescope": {"id": scope["id"]}, "camera": CAMERA})
    comparison = rb.compare([{"id": rig["id"]}], calculators=["light_grasp"])
    assert comparison["rigs"] == [{"id": rig["id"], "name": "r", "cautions": []}]
    assert rb.compare_csv([{"id": rig["id"]}], calculators=["light_grasp"]).startswith("rig_id,rig,baseline,")
    assert [c["name"] for c in rb.calculators()] == list(client.app.state.registry.calculators)
    assert rb.list("rigs", owner="alice")["total"] == 1
    rb.delete("rigs", rig["id"])
    assert rb.list("rigs")["total"] == 0


def test_problems_become_exceptions_naming_the_field(client):
    rb = RigbenchClient(http=client)
    with pytest.raises(ProblemError) as refused:
        rb.compare([{"name": "x", "telescope": {**TELESCOPE, "aperture_mm": -1}, "camera": CAMERA}])
    assert refused.value.status == 422
    assert "rigs.0.telescope.aperture_mm" in str(refused.value)
    with pytest.raises(ValueError):
        rb.get("planets", 1)
