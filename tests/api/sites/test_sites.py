"""api/sites: stored observing sites, the site of a comparison or evaluation, a club's default site."""

from __future__ import annotations

import csv
import io

import pytest
from rigbench_testing import INLINE_RIG, assert_problem

SUBURBAN = {"name": "suburban field", "latitude_deg": 51.5, "elevation_m": 80, "seeing_fwhm_arcsec": 3.0,
            "sky_brightness_mag_arcsec2": 19.5, "night_temperature_c": 6.0, "relative_humidity_percent": 80}


def store_site(client, account, **extra):
    response = client.post("/v1/sites", json={**SUBURBAN, **extra}, headers=account.headers)
    assert response.status_code == 201, response.text
    return response.json()


def test_a_site_is_stored_read_listed_changed_and_deleted(client, alice):
    site = store_site(client, alice)
    assert site["owner"] == "alice" and site["visibility"] == "private" and site["version"] == 1
    assert client.get(f"/v1/sites/{site['id']}", headers=alice.headers).json()["seeing_fwhm_arcsec"] == 3.0
    assert client.get("/v1/sites", headers=alice.headers).json()["total"] == 1
    patched = client.patch(f"/v1/sites/{site['id']}", json={"seeing_fwhm_arcsec": 2.5}, headers=alice.headers)
    assert patched.status_code == 200 and patched.json()["version"] == 2
    assert client.delete(f"/v1/sites/{site['id']}", headers=alice.headers).status_code == 204


def test_a_private_site_is_hidden_from_others(client, alice, bob):
    site = store_site(client, alice)
    assert client.get(f"/v1/sites/{site['id']}", headers=bob.headers).status_code == 404
    assert_problem(client.patch(f"/v1/sites/{site['id']}", json={"name": "x"}, headers=bob.headers), 404)


@pytest.mark.parametrize("latitude", [90.001, -91, 1e6])
def test_a_latitude_beyond_90_degrees_is_refused_by_name(client, alice, latitude):
    response = client.post("/v1/sites", json={**SUBURBAN, "latitude_deg": latitude}, headers=alice.headers)
    assert_problem(response, 422, "latitude_deg")


@pytest.mark.parametrize("field, value", [("seeing_fwhm_arcsec", 0), ("relative_humidity_percent", 120),
                                          ("sky_brightness_mag_arcsec2", 40), ("night_temperature_c", -80)])
def test_conditions_out_of_range_are_refused_by_name(client, alice, field, value):
    assert_problem(client.post("/v1/sites", json={**SUBURBAN, field: value}, headers=alice.headers), 422, field)


def test_an_inline_site_fills_every_matching_param_and_explicit_params_win(client):
    response = client.post("/v1/comparisons", json={
        "rigs": [INLINE_RIG], "calculators": ["sampling", "guiding", "integration_time", "resolution", "dew"],
        "site": SUBURBAN, "params": {"guiding": {"seeing_fwhm_arcsec": 1.5}},
    })
    assert response.status_code == 200, response.text
    site = response.json()["site"]
    assert site["id"] is None and site["name"] == "suburban field"
    assert site["filled"]["sampling"] == {"seeing_fwhm_arcsec": 3.0}
    assert site["filled"]["integration_time"] == {"sky_brightness_mag_arcsec2": 19.5}
    assert site["filled"]["dew"] == {"ambient_temperature_c": 6.0, "relative_humidity_percent": 80}
    assert "guiding" not in site["filled"]  # the request stated its seeing: explicit params win
    results = response.json()["results"]
    pixel = results["sampling"]["outputs"]["pixel_scale_arcsec"]["values"][0]
    assert results["sampling"]["outputs"]["pixels_per_fwhm"]["values"][0] == pytest.approx(3.0 / pixel)
    # The same comparison without the site but with the params stated gives the same figures.
    same = client.post("/v1/comparisons", json={
        "rigs": [INLINE_RIG], "calculators": ["sampling", "dew"],
        "params": {"sampling": {"seeing_fwhm_arcsec": 3.0},
                   "dew": {"ambient_temperature_c": 6.0, "relative_humidity_percent": 80}},
    }).json()["results"]
    assert same["dew"]["outputs"] == results["dew"]["outputs"]
    assert same["sampling"]["outputs"] == results["sampling"]["outputs"]


def test_a_stored_site_by_id_and_one_you_cannot_read(client, alice, bob):
    site = store_site(client, alice)
    body = {"rigs": [INLINE_RIG], "calculators": ["sampling"], "site": {"id": site["id"]}}
    mine = client.post("/v1/comparisons", json=body, headers=alice.headers)
    assert mine.status_code == 200 and mine.json()["site"]["id"] == site["id"]
    assert_problem(client.post("/v1/comparisons", json=body, headers=bob.headers), 422, "site.id")
    assert_problem(client.post("/v1/comparisons", json=body), 422, "site.id")


def test_an_inline_site_with_a_bad_latitude_in_a_comparison_names_the_field(client):
    response = client.post("/v1/comparisons", json={"rigs": [INLINE_RIG], "site": {**SUBURBAN, "latitude_deg": 95}})
    body = assert_problem(response, 422)
    assert any(e["field"].endswith("latitude_deg") for e in body["errors"])


def test_an_evaluation_takes_a_site_for_the_calculators_it_uses(client):
    response = client.post("/v1/evaluations", json={
        "telescopes": [INLINE_RIG["telescope"]], "cameras": [INLINE_RIG["camera"]],
        "objectives": {"sampling.pixels_per_fwhm": "max"}, "site": SUBURBAN,
    })
    assert response.status_code == 200, response.text
    body = response.json()
    assert body["site"]["filled"] == {"sampling": {"seeing_fwhm_arcsec": 3.0}}
    pixel = 206.26480624709637 * 3.8 / 1000  # 206 264.8″ per radian × p/f
    assert body["top"][0]["values"]["sampling.pixels_per_fwhm"] == pytest.approx(3.0 / pixel, rel=1e-9)


# --- a club's default site ------------------------------------------------------------------------

@pytest.fixture
def club(make_account):
    return make_account("ridge-club", kind="club")


def club_rig(client, club):
    response = client.post("/v1/rigs", json={**INLINE_RIG, "visibility": "public"}, headers=club.headers)
    assert response.status_code == 201, response.text


def test_a_default_site_must_be_public_and_can_be_cleared(client, club):
    private = store_site(client, club)
    assert_problem(client.put("/v1/accounts/me/default-site", json={"id": private["id"]}, headers=club.headers), 422, "id")
    public = store_site(client, club, visibility="public")
    answer = client.put("/v1/accounts/me/default-site", json={"id": public["id"]}, headers=club.headers)
    assert answer.status_code == 200 and answer.json()["site"]["id"] == public["id"]
    assert client.get("/v1/accounts/me", headers=club.headers).json()["default_site_id"] == public["id"]
    assert client.get("/v1/clubs/ridge-club").json()["default_site_id"] == public["id"]
    assert client.delete("/v1/accounts/me/default-site", headers=club.headers).status_code == 204
    assert client.get("/v1/accounts/me/default-site", headers=club.headers).json() == {"site": None}


def test_deleting_the_default_site_clears_it(client, club):
    public = store_site(client, club, visibility="public")
    client.put("/v1/accounts/me/default-site", json={"id": public["id"]}, headers=club.headers)
    assert client.delete(f"/v1/sites/{public['id']}", headers=club.headers).status_code == 204
    assert client.get("/v1/clubs/ridge-club").json()["default_site_id"] is None


def test_the_club_comparison_says_its_site_and_honours_overrides(client, club):
    club_rig(client, club)
    site = store_site(client, club, visibility="public")
    client.put("/v1/accounts/me/default-site", json={"id": site["id"]}, headers=club.headers)
    plain = client.get("/v1/clubs/ridge-club/comparison").json()
    assert plain["site"]["id"] == site["id"] and plain["site"]["values"]["seeing_fwhm_arcsec"] == 3.0
    assert plain["site"]["filled"]["sampling"] == {"seeing_fwhm_arcsec": 3.0}
    override = client.get("/v1/clubs/ridge-club/comparison?seeing_fwhm_arcsec=1.2").json()
    assert override["site"]["values"]["seeing_fwhm_arcsec"] == 1.2
    assert override["site"]["values"]["sky_brightness_mag_arcsec2"] == 19.5  # the rest from the site
    assert "override" in override["site"]["name"]
    ppf = override["results"]["sampling"]["outputs"]["pixels_per_fwhm"]["values"][0]
    assert ppf == pytest.approx(plain["results"]["sampling"]["outputs"]["pixels_per_fwhm"]["values"][0] * 1.2 / 3.0)


def test_without_a_site_the_club_comparison_says_so_and_a_query_still_overrides(client, club):
    club_rig(client, club)
    assert client.get("/v1/clubs/ridge-club/comparison").json()["site"] is None
    answer = client.get("/v1/clubs/ridge-club/comparison?seeing_fwhm_arcsec=3").json()
    assert answer["site"]["values"] == {"seeing_fwhm_arcsec": 3.0}


@pytest.mark.parametrize("query, field", [("seeing=3", "seeing"), ("seeing_fwhm_arcsec=99", "seeing_fwhm_arcsec"),
                                          ("latitude_deg=91", "latitude_deg")])
def test_an_unknown_or_bad_query_is_refused_never_ignored(client, club, query, field):
    club_rig(client, club)
    body = assert_problem(client.get(f"/v1/clubs/ridge-club/comparison?{query}"), 422, field)
    if field == "seeing":
        assert "seeing_fwhm_arcsec" in body["detail"]  # the message lists what the view takes


def test_the_club_page_says_which_site_and_values_it_uses(client, club):
    club_rig(client, club)
    site = store_site(client, club, visibility="public")
    client.put("/v1/accounts/me/default-site", json={"id": site["id"]}, headers=club.headers)
    page = client.get("/clubs/ridge-club").text
    assert "suburban field" in page and "seeing (FWHM) 3.0″" in page
    page = client.get("/clubs/ridge-club?seeing_fwhm_arcsec=2.2").text
    assert "seeing (FWHM) 2.2″" in page
    refused = client.get("/clubs/ridge-club?seeing=3", headers={"Accept": "text/html"})
    assert refused.status_code == 422 and "seeing_fwhm_arcsec" in refused.text
    # The page's form sends empty fields when nothing is typed: not an override.
    assert client.get("/clubs/ridge-club?seeing_fwhm_arcsec=&sky_brightness_mag_arcsec2=").status_code == 200


def test_csv_exports_carry_the_cautions_in_a_final_block_a_spreadsheet_reader_opens(client, club):
    club_rig(client, club)
    text = client.get("/v1/clubs/ridge-club/comparison?format=csv").text
    rows = list(csv.reader(io.StringIO(text)))
    header, data = rows[0], rows[1]
    assert header[-1] == "null_reasons" and len(data) == len(header)
    blank = rows.index([])
    block = rows[blank + 1:]
    assert block and all(row[0].startswith("# caution: ") and len(row) == 2 for row in block)
    assert any("Sun" in row[1] for row in block)
    pandas = pytest.importorskip("pandas")
    table = pandas.read_csv(io.StringIO(text), comment="#")
    assert list(table.columns) == header and len(table) == 1
    whole = pandas.read_csv(io.StringIO(text))  # without comment handling the block is extra rows
    assert len(whole) == 1 + len(block)
