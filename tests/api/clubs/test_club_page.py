"""`/clubs/{name}`: the server-rendered club page, its SVG pictures and files (api/clubs/page.py)."""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

import pytest
from html_tables import elements, table_by_id
from rigbench_testing import CAMERA, TELESCOPE, assert_problem
from sqlmodel import Session

from api.accounts.keys import create_account
from api.demo import CLUB, seed_demo
from api.storage.models import AccountKind

SVG = "{http://www.w3.org/2000/svg}"
BROWSER = {"Accept": "text/html,application/xhtml+xml,application/xml;q=0.9,*/*;q=0.8"}


@pytest.fixture
def demo(app):
    return seed_demo(app.state.engine)


def page(client, name=CLUB, **params):
    response = client.get(f"/clubs/{name}", params=params, headers=BROWSER)
    assert response.status_code == 200, response.text
    assert response.headers["content-type"].startswith("text/html")
    return response


def test_the_page_needs_no_script_and_says_so_in_its_policy(client, demo):
    response = page(client)
    assert "<script" not in response.text.lower()
    policy = response.headers["content-security-policy"]
    # CSP Level 3 (W3C): default-src 'none' leaves script-src unset, so no script may run at all.
    assert "default-src 'none'" in policy and "script-src" not in policy
    assert "frame-ancestors *" in policy  # club sites may embed it


def test_the_comparison_table_rows_are_the_apis_comparison(client, demo):
    api = client.get(f"/v1/clubs/{CLUB}/comparison").json()
    table = table_by_id(page(client).text, "comparison-table")
    body = table.body_rows()
    assert [int(attrs["data-rig-id"]) for attrs, _ in body] == [r["id"] for r in api["rigs"]]
    assert [cells[0].text.removesuffix(" caution").removesuffix(" baseline") for _, cells in body] == [
        r["name"] for r in api["rigs"]]
    assert [attrs.get("class") == "baseline" for attrs, _ in body] == [True] + [False] * (len(body) - 1)
    for i, (_attrs, cells) in enumerate(body):
        for cell in cells[1:]:
            calculator, output = cell.attrs["data-output"].split(".")
            value = api["results"][calculator]["outputs"][output]["values"][i]
            if value is None:  # a visual rig's imaging figures (and the other way round)
                assert (cell.attrs["data-value"], cell.text) == ("null", "\u2014")
            elif cell.attrs["data-output"] == "compatibility.verdict":
                # Said in words with its figures (tests/api/clubs/test_fit.py); the key is kept.
                assert cell.attrs["data-value"] == value and cell.text
            elif isinstance(value, str):
                assert cell.attrs["data-value"] == value == cell.text
            else:
                assert float(cell.attrs["data-value"]) == value
                # The text is the value to three or four significant figures.
                assert float(cell.text) == pytest.approx(value, rel=5e-3)


def test_every_header_of_a_dimensioned_figure_names_its_unit(client, demo):
    headers = table_by_id(page(client).text, "comparison-table").headers()
    for wanted in ("Focal length [mm]", "Clear area [mm²]", "Light grasp [× baseline]", "Pixel scale [arcsec]",
                   "Field width [arcmin]", "Payload [kg]", "Price [EUR]", "Time per pixel [× baseline]"):
        assert wanted in headers, headers


def test_every_figure_is_headed_by_its_label_and_unit_with_its_key_kept(client, demo):
    html = page(client).text
    api = client.get("/v1/calculators").json()["items"]
    labels = {f"{c['name']}.{o['name']}": o["label"] for c in api for o in c["outputs"]}
    rows = [r for r in elements(html, "tr") if r.get("data-output")]
    assert {r["data-output"] for r in rows} == set(labels)
    headings = [r for r in elements(html, "th") if r.get("scope") == "row" and r.get("title") in labels]
    assert len(headings) == len(labels)
    # Units as printed, never pint's spelling; no raw float noise in any cell.
    text = html.split("Every figure from every calculator")[1].split("</details>")[0]
    assert "Étendue [m²·deg²]" in text and "Price per aperture area [EUR/cm²]" in text
    assert "mm^2" not in text and "_mm [" not in text
    shown = re.sub(r'data-value="[^"]*"', "", text)
    assert "9999" not in shown and "0000" not in shown  # sensible digits in the text
    # Counts are whole numbers.
    spikes = table_cells(html, "diffraction_spikes.spike_count")
    assert spikes and all(t in ("—",) or t.isdigit() for t in spikes)


def table_cells(html: str, key: str) -> list[str]:
    return re.findall(rf'<td class="[a-z]+" data-output="{re.escape(key)}" data-value="[^"]*">([^<]*)</td>', html)


def test_the_diagrams_heading_cannot_be_read_as_photographs(client, demo):
    html = page(client).text
    assert ">Diagrams</h2>" in html and ">Pictures<" not in html


def test_the_baseline_and_target_come_from_the_form(client, demo):
    ids = [r["id"] for r in client.get(f"/v1/clubs/{CLUB}/rigs").json()["items"]]
    html = page(client, baseline=str(ids[2]), target="NGC 891").text
    body = table_by_id(html, "comparison-table").body_rows()
    assert [attrs.get("class") == "baseline" for attrs, _ in body] == [i == 2 for i in range(len(ids))]
    selected = [o for o in elements(html, "option") if "selected" in o]
    assert [o["value"] for o in selected] == [str(ids[2])]
    assert [i["value"] for i in elements(html, "input") if i.get("name") == "target"] == ["NGC 891"]
    assert "Fields of view over NGC 891" in html


def test_the_pictures_are_accessible_svg(client, demo):
    html = page(client).text
    svgs = [a for a in elements(html, "svg")]
    assert len(svgs) == 2 and all(a["role"] == "img" for a in svgs)
    ids = {a.get("id") for a in elements(html, "title")} | {a.get("id") for a in elements(html, "desc")}
    for svg in svgs:
        assert set(svg["aria-labelledby"].split()) <= ids
    assert "OpenNGC" in html and "CC BY-SA 4.0" in html


def test_equipment_rigs_cautions_and_the_embed_snippet_are_shown(client, demo):
    html = page(client).text
    for name in ("300 mm f/4 newtonian", "focal reducer 0.63x", "cooled mono camera, 3.8 um pixels",
                 "heavy german-equatorial mount, 50 kg", "Reduced SCT for galaxies"):
        assert name in html
    assert "full-aperture solar filter" in html and "counterweight" in html
    assert '&lt;iframe src="http://testserver/clubs/kestrel-ridge-astro?embed=1"' in html
    for table in ("rigs-caption", "telescopes-caption", "cameras-caption"):
        assert f'id="{table}"' in html
    assert "/v1/clubs/kestrel-ridge-astro/comparison?baseline=" in html and "format=csv" in html


def test_the_embedded_look_drops_navigation_and_the_snippet(client, demo):
    html = page(client, embed="1").text
    assert "<nav" not in html and 'id="embed"' not in html and 'class="embedded"' in html
    assert any(i.get("name") == "embed" and i.get("value") == "1" for i in elements(html, "input"))


def test_club_text_is_escaped_and_odd_contact_links_are_not_linked(app, client):
    with Session(app.state.engine) as session:
        create_account(session, "odd-club", AccountKind.club, display_name="<b>Stars & Co</b>",
                       location="<i>here</i>", contact_url="javascript:alert(1)")
    from sqlmodel import select

    from api.accounts.keys import add_key
    from api.storage.models import Account

    with Session(app.state.engine) as session:
        account = session.exec(select(Account).where(Account.name == "odd-club")).one()
        key = add_key(session, account)
        session.commit()
    headers = {"Authorization": f"Bearer {key}"}
    client.post("/v1/rigs", json={"name": "<script>x</script> & rig", "telescope": TELESCOPE, "camera": CAMERA,
                                  "visibility": "public"}, headers=headers)
    html = page(client, "odd-club").text
    assert "<b>Stars" not in html and "&lt;b&gt;Stars &amp; Co&lt;/b&gt;" in html
    assert "<i>here" not in html and "javascript:" not in html
    assert "<script>x" not in html and "&lt;script&gt;x&lt;/script&gt; &amp; rig" in html


def test_a_club_without_rigs_has_a_page_without_pictures(client, make_account):
    make_account("empty-club", kind="club")
    html = page(client, "empty-club").text
    assert "no public rigs yet" in html and "<svg" not in html


@pytest.mark.parametrize("path, params, status, field", [
    ("/clubs/nobody-here", {}, 404, None),
    ("/clubs/Not_A_Handle", {}, 404, None),
    (f"/clubs/{CLUB}", {"baseline": "abc"}, 422, "baseline"),
    (f"/clubs/{CLUB}", {"baseline": "999999"}, 422, "baseline"),
    (f"/clubs/{CLUB}", {"target": "NGC 8911"}, 422, "target"),
    (f"/clubs/{CLUB}/fields.svg", {"target": "nowhere at all"}, 422, "target"),
    (f"/clubs/{CLUB}/bars.svg", {"baseline": "-1"}, 422, "baseline"),
])
def test_bad_page_requests_get_a_page_for_browsers_and_a_problem_for_programs(client, demo, path, params, status,
                                                                               field):
    shown = client.get(path, params=params, headers=BROWSER)
    assert shown.status_code == status and shown.headers["content-type"].startswith("text/html")
    assert "Traceback" not in shown.text and "<script" not in shown.text
    if field:
        assert f"<strong>{field}</strong>" in shown.text
    problem = client.get(path, params=params, headers={"Accept": "application/problem+json"})
    assert_problem(problem, status, *([field] if field else []))


def test_a_person_has_no_club_page(client, alice):
    assert client.get("/clubs/alice", headers=BROWSER).status_code == 404


@pytest.mark.parametrize("picture", ["fields.svg", "bars.svg"])
def test_the_pictures_are_served_as_svg_files(client, demo, picture):
    response = client.get(f"/clubs/{CLUB}/{picture}", params={"target": "M 31"})
    assert response.status_code == 200 and response.headers["content-type"].startswith("image/svg+xml")
    assert response.headers["content-security-policy"] == "default-src 'none'"
    root = ET.fromstring(response.content)  # well-formed XML
    assert root.tag == f"{SVG}svg" and root.get("role") == "img"
    assert root.find(f"{SVG}title").text and root.find(f"{SVG}desc").text


def test_a_club_without_rigs_has_no_pictures_to_serve(client, make_account):
    make_account("empty-club", kind="club")
    assert_problem(client.get("/clubs/empty-club/fields.svg", headers={"Accept": "application/json"}), 404)


def test_the_page_files_are_served_and_nothing_else(client):
    css = client.get("/static/club.css")
    assert css.status_code == 200 and css.headers["content-type"].startswith("text/css")
    icon = client.get("/static/club-icon.svg")
    assert icon.status_code == 200 and icon.headers["content-type"].startswith("image/svg+xml")
    assert_problem(client.get("/static/app.py"), 404)
    assert_problem(client.get("/static/%2e%2e%2fapp.py"), 404)


def test_the_page_is_not_in_the_api_document(client):
    paths = client.get("/openapi.json").json()["paths"]
    assert not any(path.startswith(("/clubs", "/static")) for path in paths)


def test_links_in_the_embedded_look_open_outside_the_frame(client, demo):
    framed = [a for a in elements(page(client, embed="1").text, "a")]
    assert framed and all(a.get("target") == "_blank" for a in framed), framed
    assert not any(a.get("target") for a in elements(page(client).text, "a"))
