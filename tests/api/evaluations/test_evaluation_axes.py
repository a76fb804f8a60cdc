"""POST /v1/evaluations with `binning` factors and `eyepieces`: the camera axis widened into camera ×
binning pairs and camera-free eyepiece entries (calculators/sweep/detectors.py through the route),
agreement with POST /v1/comparisons of the same rig, CSV, and each refusal naming its field."""

from __future__ import annotations

import csv
import io

import pytest
from fastapi.testclient import TestClient
from rigbench_testing import assert_problem

from api.app import create_app

SCOPES = [
    {"name": "200 mm f/5 newtonian", "design": "newtonian", "aperture_mm": 200, "focal_length_mm": 1000,
     "obstruction_mm": 60, "price": {"amount": 600, "currency": "EUR"}},
    {"name": "80 mm f/6 refractor", "design": "refractor", "aperture_mm": 80, "focal_length_mm": 480,
     "price": {"amount": 450, "currency": "EUR"}},
]
CAMERAS = [
    {"name": "3.8 um camera", "pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000,
     "quantum_efficiency": 0.8, "read_noise_e": 1.5, "dark_current_e_per_s": 0.01,
     "price": {"amount": 1400, "currency": "EUR"}},
    {"name": "2.4 um camera", "pixel_size_um": 2.4, "width_px": 3000, "height_px": 2000,
     "quantum_efficiency": 0.8, "read_noise_e": 1.0, "dark_current_e_per_s": 0.005,
     "price": {"amount": 500, "currency": "EUR"}},
]
IMAGING = {"sampling.pixel_scale_arcsec": "max", "integration_time.total_time_s": "min"}


def evaluation(client, body, **kw):
    response = client.post("/v1/evaluations", json=body, **kw)
    assert response.status_code == 200, response.text
    return response.json()


def compared(client, rig, keys):
    answer = client.post("/v1/comparisons", json={
        "rigs": [rig], "calculators": sorted({k.split(".")[0] for k in keys})})
    assert answer.status_code == 200, answer.text
    results = answer.json()["results"]
    return {k: results[k.split(".")[0]]["outputs"][k.split(".")[1]]["values"][0] for k in keys}


# --- binning -------------------------------------------------------------------------------------

def test_every_camera_is_swept_at_every_factor_and_each_row_names_its_own(client):
    body = {"telescopes": SCOPES, "cameras": CAMERAS, "binning": [1, 2], "objectives": IMAGING,
            "limit": 100}
    answer = evaluation(client, body)
    assert answer["evaluated"] == answer["feasible"] == 2 * 2 * 2
    seen = {(r["indices"]["telescope"], r["indices"]["camera"], r["indices"]["binning"]) for r in answer["top"]}
    assert seen == {(t, c, b) for t in (0, 1) for c in (0, 1) for b in (1, 2)}
    for row in answer["top"]:
        ix = row["indices"]
        rig = {"name": "r", "telescope": SCOPES[ix["telescope"]], "camera": CAMERAS[ix["camera"]],
               "binning": ix["binning"]}
        assert row["values"] == pytest.approx(compared(client, rig, row["values"]), rel=1e-12)
    assert answer["baseline"]["indices"]["binning"] == 1


def test_a_one_combination_sweep_at_binning_two_agrees_with_a_comparison_rig_binned_two(client):
    keys = {**IMAGING, "target_fit.major_axis_px": "max"}
    answer = evaluation(client, {"telescopes": SCOPES[:1], "cameras": CAMERAS[:1], "binning": [2],
                                 "objectives": keys})
    row = answer["baseline"]
    assert row["indices"]["binning"] == 2
    rig = {"name": "r", "telescope": SCOPES[0], "camera": CAMERAS[0], "binning": 2}
    assert row["values"] == compared(client, rig, keys)
    unbinned = compared(client, {**rig, "binning": 1}, keys)
    assert row["values"]["sampling.pixel_scale_arcsec"] == pytest.approx(
        2 * unbinned["sampling.pixel_scale_arcsec"], rel=1e-12)


def test_csv_names_the_binning_of_each_line(client):
    body = {"telescopes": SCOPES[:1], "cameras": CAMERAS[:1], "binning": [1, 3], "objectives": IMAGING,
            "limit": 5}
    data = evaluation(client, body)
    response = client.post("/v1/evaluations", json=body, headers={"Accept": "text/csv"})
    assert response.status_code == 200
    table = response.text.partition("\r\n\r\n")[0]
    lines = list(csv.DictReader(io.StringIO(table + "\r\n")))
    rows = data["front"] + data["top"] + [data["baseline"]]
    assert [int(line["binning"]) for line in lines] == [r["indices"]["binning"] for r in rows]
    assert all(line["eyepiece"] == "" and line["eyepiece_id"] == "" for line in lines)


@pytest.mark.parametrize("binning, field", [
    ([5], "binning.0"), ([0], "binning.0"), ([1, 1], "binning.1"), ([], "binning"), ("2", "binning"),
])
def test_bad_binning_factors_are_422_naming_the_entry(client, binning, field):
    body = {"telescopes": SCOPES, "cameras": CAMERAS, "binning": binning, "objectives": IMAGING}
    assert_problem(client.post("/v1/evaluations", json=body), 422, field)


def test_a_baseline_binning_the_request_does_not_list_is_422(client):
    body = {"telescopes": SCOPES, "cameras": CAMERAS, "binning": [1, 2], "objectives": IMAGING,
            "baseline": {"binning": 3}}
    problem = assert_problem(client.post("/v1/evaluations", json=body), 422, "baseline.binning")
    assert "1, 2" in problem["detail"]


def test_binning_counts_toward_the_combination_limit(settings):
    small = settings.model_copy(update={"max_combinations": 7})
    with TestClient(create_app(small)) as client:
        body = {"telescopes": SCOPES, "cameras": CAMERAS, "binning": [1, 2], "objectives": IMAGING}
        problem = assert_problem(client.post("/v1/evaluations", json=body), 422, "cameras", "binning")
        assert problem["title"] == "Too many combinations"
        assert "2 × (2 × 2) × 1 × 1 = 8 combinations" in problem["detail"]


def test_a_comparison_rig_with_a_binning_outside_one_to_four_is_422(client):
    rig = {"name": "r", "telescope": SCOPES[0], "camera": CAMERAS[0], "binning": 9}
    assert_problem(client.post("/v1/comparisons", json={"rigs": [rig]}), 422, "rigs.0.binning")


def test_a_stored_rig_keeps_its_binning(client, alice):
    rig = {"name": "binned", "telescope": SCOPES[0], "camera": CAMERAS[0], "binning": 2}
    created = client.post("/v1/rigs", json=rig, headers=alice.headers)
    assert created.status_code == 201, created.text
    assert created.json()["binning"] == 2 and created.json()["resolved"]["binning"] == 2
    keys = ["sampling.pixel_scale_arcsec"]
    answer = client.post("/v1/comparisons", json={"rigs": [{"id": created.json()["id"]}],
                                                  "calculators": ["sampling"]}, headers=alice.headers)
    assert answer.status_code == 200, answer.text
    stored = answer.json()["results"]["sampling"]["outputs"]["pixel_scale_arcsec"]["values"][0]
    assert stored == compared(client, rig, keys)["sampling.pixel_scale_arcsec"]


# --- eyepieces -----------------------------------------------------------------------------------

EYEPIECES = [
    {"name": "25 mm 52°", "focal_length_mm": 25, "apparent_field_deg": 52, "mass_kg": 0.2,
     "price": {"amount": 60, "currency": "EUR"}},
    {"name": "10 mm 68° with stop", "focal_length_mm": 10, "apparent_field_deg": 68, "field_stop_mm": 11.5},
]
TRAINS = [[], [{"kind": "barlow", "factor": 2.0, "mass_kg": 0.2}]]
VISUAL = {"visual.magnification": "max", "visual.true_field_arcmin": "max"}


def test_a_visual_sweep_counts_what_explicit_eyepiece_trains_count_and_each_row_is_that_rig(client):
    axis = evaluation(client, {"telescopes": SCOPES, "trains": TRAINS, "eyepieces": EYEPIECES,
                               "objectives": VISUAL, "limit": 100})
    explicit_trains = [[*t, {"kind": "eyepiece", **e}] for t in TRAINS for e in EYEPIECES]
    explicit = evaluation(client, {"telescopes": SCOPES, "trains": explicit_trains, "cameras": [],
                                   "objectives": VISUAL, "limit": 100})
    assert axis["evaluated"] == explicit["evaluated"] == 2 * 2 * 2
    assert axis["feasible"] == explicit["feasible"] == 8
    for row in axis["top"]:
        ix = row["indices"]
        assert ix["camera"] is None and ix["binning"] is None and ix["eyepiece"] in (0, 1)
        rig = {"name": "by eye", "telescope": SCOPES[ix["telescope"]],
               "train": [*TRAINS[ix["train"]], {"kind": "eyepiece", **EYEPIECES[ix["eyepiece"]]}]}
        want = compared(client, rig, ["visual.magnification", "visual.exit_pupil_mm", "visual.true_field_arcmin"])
        assert row["values"]["visual.magnification"] == want["visual.magnification"]
        assert row["values"]["visual.true_field_arcmin"] == pytest.approx(want["visual.true_field_arcmin"], rel=1e-12)


def test_imaging_and_visual_rows_side_by_side_with_the_other_modes_outputs_null(client):
    body = {"telescopes": SCOPES, "cameras": CAMERAS, "eyepieces": EYEPIECES, "limit": 100,
            "objectives": {"cost.total_price": "min"},
            "constraints": {"sampling.pixel_scale_arcsec": {"max": 10}}}
    answer = evaluation(client, body)
    assert answer["evaluated"] == 2 * (2 + 2)
    # A constraint on an imaging output leaves every visual row infeasible (its value is null).
    assert answer["feasible"] == 2 * 2
    assert all(r["indices"]["eyepiece"] is None for r in answer["top"])
    visual = evaluation(client, {**body, "constraints": {}, "objectives": {"visual.magnification": "max"}})
    assert visual["feasible"] == 2 * 2
    assert all(r["indices"]["camera"] is None for r in visual["top"])
    response = client.post("/v1/evaluations", json={**body, "constraints": {}, "objectives":
                                                    {"visual.magnification": "max"}},
                           headers={"Accept": "text/csv"})
    lines = list(csv.DictReader(io.StringIO(response.text.partition("\r\n\r\n")[0] + "\r\n")))
    assert all(line["camera"] == "" and line["binning"] == "" and line["eyepiece"] in ("0", "1")
               for line in lines if line["set"] == "top")


def test_stored_eyepieces_are_resolved_and_named_by_id(client, alice):
    stored = client.post("/v1/train-elements", json={"kind": "eyepiece", **EYEPIECES[0]}, headers=alice.headers)
    assert stored.status_code == 201, stored.text
    eyepiece_id = stored.json()["id"]
    body = {"telescopes": SCOPES[:1], "eyepieces": [{"id": eyepiece_id}, EYEPIECES[1]],
            "objectives": {"visual.magnification": "max"}, "limit": 10}
    answer = evaluation(client, body, headers=alice.headers)
    inline = evaluation(client, {**body, "eyepieces": EYEPIECES})
    by_eyepiece = {r["indices"]["eyepiece"]: r for r in answer["top"]}
    assert by_eyepiece[0]["ids"]["eyepiece"] == eyepiece_id and by_eyepiece[1]["ids"]["eyepiece"] is None
    assert [r["values"] for r in answer["top"]] == [r["values"] for r in inline["top"]]


def test_a_stored_element_that_is_not_an_eyepiece_or_not_readable_is_422_naming_the_entry(client, alice, bob):
    reducer = client.post("/v1/train-elements", json={"kind": "reducer", "factor": 0.8}, headers=alice.headers)
    eyepiece = client.post("/v1/train-elements", json={"kind": "eyepiece", "focal_length_mm": 25},
                           headers=alice.headers)
    body = {"telescopes": SCOPES[:1], "eyepieces": [EYEPIECES[0], {"id": reducer.json()["id"]}],
            "objectives": {"visual.magnification": "max"}}
    problem = assert_problem(client.post("/v1/evaluations", json=body, headers=alice.headers), 422,
                             "eyepieces.1.id")
    assert "reducer, not an eyepiece" in problem["detail"]
    body["eyepieces"] = [{"id": eyepiece.json()["id"]}]
    assert_problem(client.post("/v1/evaluations", json=body, headers=bob.headers), 422, "eyepieces.0.id")


@pytest.mark.parametrize("changes, field", [
    ({"eyepieces": [{"focal_length_mm": 25, "apparent_field_deg": 131}]}, "eyepieces.0.apparent_field_deg"),
    ({"eyepieces": [{"focal_length_mm": -5}]}, "eyepieces.0.focal_length_mm"),
    ({"eyepieces": [{"focal_length_mm": 25, "factor": 2}]}, "eyepieces.0.factor"),
    ({"eyepieces": [{"kind": "reducer", "factor": 0.8}]}, "eyepieces.0.kind"),
    ({"eyepieces": []}, "cameras"),
    ({"cameras": CAMERAS, "trains": [[{"kind": "eyepiece", "focal_length_mm": 25}]]}, "trains.0.0"),
    ({"baseline": {"eyepiece": 5, "camera": None}}, "baseline.eyepiece"),
])
def test_bad_visual_input_is_422_naming_the_field(client, changes, field):
    body = {"telescopes": SCOPES, "eyepieces": EYEPIECES, "objectives": VISUAL, **changes}
    assert_problem(client.post("/v1/evaluations", json=body), 422, field)


def test_an_owned_eyepiece_stays_out_of_the_purchase_price_and_a_stored_one_of_mine_is_owned(client, alice):
    scope = {**SCOPES[1]}  # 450 EUR
    priced = {"focal_length_mm": 25, "price": {"amount": 60, "currency": "EUR"}}
    keys = {"cost.purchase_price": "min", "cost.total_price": "min"}
    body = {"telescopes": [scope], "eyepieces": [{**priced, "owned": True}, priced], "objectives": keys,
            "limit": 10}
    rows = {r["indices"]["eyepiece"]: r["values"] for r in evaluation(client, body)["top"]}
    assert rows[0] == {"cost.purchase_price": 450.0, "cost.total_price": 510.0}
    assert rows[1] == {"cost.purchase_price": 510.0, "cost.total_price": 510.0}
    stored = client.post("/v1/train-elements", json={"kind": "eyepiece", **priced}, headers=alice.headers).json()
    body["eyepieces"] = [{"id": stored["id"]}, {"id": stored["id"], "owned": False}]
    rows = {r["indices"]["eyepiece"]: r["values"] for r in evaluation(client, body, headers=alice.headers)["top"]}
    assert rows[0]["cost.purchase_price"] == 450.0 and rows[1]["cost.purchase_price"] == 510.0
