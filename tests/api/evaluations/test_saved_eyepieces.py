"""Saved evaluations with `eyepieces` (api/evaluations/saved.py, rerun.py, sheets.py through the app):
visual combinations kept with copies of their eyepieces, read back, re-run, stored eyepieces that
change or go, and the report page naming each pick's eyepiece.

The reference for every saved answer is the unsaved route given the same body.
"""

from __future__ import annotations

import re

import pytest
from rigbench_testing import assert_problem
from test_evaluation_axes import CAMERAS, EYEPIECES, SCOPES, TRAINS, VISUAL

from api.evaluations import sample
from api.evaluations.sheets import indices_of
from calculators.evaluation_schemas import InlineEvaluationRequest
from calculators.sweep import evaluate_spec
from plugins.registry import load_registry

SAVED = "/v1/evaluations/saved"


def visual_body(**changes) -> dict:
    return {"telescopes": SCOPES, "cameras": [], "trains": TRAINS, "eyepieces": EYEPIECES,
            "objectives": VISUAL, "limit": 100, **changes}


def save(client, account, body) -> dict:
    response = client.post(SAVED, json={**body, "name": "by eye"}, headers=account.headers)
    assert response.status_code == 201, response.text
    return response.json()


def unsaved(client, account, body) -> dict:
    response = client.post("/v1/evaluations", json=body, headers=account.headers)
    assert response.status_code == 200, response.text
    return response.json()


def stored_eyepiece(client, account, eyepiece=EYEPIECES[0]) -> int:
    response = client.post("/v1/train-elements", json={"kind": "eyepiece", **eyepiece}, headers=account.headers)
    assert response.status_code == 201, response.text
    return response.json()["id"]


def sheet_parts(html: str, rank: int) -> str:
    """The parts table of one pick's sheet."""
    sheet = html.split(f'id="pick-{rank}"', 1)[1].split("</article>", 1)[0]
    return sheet.split('class="plain parts"', 1)[1].split("</table>", 1)[0]


def test_a_visual_evaluation_without_cameras_is_saved_with_the_unsaved_answer(client, alice):
    body = visual_body()
    item = save(client, alice, body)
    reference = unsaved(client, alice, body)
    assert item["result"] == reference
    assert item["result"]["front"] and all(r["indices"]["camera"] is None for r in item["result"]["front"])
    kept = [{k: v for k, v in e.items() if k != "kind"} for e in item["request"]["eyepieces"]]
    assert kept == EYEPIECES and item["request"]["cameras"] == []
    again = client.get(f"{SAVED}/{item['id']}", headers=alice.headers)
    assert again.status_code == 200
    assert again.json()["result"] == reference and again.json()["stored_equipment"] == []
    rerun = client.post(f"{SAVED}/{item['id']}/rerun", headers=alice.headers).json()
    assert rerun["result"] == reference
    assert rerun["changes"]["front_added"] == rerun["changes"]["front_removed"] == []
    assert rerun["changes"]["values"] == []


def test_imaging_and_visual_candidates_side_by_side_are_saved_as_the_route_answers(client, alice):
    body = visual_body(cameras=CAMERAS, objectives={"cost.total_price": "min", "cost.purchase_price": "min"})
    item = save(client, alice, body)
    reference = unsaved(client, alice, body)
    assert item["result"] == reference
    assert {r["indices"]["eyepiece"] is None for r in reference["top"]} == {True, False}
    page = client.get(item["report_url"], headers=alice.headers)
    assert page.status_code == 200, page.text
    assert page.text.count('data-front="true"') == len(reference["front"])


def test_a_stored_eyepiece_is_kept_by_id_and_shows_as_unchanged(client, alice):
    eyepiece_id = stored_eyepiece(client, alice)
    body = visual_body(eyepieces=[{"id": eyepiece_id}, EYEPIECES[1]])
    item = save(client, alice, body)
    reference = unsaved(client, alice, body)
    assert item["result"] == reference
    assert item["stored_equipment"] == [{"kind": "eyepiece", "index": 0, "position": None, "id": eyepiece_id,
                                         "name": EYEPIECES[0]["name"], "status": "unchanged",
                                         "changed_fields": []}]
    rows = item["result"]["front"]
    assert all(r["ids"]["eyepiece"] == (eyepiece_id if r["indices"]["eyepiece"] == 0 else None) for r in rows)
    rerun = client.post(f"{SAVED}/{item['id']}/rerun", headers=alice.headers).json()
    assert rerun["result"] == reference
    assert [e["status"] for e in rerun["stored_equipment"]] == ["unchanged"]


def test_a_changed_stored_eyepiece_is_marked_and_the_rerun_computes_it_as_it_is_now(client, alice):
    eyepiece_id = stored_eyepiece(client, alice)
    body = visual_body(eyepieces=[{"id": eyepiece_id}, EYEPIECES[1]])
    item = save(client, alice, body)
    patched = client.patch(f"/v1/train-elements/{eyepiece_id}", json={"focal_length_mm": 32},
                           headers=alice.headers)
    assert patched.status_code == 200, patched.text
    read = client.get(f"{SAVED}/{item['id']}", headers=alice.headers).json()
    assert read["result"] == item["result"]
    [entry] = read["stored_equipment"]
    assert (entry["kind"], entry["status"], entry["changed_fields"]) == ("eyepiece", "changed", ["focal_length_mm"])
    rerun = client.post(f"{SAVED}/{item['id']}/rerun", headers=alice.headers).json()
    reference = unsaved(client, alice, visual_body(eyepieces=[{**EYEPIECES[0], "focal_length_mm": 32},
                                                              EYEPIECES[1]]))
    assert [r["values"] for r in rerun["result"]["front"]] == [r["values"] for r in reference["front"]]
    assert [r["indices"] for r in rerun["result"]["front"]] == [r["indices"] for r in reference["front"]]
    moved = {c["key"] for c in rerun["changes"]["values"]}
    assert "visual.magnification" in moved
    assert all(c["indices"]["eyepiece"] == 0 for c in rerun["changes"]["values"])
    now = client.get(f"{item['report_url']}/now", headers=alice.headers)
    assert now.status_code == 200 and "What changed since it was saved" in now.text
    saved_page = client.get(item["report_url"], headers=alice.headers).text
    assert 'data-status="changed"' in saved_page and "focal_length_mm" in saved_page


def test_a_deleted_stored_eyepiece_reads_as_gone_and_its_copy_stands_in(client, alice):
    eyepiece_id = stored_eyepiece(client, alice)
    body = visual_body(eyepieces=[EYEPIECES[1], {"id": eyepiece_id}])
    item = save(client, alice, body)
    assert client.delete(f"/v1/train-elements/{eyepiece_id}", headers=alice.headers).status_code == 204
    read = client.get(f"{SAVED}/{item['id']}", headers=alice.headers).json()
    assert [(e["kind"], e["index"], e["status"]) for e in read["stored_equipment"]] == [("eyepiece", 1, "gone")]
    rerun = client.post(f"{SAVED}/{item['id']}/rerun", headers=alice.headers).json()
    assert rerun["result"] == item["result"] and rerun["changes"]["values"] == []
    page = client.get(item["report_url"], headers=alice.headers)
    assert page.status_code == 200 and 'data-status="gone"' in page.text
    assert client.get(f"{item['report_url']}/now", headers=alice.headers).status_code == 200


def test_a_public_evaluation_may_not_keep_a_private_stored_eyepiece(client, alice):
    eyepiece_id = stored_eyepiece(client, alice)
    body = {**visual_body(eyepieces=[{"id": eyepiece_id}]), "name": "by eye", "visibility": "public"}
    assert_problem(client.post(SAVED, json=body, headers=alice.headers), 422, "eyepieces.0.id")


def test_each_pick_sheet_names_its_eyepiece_in_place_of_a_camera(client, alice):
    body = visual_body()
    item = save(client, alice, body)
    page = client.get(item["report_url"], headers=alice.headers)
    assert page.status_code == 200, page.text
    top = item["result"]["top"]
    assert top
    for rank, row in enumerate(top[:5], 1):
        eyepiece = EYEPIECES[row["indices"]["eyepiece"]]
        parts = sheet_parts(page.text, rank)
        assert "Camera" not in parts
        assert f"Eyepiece: {eyepiece['name']}" in parts
        assert f"{eyepiece['focal_length_mm']:g} mm focal length" in parts
        assert f"{eyepiece['apparent_field_deg']:g}° apparent field" in parts
    # The chart's caption names the baseline combination by its parts, no index placeholders.
    baseline = item["result"]["baseline"]["indices"]
    [caption] = re.findall(r"\(purple diamond: ([^)]*)\)", page.text)
    # Worded as a pick sheet's heading: the baseline is the first of each list, its train the
    # empty one, which (as no mount) is left out rather than shown as "train 1".
    assert TRAINS[baseline["train"]] == []
    assert caption == f"{SCOPES[baseline['telescope']]['name']} + {EYEPIECES[baseline['eyepiece']]['name']}"
    assert "None" not in caption and not re.search(r'data-indices="[^"]*None', page.text)


def test_a_visual_train_saved_without_eyepieces_names_the_trains_eyepiece(client, alice):
    ending = {"kind": "eyepiece", "focal_length_mm": 18, "apparent_field_deg": 60}
    body = {"telescopes": SCOPES, "cameras": [], "trains": [[ending]], "objectives": VISUAL}
    item = save(client, alice, body)
    assert item["result"] == unsaved(client, alice, body)
    page = client.get(item["report_url"], headers=alice.headers)
    assert page.status_code == 200, page.text
    parts = sheet_parts(page.text, 1)
    assert "Camera" not in parts and "18 mm focal length, 60° apparent field" in parts


def test_a_stored_element_that_is_not_an_eyepiece_is_422_naming_the_entry_and_nothing_is_kept(client, alice):
    reducer = client.post("/v1/train-elements", json={"kind": "reducer", "factor": 0.8}, headers=alice.headers)
    assert reducer.status_code == 201, reducer.text
    body = {**visual_body(eyepieces=[{"id": reducer.json()["id"]}]), "name": "by eye"}
    problem = assert_problem(client.post(SAVED, json=body, headers=alice.headers), 422, "eyepieces.0.id")
    assert "not an eyepiece" in problem["detail"]
    assert_problem(client.get(f"{SAVED}/1", headers=alice.headers), 404)


@pytest.mark.parametrize("cameras", ["left out", []])
def test_neither_cameras_nor_eyepieces_is_422_naming_cameras(client, alice, cameras):
    body = visual_body(trains=[[]], eyepieces=[], cameras=cameras)
    if cameras == "left out":
        del body["cameras"]
    assert_problem(client.post(SAVED, json={**body, "name": "nothing to look through"}, headers=alice.headers),
                   422, "cameras")
    assert_problem(client.post("/v1/evaluations", json=body), 422, "cameras")


def test_the_candidates_list_names_the_eyepieces(client, alice):
    item = save(client, alice, visual_body())
    page = client.get(item["report_url"], headers=alice.headers).text
    listed = page.split('id="candidates"', 1)[1]
    for eyepiece in EYEPIECES:
        assert re.search(re.escape(eyepiece["name"]) + r": eyepiece of " + f"{eyepiece['focal_length_mm']:g}", listed)


@pytest.mark.parametrize("cameras", [[], CAMERAS])
def test_the_charts_sample_sweeps_the_eyepieces_as_the_engine_does(cameras):
    calculators = load_registry().calculators
    spec = InlineEvaluationRequest.model_validate(visual_body(
        cameras=cameras, objectives={"cost.total_price": "min", "light_grasp.clear_area_mm2": "max"}))
    components = (spec.telescopes, spec.cameras, spec.trains, spec.mounts, spec.eyepieces)
    result = evaluate_spec(*components[:4], spec, calculators=calculators)
    drawn = sample.sample(components, spec, calculators)
    assert drawn.size == result.evaluated and int(drawn.feasible.sum()) == result.feasible
    keys = {drawn.key(j) for j in range(drawn.size)}
    named = {indices_of(row) for row in result.front}
    assert named <= keys and any(row.indices.eyepiece is not None for row in result.front)


def test_a_stored_eyepiece_made_into_another_element_is_changed_and_its_copy_stands_in(client, alice):
    eyepiece_id = stored_eyepiece(client, alice)
    item = save(client, alice, visual_body(eyepieces=[{"id": eyepiece_id}]))
    patched = client.patch(f"/v1/train-elements/{eyepiece_id}", json={
        "kind": "barlow", "factor": 2.0, "focal_length_mm": None, "apparent_field_deg": None,
        "field_stop_mm": None, "eye_relief_mm": None},
        headers=alice.headers)
    assert patched.status_code == 200, patched.text
    [entry] = client.get(f"{SAVED}/{item['id']}", headers=alice.headers).json()["stored_equipment"]
    assert entry["status"] == "changed" and "kind" in entry["changed_fields"]
    rerun = client.post(f"{SAVED}/{item['id']}/rerun", headers=alice.headers)
    assert rerun.status_code == 200, rerun.text
    assert rerun.json()["result"] == item["result"]
    assert client.get(f"{item['report_url']}/now", headers=alice.headers).status_code == 200


def test_a_stored_eyepiece_changed_while_computing_is_a_409_naming_it(app, client, alice):
    from sqlmodel import Session

    from api.accounts.keys import authenticate
    from api.evaluations import saved
    from api.http.problems import ApiProblem

    eyepiece_id = stored_eyepiece(client, alice)
    body = saved.SavedEvaluationCreate.model_validate(
        {**visual_body(eyepieces=[EYEPIECES[1], {"id": eyepiece_id}]), "name": "by eye"})
    with Session(app.state.engine) as session:
        principal = authenticate(session, alice.key)
    components, _ids, spec, result = saved.compute(app.state.engine, principal, body, registry=app.state.registry,
                                                   maximum=10_000, max_front_rows=10_000)
    client.patch(f"/v1/train-elements/{eyepiece_id}", json={"focal_length_mm": 32}, headers=alice.headers)
    with Session(app.state.engine) as session, pytest.raises(ApiProblem) as refused:
        saved.save(session, principal, body, components, spec.params, result)
    assert refused.value.status == 409
    assert [e.field for e in refused.value.errors] == ["eyepieces.1.id"]


def test_the_unsaved_report_draws_stored_eyepieces_too(client, alice):
    eyepiece_id = stored_eyepiece(client, alice)
    body = visual_body(eyepieces=[{"id": eyepiece_id}, EYEPIECES[1]])
    page = client.post("/v1/evaluations/report", json=body, headers=alice.headers)
    assert page.status_code == 200, page.text
    answer = unsaved(client, alice, body)
    assert page.text.count('data-front="true"') == len(answer["front"])
    assert f"Eyepiece: {EYEPIECES[answer['top'][0]['indices']['eyepiece']]['name']}" in sheet_parts(page.text, 1)
