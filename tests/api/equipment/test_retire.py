"""api/equipment/retire.py and copies.py: an owner retires what they own; others' rigs keep computing from a copy."""

from __future__ import annotations

from rigbench_testing import CAMERA, TELESCOPE, assert_problem


def compare(client, headers, rig_id: int) -> dict:
    answer = client.post("/v1/comparisons", json={"rigs": [{"id": rig_id}]}, headers=headers)
    assert answer.status_code == 200, answer.text
    return answer.json()["results"]


def setting_up(client, alice, bob) -> tuple[int, int]:
    scope = client.post("/v1/telescopes", json={**TELESCOPE, "visibility": "public"}, headers=alice.headers).json()["id"]
    rig = client.post("/v1/rigs", json={"name": "bob's", "telescope": {"id": scope}, "camera": CAMERA},
                      headers=bob.headers).json()["id"]
    return scope, rig


def test_retiring_leaves_others_comparison_results_unchanged(client, alice, bob):
    scope, rig = setting_up(client, alice, bob)
    before = compare(client, bob.headers, rig)
    retired = client.post(f"/v1/telescopes/{scope}/retire", headers=alice.headers)
    assert retired.status_code == 200, retired.text
    assert retired.json()["retired_at"] is not None and retired.json()["version"] == 2
    assert compare(client, bob.headers, rig) == before
    shown = client.get(f"/v1/rigs/{rig}", headers=bob.headers).json()
    assert shown["uses_retired_equipment"] is True
    assert shown["copied_parts"][0] | {"taken_at": None} == {
        "slot": "telescope", "kind": "telescopes", "id": scope, "reason": "retired", "taken_at": None}
    # Alice's later deletion of the retired item cannot reach bob's rig either.
    assert client.delete(f"/v1/telescopes/{scope}", headers=alice.headers).status_code == 204
    assert compare(client, bob.headers, rig) == before


def test_making_private_leaves_others_comparison_results_unchanged(client, alice, bob):
    scope, rig = setting_up(client, alice, bob)
    before = compare(client, bob.headers, rig)
    assert client.patch(f"/v1/telescopes/{scope}", json={"visibility": "private"}, headers=alice.headers).status_code == 200
    assert compare(client, bob.headers, rig) == before
    # Bob can no longer read alice's telescope; his rig holds a copy instead.
    assert client.get(f"/v1/telescopes/{scope}", headers=bob.headers).status_code == 404


def test_a_retired_item_leaves_lists_and_new_rigs_but_reads_by_id(client, alice):
    scope = client.post("/v1/telescopes", json={**TELESCOPE, "visibility": "public"}, headers=alice.headers).json()["id"]
    client.post(f"/v1/telescopes/{scope}/retire", headers=alice.headers)
    assert client.get("/v1/telescopes").json()["total"] == 0
    assert client.get("/v1/telescopes", headers=alice.headers).json()["total"] == 0
    assert client.get(f"/v1/telescopes/{scope}").json()["retired_at"] is not None
    body = assert_problem(client.post("/v1/rigs", json={"name": "r", "telescope": {"id": scope}, "camera": CAMERA},
                                      headers=alice.headers), 422, "telescope.id")
    assert "retired" in body["detail"]
    # Retiring twice changes nothing.
    again = client.post(f"/v1/telescopes/{scope}/retire", headers=alice.headers)
    assert again.status_code == 200 and again.json()["version"] == 2


def test_only_the_owner_may_retire(client, alice, bob):
    scope, _rig = setting_up(client, alice, bob)
    assert_problem(client.post(f"/v1/telescopes/{scope}/retire", headers=bob.headers), 403)
    assert_problem(client.post(f"/v1/telescopes/{scope}/retire"), 401)
    assert_problem(client.post("/v1/telescopes/999/retire", headers=alice.headers), 404)
    assert_problem(client.post("/v1/telescopes/0/retire", headers=alice.headers), 422)


def test_the_history_names_who_changed_what(client, alice, bob):
    scope, rig = setting_up(client, alice, bob)
    client.patch(f"/v1/telescopes/{scope}", json={"aperture_mm": 210, "name": "210 mm"}, headers=alice.headers)
    client.post(f"/v1/telescopes/{scope}/retire", headers=alice.headers)
    history = client.get(f"/v1/telescopes/{scope}/history").json()
    assert [(h["action"], h["actor"], h["version"]) for h in history["items"]] == [
        ("create", "alice", 1), ("update", "alice", 2), ("retire", "alice", 3)]
    assert history["items"][1]["changed"] == {"aperture_mm": {"from": 200.0, "to": 210.0},
                                              "name": {"from": TELESCOPE["name"], "to": "210 mm"}}
    assert history["items"][2]["changed"]["copied_into_rigs"] == [rig]
    rig_history = client.get(f"/v1/rigs/{rig}/history", headers=bob.headers).json()
    assert [(h["action"], h["actor"]) for h in rig_history["items"]] == [("create", "bob"), ("copy", "alice")]
    # Whoever cannot read the item cannot read its history.
    assert_problem(client.get(f"/v1/rigs/{rig}/history"), 404)
    assert_problem(client.get(f"/v1/telescopes/{scope}/history?limit=1000"), 422, "limit")


REDUCER = {"kind": "reducer", "name": "0.8x reducer", "factor": 0.8}


def test_retiring_or_hiding_a_train_element_leaves_others_comparison_results_unchanged(client, alice, bob):
    """A train element may stand in any of a rig's train places: the copy replaces that place."""
    for path, change in (("/v1/train-elements", "retire"), ("/v1/modifiers", "private")):
        element = client.post(path, json={**REDUCER, "visibility": "public"}, headers=alice.headers)
        assert element.status_code == 201, element.text
        element_id = element.json()["id"]
        rig = client.post("/v1/rigs", json={"name": f"bob's {change}", "telescope": TELESCOPE, "camera": CAMERA,
                                            "train": [{"id": element_id}]}, headers=bob.headers)
        assert rig.status_code == 201, rig.text
        before = compare(client, bob.headers, rig.json()["id"])
        if change == "retire":
            answer = client.post(f"{path}/{element_id}/retire", headers=alice.headers)
        else:
            answer = client.patch(f"{path}/{element_id}", json={"visibility": "private"}, headers=alice.headers)
        assert answer.status_code == 200, answer.text
        assert compare(client, bob.headers, rig.json()["id"]) == before
        shown = client.get(f"/v1/rigs/{rig.json()['id']}", headers=bob.headers).json()
        assert shown["copied_parts"][0]["slot"] == "train" and shown["copied_parts"][0]["id"] == element_id
