"""api/evaluations/saved.py and saved_routes.py: saving an evaluation, reading it back, who may read
it, stored equipment that changed, was deleted or went private, and re-running it.

The reference for a saved answer is the unsaved route: the same body sent to ``POST
/v1/evaluations`` must give the same answer the saved evaluation keeps.
"""

from __future__ import annotations

import csv
import io

import pytest
from rigbench_testing import assert_problem
from test_evaluations import CAMERAS, MODIFIERS, MOUNTS, TELESCOPES, request

from api.evaluations.rerun import MAX_VALUE_CHANGES


def saved_body(**changes):
    return {**request(), "name": "first imaging rig", **changes}


def save(client, account, **changes):
    response = client.post("/v1/evaluations/saved", json=saved_body(**changes), headers=account.headers)
    assert response.status_code == 201, response.text
    return response.json()


def stored(client, account, kind, body, visibility="private"):
    response = client.post(f"/v1/{kind}", json={**body, "visibility": visibility}, headers=account.headers)
    assert response.status_code == 201, response.text
    return response.json()["id"]


def test_a_saved_evaluation_keeps_the_answer_the_route_gives_with_its_id_and_report_url(client, alice):
    evaluation = save(client, alice)
    assert evaluation["id"] >= 1
    assert evaluation["report_url"] == f"/evaluations/{evaluation['id']}"
    assert evaluation["owner"] == "alice" and evaluation["visibility"] == "private"
    fresh = client.post("/v1/evaluations", json=request()).json()
    assert evaluation["result"] == fresh
    again = client.get(f"/v1/evaluations/saved/{evaluation['id']}", headers=alice.headers)
    assert again.status_code == 200
    assert again.json()["result"] == fresh and again.json()["id"] == evaluation["id"]
    assert again.json()["stored_equipment"] == []


def test_the_location_header_and_the_csv_name_the_same_answer(client, alice):
    response = client.post("/v1/evaluations/saved", json=saved_body(), headers=alice.headers)
    assert response.headers["location"] == f"/v1/evaluations/saved/{response.json()['id']}"
    table = client.get(response.headers["location"] + "?format=csv", headers=alice.headers)
    assert table.headers["content-type"].startswith("text/csv")
    rows = list(csv.DictReader(io.StringIO(table.text)))
    assert sum(r["set"] == "front" for r in rows) == len(response.json()["result"]["front"])
    same = client.post("/v1/evaluations", json=request(), headers={"Accept": "text/csv"})
    assert table.text == same.text


def test_a_private_evaluation_is_a_404_for_everyone_but_its_owner(client, alice, bob):
    item = save(client, alice)
    path = f"/v1/evaluations/saved/{item['id']}"
    for headers in ({}, bob.headers):
        body = assert_problem(client.get(path, headers=headers), 404)
        assert "alice" not in body["detail"]
        assert_problem(client.post(f"{path}/rerun", headers=headers), 404)
        page = client.get(item["report_url"], headers={**headers, "Accept": "text/html"})
        assert page.status_code == 404 and "first imaging rig" not in page.text
        assert client.get(f"{item['report_url']}/trade-off.svg", headers=headers).status_code == 404
    missing = assert_problem(client.get("/v1/evaluations/saved/999999", headers=bob.headers), 404)
    assert missing["detail"].replace("999999", str(item["id"])) == body["detail"]  # the same words
    assert client.get(item["report_url"], headers=alice.headers).status_code == 200


def test_a_public_evaluation_and_its_report_are_readable_without_a_key(client, alice):
    item = save(client, alice, visibility="public")
    assert client.get(f"/v1/evaluations/saved/{item['id']}").json()["result"] == item["result"]
    page = client.get(item["report_url"])
    assert page.status_code == 200 and page.headers["content-type"].startswith("text/html")
    assert "script-src" not in page.headers["content-security-policy"]
    assert page.text.count('data-front="true"') == len(item["result"]["front"])
    assert page.text.count('class="sheet"') == len(item["result"]["top"])
    assert f'href="/v1/evaluations/saved/{item["id"]}?format=csv"' in page.text
    svg = client.get(f"{item['report_url']}/trade-off.svg")
    assert svg.headers["content-type"] == "image/svg+xml" and svg.text.startswith("<?xml")
    assert client.get(f"{item['report_url']}/objectives.svg").status_code == 404  # two objectives only
    assert client.get("/evaluations/report.css").headers["content-type"].startswith("text/css")


def test_saving_needs_a_read_write_key(client, make_account):
    assert_problem(client.post("/v1/evaluations/saved", json=saved_body()), 401)
    reader = make_account("reader", scope="read")
    assert_problem(client.post("/v1/evaluations/saved", json=saved_body(), headers=reader.headers), 403)


@pytest.mark.parametrize(("changes", "field"), [
    ({"visibility": "everyone"}, "visibility"),
    ({"name": ""}, "name"),
    ({"name": "a\x00b"}, "name"),
    ({"objectives": {"cost.no_such_output": "min"}}, "objectives.cost.no_such_output"),
    ({"telescopes": [{"id": 424242}]}, "telescopes.0.id"),
    # Found by fuzzing: a design or mount type that is not a string was a 500 (a dict looked up in
    # the table of old names).
    ({"mounts": [{"capacity_kg": 10, "type": {}}]}, "mounts.0.type"),
    ({"telescopes": [{"aperture_mm": 100, "focal_length_mm": 500, "design": ["x"]}]}, "telescopes.0.design"),
])
def test_bad_saves_are_problems_naming_the_field_and_store_nothing(client, alice, changes, field):
    assert_problem(client.post("/v1/evaluations/saved", json=saved_body(**changes), headers=alice.headers),
                   422, field)
    assert_problem(client.get("/v1/evaluations/saved/1", headers=alice.headers), 404)


def test_a_missing_name_is_refused(client, alice):
    body = saved_body()
    del body["name"]
    assert_problem(client.post("/v1/evaluations/saved", json=body, headers=alice.headers), 422, "name")


def test_too_many_combinations_are_refused_before_anything_is_stored(app, client, alice):
    app.state.settings.max_combinations = 10
    assert_problem(client.post("/v1/evaluations/saved", json=saved_body(), headers=alice.headers), 422,
                   "telescopes")


@pytest.mark.parametrize("item_id", ["0", "abc", "9" * 30, "-1"])
def test_a_report_for_a_bad_id_is_a_404_page(client, item_id):
    page = client.get(f"/evaluations/{item_id}", headers={"Accept": "text/html"})
    assert page.status_code == 404 and "Traceback" not in page.text
    assert_problem(client.get(f"/evaluations/{item_id}", headers={"Accept": "application/json"}), 404)


def test_the_api_refuses_an_id_out_of_range(client):
    assert_problem(client.get("/v1/evaluations/saved/0"), 422)


def without_ids(result: dict) -> dict:
    def strip(row):
        return {k: v for k, v in row.items() if k != "ids"}
    return {**result, "front": [strip(r) for r in result["front"]], "top": [strip(r) for r in result["top"]],
            "baseline": strip(result["baseline"])}


def _with_stored_telescope(client, alice, visibility="private"):
    scope_id = stored(client, alice, "telescopes", TELESCOPES[0], visibility)
    body = saved_body(telescopes=[{"id": scope_id}, *TELESCOPES[1:]])
    response = client.post("/v1/evaluations/saved", json=body, headers=alice.headers)
    assert response.status_code == 201, response.text
    return scope_id, response.json()


def test_a_deleted_telescope_leaves_the_saved_answer_shown_and_marked(client, alice):
    scope_id, item = _with_stored_telescope(client, alice)
    assert item["stored_equipment"] == [{"kind": "telescope", "index": 0, "position": None, "id": scope_id,
                                         "name": TELESCOPES[0]["name"], "status": "unchanged",
                                         "changed_fields": []}]
    assert client.delete(f"/v1/telescopes/{scope_id}", headers=alice.headers).status_code == 204
    again = client.get(f"/v1/evaluations/saved/{item['id']}", headers=alice.headers).json()
    assert again["result"] == item["result"]
    assert again["stored_equipment"][0]["status"] == "gone"
    page = client.get(item["report_url"], headers=alice.headers)
    assert page.status_code == 200
    assert "Equipment changed since this was saved" in page.text and 'data-status="gone"' in page.text
    assert page.text.count('data-front="true"') == len(item["result"]["front"])
    # The copy stands in: the re-run has the same answer, since nothing else changed.
    rerun = client.post(f"/v1/evaluations/saved/{item['id']}/rerun", headers=alice.headers).json()
    assert rerun["result"] == item["result"]
    assert rerun["changes"]["front_added"] == [] and rerun["changes"]["values"] == []


def test_equipment_gone_private_reads_as_gone_for_others_only(client, alice, bob):
    scope_id = stored(client, alice, "telescopes", TELESCOPES[0], "public")
    public = save(client, alice, visibility="public", telescopes=[{"id": scope_id}, *TELESCOPES[1:]])
    assert client.patch(f"/v1/telescopes/{scope_id}", json={"visibility": "private"},
                        headers=alice.headers).status_code == 200
    # What was published stays published (the copy); the live item is now alice's alone.
    assert client.get(f"/v1/evaluations/saved/{public['id']}").json()["stored_equipment"][0]["status"] == "gone"
    assert client.get(f"/v1/evaluations/saved/{public['id']}",
                      headers=alice.headers).json()["stored_equipment"][0]["status"] == "unchanged"
    assert client.get(public["report_url"], headers=bob.headers).status_code == 200


def test_a_public_evaluation_may_use_only_public_stored_equipment(client, alice):
    scope_id = stored(client, alice, "telescopes", TELESCOPES[0], "private")
    body = saved_body(visibility="public", telescopes=[{"id": scope_id}, *TELESCOPES[1:]])
    problem = assert_problem(client.post("/v1/evaluations/saved", json=body, headers=alice.headers), 422,
                             "telescopes.0.id")
    assert "private" in problem["detail"]
    assert client.post("/v1/evaluations/saved", json={**body, "visibility": "private"},
                       headers=alice.headers).status_code == 201


def test_a_members_only_evaluation_uses_no_private_stored_equipment(client, make_account):
    # Its readers, the club's members, would see the part in the report, as in a members-only rig.
    club = make_account("evaluating-club", kind="club")
    private_id = stored(client, club, "telescopes", TELESCOPES[0], "private")
    members_id = stored(client, club, "telescopes", TELESCOPES[1], "members")
    body = saved_body(visibility="members", telescopes=[{"id": private_id}, {"id": members_id}])
    problem = assert_problem(client.post("/v1/evaluations/saved", json=body, headers=club.headers), 422,
                             "telescopes.0.id")
    assert "members-only" in problem["detail"]
    body = saved_body(visibility="members", telescopes=[{"id": members_id}, *TELESCOPES[2:]])
    assert client.post("/v1/evaluations/saved", json=body, headers=club.headers).status_code == 201


def test_equipment_changed_while_computing_is_a_409_and_nothing_is_stored(app, client, alice):
    # The check inside the writing transaction: the copies must still be what is stored.
    from sqlmodel import Session, select

    from api.accounts.keys import authenticate
    from api.http.problems import ApiProblem
    from api.evaluations import saved
    from api.storage.models import SavedEvaluationRow

    scope_id = stored(client, alice, "telescopes", TELESCOPES[0], "private")
    body = saved.SavedEvaluationCreate.model_validate(saved_body(telescopes=[{"id": scope_id}, *TELESCOPES[1:]]))
    with Session(app.state.engine) as session:
        principal = authenticate(session, alice.key)
    components, _ids, spec, result = saved.compute(app.state.engine, principal, body, registry=app.state.registry,
                                                   maximum=10_000, max_front_rows=10_000)
    client.patch(f"/v1/telescopes/{scope_id}", json={"focal_length_mm": 1200}, headers=alice.headers)
    with Session(app.state.engine) as session:
        with pytest.raises(ApiProblem) as refused:
            saved.save(session, principal, body, components, spec.params, result)
        assert refused.value.status == 409 and "telescopes.0" in refused.value.detail
    with Session(app.state.engine) as session:
        assert session.exec(select(SavedEvaluationRow)).all() == []


def test_a_rerun_after_a_price_change_says_what_changed(client, alice):
    scope_id, item = _with_stored_telescope(client, alice)
    patched = client.patch(f"/v1/telescopes/{scope_id}", json={"price": {"amount": 60, "currency": "EUR"}},
                           headers=alice.headers)
    assert patched.status_code == 200, patched.text
    rerun = client.post(f"/v1/evaluations/saved/{item['id']}/rerun", headers=alice.headers)
    assert rerun.status_code == 200, rerun.text
    answer = rerun.json()
    assert answer["stored_equipment"][0]["status"] == "changed"
    assert answer["stored_equipment"][0]["changed_fields"] == ["price"]
    # The same body with the new price inline is the reference for the new answer.
    reference = client.post("/v1/evaluations", json=request(telescopes=[
        {**TELESCOPES[0], "price": {"amount": 60, "currency": "EUR"}}, *TELESCOPES[1:]])).json()
    assert without_ids(answer["result"]) == without_ids(reference)
    assert all(r["ids"]["telescope"] == (scope_id if r["indices"]["telescope"] == 0 else None)
               for r in answer["result"]["front"])
    changes = answer["changes"]
    price_changes = [c for c in changes["values"] if c["key"] == "cost.total_price"]
    assert price_changes and all(c["indices"]["telescope"] == 0 for c in price_changes)
    assert all(c["saved"] - c["now"] == pytest.approx(600 - 60) for c in price_changes)
    assert len(changes["values"]) <= MAX_VALUE_CHANGES
    was = {tuple(r["indices"].values()) for r in item["result"]["front"]}
    now = {tuple(r["indices"].values()) for r in answer["result"]["front"]}
    assert {tuple(i.values()) for i in changes["front_added"]} == now - was
    assert {tuple(i.values()) for i in changes["front_removed"]} == was - now
    # Nothing is stored by a re-run.
    assert client.get(f"/v1/evaluations/saved/{item['id']}", headers=alice.headers).json()["result"] == item["result"]
    page = client.get(item["report_url"], headers=alice.headers)
    assert 'data-status="changed"' in page.text and "price" in page.text


def test_the_components_kept_are_copies_of_what_was_computed(client, alice):
    item = save(client, alice)
    assert item["request"]["cameras"] == CAMERAS and item["request"]["mounts"] == MOUNTS
    assert item["request"]["trains"] == [[] if m is None else [m] for m in MODIFIERS]


def test_a_site_fills_the_params_as_in_the_unsaved_route_and_the_page_names_it(client, alice):
    site = {"name": "hill top", "seeing_fwhm_arcsec": 3.5, "sky_brightness_mag_arcsec2": 19.5}
    item = save(client, alice, site=site)
    reference = client.post("/v1/evaluations", json=request(site=site)).json()
    assert item["result"] == reference
    page = client.get(item["report_url"], headers=alice.headers)
    assert page.status_code == 200 and 'id="site"' in page.text and "hill top" in page.text
    rerun = client.post(f"/v1/evaluations/saved/{item['id']}/rerun", headers=alice.headers).json()
    assert rerun["result"] == reference and rerun["changes"]["values"] == []


def test_the_page_run_again_now_shows_what_a_price_change_did(client, alice, bob):
    scope_id, item = _with_stored_telescope(client, alice)
    saved_page = client.get(item["report_url"], headers=alice.headers).text
    assert f'href="{item["report_url"]}/now"' not in saved_page  # nothing changed: no notice
    client.patch(f"/v1/telescopes/{scope_id}", json={"price": {"amount": 60, "currency": "EUR"}}, headers=alice.headers)
    saved_page = client.get(item["report_url"], headers=alice.headers).text
    assert f'href="{item["report_url"]}/now"' in saved_page
    page = client.get(f"{item['report_url']}/now", headers=alice.headers)
    assert page.status_code == 200
    assert "What changed since it was saved" in page.text
    rerun = client.post(f"/v1/evaluations/saved/{item['id']}/rerun", headers=alice.headers).json()
    moved = [v for v in rerun["changes"]["values"]]
    assert page.text.count('data-change="value"') == min(len(moved), 50) > 0
    assert page.text.count('data-front="true"') == len(rerun["result"]["front"])
    assert TELESCOPES[0]["name"] in page.text
    assert client.get(f"{item['report_url']}/now", headers={**bob.headers, "Accept": "text/html"}).status_code == 404


def test_owned_candidates_are_kept_saved_and_re_run_as_they_were(client, alice):
    # Alice's stored telescope (hers, so owned by default) and an inline camera she marks owned.
    scope = stored(client, alice, "telescopes", TELESCOPES[1])
    objectives = {"cost.purchase_price": "min", "cost.total_price": "min"}
    body = dict(telescopes=[{"id": scope}, TELESCOPES[0]], cameras=[{**CAMERAS[0], "owned": True}],
                trains=[[]], mounts=[MOUNTS[0]], constraints={}, objectives=objectives)
    item = save(client, alice, **body)
    fresh = client.post("/v1/evaluations", json={**request(), **body}, headers=alice.headers).json()
    assert item["result"] == fresh
    baseline = item["result"]["baseline"]["values"]
    # 450 (telescope) + 1400 (camera) + 1500 (mount) in all; only the mount is to buy.
    assert (baseline["cost.total_price"], baseline["cost.purchase_price"]) == (3350, 1500)
    # Re-run: unchanged equipment, the same answer, nothing reported as changed by ownership.
    rerun = client.post(f"/v1/evaluations/saved/{item['id']}/rerun", headers=alice.headers).json()
    assert rerun["result"] == item["result"]
    assert [e["status"] for e in rerun["stored_equipment"]] == ["unchanged"]
    page = client.get(item["report_url"], headers={**alice.headers, "Accept": "text/html"})
    assert page.status_code == 200
