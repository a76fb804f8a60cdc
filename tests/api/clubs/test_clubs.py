"""`/v1/clubs`: public club views (api/clubs/routes.py, api/clubs/queries.py), their CSV, each refusal, and CORS."""

from __future__ import annotations

import csv
import io
import math

import pytest
from fastapi.testclient import TestClient
from rigbench_testing import BODIES, CAMERA, TELESCOPE, assert_problem

from api.app import create_app
from api.demo import CLUB, seed_demo


def store(client, owner, kind, visibility="public", **changes):
    response = client.post(f"/v1/{kind}", json={**BODIES[kind], "visibility": visibility, **changes},
                           headers=owner.headers)
    assert response.status_code == 201, response.text
    return response.json()["id"]


def rig(client, owner, name, aperture_mm=200, visibility="public", **changes):
    scope = store(client, owner, "telescopes", visibility, aperture_mm=aperture_mm, obstruction_mm=0)
    response = client.post("/v1/rigs", json={"name": name, "telescope": {"id": scope}, "camera": CAMERA,
                                             "visibility": visibility, **changes}, headers=owner.headers)
    assert response.status_code == 201, response.text
    return response.json()["id"]


def rows(response) -> list[dict[str, str]]:
    assert response.status_code == 200, response.text
    assert response.headers["content-type"].startswith("text/csv")
    # A comparison's CSV ends with a final block of cautions after an empty line (csv_table).
    table = response.text.split("\r\n\r\n# caution: ", 1)[0]
    return list(csv.DictReader(io.StringIO(table)))


@pytest.fixture
def club(make_account):
    return make_account("lakeside-astro", kind="club")


# --- GET /v1/clubs --------------------------------------------------------------------------------

def test_the_list_holds_club_accounts_only_by_handle(client, make_account, alice):
    make_account("zenith-club", kind="club")
    make_account("aurora-club", kind="club")
    body = client.get("/v1/clubs").json()
    assert [c["name"] for c in body["items"]] == ["aurora-club", "zenith-club"]
    assert body["total"] == 2 and {c["kind"] for c in body["items"]} == {"club"}
    page = client.get("/v1/clubs", params={"limit": 1, "offset": 1}).json()
    assert [c["name"] for c in page["items"]] == ["zenith-club"] and page["total"] == 2


def test_the_list_as_csv_by_header_or_by_query(client, club):
    for response in (client.get("/v1/clubs", headers={"Accept": "text/csv"}),
                     client.get("/v1/clubs", params={"format": "csv"})):
        [row] = rows(response)
        assert row["name"] == "lakeside-astro"
    # ?format wins over Accept, so a link can ask for JSON from a client that prefers CSV.
    assert client.get("/v1/clubs", params={"format": "json"}, headers={"Accept": "text/csv"}).json()["total"] == 1


@pytest.mark.parametrize("params, field", [
    ({"limit": 0}, "limit"), ({"limit": 101}, "limit"), ({"offset": -1}, "offset"), ({"format": "xml"}, "format"),
])
def test_bad_list_parameters_are_problems_naming_them(client, params, field):
    assert_problem(client.get("/v1/clubs", params=params), 422, field)


# --- GET /v1/clubs/{name} -------------------------------------------------------------------------

def test_a_club_profile(app, client):
    seed_demo(app.state.engine)
    body = client.get(f"/v1/clubs/{CLUB}").json()
    assert body["name"] == CLUB and body["kind"] == "club"
    assert body["display_name"] and body["location"] and body["contact_url"].startswith("https://")


def test_a_person_or_an_unknown_handle_is_not_a_club(client, alice):
    assert_problem(client.get("/v1/clubs/alice"), 404)
    assert_problem(client.get("/v1/clubs/nobody-here"), 404)
    assert_problem(client.get("/v1/clubs/Not_A_Handle"), 422, "name")


# --- GET /v1/clubs/{name}/equipment ---------------------------------------------------------------

def test_equipment_shows_the_clubs_public_items_only(client, club, alice):
    public = store(client, club, "telescopes")
    private = store(client, club, "telescopes", "private", name="kept private")
    store(client, alice, "telescopes")  # someone else's public item
    camera = store(client, club, "cameras")
    # The key of someone outside the club changes nothing; the club's own key (like its officers')
    # sees its private items too (api.clubs.shelf).
    owner_view = client.get("/v1/clubs/lakeside-astro/equipment", headers=club.headers).json()
    assert [t["id"] for t in owner_view["telescopes"]] == [public, private]
    for headers in ({}, alice.headers):
        body = client.get("/v1/clubs/lakeside-astro/equipment", headers=headers).json()
        assert [t["id"] for t in body["telescopes"]] == [public]
        assert [c["id"] for c in body["cameras"]] == [camera]
        assert body["train_elements"] == body["modifiers"] == [] and body["mounts"] == [] and body["complete"] is True
        assert body["telescopes"][0]["owner"] == "lakeside-astro"


def test_equipment_says_when_a_kind_is_cut_short(app, settings, club):
    store_client = TestClient(app)
    for _ in range(3):
        store(store_client, club, "mounts")
    small = create_app(settings.model_copy(update={"max_page_size": 2}))
    with TestClient(small) as client:
        body = client.get("/v1/clubs/lakeside-astro/equipment").json()
    small.state.engine.dispose()
    assert len(body["mounts"]) == 2 and body["complete"] is False


def test_equipment_as_csv_one_row_per_item_with_its_kind(client, club):
    scope = store(client, club, "telescopes", price={"amount": 900, "currency": "EUR"})
    store(client, club, "train-elements")
    table = rows(client.get("/v1/clubs/lakeside-astro/equipment", headers={"Accept": "text/csv"}))
    assert [r["equipment"] for r in table] == ["telescope", "train element"]
    assert table[0]["id"] == str(scope) and float(table[0]["aperture_mm"]) == TELESCOPE["aperture_mm"]
    assert float(table[0]["price.amount"]) == 900 and table[0]["price.currency"] == "EUR"
    # The train element's own "kind" field keeps its column; the row's kind is "equipment".
    assert table[1]["kind"] == BODIES["modifiers"]["kind"] and table[1]["aperture_mm"] == ""


def test_equipment_of_an_unknown_club_is_404(client):
    assert_problem(client.get("/v1/clubs/nobody-here/equipment"), 404)
    assert_problem(client.get("/v1/clubs/nobody-here/equipment", params={"format": "csv"}), 404)


# --- GET /v1/clubs/{name}/rigs --------------------------------------------------------------------

def test_rigs_show_the_clubs_public_rigs_resolved_and_paged(client, club):
    first = rig(client, club, "first")
    rig(client, club, "hidden", visibility="private")
    second = rig(client, club, "second")
    body = client.get("/v1/clubs/lakeside-astro/rigs").json()
    assert [r["id"] for r in body["items"]] == [first, second] and body["total"] == 2
    assert body["items"][0]["resolved"]["telescope"]["aperture_mm"] == 200
    page = client.get("/v1/clubs/lakeside-astro/rigs", params={"limit": 1, "offset": 1}).json()
    assert [r["id"] for r in page["items"]] == [second]


def test_rigs_as_csv_name_their_components(client, club):
    first = rig(client, club, "first", accessories=[{"name": "guide scope", "mass_kg": 1}])
    [row] = rows(client.get("/v1/clubs/lakeside-astro/rigs", params={"format": "csv"}))
    assert row["id"] == str(first) and row["name"] == "first"
    assert row["telescope"] == TELESCOPE["name"] and row["telescope_id"].isdigit()
    # The camera is inline: a name but no stored id.
    assert row["camera"] == CAMERA["name"] and row["camera_id"] == ""
    assert row["train"] == "" and row["train_ids"] == "" and row["accessories"] == "guide scope"


@pytest.mark.parametrize("params, field", [({"limit": 0}, "limit"), ({"offset": -1}, "offset")])
def test_bad_rig_list_parameters(client, club, params, field):
    assert_problem(client.get("/v1/clubs/lakeside-astro/rigs", params=params), 422, field)


def test_rigs_of_an_unknown_club_is_404(client):
    assert_problem(client.get("/v1/clubs/nobody-here/rigs"), 404)


# --- GET /v1/clubs/{name}/comparison --------------------------------------------------------------

def test_the_comparison_is_the_same_as_comparing_the_rigs_by_id(app, client):
    seed_demo(app.state.engine)
    ours = client.get(f"/v1/clubs/{CLUB}/comparison").json()
    ids = [r["id"] for r in client.get(f"/v1/clubs/{CLUB}/rigs").json()["items"]]
    site = client.get(f"/v1/clubs/{CLUB}").json()["default_site_id"]  # the demo club's field
    theirs = client.post("/v1/comparisons", json={"rigs": [{"id": i} for i in ids], "site": {"id": site}}).json()
    assert ours["site"] == theirs["site"] and ours["site"]["id"] == site
    assert [r["id"] for r in ours["rigs"]] == ids
    assert ours["results"] == theirs["results"] and ours["baseline"] == 0
    assert ours["baseline_rig_id"] == ids[0] and ours["club"] == CLUB
    assert ours["rigs_total"] == len(ids) and ours["target"] == "M 33"
    assert set(ours["results"]) == set(app.state.registry.calculators)
    assert all(result["error"] is None for result in ours["results"].values())


def test_the_demo_clubs_light_grasp_follows_the_annulus_area(app, client):
    seed_demo(app.state.engine)
    body = client.get(f"/v1/clubs/{CLUB}/comparison").json()
    ratio = body["results"]["light_grasp"]["outputs"]["area_ratio"]["values"]
    # Plane geometry, A = π/4·(D² − d²), from the demo's specs (api/demo.py): 300 mm with a 100 mm
    # obstruction, an unobstructed 80 mm, 200 mm with a 70 mm obstruction; then the visual rigs, the
    # 300 mm tube twice and a 200 mm with a 50 mm obstruction twice. Tolerance: rounding only.
    big, small, sct, dob = (300**2 - 100**2), 80**2, (200**2 - 70**2), (200**2 - 50**2)
    assert ratio == pytest.approx([1.0, small / big, sct / big, 1.0, 1.0, dob / big, dob / big], rel=1e-12)


def test_the_baseline_is_chosen_by_rig_id(client, club):
    rig(client, club, "wide", aperture_mm=200)
    narrow = rig(client, club, "narrow", aperture_mm=100)
    body = client.get("/v1/clubs/lakeside-astro/comparison", params={"baseline": narrow}).json()
    assert body["baseline"] == 1 and body["baseline_rig_id"] == narrow
    # Area ratio of two unobstructed apertures, (D1/D2)² (plane geometry): 200 mm over 100 mm is 4.
    assert body["results"]["light_grasp"]["outputs"]["area_ratio"]["values"] == pytest.approx([4.0, 1.0], rel=1e-12)


def test_the_target_is_placed_in_each_field(client, club):
    from pyongc import ongc

    rig(client, club, "r")
    body = client.get("/v1/clubs/lakeside-astro/comparison", params={"target": "NGC 891"}).json()
    outputs = body["results"]["target_fit"]["outputs"]
    # OpenNGC (through pyongc) is the reference for the object's size.
    major, _minor, _angle = ongc.Dso("NGC0891").dimensions
    assert outputs["target_major_arcmin"]["values"] == [pytest.approx(major, rel=1e-12)]
    assert body["target"] == "NGC 891"
    # Field across the sensor's width, 2·atan(W/2f) (plane geometry), W = 6000 px × 3.8 µm, f = 1000 mm.
    width_arcmin = math.degrees(2 * math.atan(6000 * 3.8e-3 / 2 / 1000)) * 60
    assert outputs["field_width_arcmin"]["values"] == [pytest.approx(width_arcmin, rel=1e-12)]


def test_a_rig_that_is_not_the_clubs_public_rig_cannot_be_the_baseline(client, club, alice):
    rig(client, club, "ours")
    private = rig(client, club, "private one", visibility="private")
    theirs = rig(client, alice, "alice's")
    for baseline in (private, theirs, 10**12):
        assert_problem(client.get("/v1/clubs/lakeside-astro/comparison", params={"baseline": baseline}), 422,
                       "baseline")
    for baseline in (0, "first"):
        assert_problem(client.get("/v1/clubs/lakeside-astro/comparison", params={"baseline": baseline}), 422,
                       "baseline")


def test_an_unknown_target_is_refused_with_close_matches(client, club):
    rig(client, club, "r")
    body = assert_problem(client.get("/v1/clubs/lakeside-astro/comparison", params={"target": "NGC 8911"}),
                          422, "target")
    assert "close matches" in body["detail"]
    assert_problem(client.get("/v1/clubs/lakeside-astro/comparison", params={"target": "x" * 41}), 422, "target")
    assert_problem(client.get("/v1/clubs/lakeside-astro/comparison", params={"target": "<script>"}), 422, "target")


def test_a_club_without_public_rigs_compares_nothing(client, club):
    rig(client, club, "private", visibility="private")
    body = client.get("/v1/clubs/lakeside-astro/comparison").json()
    assert body["rigs"] == [] and body["results"] == {} and body["baseline_rig_id"] is None
    assert body["rigs_total"] == 0


def test_the_comparison_is_bounded_by_the_rig_limit(app, settings, club):
    with TestClient(app) as writer:
        ids = [rig(writer, club, f"r{i}") for i in range(3)]
    small = create_app(settings.model_copy(update={"max_rigs_per_comparison": 2}))
    with TestClient(small) as client:
        body = client.get("/v1/clubs/lakeside-astro/comparison").json()
        refused = client.get("/v1/clubs/lakeside-astro/comparison", params={"baseline": ids[2]})
    small.state.engine.dispose()
    assert [r["id"] for r in body["rigs"]] == ids[:2] and body["rigs_total"] == 3
    assert_problem(refused, 422, "baseline")


def test_the_comparison_as_csv_has_a_row_per_rig_and_units_in_headers(app, client):
    seed_demo(app.state.engine)
    ids = [r["id"] for r in client.get(f"/v1/clubs/{CLUB}/rigs").json()["items"]]
    response = client.get(f"/v1/clubs/{CLUB}/comparison", params={"baseline": ids[1]},
                          headers={"Accept": "text/csv;q=1, application/json;q=0.5"})
    table = rows(response)
    assert [int(r["rig_id"]) for r in table] == ids
    assert [r["baseline"] for r in table] == ["true" if i == 1 else "false" for i in range(len(ids))]
    assert float(table[1]["light_grasp.area_ratio"]) == 1.0
    assert "light_grasp.clear_area_mm2 [mm²]" in table[0]
    assert "kestrel-ridge-astro-comparison.csv" in response.headers["content-disposition"]


def test_the_comparison_of_an_unknown_club_is_404(client):
    assert_problem(client.get("/v1/clubs/nobody-here/comparison"), 404)


# --- CORS -----------------------------------------------------------------------------------------

CLUB_SITE = "https://www.lakeside-astro.example"


@pytest.fixture
def cors_client(app, settings):  # app: the schema is migrated on both backends
    app = create_app(settings.model_copy(update={"cors_origins": [CLUB_SITE]}))
    with TestClient(app) as client:
        yield client
    app.state.engine.dispose()


def test_a_listed_origin_may_read_the_club_views(cors_client, make_account):
    response = cors_client.get("/v1/clubs", headers={"Origin": CLUB_SITE})
    assert response.status_code == 200
    assert response.headers["access-control-allow-origin"] == CLUB_SITE
    # Fetch standard (WHATWG), CORS protocol: a preflight for a GET with an Accept of text/csv.
    preflight = cors_client.options("/v1/clubs/lakeside-astro/comparison", headers={
        "Origin": CLUB_SITE, "Access-Control-Request-Method": "GET", "Access-Control-Request-Headers": "accept",
    })
    assert preflight.status_code == 200
    assert preflight.headers["access-control-allow-origin"] == CLUB_SITE
    assert "GET" in preflight.headers["access-control-allow-methods"]


def test_an_unlisted_origin_is_refused(cors_client):
    other = "https://elsewhere.example"
    response = cors_client.get("/v1/clubs", headers={"Origin": other})
    assert "access-control-allow-origin" not in response.headers
    preflight = cors_client.options("/v1/clubs", headers={"Origin": other, "Access-Control-Request-Method": "GET"})
    assert preflight.status_code == 400 and "access-control-allow-origin" not in preflight.headers


def test_no_origin_is_allowed_unless_configured(client):
    response = client.get("/v1/clubs", headers={"Origin": CLUB_SITE})
    assert "access-control-allow-origin" not in response.headers
    preflight = client.options("/v1/clubs", headers={"Origin": CLUB_SITE, "Access-Control-Request-Method": "GET"})
    assert "access-control-allow-origin" not in preflight.headers
