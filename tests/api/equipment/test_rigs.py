"""Rigs: slots inline or by id, the rules that tie rigs to stored equipment (api/equipment/rules.py)."""

from __future__ import annotations

import pytest
from rigbench_testing import BODIES, CAMERA, MODIFIER, TELESCOPE, assert_problem


def store(client, owner, kind, visibility="public", **changes):
    response = client.post(f"/v1/{kind}", json={**BODIES[kind], "visibility": visibility, **changes},
                           headers=owner.headers)
    assert response.status_code == 201, response.text
    return response.json()["id"]


def test_a_rig_mixes_stored_and_inline_slots_and_shows_them_resolved(client, alice):
    scope = store(client, alice, "telescopes")
    response = client.post("/v1/rigs", json={
        "name": "mixed", "telescope": {"id": scope}, "camera": CAMERA, "modifier": MODIFIER,
        "visibility": "public",
    }, headers=alice.headers)
    assert response.status_code == 201, response.text
    rig = response.json()
    assert rig["telescope"] == {"id": scope}
    assert rig["resolved"]["telescope"]["aperture_mm"] == TELESCOPE["aperture_mm"]
    assert rig["resolved"]["camera"]["pixel_size_um"] == CAMERA["pixel_size_um"]
    assert client.get(f"/v1/rigs/{rig['id']}").json()["resolved"] == rig["resolved"]


def test_a_stored_rig_follows_changes_to_its_equipment(client, alice):
    scope = store(client, alice, "telescopes")
    rig = client.post("/v1/rigs", json={"name": "r", "telescope": {"id": scope}, "camera": CAMERA},
                      headers=alice.headers).json()
    client.patch(f"/v1/telescopes/{scope}", json={"aperture_mm": 250}, headers=alice.headers)
    assert client.get(f"/v1/rigs/{rig['id']}", headers=alice.headers).json()["resolved"]["telescope"]["aperture_mm"] == 250


def test_a_rig_may_use_another_accounts_public_equipment_but_not_private(client, alice, bob):
    public = store(client, alice, "telescopes", "public")
    private = store(client, alice, "telescopes", "private")
    ok = client.post("/v1/rigs", json={"name": "borrowed", "telescope": {"id": public}, "camera": CAMERA},
                     headers=bob.headers)
    assert ok.status_code == 201
    refused = client.post("/v1/rigs", json={"name": "sneaky", "telescope": {"id": private}, "camera": CAMERA},
                          headers=bob.headers)
    assert_problem(refused, 422, "telescope.id")
    missing = client.post("/v1/rigs", json={"name": "ghost", "telescope": TELESCOPE, "camera": {"id": 999}},
                          headers=bob.headers)
    assert_problem(missing, 422, "camera.id")


def test_a_public_rig_uses_only_public_equipment(client, alice):
    private = store(client, alice, "cameras", "private")
    response = client.post("/v1/rigs", json={
        "name": "r", "telescope": TELESCOPE, "camera": {"id": private}, "visibility": "public"
    }, headers=alice.headers)
    assert_problem(response, 422, "camera.id")
    rig = client.post("/v1/rigs", json={"name": "r", "telescope": TELESCOPE, "camera": {"id": private}},
                      headers=alice.headers).json()
    assert_problem(client.patch(f"/v1/rigs/{rig['id']}", json={"visibility": "public"}, headers=alice.headers),
                   422, "camera.id")


def test_equipment_in_use_cannot_be_deleted_and_the_409_names_the_rigs(client, alice):
    scope = store(client, alice, "telescopes")
    rig = client.post("/v1/rigs", json={"name": "r", "telescope": {"id": scope}, "camera": CAMERA},
                      headers=alice.headers).json()
    body = assert_problem(client.delete(f"/v1/telescopes/{scope}", headers=alice.headers), 409)
    assert body["rigs"] == [rig["id"]]
    assert client.get(f"/v1/telescopes/{scope}", headers=alice.headers).status_code == 200
    # Once the rig stops using it, it can go.
    client.patch(f"/v1/rigs/{rig['id']}", json={"telescope": TELESCOPE}, headers=alice.headers)
    assert client.delete(f"/v1/telescopes/{scope}", headers=alice.headers).status_code == 204


def test_the_database_itself_refuses_to_orphan_a_rig(app, client, alice):
    # The foreign key is the last line of defence when two requests race past the 409 check.
    from sqlalchemy import delete
    from sqlalchemy.exc import IntegrityError
    from sqlmodel import Session

    from api.storage.models import TelescopeRow

    scope = store(client, alice, "telescopes")
    client.post("/v1/rigs", json={"name": "r", "telescope": {"id": scope}, "camera": CAMERA}, headers=alice.headers)
    with Session(app.state.engine) as session, pytest.raises(IntegrityError):
        session.execute(delete(TelescopeRow).where(TelescopeRow.id == scope))
        session.commit()


def test_other_accounts_rigs_keep_a_copy_when_the_owner_makes_it_private(client, alice, bob):
    scope = store(client, alice, "telescopes", "public")
    rig = client.post("/v1/rigs", json={"name": "bob's", "telescope": {"id": scope}, "camera": CAMERA},
                      headers=bob.headers).json()
    # Bob's rig cannot block alice (it used to be a 409 naming "private rig(s) of other accounts").
    assert client.patch(f"/v1/telescopes/{scope}", json={"visibility": "private"}, headers=alice.headers).status_code == 200
    after = client.get(f"/v1/rigs/{rig['id']}", headers=bob.headers).json()
    assert after["resolved"]["telescope"] == rig["resolved"]["telescope"]
    assert after["telescope"]["aperture_mm"] == TELESCOPE["aperture_mm"]  # a copy, no longer a reference
    assert after["copied_parts"][0]["reason"] == "made private" and not after["uses_retired_equipment"]


def test_own_public_rigs_still_need_the_equipment_public(client, alice):
    scope = store(client, alice, "telescopes", "public")
    rig = client.post("/v1/rigs", json={"name": "r", "telescope": {"id": scope}, "camera": CAMERA,
                                        "visibility": "public"}, headers=alice.headers).json()
    body = assert_problem(
        client.patch(f"/v1/telescopes/{scope}", json={"visibility": "private"}, headers=alice.headers), 409
    )
    assert body["rigs"] == [rig["id"]] and body["hidden_rigs"] == 0


def test_a_change_that_would_break_a_rig_is_refused(client, alice):
    # Focal ratio 1000/200 = 5 with a 0.12x reducer gives 0.6; at 300 mm aperture it would be 0.4,
    # below the 0.5 minimum of calculators.schemas.check_focal_ratio.
    scope = store(client, alice, "telescopes")
    rig = client.post("/v1/rigs", json={
        "name": "fast", "telescope": {"id": scope}, "camera": CAMERA,
        "modifier": {"kind": "reducer", "factor": 0.12},
    }, headers=alice.headers)
    assert rig.status_code == 201, rig.text
    body = assert_problem(client.patch(f"/v1/telescopes/{scope}", json={"aperture_mm": 300}, headers=alice.headers), 409)
    assert body["rigs"] == [rig.json()["id"]]


def test_rig_cross_field_errors_name_the_slot(client, alice):
    response = client.post("/v1/rigs", json={
        "name": "impossible", "telescope": TELESCOPE, "camera": CAMERA, "train": [{"kind": "reducer", "factor": 0.05}],
    }, headers=alice.headers)
    assert_problem(response, 422, "train")


def test_rig_list_resolves_every_rig(client, alice):
    scope = store(client, alice, "telescopes")
    camera = store(client, alice, "cameras")
    for i in range(3):
        client.post("/v1/rigs", json={"name": f"r{i}", "telescope": {"id": scope}, "camera": {"id": camera},
                                      "visibility": "public"}, headers=alice.headers)
    page = client.get("/v1/rigs").json()
    assert page["total"] == 3
    assert {r["resolved"]["camera"]["width_px"] for r in page["items"]} == {CAMERA["width_px"]}


def test_a_members_only_rig_uses_no_private_equipment(client, make_account):
    # A club's members see its members-only rigs resolved: a private part would show them an item
    # the club keeps to itself, so it is refused as a public rig's private part is.
    club = make_account("rig-rule-club", kind="club")
    private, members, public = (store(client, club, "cameras", v) for v in ("private", "members", "public"))
    refused = client.post("/v1/rigs", json={"name": "r", "telescope": TELESCOPE, "camera": {"id": private},
                                            "visibility": "members"}, headers=club.headers)
    body = assert_problem(refused, 422, "camera.id")
    assert "members-only rig" in body["errors"][0]["message"]
    for camera in (members, public):
        made = client.post("/v1/rigs", json={"name": "r", "telescope": TELESCOPE, "camera": {"id": camera},
                                             "visibility": "members"}, headers=club.headers)
        assert made.status_code == 201, made.text
    # The same rule when a private rig is widened later.
    rig = client.post("/v1/rigs", json={"name": "r", "telescope": TELESCOPE, "camera": {"id": private}},
                      headers=club.headers).json()
    assert_problem(client.patch(f"/v1/rigs/{rig['id']}", json={"visibility": "members"}, headers=club.headers),
                   422, "camera.id")
    # A public rig still needs public parts: a members-only one is refused, naming its visibility.
    body = assert_problem(client.post("/v1/rigs", json={"name": "r", "telescope": TELESCOPE,
                                                        "camera": {"id": members}, "visibility": "public"},
                                      headers=club.headers), 422, "camera.id")
    assert "is members" in body["errors"][0]["message"]


def test_own_rigs_keep_their_parts_at_least_as_visible_as_themselves(client, make_account):
    club = make_account("narrowing-club", kind="club")
    scope = store(client, club, "telescopes", "public")
    public_rig = client.post("/v1/rigs", json={"name": "p", "telescope": {"id": scope}, "camera": CAMERA,
                                               "visibility": "public"}, headers=club.headers).json()
    members_rig = client.post("/v1/rigs", json={"name": "m", "telescope": {"id": scope}, "camera": CAMERA,
                                                "visibility": "members"}, headers=club.headers).json()
    # Members-only would hide it from the public rig's readers; private also from the members'.
    body = assert_problem(client.patch(f"/v1/telescopes/{scope}", json={"visibility": "members"},
                                       headers=club.headers), 409)
    assert body["rigs"] == [public_rig["id"]]
    body = assert_problem(client.patch(f"/v1/telescopes/{scope}", json={"visibility": "private"},
                                       headers=club.headers), 409)
    assert sorted(body["rigs"]) == sorted([public_rig["id"], members_rig["id"]])
    # Once the public rig is members-only, the telescope may be too, but not private.
    assert client.patch(f"/v1/rigs/{public_rig['id']}", json={"visibility": "members"},
                        headers=club.headers).status_code == 200
    assert client.patch(f"/v1/telescopes/{scope}", json={"visibility": "members"},
                        headers=club.headers).status_code == 200
    body = assert_problem(client.patch(f"/v1/telescopes/{scope}", json={"visibility": "private"},
                                       headers=club.headers), 409)
    assert "members-only" not in body["detail"] and "make those rigs private first" in body["detail"]
