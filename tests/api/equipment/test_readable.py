"""A stored item whose spec no longer validates is read, listed, skipped in comparisons and repaired
(api/equipment/readable.py). The specs are broken the way it happens in practice: by writing the
stored JSON directly, as an old migration or a manual edit would."""

from __future__ import annotations

from sqlalchemy import update
from sqlmodel import Session

from api.storage.models import RigRow, TelescopeRow
from rigbench_testing import CAMERA, TELESCOPE, assert_problem


def store_spec(app, table, item_id: int, **changes) -> None:
    with Session(app.state.engine) as session:
        row = session.get(table, item_id)
        spec = {**row.spec, **changes}
        session.execute(update(table).where(table.id == item_id).values(spec=spec))
        session.commit()


def make_rig(client, alice, name="rig", **slots):
    body = {"name": name, "telescope": TELESCOPE, "camera": CAMERA, **slots}
    answer = client.post("/v1/rigs", json=body, headers=alice.headers)
    assert answer.status_code == 201, answer.text
    return answer.json()


def test_a_rig_whose_stored_spec_no_longer_validates_is_read_and_listed_as_invalid(client, app, alice):
    good = make_rig(client, alice, "good")
    bad = make_rig(client, alice, "bad")
    # An obstruction as wide as the aperture: the schema refuses it, the database holds it.
    store_spec(app, RigRow, bad["id"], telescope={**TELESCOPE, "obstruction_mm": 250})

    read = client.get(f"/v1/rigs/{bad['id']}", headers=alice.headers)
    assert read.status_code == 200, read.text
    assert read.json()["invalid"] is True
    assert read.json()["telescope"]["obstruction_mm"] == 250  # shown as stored, to be repaired
    assert {r["field"] for r in read.json()["invalid_reasons"]} >= {"telescope.obstruction_mm"}

    listed = client.get("/v1/rigs", headers=alice.headers)
    assert listed.status_code == 200, listed.text
    marks = {r["id"]: r["invalid"] for r in listed.json()["items"]}
    assert marks == {good["id"]: False, bad["id"]: True}


def test_a_comparison_skips_an_invalid_stored_rig_with_its_reasons(client, app, alice):
    good = make_rig(client, alice, "good")
    bad = make_rig(client, alice, "bad")
    store_spec(app, RigRow, bad["id"], telescope={**TELESCOPE, "obstruction_mm": 250})
    answer = client.post("/v1/comparisons", headers=alice.headers,
                         json={"rigs": [{"id": good["id"]}, {"id": bad["id"]}], "calculators": ["light_grasp"]})
    assert answer.status_code == 200, answer.text
    body = answer.json()
    assert [r["id"] for r in body["rigs"]] == [good["id"]]
    assert len(body["results"]["light_grasp"]["outputs"]["clear_area_mm2"]["values"]) == 1
    [skipped] = body["skipped"]
    assert skipped["index"] == 1 and skipped["id"] == bad["id"]
    assert any("obstruction_mm" in reason for reason in skipped["reasons"])


def test_an_invalid_stored_rig_cannot_be_the_baseline(client, app, alice):
    good = make_rig(client, alice, "good")
    bad = make_rig(client, alice, "bad")
    store_spec(app, RigRow, bad["id"], telescope={**TELESCOPE, "obstruction_mm": 250})
    answer = client.post("/v1/comparisons", headers=alice.headers,
                         json={"rigs": [{"id": good["id"]}, {"id": bad["id"]}], "baseline": 1})
    assert_problem(answer, 422, "rigs.1.id")


def test_patch_repairs_an_invalid_rig(client, app, alice):
    bad = make_rig(client, alice, "bad")
    store_spec(app, RigRow, bad["id"], telescope={**TELESCOPE, "obstruction_mm": 250})
    version = client.get(f"/v1/rigs/{bad['id']}", headers=alice.headers).json()["version"]
    fixed = client.patch(f"/v1/rigs/{bad['id']}", headers={**alice.headers, "If-Match": f'"{version}"'},
                         json={"telescope": TELESCOPE})
    assert fixed.status_code == 200, fixed.text
    assert fixed.json()["invalid"] is False and fixed.json()["invalid_reasons"] == []


def test_stored_equipment_that_no_longer_validates_is_read_and_makes_its_rigs_invalid(client, app, alice):
    scope = client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).json()
    rig = make_rig(client, alice, telescope={"id": scope["id"]})
    # f/0.3: below the physical minimum focal ratio the schema enforces.
    store_spec(app, TelescopeRow, scope["id"], focal_length_mm=60)
    read = client.get(f"/v1/telescopes/{scope['id']}", headers=alice.headers)
    assert read.status_code == 200 and read.json()["invalid"] is True
    assert [r["field"] for r in read.json()["invalid_reasons"]] == ["focal_length_mm"]
    rig_read = client.get(f"/v1/rigs/{rig['id']}", headers=alice.headers)
    assert rig_read.status_code == 200 and rig_read.json()["invalid"] is True
    assert client.get("/v1/telescopes", headers=alice.headers).status_code == 200
    # Repairing the telescope is not held up by the rig that its broken spec made invalid.
    fixed = client.patch(f"/v1/telescopes/{scope['id']}", headers=alice.headers, json={"focal_length_mm": 1000})
    assert fixed.status_code == 200, fixed.text
    assert client.get(f"/v1/rigs/{rig['id']}", headers=alice.headers).json()["invalid"] is False


def test_a_club_page_leaves_out_an_invalid_rig(client, app, make_account):
    club = make_account("lakeside-astro", kind="club")
    good = make_rig(client, club, "good rig", visibility="public")
    bad = make_rig(client, club, "bad rig", visibility="public")
    store_spec(app, RigRow, bad["id"], telescope={**TELESCOPE, "obstruction_mm": 250})
    page = client.get("/clubs/lakeside-astro")
    assert page.status_code == 200 and "good rig" in page.text and "bad rig" not in page.text
    compared = client.get("/v1/clubs/lakeside-astro/comparison")
    assert compared.status_code == 200, compared.text
    assert [r["id"] for r in compared.json()["rigs"]] == [good["id"]]
    assert [s["id"] for s in compared.json()["skipped"]] == [bad["id"]]
    assert client.get("/v1/clubs/lakeside-astro/rigs", params={"format": "csv"}).status_code == 200
