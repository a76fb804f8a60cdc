"""POST /v1/evaluations: the contract of issue 6, stored ids and who may read them, agreement with the
comparison route and the engine, CSV, and each refusal as a problem naming its field.

The reference for a whole sweep is the comparison route: every combination sent as one inline rig,
then filtered and fronted here in plain Python from the definitions (a combination is feasible when
every constrained value is defined and within its inclusive bounds; it is on the front when no
feasible combination is no worse on every objective and better on one).
"""

from __future__ import annotations

import csv
import io
import itertools
import math

import pytest
from fastapi.testclient import TestClient
from rigbench_testing import CAMERA, MODIFIER, MOUNT, TELESCOPE, assert_problem

from api.app import create_app
from calculators.base import Calculator, Output
from calculators.evaluation_schemas import InlineEvaluationRequest
from calculators.sweep import evaluate_spec
from plugins.registry import CalculatorEntry, Registry

# Generic candidates (invented specs and prices); everything priced in one currency.
TELESCOPES = [
    {**TELESCOPE, "mass_kg": 9.0, "price": {"amount": 600, "currency": "EUR"}},  # 200 mm f/5
    {"name": "80 mm f/6 refractor", "design": "refractor", "aperture_mm": 80, "focal_length_mm": 480,
     "mass_kg": 3.0, "price": {"amount": 450, "currency": "EUR"}},
    {"name": "150 mm f/8 newtonian", "design": "newtonian", "aperture_mm": 150, "focal_length_mm": 1200,
     "obstruction_mm": 45, "mass_kg": 7.0, "price": {"amount": 380, "currency": "EUR"}},
]
CAMERAS = [
    {**CAMERA, "mass_kg": 0.7, "price": {"amount": 1400, "currency": "EUR"}},  # 3.8 um
    {"name": "small-pixel camera", "pixel_size_um": 2.5, "width_px": 3000, "height_px": 2000,
     "mass_kg": 0.4, "price": {"amount": 500, "currency": "EUR"}},
]
MODIFIERS = [
    None,
    {**MODIFIER, "mass_kg": 0.3, "price": {"amount": 250, "currency": "EUR"}},  # reducer 0.8x
    {"name": "barlow 2x", "kind": "barlow", "factor": 2.0, "mass_kg": 0.2,
     "price": {"amount": 120, "currency": "EUR"}},
]
#: The same optics as one-element trains ([] is nothing between telescope and camera).
TRAINS = [[] if m is None else [m] for m in MODIFIERS]
MOUNTS = [
    {**MOUNT, "mass_kg": 18, "price": {"amount": 1500, "currency": "EUR"}},  # rated 20 kg
    {"name": "light mount 10 kg", "type": "german-equatorial", "capacity_kg": 10, "mass_kg": 8,
     "price": {"amount": 700, "currency": "EUR"}},
    None,
]
CONSTRAINTS = {"sampling.pixel_scale_arcsec": {"min": 0.6, "max": 2.5}, "payload.capacity_fraction": {"max": 0.8}}
OBJECTIVES = {"speed.time_factor_per_arcsec2": "min", "cost.total_price": "min"}
AXES = ("telescope", "camera", "train", "mount")
LISTS = ("telescopes", "cameras", "trains", "mounts")


def request(**changes):
    return {"telescopes": TELESCOPES, "cameras": CAMERAS, "trains": TRAINS, "mounts": MOUNTS,
            "constraints": CONSTRAINTS, "objectives": OBJECTIVES, **changes}


def evaluation(client, body, **kw):
    response = client.post("/v1/evaluations", json=body, **kw)
    assert response.status_code == 200, response.text
    return response.json()


def combinations(body):
    sizes = [len(body[name]) for name in LISTS]
    return list(itertools.product(*(range(n) for n in sizes)))


def compared(client, body):
    """Every combination's values through POST /v1/comparisons, one inline rig each."""
    combos = combinations(body)
    keys = list(dict.fromkeys([*body.get("constraints", {}), *body["objectives"]]))
    rigs = [{"name": f"combination {n}", "telescope": body["telescopes"][t], "camera": body["cameras"][c],
             "train": body["trains"][m], "mount": body["mounts"][l]}
            for n, (t, c, m, l) in enumerate(combos)]
    answer = client.post("/v1/comparisons", json={
        "rigs": rigs, "calculators": sorted({k.split(".")[0] for k in keys}), "baseline": 0,
    })
    assert answer.status_code == 200, answer.text
    results = answer.json()["results"]
    values = {}
    for key in keys:
        name, output = key.split(".")
        assert results[name]["error"] is None
        values[key] = results[name]["outputs"][output]["values"]
    return combos, values


def feasible_and_front(body, combos, values):
    """Feasibility and the Pareto front from their definitions, row by row."""
    def ok(row):
        for key, bounds in body.get("constraints", {}).items():
            v = values[key][row]
            if v is None or not math.isfinite(v):
                return False
            if bounds.get("min") is not None and v < bounds["min"]:
                return False
            if bounds.get("max") is not None and v > bounds["max"]:
                return False
        return all(values[key][row] is not None for key in body["objectives"])

    feasible = [row for row in range(len(combos)) if ok(row)]
    sign = {key: 1 if d == "min" else -1 for key, d in body["objectives"].items()}
    point = {row: [sign[k] * values[k][row] for k in body["objectives"]] for row in feasible}

    def dominates(p, q):
        return all(a <= b for a, b in zip(p, q)) and any(a < b for a, b in zip(p, q))

    front = {row for row in feasible if not any(dominates(point[o], point[row]) for o in feasible)}
    return feasible, front


def indices(row):
    return tuple(row["indices"][kind] for kind in AXES)


def test_the_answer_has_the_contract_shape(client):
    body = evaluation(client, request(limit=5))
    assert body["evaluated"] == 3 * 2 * 3 * 3
    assert 0 < body["feasible"] <= body["evaluated"]
    assert body["front"] and len(body["top"]) == min(5, body["feasible"])
    keys = {*CONSTRAINTS, *OBJECTIVES}
    for row in body["front"] + body["top"] + [body["baseline"]]:
        assert set(row) == {"indices", "ids", "values", "score", "cautions"}
        assert set(row["indices"]) == {*AXES, "binning", "eyepiece"}
        assert set(row["ids"]) == {*AXES, "eyepiece"}
        assert row["indices"]["binning"] == 1 and row["indices"]["eyepiece"] is None
        # everything inline: no stored ids (one null per element of the train)
        assert all(v is None for k, v in row["ids"].items() if k != "train")  # eyepiece: none
        assert row["ids"]["train"] == [None] * len(TRAINS[row["indices"]["train"]])
        assert set(row["values"]) == keys
    assert body["units"] == {"sampling.pixel_scale_arcsec": "arcsec", "payload.capacity_fraction": "",
                             "speed.time_factor_per_arcsec2": "", "cost.total_price": "EUR"}
    assert indices(body["baseline"]) == (0, 0, 0, 0)
    assert isinstance(body["baseline_feasible"], bool) and isinstance(body["cautions"], dict)
    scores = [row["score"] for row in body["top"]]
    assert scores == sorted(scores)
    # Lower score is better and weights are positive, so the best-ranked row is never dominated.
    assert indices(body["top"][0]) in {indices(row) for row in body["front"]}


def test_counts_and_front_equal_a_row_by_row_comparison(client):
    body = request(limit=1000)
    answer = evaluation(client, body)
    combos, values = compared(client, body)
    feasible, front = feasible_and_front(body, combos, values)
    assert answer["feasible"] == len(feasible)
    assert {indices(row) for row in answer["front"]} == {combos[row] for row in front}
    assert {indices(row) for row in answer["top"]} == {combos[row] for row in feasible}
    for row in answer["front"] + answer["top"]:
        at = combos.index(indices(row))
        for key, value in row["values"].items():
            # Same calculators on the same inputs: only floating-point rounding may differ.
            assert value == pytest.approx(values[key][at], rel=1e-12)


def test_values_follow_the_published_formulas(client):
    body = evaluation(client, request(limit=1000))
    for row in body["top"]:
        t, c, m, _ = indices(row)
        factor = 1.0 if MODIFIERS[m] is None else MODIFIERS[m]["factor"]
        focal_mm = TELESCOPES[t]["focal_length_mm"] * factor
        # Small-angle image scale, 1 rad = 648000/pi arcsec (SI Brochure, 9th ed., 2019, table 8);
        # pixel size in um over focal length in mm carries the 1e-3. Tolerance: rounding only.
        expected = 648000 / math.pi * 1e-3 * CAMERAS[c]["pixel_size_um"] / focal_mm
        assert row["values"]["sampling.pixel_scale_arcsec"] == pytest.approx(expected, rel=1e-9)
        price = (TELESCOPES[t]["price"]["amount"] + CAMERAS[c]["price"]["amount"]
                 + (MODIFIERS[m] or {"price": {"amount": 0}})["price"]["amount"]
                 + (MOUNTS[row["indices"]["mount"]] or {"price": {"amount": 0}})["price"]["amount"])
        # A total price is the sum of the priced parts (plain arithmetic).
        assert row["values"]["cost.total_price"] == pytest.approx(price, rel=1e-12)


def test_the_answer_is_the_engine_s_answer(client, app):
    body = request(limit=7, baseline={"telescope": 2, "camera": 1, "train": 0, "mount": 1})
    spec = InlineEvaluationRequest.model_validate(body)
    expected = evaluate_spec(spec.telescopes, spec.cameras, spec.trains, spec.mounts, spec,
                             calculators=app.state.registry.calculators)
    assert evaluation(client, body) == expected.model_dump(mode="json")


def test_relative_outputs_are_against_the_baseline(client):
    # Throughputs stated, so the expected ratios need no per-design default.
    telescopes = [{**t, "throughput": tau} for t, tau in zip(TELESCOPES, (0.8, 0.9, 0.85))]
    modifiers = [None, {**MODIFIERS[1], "throughput": 0.96}, {**MODIFIERS[2], "throughput": 0.95}]
    baseline = {"telescope": 1, "camera": 0, "train": 2, "mount": 0}
    trains = [[] if m is None else [m] for m in modifiers]
    body = evaluation(client, request(telescopes=telescopes, trains=trains, baseline=baseline,
                                      constraints={}, limit=1000))
    assert indices(body["baseline"]) == (1, 0, 2, 0) and len(body["top"]) == body["evaluated"]

    def signal(t, m):
        scope = telescopes[t]
        area = math.pi / 4 * (scope["aperture_mm"] ** 2 - scope.get("obstruction_mm", 0) ** 2)
        return area * scope["throughput"] * (1.0 if modifiers[m] is None else modifiers[m]["throughput"])

    for row in body["top"]:
        t, _, m, _ = indices(row)
        # Signal per unit sky area goes as clear area × throughput (the camera equation, E = pi L tau / 4N^2,
        # times the pixel's sky area; Smith, Modern Optical Engineering, 2008 — speed.py's source), so the
        # time factor is the baseline's signal over this one's. Tolerance: floating-point rounding only.
        assert row["values"]["speed.time_factor_per_arcsec2"] == pytest.approx(signal(1, 2) / signal(t, m), rel=1e-12)
    assert body["baseline"]["values"]["speed.time_factor_per_arcsec2"] == pytest.approx(1.0, rel=1e-12)


def test_an_empty_train_means_none_and_null_mount_is_no_mount(client):
    body = evaluation(client, request(
        telescopes=TELESCOPES[:1], cameras=CAMERAS[:1], trains=[[], TRAINS[1], TRAINS[1] + TRAINS[2]],
        mounts=[None], constraints={}, objectives={"speed.effective_focal_length_mm": "max"}, limit=10,
    ))
    by_train = {row["indices"]["train"]: row["values"]["speed.effective_focal_length_mm"] for row in body["top"]}
    # An empty train leaves the telescope's focal length; a 0.8x reducer multiplies it by 0.8, and
    # a 2x barlow behind it by 2 again (the effective focal length is the product of the factors).
    assert by_train == pytest.approx({0: 1000.0, 1: 800.0, 2: 1600.0}, rel=1e-12)
    assert body["evaluated"] == 3


def test_the_old_modifiers_list_is_read_as_one_element_trains(client):
    old = request(modifiers=MODIFIERS, baseline={"telescope": 1, "modifier": 2})
    del old["trains"]
    new = request(baseline={"telescope": 1, "train": 2})
    assert evaluation(client, old) == evaluation(client, new)
    assert_problem(client.post("/v1/evaluations", json={**new, "modifiers": MODIFIERS}), 422, "trains")


def test_modifiers_and_mounts_default_to_none(client):
    body = evaluation(client, {"telescopes": TELESCOPES, "cameras": CAMERAS,
                               "objectives": {"light_grasp.clear_area_mm2": "max"}})
    assert body["evaluated"] == 6
    # Only the 200 mm aperture has the largest clear area; it is alone on a one-objective front.
    assert [indices(r)[0] for r in body["front"]] == [0, 0]


def test_stored_equipment_is_resolved_and_its_ids_returned(client, alice):
    scope = client.post("/v1/telescopes", json=TELESCOPES[1], headers=alice.headers).json()
    camera = client.post("/v1/cameras", json={**CAMERAS[0], "visibility": "public"}, headers=alice.headers).json()
    reducer = client.post("/v1/train-elements", json=MODIFIERS[1], headers=alice.headers).json()
    mount = client.post("/v1/mounts", json=MOUNTS[0], headers=alice.headers).json()
    stored = request(
        telescopes=[TELESCOPES[0], {"id": scope["id"]}], cameras=[{"id": camera["id"]}, CAMERAS[1]],
        trains=[[], [{"id": reducer["id"]}]], mounts=[{"id": mount["id"]}, None], limit=1000,
    )
    inline = request(telescopes=TELESCOPES[:2], cameras=CAMERAS, trains=TRAINS[:2], mounts=[MOUNTS[0], None],
                     limit=1000)
    got = evaluation(client, stored, headers=alice.headers)
    want = evaluation(client, inline)
    ids = {"telescope": [None, scope["id"]], "camera": [camera["id"], None],
           "train": [[], [reducer["id"]]], "mount": [mount["id"], None]}
    for row in got["front"] + got["top"] + [got["baseline"]]:
        assert row["ids"] == {**{kind: ids[kind][row["indices"][kind]] for kind in AXES}, "eyepiece": None}
    # Stored or inline, the same equipment gives the same answer.
    for part in ("front", "top"):
        for a, b in zip(got[part], want[part]):
            assert (a["indices"], a["values"], a["score"]) == (b["indices"], b["values"], b["score"])
    assert (got["evaluated"], got["feasible"]) == (want["evaluated"], want["feasible"])


def test_equipment_the_caller_may_not_read_is_refused_naming_each_entry(client, alice, bob):
    private = client.post("/v1/telescopes", json=TELESCOPES[1], headers=alice.headers).json()
    public = client.post("/v1/mounts", json={**MOUNTS[0], "visibility": "public"}, headers=alice.headers).json()
    body = request(telescopes=[TELESCOPES[0], {"id": private["id"]}], mounts=[{"id": public["id"]}, {"id": 99999}],
                   trains=[[], [{"id": 0}]])
    # An id below 1 is refused by validation; the rest by the lookup.
    assert_problem(client.post("/v1/evaluations", json=body), 422, "trains.1.0.id")
    body["trains"] = [[]]
    for headers in ({}, bob.headers):
        problem = assert_problem(client.post("/v1/evaluations", json=body, headers=headers), 422,
                                 "telescopes.1.id", "mounts.1.id")
        assert {e["field"] for e in problem["errors"]} == {"telescopes.1.id", "mounts.1.id"}
    body["mounts"] = [{"id": public["id"]}]
    assert_problem(client.post("/v1/evaluations", json=body, headers=bob.headers), 422, "telescopes.1.id")
    # The owner reads the private telescope; anyone reads the public mount.
    assert evaluation(client, body, headers=alice.headers)["evaluated"] == 2 * 2 * 1 * 1
    body["telescopes"] = TELESCOPES[:1]
    assert evaluation(client, body)["front"][0]["ids"]["mount"] == public["id"]


def test_an_unknown_key_is_a_401(client):
    response = client.post("/v1/evaluations", json=request(), headers={"Authorization": "Bearer rb_nope"})
    assert_problem(response, 401)


@pytest.mark.parametrize(("changes", "field", "title"), [
    ({"telescopes": []}, "telescopes", "Invalid input"),
    ({"cameras": []}, "cameras", "Invalid evaluation"),  # nor eyepieces: one is needed
    ({"trains": []}, "trains", "Invalid input"),
    ({"mounts": []}, "mounts", "Invalid input"),
    ({"objectives": {}}, "objectives", "Invalid evaluation"),
    ({"objectives": {"speed.time_factor_per_arcsec2": "fastest"}}, "objectives.speed.time_factor_per_arcsec2",
     "Invalid input"),
    ({"objectives": {"no_such_calculator.value": "min"}}, "objectives.no_such_calculator.value", "Unknown output"),
    ({"objectives": {"speed.no_such_output": "min"}}, "objectives.speed.no_such_output", "Unknown output"),
    ({"objectives": {"speed": "min"}}, "objectives.speed", "Unknown output"),
    ({"constraints": {"sampling.nothing": {"max": 1}}}, "constraints.sampling.nothing", "Unknown output"),
    ({"constraints": {"sampling.sampling_verdict": {"max": 1}}}, "constraints.sampling.sampling_verdict",
     "Output is not numeric"),
    ({"constraints": {"sampling.pixel_scale_arcsec": {"min": 3, "max": 1}}}, "constraints.sampling.pixel_scale_arcsec",
     "Contradictory bounds"),
    ({"constraints": {"sampling.pixel_scale_arcsec": {}}}, "constraints.sampling.pixel_scale_arcsec",
     "Invalid evaluation"),
    ({"constraints": {"sampling.pixel_scale_arcsec": {"least": 1}}}, "constraints.sampling.pixel_scale_arcsec.least",
     "Invalid input"),
    ({"params": {"light_grasp": {}}}, "params.light_grasp", "Invalid evaluation"),
    ({"params": {"sampling": {"seeing_fwhm_arcsec": -1}}}, "params.sampling.seeing_fwhm_arcsec",
     "Invalid calculator params"),
    ({"baseline": {"telescope": 3}}, "baseline.telescope", "Invalid evaluation"),
    ({"baseline": {"camera": -1}}, "baseline.camera", "Invalid input"),
    ({"limit": 1001}, "limit", "Invalid input"),
    ({"telescopes": [{**TELESCOPES[0], "aperture_mm": -1}]}, "telescopes.0.aperture_mm", "Invalid input"),
    ({"cameras": [CAMERAS[0], {**CAMERAS[1], "colour": "red"}]}, "cameras.1.colour", "Invalid input"),
    ({"mounts": [{"id": "seven"}]}, "mounts.0.id", "Invalid input"),
    ({"extra": True}, "extra", "Invalid input"),
])
def test_each_bad_request_is_a_problem_naming_its_field(client, changes, field, title):
    problem = assert_problem(client.post("/v1/evaluations", json=request(**changes)), 422, field)
    assert problem["title"] == title


def test_mixed_currencies_are_refused_naming_the_output_and_the_params(client):
    dollars = [TELESCOPES[0], {**TELESCOPES[1], "price": {"amount": 500, "currency": "USD"}}]
    problem = assert_problem(client.post("/v1/evaluations", json=request(telescopes=dollars)), 422,
                             "objectives.cost.total_price")
    assert problem["title"] == "Cannot compute" and "USD" in problem["detail"] and "EUR" in problem["detail"]
    # Exchange rates in the params settle it (the rate is invented for the test).
    fixed = request(telescopes=dollars, params={"cost": {"currency": "EUR", "exchange_rates": {"USD": 0.9}}})
    assert evaluation(client, fixed)["units"]["cost.total_price"] == "EUR"


def test_the_product_is_bounded_by_the_setting_before_any_id_is_read(settings):
    small = settings.model_copy(update={"max_combinations": 18})
    with TestClient(create_app(small)) as client:
        assert evaluation(client, request(mounts=MOUNTS[:1]))["evaluated"] == 18
        problem = assert_problem(client.post("/v1/evaluations", json=request()), 422, *LISTS)
        assert problem["title"] == "Too many combinations" and "54" in problem["detail"]
        # Ids nobody can read are not looked up: the size is refused first.
        unreadable = request(telescopes=[{"id": 1}, {"id": 2}, {"id": 3}])
        assert assert_problem(client.post("/v1/evaluations", json=unreadable), 422, *LISTS)["title"] == \
            "Too many combinations"


def test_the_default_maximum_is_five_million(client, app):
    assert app.state.settings.max_combinations == 5_000_000
    # 100 x 100 x 50 x 11 = 5.5 million combinations: refused without computing.
    body = request(telescopes=TELESCOPES[:1] * 100, cameras=CAMERAS[:1] * 100,
                   trains=[[]] * 50, mounts=[None] * 11)
    problem = assert_problem(client.post("/v1/evaluations", json=body), 422, "telescopes")
    assert "5,500,000" in problem["detail"] and "5,000,000" in problem["detail"]


class Doubled(Calculator):
    """A third-party calculator stand-in: twice the aperture."""

    name = "doubled"
    version = "1.0.0"
    summary = "Twice the aperture (test double)."
    outputs = (Output("twice_aperture_mm", "mm", "2 × aperture."),
               Output("label", "", "Text.", kind="text"))
    sources = ("arithmetic",)

    def compute(self, batch, params):
        return {"twice_aperture_mm": 2 * batch["aperture_mm"], "label": "x"}


class Broken(Doubled):
    name = "broken"

    def compute(self, batch, params):
        raise ZeroDivisionError("deliberately broken")


def test_plugin_outputs_can_be_constrained_and_a_broken_plugin_is_a_422(app, client):
    built_in = app.state.registry.entries
    app.state.registry = Registry(entries=[
        *built_in,
        CalculatorEntry("doubled", "test-plugin", "1.0.0", "loaded", calculator=Doubled()),
        CalculatorEntry("broken", "test-plugin", "1.0.0", "loaded", calculator=Broken()),
    ])
    body = evaluation(client, request(constraints={"doubled.twice_aperture_mm": {"min": 350}}, limit=100))
    # Only the 200 mm aperture doubles past 350 mm: 1 telescope × 2 × 3 × 3 combinations.
    assert body["feasible"] == 18 and {r["indices"]["telescope"] for r in body["top"]} == {0}
    assert body["units"]["doubled.twice_aperture_mm"] == "mm"
    assert_problem(client.post("/v1/evaluations", json=request(objectives={"doubled.label": "max"})), 422,
                   "objectives.doubled.label")
    problem = assert_problem(client.post("/v1/evaluations", json=request(objectives={"broken.twice_aperture_mm": "min"})),
                             422, "objectives.broken.twice_aperture_mm")
    assert "deliberately broken" in problem["detail"]


def test_an_empty_feasible_set_answers_with_empty_front_and_top(client):
    body = evaluation(client, request(constraints={"sampling.pixel_scale_arcsec": {"min": 100}}))
    assert (body["feasible"], body["front"], body["top"]) == (0, [], [])
    assert body["baseline_feasible"] is False and body["baseline"]["score"] is None


def _readme_blocks():
    """The request and answer JSON blocks of README's "Purchase evaluations" section."""
    import json
    import re
    from pathlib import Path

    text = (Path(__file__).resolve().parents[3] / "README.md").read_text(encoding="utf-8")
    section = text[text.index("### Purchase evaluations"):]
    section = section[:section.index("\n### ", 1)]
    request_block, answer_block = re.findall(r"```json\n(.*?)```", section, flags=re.S)[:2]
    return json.loads(request_block), answer_block


def test_the_readme_example_answers_as_the_readme_shows(client):
    # Keeps the documentation in step with the service (a docs check, not a reference test).
    import json
    import re

    body, shown = _readme_blocks()
    answer = evaluation(client, body)
    first_row = json.loads(re.search(r'\{"indices".*?"score": [^}]*\}', shown, flags=re.S).group(0))
    assert first_row in answer["front"]
    head = json.loads(re.search(r'^\{("evaluated": \d+, "feasible": \d+)', shown).group(0) + "}")
    assert {k: answer[k] for k in head} == head
    units = json.loads(re.search(r'"units": (\{.*?\})', shown, flags=re.S).group(1))
    assert answer["units"] == units


def test_a_front_of_ties_beyond_the_maximum_is_refused(client):
    from api.evaluations.request import MAX_FRONT_ROWS

    # Every candidate telescope the same and one objective that depends on the telescope only: every
    # combination ties, so all of them are on the front — 101 × 100 cameras = 10,100 rows.
    body = {"telescopes": TELESCOPES[:1] * 101, "cameras": CAMERAS[1:] * 100,
            "objectives": {"light_grasp.clear_area_mm2": "max"}}
    assert MAX_FRONT_ROWS == 10_000
    problem = assert_problem(client.post("/v1/evaluations", json=body), 422, "objectives")
    assert problem["title"] == "Front too large" and "10,100 combinations" in problem["detail"]
    body["telescopes"] = TELESCOPES[:1] * 100
    assert len(evaluation(client, body)["front"]) == 10_000


def test_csv_is_the_same_answer_as_a_table(client, alice):
    mount = client.post("/v1/mounts", json=MOUNTS[0], headers=alice.headers).json()
    body = request(mounts=[{"id": mount["id"]}, MOUNTS[1]], limit=4)
    data = evaluation(client, body, headers=alice.headers)
    response = client.post("/v1/evaluations", json=body, headers={**alice.headers, "Accept": "text/csv"})
    assert response.status_code == 200 and response.headers["content-type"].startswith("text/csv")
    assert response.text.endswith("\r\n")  # RFC 4180 line breaks
    table, _blank, block = response.text.partition("\r\n\r\n")  # the cautions' final block follows
    assert all(line.startswith("# caution: ") for line in block.splitlines())
    lines = list(csv.DictReader(io.StringIO(table + "\r\n")))
    expected = ([("front", r) for r in data["front"]] + [("top", r) for r in data["top"]]
                + [("baseline", data["baseline"])])
    assert [line["set"] for line in lines] == [name for name, _ in expected]
    for line, (name, row) in zip(lines, expected):
        assert {kind: int(line[kind]) if line[kind] else None
                for kind in (*AXES, "binning", "eyepiece")} == row["indices"]
        def stored(kind, cell):
            if kind == "train":  # one per element, "inline" for an inline one
                return [None if x == "inline" else int(x) for x in cell.split(";")] if cell else []
            return int(cell) if cell else None

        assert {kind: stored(kind, line[f"{kind}_id"]) for kind in (*AXES, "eyepiece")} == row["ids"]
        for key, value in row["values"].items():
            unit = data["units"][key]
            cell = line[f"{key} [{unit}]" if unit else key]
            assert (float(cell) if cell else None) == value
        assert float(line["score"]) == row["score"]
    assert [int(line["rank"]) for line in lines if line["set"] == "top"] == list(range(1, len(data["top"]) + 1))


@pytest.mark.parametrize(("accept", "csv_expected"), [
    ("text/csv", True), ("application/json", False), ("text/csv;q=0.5, application/json", False), ("*/*", False),
])
def test_accept_header_chooses_the_format(client, accept, csv_expected):
    response = client.post("/v1/evaluations", json=request(), headers={"Accept": accept})
    assert response.status_code == 200
    assert response.headers["content-type"].startswith("text/csv" if csv_expected else "application/json")


def test_problems_stay_problem_documents_when_csv_is_asked_for(client):
    response = client.post("/v1/evaluations", json=request(cameras=[]), headers={"Accept": "text/csv"})
    assert_problem(response, 422, "cameras")


def test_the_openapi_document_gives_the_exact_shapes(app):
    operation = app.openapi()["paths"]["/v1/evaluations"]["post"]
    assert set(operation["responses"]["200"]["content"]) == {"application/json", "text/csv"}
    assert operation["responses"]["200"]["content"]["application/json"]["schema"] == {
        "$ref": "#/components/schemas/EvaluationResult"}
    assert {"400", "401", "413", "415", "422"} <= set(operation["responses"])
    schemas = app.openapi()["components"]["schemas"]
    assert set(schemas["EvaluationResult"]["required"]) >= {"evaluated", "feasible", "front", "top"}
    # cameras may be left out when eyepieces are given (one of the two is needed: the engine says so)
    assert set(schemas["EvaluationRequest"]["required"]) == {"telescopes", "objectives"}
