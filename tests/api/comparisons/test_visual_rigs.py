"""Visual rigs in comparisons: an eyepiece ends the train, no camera; the refusals name the field."""

from __future__ import annotations

import pytest
from rigbench_testing import assert_problem

EYEPIECE = {"kind": "eyepiece", "focal_length_mm": 25, "apparent_field_deg": 52, "field_stop_mm": 21.5}
DOB = {"design": "newtonian", "aperture_mm": 200, "focal_length_mm": 1200, "obstruction_mm": 50}
CAMERA = {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}


def visual_rig(name="200 mm dob + 25 mm", eyepiece=EYEPIECE):
    return {"name": name, "telescope": DOB, "train": [eyepiece], "mount": {"type": "dobsonian", "capacity_kg": 30}}


def test_a_visual_and_an_imaging_rig_side_by_side_each_null_with_its_reason(client):
    imaging = {"name": "imaging", "telescope": DOB, "camera": CAMERA}
    response = client.post("/v1/comparisons", json={"rigs": [visual_rig(), imaging]})
    assert response.status_code == 200, response.text
    results = response.json()["results"]
    visual = results["visual"]["outputs"]
    # 1200/25 = 48×, 200/48 = 4.17 mm; field stop 2·atan(21.5/2400) in arcmin (plane geometry).
    assert visual["magnification"]["values"] == [48.0, None]
    assert visual["exit_pupil_mm"]["values"][0] == pytest.approx(200 / 48)
    assert visual["true_field_arcmin"]["values"][0] == pytest.approx(61.59, abs=0.01)
    assert "no eyepiece" in visual["magnification"]["null_reasons"][1]
    pixel = results["sampling"]["outputs"]["pixel_scale_arcsec"]
    assert pixel["values"][0] is None and "no camera" in pixel["null_reasons"][0]
    assert results["visual"]["error"] is None and results["sampling"]["error"] is None


def test_an_eyepiece_and_a_camera_in_one_rig_is_refused(client):
    body = {"rigs": [{**visual_rig(), "camera": CAMERA}]}
    response = client.post("/v1/comparisons", json=body)
    assert response.status_code == 422, response.text
    assert any(e["field"].startswith("rigs.0") for e in response.json()["errors"])


def test_an_apparent_field_over_130_degrees_is_refused_by_name(client):
    response = client.post("/v1/comparisons", json={"rigs": [visual_rig(eyepiece={**EYEPIECE, "apparent_field_deg": 131})]})
    assert_problem(response, 422, "rigs.0.train.0.apparent_field_deg")


def test_every_calculator_answers_a_comparison_of_a_visual_and_an_imaging_rig(client):
    imaging = {"name": "imaging", "telescope": DOB, "camera": CAMERA}
    results = client.post("/v1/comparisons", json={"rigs": [visual_rig(), imaging], "baseline": 1}).json()["results"]
    assert {name: r["error"] for name, r in results.items() if r["error"]} == {}
    per_pixel = results["speed"]["outputs"]["time_factor_per_pixel"]
    assert per_pixel["values"][0] is None and "no camera" in per_pixel["null_reasons"][0]
    assert results["speed"]["outputs"]["time_factor_per_arcsec2"]["values"][0] is not None


def test_the_trains_filter_sets_the_h_alpha_case_and_a_colour_sensor_takes_four_times_as_long(client):
    telescope = {"design": "newtonian", "aperture_mm": 200, "focal_length_mm": 1000, "obstruction_mm": 70, "throughput": 0.81}
    camera = {"pixel_size_um": 3.76, "width_px": 6000, "height_px": 4000, "quantum_efficiency": 0.8,
              "read_noise_e": 1.5, "dark_current_e_per_s": 0.003}
    ha = {"kind": "filter", "centre_nm": 656, "bandwidth_nm": 7, "peak_transmission": 0.9, "thickness_mm": 2}
    rigs = [{"name": "mono", "telescope": telescope, "train": [ha], "camera": {**camera, "sensor": "mono"}},
            {"name": "colour", "telescope": telescope, "train": [ha], "camera": {**camera, "sensor": "colour"}},
            {"name": "O III filter", "telescope": telescope, "camera": camera,
             "train": [{**ha, "centre_nm": 500.7}]}]
    body = {"rigs": rigs, "calculators": ["integration_time"],
            "site": {"name": "suburban", "sky_brightness_mag_arcsec2": 19.5},
            "params": {"integration_time": {"line": "H-alpha", "line_surface_brightness_rayleigh": 200}}}
    out = client.post("/v1/comparisons", json=body).json()["results"]["integration_time"]["outputs"]
    mono, colour, outside = out["total_time_s"]["values"]
    # The README's worked case: 10,415 s with the 7 nm filter (see test_integration_time for the hand figures).
    assert mono == pytest.approx(10414.6, rel=1e-4)
    assert colour == pytest.approx(4 * mono, rel=1e-12)  # ¼ of a Bayer mosaic sees H-alpha (common practice)
    assert outside is None and "outside the filter's passband" in out["total_time_s"]["null_reasons"][2]
