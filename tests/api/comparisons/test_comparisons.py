"""POST /v1/comparisons: the contract of issue 3, inline and stored rigs, CSV, and each refusal."""

from __future__ import annotations

import csv
import io
import math

import pytest
from rigbench_testing import CAMERA, INLINE_RIG, MODIFIER, TELESCOPE, assert_problem

from api.display import unit_text
from calculators.base import Calculator, Output
from plugins.registry import CalculatorEntry, Registry


def rig(name, aperture_mm, obstruction_mm=0.0, **extra):
    return {"name": name, "telescope": {**TELESCOPE, "aperture_mm": aperture_mm, "obstruction_mm": obstruction_mm},
            "camera": CAMERA, **extra}


def annulus_mm2(d, o):
    # Area of an annulus, pi/4 (D^2 - d^2) (plane geometry), computed here independently of the service.
    return math.pi / 4 * (d * d - o * o)


def test_inline_comparison_answers_the_contract(client):
    response = client.post("/v1/comparisons", json={
        "rigs": [rig("a", 200, 70), rig("b", 100)], "calculators": ["light_grasp"],
    })
    assert response.status_code == 200, response.text
    body = response.json()
    assert body["rigs"] == [{"id": None, "name": "a", "cautions": []}, {"id": None, "name": "b", "cautions": []}]
    assert body["baseline"] == 0
    result = body["results"]["light_grasp"]
    assert result["error"] is None and isinstance(result["version"], str) and isinstance(result["cautions"], list)
    area = result["outputs"]["clear_area_mm2"]
    assert area["unit"] == "mm^2"
    # Annulus areas; relative tolerance 1e-12 allows only floating-point rounding.
    assert area["values"] == pytest.approx([annulus_mm2(200, 70), annulus_mm2(100, 0)], rel=1e-12)
    ratio = result["outputs"]["area_ratio"]["values"]
    assert ratio == pytest.approx([1.0, annulus_mm2(100, 0) / annulus_mm2(200, 70)], rel=1e-12)


def test_default_is_every_loaded_calculator_and_baseline_zero(client, app):
    body = client.post("/v1/comparisons", json={"rigs": [INLINE_RIG]}).json()
    assert set(body["results"]) == set(app.state.registry.calculators)
    assert body["baseline"] == 0


def test_baseline_selects_the_reference_rig(client):
    body = client.post("/v1/comparisons", json={
        "rigs": [rig("a", 200), rig("b", 100)], "calculators": ["light_grasp"], "baseline": 1,
    }).json()
    # Area ratio of two unobstructed apertures is (D1/D2)^2 = 4.
    assert body["results"]["light_grasp"]["outputs"]["area_ratio"]["values"] == pytest.approx([4.0, 1.0], rel=1e-12)


def test_stored_rigs_and_inline_rigs_compare_together(client, alice, bob):
    scope = client.post("/v1/telescopes", json={**TELESCOPE, "visibility": "public"}, headers=alice.headers).json()
    stored = client.post("/v1/rigs", json={"name": "stored", "telescope": {"id": scope["id"]}, "camera": CAMERA,
                                           "visibility": "public"}, headers=alice.headers).json()
    response = client.post("/v1/comparisons", json={
        "rigs": [{"id": stored["id"]}, {"name": "inline with stored scope", "telescope": {"id": scope["id"]},
                                        "camera": CAMERA, "modifier": MODIFIER}],
        "calculators": ["light_grasp"],
    }, headers=bob.headers)
    assert response.status_code == 200, response.text
    body = response.json()
    assert [{k: r[k] for k in ("id", "name")} for r in body["rigs"]] == [
        {"id": stored["id"], "name": "stored"}, {"id": None, "name": "inline with stored scope"}]
    values = body["results"]["light_grasp"]["outputs"]["clear_area_mm2"]["values"]
    assert values[0] == values[1] == pytest.approx(annulus_mm2(200, 70), rel=1e-12)


def test_anonymous_callers_compare_public_rigs(client, alice):
    stored = client.post("/v1/rigs", json={**INLINE_RIG, "visibility": "public"}, headers=alice.headers).json()
    response = client.post("/v1/comparisons", json={"rigs": [{"id": stored["id"]}], "calculators": ["light_grasp"]})
    assert response.status_code == 200 and response.json()["rigs"][0]["id"] == stored["id"]


def test_rigs_the_caller_may_not_read_are_refused(client, alice, bob):
    private = client.post("/v1/rigs", json=INLINE_RIG, headers=alice.headers).json()
    request = {"rigs": [INLINE_RIG, {"id": private["id"]}]}
    assert_problem(client.post("/v1/comparisons", json=request), 422, "rigs.1.id")
    assert_problem(client.post("/v1/comparisons", json=request, headers=bob.headers), 422, "rigs.1.id")
    assert client.post("/v1/comparisons", json=request, headers=alice.headers).status_code == 200
    scope = client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).json()
    by_component = {"rigs": [{"name": "x", "telescope": {"id": scope["id"]}, "camera": CAMERA}]}
    assert_problem(client.post("/v1/comparisons", json=by_component, headers=bob.headers), 422, "rigs.0.telescope.id")


@pytest.mark.parametrize(("request_body", "field"), [
    ({"rigs": []}, "rigs"),
    ({"rigs": [INLINE_RIG], "baseline": 1}, "baseline"),
    ({"rigs": [INLINE_RIG], "baseline": -1}, "baseline"),
    ({"rigs": [INLINE_RIG], "calculators": ["light_grasp", "no_such_thing"]}, "calculators.1"),
    ({"rigs": [INLINE_RIG], "calculators": []}, "calculators"),
    ({"rigs": [INLINE_RIG], "calculators": ["light_grasp"], "params": {"other": {}}}, "params.other"),
    ({"rigs": [INLINE_RIG], "calculators": ["light_grasp"], "params": {"light_grasp": {"eye_pupil_mm": -1}}},
     "params.light_grasp.eye_pupil_mm"),
    ({"rigs": [INLINE_RIG], "calculators": ["light_grasp"], "params": {"light_grasp": {"bogus": 1}}},
     "params.light_grasp.bogus"),
    ({"rigs": [rig("bad", -5)]}, "rigs.0.telescope.aperture_mm"),
    ({"rigs": [INLINE_RIG, rig("bad", 100, 100)]}, "rigs.1.telescope.obstruction_mm"),
    ({"rigs": [{**INLINE_RIG, "telescope": {**TELESCOPE, "aperture_mm": "8 kg"}}]}, "rigs.0.telescope.aperture_mm"),
    ({"rigs": [{**INLINE_RIG, "telescope": {**TELESCOPE, "aperture_mm": "8 furlongs-per-fortnight"}}]},
     "rigs.0.telescope.aperture_mm"),
    ({"rigs": [{**INLINE_RIG, "colour": "red"}]}, "rigs.0.colour"),
    ({"rigs": [{"id": 0}]}, "rigs.0.id"),
    ({"rigs": [{"id": 12345}]}, "rigs.0.id"),
    ({"rigs": [INLINE_RIG], "extra": 1}, "extra"),
])
def test_each_bad_request_is_a_problem_naming_its_field(client, request_body, field):
    assert_problem(client.post("/v1/comparisons", json=request_body), 422, field)


def test_rigs_per_comparison_are_bounded_by_the_setting(settings, tmp_path):
    from fastapi.testclient import TestClient

    from api.app import create_app

    small = settings.model_copy(update={"max_rigs_per_comparison": 3})
    with TestClient(create_app(small)) as client:
        assert client.post("/v1/comparisons", json={"rigs": [INLINE_RIG] * 3, "calculators": ["light_grasp"]}).status_code == 200
        assert_problem(client.post("/v1/comparisons", json={"rigs": [INLINE_RIG] * 4}), 422, "rigs")


def test_the_default_limit_takes_a_thousand_rigs(client):
    body = client.post("/v1/comparisons", json={"rigs": [INLINE_RIG] * 1000, "calculators": ["light_grasp"]})
    assert body.status_code == 200
    assert len(body.json()["results"]["light_grasp"]["outputs"]["clear_area_mm2"]["values"]) == 1000


class Broken(Calculator):
    name = "broken"
    version = "0.0.1"
    summary = "Always fails (test double)."
    outputs = (Output("nothing", "", "Never computed."),)
    sources = ("none",)

    def compute(self, batch, params):
        raise ZeroDivisionError("deliberately broken")


def test_a_failing_calculator_gets_its_error_and_the_others_still_answer(app, client):
    good = app.state.registry.get("light_grasp")
    app.state.registry = Registry(entries=[
        CalculatorEntry("light_grasp", "rigbench", "0", "loaded", calculator=good),
        CalculatorEntry("broken", "test-plugin", "0", "loaded", calculator=Broken()),
    ])
    body = client.post("/v1/comparisons", json={"rigs": [INLINE_RIG]}).json()
    assert "deliberately broken" in body["results"]["broken"]["error"]
    assert body["results"]["broken"]["outputs"] == {}
    assert body["results"]["light_grasp"]["error"] is None
    table = client.post("/v1/comparisons", json={"rigs": [INLINE_RIG]}, headers={"Accept": "text/csv"}).text
    header = next(csv.reader(io.StringIO(table)))
    assert "broken.error" in header and "light_grasp.clear_area_mm2 [mm²]" in header


def test_csv_is_the_same_comparison_as_a_table(client):
    request = {"rigs": [rig("a", 200, 70), rig("=cmd()", 100)], "calculators": ["light_grasp"], "baseline": 1}
    data = client.post("/v1/comparisons", json=request).json()
    response = client.post("/v1/comparisons", json=request, headers={"Accept": "text/csv"})
    assert response.status_code == 200
    assert response.headers["content-type"].startswith("text/csv")
    table, _, block = response.text.partition("\r\n\r\n")  # the final block: the cautions
    assert block.startswith("# caution: light_grasp,") and "Sun" in block
    rows = list(csv.DictReader(io.StringIO(table)))
    assert len(rows) == 2
    outputs = data["results"]["light_grasp"]["outputs"]
    for name, output in outputs.items():
        # The unit as the page prints it (api.display), the key as scripts look it up.
        column = f"light_grasp.{name} [{unit_text(output['unit'])}]" if output["unit"] else f"light_grasp.{name}"
        assert [float(r[column]) for r in rows] == output["values"]
    assert [r["baseline"] for r in rows] == ["false", "true"]
    # A name a spreadsheet would run as a formula is written as text (OWASP, CSV injection).
    assert rows[1]["rig"] == "'=cmd()"


@pytest.mark.parametrize(("accept", "csv_expected"), [
    ("text/csv", True),
    ("application/json", False),
    ("text/csv;q=0.5, application/json", False),
    ("application/json;q=0.4, text/csv;q=0.9", True),
    ("*/*", False),
    ("text/*", True),
])
def test_accept_header_chooses_the_format(client, accept, csv_expected):
    response = client.post("/v1/comparisons", json={"rigs": [INLINE_RIG], "calculators": ["light_grasp"]},
                           headers={"Accept": accept})
    assert response.headers["content-type"].startswith("text/csv" if csv_expected else "application/json")


def test_an_absurd_aperture_next_to_a_normal_rig_is_a_422_naming_it(client):
    from rigbench_testing import INLINE_RIG, assert_problem

    huge = {**INLINE_RIG, "telescope": {**INLINE_RIG["telescope"], "aperture_mm": 1e308}}
    answer = client.post("/v1/comparisons", json={"rigs": [INLINE_RIG, huge]})
    assert_problem(answer, 422, "rigs.1.telescope.aperture_mm")
