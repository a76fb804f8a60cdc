"""Each club rig's compatibility verdict in words (api/clubs/fit.py), on the club page, in the rigs CSV
and in the JSON rig listing (`fit`).

The expected words follow from the stated distances by the arithmetic written beside each case
(backfocus bookkeeping of calculators/builtin/compatibility.py: spacer = backfocus + Σ t·(1 − 1/n)
− lengths behind − flange; the plate shift t·(1 − 1/n) from Smith, *Modern Optical Engineering*,
4th ed., 2008, §2.6 — from memory). Lengths are shown to 0.1 mm, the precision a spacer is bought to.
"""

from __future__ import annotations

import csv
import io

import pytest
from fastapi.testclient import TestClient
from html_tables import table_by_id
from rigbench_testing import CAMERA, TELESCOPE
from sqlalchemy import update
from sqlmodel import Session

from api.app import create_app
from api.clubs import fit
from api.demo import CLUB, seed_demo
from api.storage.models import RigRow
from plugins.results import CalculatorResult, OutputValues

BROWSER = {"Accept": "text/html"}


def page_tables(client, club):
    response = client.get(f"/clubs/{club}", headers=BROWSER)
    assert response.status_code == 200, response.text
    return table_by_id(response.text, "comparison-table"), table_by_id(response.text, "rigs-table")


def rig_fits(table) -> dict[str, str]:
    """Rig name -> the rigs table's Fit cell."""
    column = table.headers().index("Fit")
    return {cells[0].text: cells[column].text for _attrs, cells in table.body_rows()}


def verdict_cells(table) -> dict[str, tuple[str, str]]:
    """Rig name -> (data-value, text) of the comparison table's verdict cell."""
    found = {}
    for _attrs, cells in table.body_rows():
        name = cells[0].text.removesuffix(" caution").removesuffix(" baseline")
        [cell] = [c for c in cells if c.attrs.get("data-output") == "compatibility.verdict"]
        found[name] = (cell.attrs["data-value"], cell.text)
    return found


def csv_fits(client, club) -> dict[str, str]:
    response = client.get(f"/v1/clubs/{club}/rigs", params={"format": "csv"})
    assert response.status_code == 200, response.text
    return {row["name"]: row["fit"] for row in csv.DictReader(io.StringIO(response.text))}


def json_fits(client, club) -> dict[str, str | None]:
    response = client.get(f"/v1/clubs/{club}/rigs")
    assert response.status_code == 200, response.text
    return {item["name"]: item["fit"] for item in response.json()["items"]}


# Demo rigs (api/demo.py, invented values), worked by hand:
DEMO = {
    # coma corrector backfocus 55 + 2 mm filter at n = 1.46: 2·(1 − 1/1.46) = 0.630; behind it the
    # wheel 20 + spacer 15, and the camera's flange 17.5: 55.630 − 52.5 = 3.13 mm still to add.
    "Big newtonian imager": ("fits with spacers", "fits with 3.1 mm of spacers"),
    # reducer-flattener backfocus 55 − spacer 37.5 − flange 17.5 = 0; circle 36·0.8 = 28.8 mm over a
    # 27.4 mm diagonal.
    "Wide-field travel refractor": ("fits", "fits"),
    # 30 mm circle of the telescope · 0.63 = 18.9 mm; 3.8 µm · √(6000² + 4000²) = 27.40 mm diagonal.
    "Reduced SCT for galaxies": ("vignettes", "vignettes: image circle 18.9 mm < sensor diagonal 27.4 mm"),
    "300 mm f/4 newtonian + 25 mm eyepiece": ("fits", "fits"),  # 30 mm circle over a 21.5 mm stop
    # an 18 mm illuminated field over the eyepiece's 21.5 mm field stop
    "200 mm f/6 dobsonian tube + 25 mm eyepiece": (
        "vignettes", "vignettes: image circle 18 mm < eyepiece field stop 21.5 mm"),
    "200 mm f/6 dobsonian tube + 9 mm eyepiece": ("fits", "fits"),  # 18 mm over 12.5 mm
}


def test_the_demo_rigs_say_their_verdicts_in_words(app, client):
    seed_demo(app.state.engine)
    comparison, rigs = page_tables(client, CLUB)
    cells, words, sheet = verdict_cells(comparison), rig_fits(rigs), csv_fits(client, CLUB)
    listed = json_fits(client, CLUB)
    api = client.get(f"/v1/clubs/{CLUB}/comparison").json()
    verdicts = dict(zip([r["name"] for r in api["rigs"]],
                        api["results"]["compatibility"]["outputs"]["verdict"]["values"]))
    for name, (verdict, text) in DEMO.items():
        assert verdicts[name] == verdict and cells[name] == (verdict, text)
        assert words[name] == sheet[name] == listed[name] == text
    # The demo shows the kinds of answer a club sees: one that fits, one needing spacers, visual rigs.
    assert {"fits", "fits with spacers", "vignettes"} <= set(verdicts.values())
    assert len(sheet) == len(api["rigs"]) and all(sheet.values())


def element(client, club, **body):
    response = client.post("/v1/train-elements", json={**body, "visibility": "public"}, headers=club.headers)
    assert response.status_code == 201, response.text
    return {"id": response.json()["id"]}


# Rigs whose verdicts say they cannot be built, each with the words the page shows (worked by hand).
REFRACTOR = {"name": "80 mm f/6 refractor", "design": "refractor", "aperture_mm": 80, "focal_length_mm": 480}
FLANGED = {**CAMERA, "flange_to_sensor_mm": 17.5}
IMPOSSIBLE = [
    # 55 backfocus − 45 spacer − 17.5 flange = −7.5 mm
    ("too long", REFRACTOR, [{"name": "reducer 0.8x", "kind": "reducer", "factor": 0.8, "backfocus_mm": 55},
                             {"name": "spacer 45 mm", "kind": "spacer", "optical_length_mm": 45}],
     "too long: 7.5 mm more than the backfocus allows"),
    ("wrong design", TELESCOPE, [{"name": "sct reducer 0.63x", "kind": "reducer", "factor": 0.63,
                                  "designs": ["schmidt-cassegrain"]}],
     "wrong design: sct reducer 0.63x is made for schmidt-cassegrain, not newtonian"),
    # 1000 mm / 200 mm = f/5, above the corrector's 3–4.5
    ("focal ratio out of range", TELESCOPE, [{"name": "fast corrector", "kind": "corrector",
                                              "focal_ratio_min": 3, "focal_ratio_max": 4.5}],
     "focal ratio out of range: f/5 is outside 3–4.5, the range of fast corrector"),
    # 20 mm of wheel + 17.5 mm flange = 37.5 mm needed from 20 mm of outward travel: 17.5 short
    ("cannot reach focus", {**TELESCOPE, "outward_focus_travel_mm": 20},
     [{"name": "wheel", "kind": "filter-wheel", "optical_length_mm": 20}],
     "cannot reach focus: 17.5 mm more outward focus travel needed"),
    ("not stated", TELESCOPE, [], "not checked: the image circle or backfocus is not stated"),
]


def test_a_rig_that_cannot_be_built_says_why_in_words(client, make_account):
    club = make_account("verdict-club", kind="club")
    for verdict, telescope, train, _text in IMPOSSIBLE:
        body = {"name": verdict, "telescope": telescope, "camera": FLANGED, "visibility": "public",
                "train": [element(client, club, **e) for e in train]}
        assert client.post("/v1/rigs", json=body, headers=club.headers).status_code == 201
    comparison, rigs = page_tables(client, "verdict-club")
    cells, words, sheet = verdict_cells(comparison), rig_fits(rigs), csv_fits(client, "verdict-club")
    listed = json_fits(client, "verdict-club")
    for verdict, _telescope, _train, text in IMPOSSIBLE:
        assert cells[verdict] == (verdict, text)
        assert words[verdict] == sheet[verdict] == listed[verdict] == text


@pytest.fixture
def without_compatibility(settings, app):
    """The same database served by an app that does not load the compatibility calculator."""
    other = create_app(settings.model_copy(update={"disabled_plugins": [fit.CALCULATOR]}))
    with TestClient(other) as client:
        yield client
    other.state.engine.dispose()


def test_without_the_calculator_there_is_no_verdict_but_a_dash(app, without_compatibility):
    seed_demo(app.state.engine)
    comparison, rigs = page_tables(without_compatibility, CLUB)
    assert set(rig_fits(rigs).values()) == {"\u2014"}
    assert not any(c.attrs.get("data-output") == "compatibility.verdict"
                   for _a, cells in comparison.body_rows() for c in cells)
    sheet = csv_fits(without_compatibility, CLUB)
    assert len(sheet) == 7 and set(sheet.values()) == {""}
    listed = json_fits(without_compatibility, CLUB)
    assert len(listed) == 7 and set(listed.values()) == {None}


def test_a_failed_or_null_verdict_gives_no_words():
    failed = CalculatorResult(version="1", outputs={}, error="no result")
    assert fit.from_result(failed, [None, None]) == [None, None]
    assert fit.from_result(None, [None]) == [None]
    nulls = CalculatorResult(version="1", outputs={
        "verdict": OutputValues(unit="", values=[None, "fits"]),
        "reasons": OutputValues(unit="", values=[None, ""])})
    assert fit.from_result(nulls, [None, None]) == [None, "fits"]


def test_without_the_figures_behind_it_the_verdict_keeps_the_calculators_reason():
    # A verdict whose figure is missing (or a rig not at hand) falls back to the calculator's words.
    assert fit.describe({"verdict": "fits with spacers", "spacer_mm": None,
                         "reasons": "spacers are needed to reach the backfocus"}) == (
        "fits with spacers: spacers are needed to reach the backfocus")
    assert fit.describe({"verdict": "wrong design", "reasons": "an element is not made for this "
                         "telescope design; the image circle is smaller than the sensor diagonal"}) == (
        "wrong design: an element is not made for this telescope design")
    assert fit.describe({"verdict": "vignettes", "image_circle_mm": 20, "image_circle_to_diagonal": 0.5}) == (
        "vignettes: image circle 20 mm < sensor diagonal 40 mm")
    # A stated tolerance of 0 can leave a shim's worth to add: it never reads "0 mm".
    assert fit.describe({"verdict": "fits with spacers", "spacer_mm": 0.04}) == "fits with 0.04 mm of spacers"
    assert fit.describe({"verdict": "too long", "spacer_mm": -0.096}) == "too long: 0.1 mm more than the backfocus allows"


def test_a_club_without_rigs_has_a_rigs_csv_with_the_fit_column_and_no_rows(client, make_account):
    make_account("empty-club", kind="club")
    response = client.get("/v1/clubs/empty-club/rigs", params={"format": "csv"})
    assert response.status_code == 200
    header = next(csv.reader(io.StringIO(response.text)))
    assert header[-1] == "fit" and csv_fits(client, "empty-club") == {}


def test_a_club_rig_stored_invalid_is_listed_with_no_verdict(client, app, make_account):
    club = make_account("mended-club", kind="club")
    made = {}
    for name in ("sound", "broken"):
        body = {"name": name, "telescope": TELESCOPE, "camera": FLANGED, "visibility": "public"}
        answer = client.post("/v1/rigs", json=body, headers=club.headers)
        assert answer.status_code == 201, answer.text
        made[name] = answer.json()["id"]
    # An obstruction as wide as the aperture, written straight into the database (as an old
    # migration or a manual edit would): the rig is read as invalid and gets no verdict.
    with Session(app.state.engine) as session:
        row = session.get(RigRow, made["broken"])
        spec = {**row.spec, "telescope": {**TELESCOPE, "obstruction_mm": TELESCOPE["aperture_mm"]}}
        session.execute(update(RigRow).where(RigRow.id == row.id).values(spec=spec))
        session.commit()
    listed = client.get("/v1/clubs/mended-club/rigs").json()["items"]
    by_name = {item["name"]: item for item in listed}
    assert by_name["broken"]["invalid"] is True and by_name["broken"]["fit"] is None
    assert by_name["sound"]["invalid"] is False
    assert by_name["sound"]["fit"] == "not checked: the image circle or backfocus is not stated"
