"""Request bodies and assertions shared by the API tests (generic equipment, invented numbers)."""

from __future__ import annotations

TELESCOPE = {"name": "200 mm f/5 newtonian", "design": "newtonian", "aperture_mm": 200,
             "focal_length_mm": 1000, "obstruction_mm": 70}
CAMERA = {"name": "mono camera 3.8 um", "pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}
MODIFIER = {"name": "reducer 0.8x", "kind": "reducer", "factor": 0.8}
MOUNT = {"name": "german-equatorial 20 kg", "type": "german-equatorial", "capacity_kg": 20}

BODIES = {"telescopes": TELESCOPE, "cameras": CAMERA, "train-elements": MODIFIER, "modifiers": MODIFIER,
          "mounts": MOUNT}

INLINE_RIG = {"name": "inline rig", "telescope": TELESCOPE, "camera": CAMERA}


def assert_problem(response, status: int, *fields: str) -> dict:
    """The response is an RFC 9457 problem with this status naming (at least) these fields."""
    assert response.status_code == status, response.text
    assert response.headers["content-type"].startswith("application/problem+json")
    body = response.json()
    assert body["status"] == status
    assert body["title"] and body["type"]
    assert "Traceback" not in response.text
    named = {e["field"] for e in body.get("errors", [])}
    for field in fields:
        assert field in named, f"{field} not in {named}"
    return body
