"""A rig's own cautions reach people: per rig in comparisons, per row in evaluations, and at the top
of the club page (calculators/rig_cautions.py computes them)."""

from __future__ import annotations

from rigbench_testing import CAMERA, TELESCOPE
from sqlmodel import Session

from api.demo import CLUB, seed_demo

HEAVY_TUBE = {**TELESCOPE, "name": "heavy tube", "mass_kg": 26.0}
LIGHT_TUBE = {**TELESCOPE, "name": "light tube", "mass_kg": 6.0}
SMALL_MOUNT = {"name": "small mount", "capacity_kg": 10.0, "mass_kg": 9.0}


def test_a_comparison_carries_each_rig_s_cautions(client):
    rigs = [{"name": "overloaded", "telescope": HEAVY_TUBE, "camera": CAMERA, "mount": SMALL_MOUNT},
            {"name": "fine", "telescope": LIGHT_TUBE, "camera": CAMERA, "mount": SMALL_MOUNT}]
    body = client.post("/v1/comparisons", json={"rigs": rigs, "calculators": ["payload"]}).json()
    overloaded, fine = body["rigs"]
    assert fine["cautions"] == []
    assert [c.split(":")[0] for c in overloaded["cautions"]] == ["Over the mount's rating", "Heavy lift"]
    assert "at least 26.0 kg (the masses stated) on a mount rated for 10 kg (2.60 times its rating)" \
        in overloaded["cautions"][0]


def test_each_evaluation_row_carries_its_combination_s_cautions(client):
    body = client.post("/v1/evaluations", json={
        "telescopes": [HEAVY_TUBE, LIGHT_TUBE], "cameras": [CAMERA], "mounts": [SMALL_MOUNT],
        "objectives": {"light_grasp.clear_area_mm2": "max"}, "limit": 5,
    }).json()
    rows = {row["indices"]["telescope"]: row for row in body["top"]}
    assert [c.split(":")[0] for c in rows[0]["cautions"]] == ["Over the mount's rating", "Heavy lift"]
    assert rows[1]["cautions"] == []
    assert body["baseline"]["cautions"] == rows[0]["cautions"]


def test_the_club_page_shows_a_rig_s_caution_first_and_marks_its_row(client, app):
    seed_demo(app.state.engine)
    html = client.get(f"/clubs/{CLUB}", headers={"Accept": "text/html"}).text
    safety = html.split('id="cautions-heading"')[1].split("</section>")[0]
    assert "Cautions for these rigs" in safety and 'role="alert"' in safety
    # The demo's 300 mm newtonian rides a 38 kg mount: a heavy lift, named with the rig.
    assert "<strong>Big newtonian imager:</strong> Heavy lift: the mount weighs 38.0 kg" in safety
    table = html.split('id="comparison-table"')[1].split("</table>")[0]
    assert table.count('class="tag caution"') == 2


def test_the_club_page_says_how_to_treat_mains_batteries_and_cables(client, app):
    seed_demo(app.state.engine)
    html = client.get(f"/clubs/{CLUB}", headers={"Accept": "text/html"}).text
    for words in ("residual-current", "licensed electrician", "outdoor-rated", "local electrical code",
                  "batteries", "catch fire", "trip people in the dark"):
        assert words in html, words
