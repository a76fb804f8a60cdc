"""CRUD of the four kinds of equipment through the shared builder (api/equipment/crud.py)."""

from __future__ import annotations

import pytest
from rigbench_testing import BODIES, TELESCOPE, assert_problem

KINDS = sorted(BODIES)


@pytest.mark.parametrize("kind", KINDS)
def test_create_read_replace_patch_delete(client, alice, kind):
    body = {**BODIES[kind], "visibility": "public"}
    created = client.post(f"/v1/{kind}", json=body, headers=alice.headers)
    assert created.status_code == 201, created.text
    item = created.json()
    assert item["id"] >= 1 and item["owner"] == "alice" and item["version"] == 1
    assert created.headers["location"].endswith(f"/v1/{kind}/{item['id']}")
    assert created.headers["etag"] == '"1"'
    for field, value in BODIES[kind].items():
        assert item[field] == value

    read = client.get(created.headers["location"])
    assert read.status_code == 200 and read.json() == item and read.headers["etag"] == '"1"'

    replaced = client.put(f"/v1/{kind}/{item['id']}", json={**body, "name": "renamed"},
                          headers={**alice.headers, "If-Match": '"1"'})
    assert replaced.status_code == 200, replaced.text
    assert replaced.json()["name"] == "renamed" and replaced.json()["version"] == 2
    assert replaced.headers["etag"] == '"2"'

    patched = client.patch(f"/v1/{kind}/{item['id']}", json={"visibility": "private"}, headers=alice.headers)
    assert patched.status_code == 200, patched.text
    assert patched.json()["visibility"] == "private" and patched.json()["name"] == "renamed"
    assert patched.json()["version"] == 3

    assert client.delete(f"/v1/{kind}/{item['id']}", headers=alice.headers).status_code == 204
    assert_problem(client.get(f"/v1/{kind}/{item['id']}", headers=alice.headers), 404)


def test_units_in_strings_are_converted_once_at_the_edge(client, alice):
    # 1 in = 25.4 mm exactly (International Yard and Pound Agreement, 1959).
    created = client.post("/v1/telescopes", json={**TELESCOPE, "aperture_mm": "8 in", "obstruction_mm": "2.5 in"},
                          headers=alice.headers)
    assert created.status_code == 201, created.text
    assert created.json()["aperture_mm"] == pytest.approx(203.2, rel=1e-12)
    assert created.json()["obstruction_mm"] == pytest.approx(63.5, rel=1e-12)


def test_patch_null_resets_a_field_to_its_default(client, alice):
    item = client.post("/v1/telescopes", json={**TELESCOPE, "throughput": 0.7}, headers=alice.headers).json()
    patched = client.patch(f"/v1/telescopes/{item['id']}", json={"throughput": None}, headers=alice.headers)
    assert patched.status_code == 200 and patched.json()["throughput"] is None


def test_patch_that_breaks_a_cross_field_rule_names_the_field(client, alice):
    item = client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).json()
    response = client.patch(f"/v1/telescopes/{item['id']}", json={"aperture_mm": 60}, headers=alice.headers)
    assert_problem(response, 422, "obstruction_mm")
    assert client.get(f"/v1/telescopes/{item['id']}", headers=alice.headers).json()["version"] == 1


def test_list_paginates_and_filters_by_owner_and_visibility(client, alice, bob):
    for i in range(5):
        client.post("/v1/cameras", json={**BODIES["cameras"], "name": f"a{i}", "visibility": "public"},
                    headers=alice.headers)
    client.post("/v1/cameras", json={**BODIES["cameras"], "name": "a-private"}, headers=alice.headers)
    client.post("/v1/cameras", json={**BODIES["cameras"], "name": "b0", "visibility": "public"},
                headers=bob.headers)

    page = client.get("/v1/cameras", params={"limit": 2, "offset": 1}).json()
    assert page["total"] == 6 and page["limit"] == 2 and page["offset"] == 1
    assert [c["name"] for c in page["items"]] == ["a1", "a2"]

    mine = client.get("/v1/cameras", params={"owner": "alice", "limit": 100}, headers=alice.headers).json()
    assert mine["total"] == 6 and {c["owner"] for c in mine["items"]} == {"alice"}

    private = client.get("/v1/cameras", params={"visibility": "private"}, headers=alice.headers).json()
    assert [c["name"] for c in private["items"]] == ["a-private"]
    assert client.get("/v1/cameras", params={"visibility": "private"}).json()["total"] == 0


def test_page_size_above_the_setting_is_refused(client):
    assert_problem(client.get("/v1/mounts", params={"limit": 101}), 422, "limit")
    assert_problem(client.get("/v1/mounts", params={"offset": -1}), 422, "offset")


def test_stale_if_match_is_refused_and_changes_nothing(client, alice):
    item = client.post("/v1/mounts", json=BODIES["mounts"], headers=alice.headers).json()
    url = f"/v1/mounts/{item['id']}"
    assert client.patch(url, json={"capacity_kg": 25}, headers={**alice.headers, "If-Match": '"1"'}).status_code == 200
    stale = client.patch(url, json={"capacity_kg": 30}, headers={**alice.headers, "If-Match": '"1"'})
    body = assert_problem(stale, 412)
    assert body["current_version"] == 2
    assert_problem(client.put(url, json=BODIES["mounts"], headers={**alice.headers, "If-Match": '"1"'}), 412)
    assert_problem(client.delete(url, headers={**alice.headers, "If-Match": '"1"'}), 412)
    assert client.get(url, headers=alice.headers).json()["capacity_kg"] == 25


def test_if_match_compares_strongly(client, alice):
    # RFC 9110 section 13.1.1: If-Match uses the strong comparison, so a weak tag never matches.
    item = client.post("/v1/mounts", json=BODIES["mounts"], headers=alice.headers).json()
    url = f"/v1/mounts/{item['id']}"
    assert_problem(client.patch(url, json={"name": "x"}, headers={**alice.headers, "If-Match": 'W/"1"'}), 412)
    ok = client.patch(url, json={"name": "x"}, headers={**alice.headers, "If-Match": '"7", "1"'})
    assert ok.status_code == 200
    assert client.patch(url, json={"name": "y"}, headers={**alice.headers, "If-Match": "*"}).status_code == 200


def test_every_change_raises_the_version_by_one(client, alice):
    item = client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).json()
    for expected in range(2, 7):
        response = client.patch(f"/v1/telescopes/{item['id']}", json={"name": f"v{expected}"},
                                headers={**alice.headers, "If-Match": f'"{expected - 1}"'})
        assert response.json()["version"] == expected
        assert response.headers["etag"] == f'"{expected}"'


@pytest.mark.parametrize("bad_id", ["0", "-1", "9223372036854775808", "abc"])
def test_ids_outside_one_to_two_to_the_63_are_refused(client, bad_id):
    assert_problem(client.get(f"/v1/telescopes/{bad_id}"), 422, "item_id")


def test_largest_id_is_just_not_found(client):
    assert_problem(client.get("/v1/telescopes/9223372036854775807"), 404)


def test_delete_honours_if_match(client, alice):
    item = client.post("/v1/mounts", json=BODIES["mounts"], headers=alice.headers).json()
    url = f"/v1/mounts/{item['id']}"
    client.patch(url, json={"name": "v2"}, headers=alice.headers)
    assert_problem(client.delete(url, headers={**alice.headers, "If-Match": '"1"'}), 412)
    assert client.delete(url, headers={**alice.headers, "If-Match": '"2"'}).status_code == 204
    other = client.post("/v1/mounts", json=BODIES["mounts"], headers=alice.headers).json()
    assert client.delete(f"/v1/mounts/{other['id']}", headers={**alice.headers, "If-Match": "*"}).status_code == 204
    assert_problem(client.get(f"/v1/mounts/{other['id']}", headers=alice.headers), 404)


def test_a_stored_spec_with_a_retired_field_still_reads(app, client, alice):
    # Stored JSON may hold a field a later schema dropped; reads must not fail on it.
    from sqlalchemy import update
    from sqlmodel import Session

    from api.storage.models import TelescopeRow

    item = client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).json()
    with Session(app.state.engine) as session:
        session.execute(update(TelescopeRow).where(TelescopeRow.id == item["id"])
                        .values(spec={**TELESCOPE, "retired_field": 1}))
        session.commit()
    read = client.get(f"/v1/telescopes/{item['id']}", headers=alice.headers)
    assert read.status_code == 200 and "retired_field" not in read.json()
