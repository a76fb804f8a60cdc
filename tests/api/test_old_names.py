"""Names renamed in this release are still accepted in requests for one release (README, "Renamed in
this release"): old output names in evaluations, old mount types and designs in equipment bodies."""

from __future__ import annotations

import pytest
from rigbench_testing import CAMERA, TELESCOPE, assert_problem

from plugins.registry import load_registry

# Every rename of the release, "<calculator>.<old>" -> "<calculator>.<new>" (TEAM decision table).
OUTPUT_RENAMES = {
    "guiding.image_scale_arcsec": "guiding.pixel_scale_arcsec",
    "guiding.guide_scale_max_arcsec": "guiding.max_guide_pixel_scale_arcsec",
    "guiding.guide_focal_length_min_mm": "guiding.min_guide_focal_length_mm",
    "sampling.fov_width_arcmin": "sampling.field_width_arcmin",
    "sampling.fov_height_arcmin": "sampling.field_height_arcmin",
    "sampling.fov_diagonal_arcmin": "sampling.field_diagonal_arcmin",
    "mirror_cooldown.time_constant_min": "mirror_cooldown.time_constant_minutes",
    "mirror_cooldown.time_constant_fan_min": "mirror_cooldown.time_constant_fan_minutes",
    "mirror_cooldown.settle_time_min": "mirror_cooldown.settle_time_minutes",
    "mirror_cooldown.settle_time_fan_min": "mirror_cooldown.settle_time_fan_minutes",
    "light_grasp.limiting_magnitude": "light_grasp.visual_limiting_magnitude",
    "light_grasp.eye_gain": "light_grasp.light_gain_over_eye",
    "dew.dew_margin_c": "dew.dew_margin_k",
}
TEXT_RENAMES = {"guiding.ruled_by": "guiding.limited_by"}

MIRROR = {**TELESCOPE, "mirror_thickness_mm": 25}


def evaluation(objectives, constraints=None):
    return {"telescopes": [MIRROR], "cameras": [CAMERA], "objectives": objectives,
            "constraints": constraints or {}}


def test_the_rename_table_is_what_the_calculators_declare():
    calculators = load_registry().calculators
    declared = {f"{name}.{old}": f"{name}.{new}" for name, calc in calculators.items()
                for old, new in calc.renamed_outputs.items()}
    assert declared == {**OUTPUT_RENAMES, **TEXT_RENAMES}


@pytest.mark.parametrize("old", sorted(OUTPUT_RENAMES))
def test_an_old_output_name_in_objectives_and_constraints_is_accepted(client, old):
    new = OUTPUT_RENAMES[old]
    by_new = client.post("/v1/evaluations", json=evaluation({new: "min"}, {new: {"max": 1e9}}))
    by_old = client.post("/v1/evaluations", json=evaluation({old: "min"}, {old: {"max": 1e9}}))
    assert by_new.status_code == by_old.status_code == 200, by_old.text
    # The answer speaks the new name, with the same value.
    assert by_old.json()["top"][0]["values"] == by_new.json()["top"][0]["values"]
    assert set(by_old.json()["units"]) == {new}


def test_an_old_text_output_name_is_still_refused_as_not_numeric(client):
    response = client.post("/v1/evaluations", json=evaluation({"guiding.ruled_by": "min"}))
    assert_problem(response, 422, "objectives.guiding.ruled_by")


def test_an_old_constraint_bound_is_applied_under_the_new_name(client):
    # light gain over a 7 mm pupil of a 200 mm aperture with a 70 mm obstruction: (200² − 70²)/7² ≈ 716
    response = client.post("/v1/evaluations", json=evaluation(
        {"light_grasp.clear_area_mm2": "max"}, {"light_grasp.eye_gain": {"min": 800}}))
    assert response.status_code == 200, response.text
    assert response.json()["feasible"] == 0


def test_harmonic_equatorial_becomes_german_equatorial_with_a_strain_wave_drive(client, alice):
    made = client.post("/v1/mounts", headers=alice.headers,
                       json={"name": "old words", "type": "harmonic-equatorial", "capacity_kg": 12})
    assert made.status_code == 201, made.text
    assert made.json()["type"] == "german-equatorial" and made.json()["drive"] == "strain-wave"
    changed = client.patch(f"/v1/mounts/{made.json()['id']}", headers=alice.headers,
                           json={"type": "fork", "drive": "worm"})
    assert (changed.json()["type"], changed.json()["drive"]) == ("fork", "worm")
    patched = client.patch(f"/v1/mounts/{made.json()['id']}", headers=alice.headers,
                           json={"type": "harmonic-equatorial"})
    assert patched.status_code == 200, patched.text
    assert (patched.json()["type"], patched.json()["drive"]) == ("german-equatorial", "strain-wave")


def test_a_stated_drive_wins_over_the_one_the_old_type_implied(client, alice):
    made = client.post("/v1/mounts", headers=alice.headers,
                       json={"type": "harmonic-equatorial", "drive": "other", "capacity_kg": 12})
    assert made.json()["drive"] == "other"


def test_an_unknown_drive_is_a_problem_naming_the_field(client, alice):
    made = client.post("/v1/mounts", headers=alice.headers, json={"drive": "steam", "capacity_kg": 12})
    assert_problem(made, 422, "drive")


def test_astrograph_becomes_other_keeping_its_old_default_transmission(client, alice):
    made = client.post("/v1/telescopes", headers=alice.headers,
                       json={**TELESCOPE, "design": "astrograph"})
    assert made.status_code == 201, made.text
    assert made.json()["design"] == "other" and made.json()["throughput"] == 0.85
    rig = {"name": "inline", "telescope": {**TELESCOPE, "design": "astrograph", "throughput": 0.7},
           "camera": CAMERA, "mount": {"type": "harmonic-equatorial", "capacity_kg": 20}}
    compared = client.post("/v1/comparisons", json={"rigs": [rig], "calculators": ["speed"]})
    assert compared.status_code == 200, compared.text
    assert compared.json()["results"]["speed"]["outputs"]["throughput"]["values"] == [0.7]
    patched = client.patch(f"/v1/telescopes/{made.json()['id']}", headers=alice.headers,
                           json={"design": "astrograph", "throughput": None})
    assert patched.status_code == 200, patched.text
    assert patched.json()["design"] == "other"


def test_old_values_are_gone_from_the_contract(client):
    schemas = client.get("/openapi.json").json()["components"]["schemas"]
    text = str(schemas)
    assert "harmonic" not in text and "astrograph" not in text
