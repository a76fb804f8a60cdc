"""api/demo.py: the invented club, its public rigs and a member's private items."""

from __future__ import annotations

from api.demo import CLUB, MEMBER, seed_demo


def test_demo_club_has_at_least_three_public_rigs_that_compare(app, client):
    demo = seed_demo(app.state.engine)
    rigs = client.get("/v1/rigs", params={"owner": CLUB}).json()
    assert rigs["total"] >= 3
    assert {r["visibility"] for r in rigs["items"]} == {"public"}
    comparison = client.post("/v1/comparisons", json={"rigs": [{"id": r["id"]} for r in rigs["items"]]})
    assert comparison.status_code == 200, comparison.text
    assert all(result["error"] is None for result in comparison.json()["results"].values()), comparison.json()
    me = client.get("/v1/accounts/me", headers={"Authorization": f"Bearer {demo.club_key}"}).json()
    assert me["name"] == CLUB and me["kind"] == "club" and me["display_name"]


def test_demo_member_has_private_items_nobody_else_sees(app, client):
    demo = seed_demo(app.state.engine)
    member = {"Authorization": f"Bearer {demo.member_key}"}
    own = client.get("/v1/rigs", params={"owner": MEMBER}, headers=member).json()
    assert own["total"] >= 1 and {r["visibility"] for r in own["items"]} == {"private"}
    assert client.get("/v1/rigs", params={"owner": MEMBER}).json()["total"] == 0
    club = {"Authorization": f"Bearer {demo.club_key}"}
    assert client.get("/v1/telescopes", params={"owner": MEMBER}, headers=club).json()["total"] == 0


def test_seeding_again_adds_keys_not_duplicates(app, client):
    first = seed_demo(app.state.engine)
    total = client.get("/v1/rigs").json()["total"]
    second = seed_demo(app.state.engine)
    assert client.get("/v1/rigs").json()["total"] == total
    assert second.club_key != first.club_key
    for key in (first.club_key, second.club_key):
        assert client.get("/v1/accounts/me", headers={"Authorization": f"Bearer {key}"}).status_code == 200


BUILT_INS = {
    "light_grasp", "etendue", "speed", "sampling", "payload", "cost",
    "resolution", "coma_field", "mirror_cooldown", "integration_time", "target_fit", "guiding",
    "dome_clearance", "diffraction_spikes",
}


def test_every_built_in_calculator_computes_for_the_demo_rigs(app, client):
    seed_demo(app.state.engine)
    rigs = client.get("/v1/rigs", params={"owner": CLUB}).json()["items"]
    body = {"rigs": [{"id": r["id"]} for r in rigs], "calculators": sorted(BUILT_INS)}
    results = client.post("/v1/comparisons", json=body).json()["results"]
    assert set(results) == BUILT_INS
    for name, result in results.items():
        assert result["error"] is None, (name, result["error"])
        numbers = [v for out in result["outputs"].values() for v in out["values"] if isinstance(v, float)]
        assert numbers, f"{name} gave no number for any demo rig"


def test_the_readme_visual_comparison_answers_as_the_readme_shows(app, client):
    # Keeps the documentation in step with the demo (a docs check, not a reference test; the visual
    # formulas are checked against their sources in tests/calculators/test_visual.py).
    import json
    import re
    from pathlib import Path

    seed_demo(app.state.engine)
    text = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
    section = text[text.index("**Visual rigs.**"):text.index("**Emission-line objects.**")]
    body = json.loads(re.search(r"-d '(\{.*?\})'", section, flags=re.S).group(1))
    answer = client.post("/v1/comparisons", json=body).json()
    shown = [line.split(" | ") for line in re.findall(r"^\| (\d{3} mm f/.*?) \|$", section, flags=re.M)]
    assert [row[0] for row in shown] == [r["name"] for r in answer["rigs"]] and len(shown) == 4
    out = answer["results"]["visual"]["outputs"]
    for i, (_name, magnification, pupil, field, method, useful, brightness) in enumerate(shown):
        value = lambda key: out[key]["values"][i]  # noqa: E731
        assert magnification == f"{value('magnification'):.0f}×"
        assert pupil == f"{value('exit_pupil_mm'):.2f} mm"
        assert field == f"{value('true_field_arcmin'):.1f}′" and method == value("true_field_method")
        assert useful == f"{value('min_useful_magnification'):.0f}×–{value('max_useful_magnification'):.0f}×"
        assert brightness == (f"{value('surface_brightness_ratio'):.2f} "
                              f"({value('surface_brightness_change_mag'):.2f} mag dimmer)")
