"""Who owns a compared rig's parts (api/comparisons/resolve.py): stored items of the caller — the
equipment stored under their account, and every inline part and accessory of their own stored rig —
are owned, so ``cost.purchase_price`` leaves them out; nothing else is. Prices are invented; the sums
are arithmetic, so they are compared exactly."""

from __future__ import annotations

from rigbench_testing import CAMERA, MOUNT, TELESCOPE


def eur(amount):
    return {"amount": amount, "currency": "EUR"}


SCOPE = {**TELESCOPE, "price": eur(600)}
CAM = {**CAMERA, "price": eur(900)}
MNT = {**MOUNT, "price": eur(1200)}
REDUCER = {"name": "reducer 0.8x", "kind": "reducer", "factor": 0.8, "price": eur(250)}
EXTRAS = [{"name": "finder", "mass_kg": 0.3, "price": eur(40)}]


def prices(client, rigs, headers=None):
    answer = client.post("/v1/comparisons", json={"rigs": rigs, "calculators": ["cost"]}, headers=headers)
    assert answer.status_code == 200, answer.text
    outputs = answer.json()["results"]["cost"]["outputs"]
    return list(zip(outputs["total_price"]["values"], outputs["purchase_price"]["values"]))


def test_an_inline_rig_owns_the_caller_s_stored_equipment_it_names(client, alice, bob):
    scope = client.post("/v1/telescopes", json=SCOPE, headers=alice.headers).json()["id"]
    camera = client.post("/v1/cameras", json={**CAM, "visibility": "public"}, headers=bob.headers).json()["id"]
    reducer = client.post("/v1/train-elements", json=REDUCER, headers=alice.headers).json()["id"]
    rig = {"name": "mixed", "telescope": {"id": scope}, "camera": {"id": camera},
           "train": [{"id": reducer}, {**REDUCER, "name": "second reducer"}], "mount": MNT,
           "accessories": EXTRAS}
    # Alice owns her telescope and reducer; Bob's public camera, the inline reducer, the inline
    # mount and the accessories are to buy.
    assert prices(client, [rig], alice.headers) == [(3240, 2390)]


def test_the_caller_s_stored_rig_is_owned_and_someone_else_s_is_not(client, alice, bob):
    shared = client.post("/v1/mounts", json={**MNT, "visibility": "public"}, headers=bob.headers).json()["id"]
    stored = client.post("/v1/rigs", json={
        "name": "alice's rig", "visibility": "public", "telescope": {**SCOPE}, "camera": CAM,
        "train": [REDUCER], "mount": {"id": shared}, "accessories": EXTRAS,
    }, headers=alice.headers)
    assert stored.status_code == 201, stored.text
    rig = {"id": stored.json()["id"]}
    # Alice owns every inline part of her rig; the mount she uses is Bob's.
    assert prices(client, [rig], alice.headers) == [(2990, 1200)]
    # Bob owns only his mount in it; without a key nothing is owned.
    assert prices(client, [rig], bob.headers) == [(2990, 1790)]
    assert prices(client, [rig]) == [(2990, 2990)]


def test_an_inline_rig_without_stored_parts_owns_nothing(client, alice):
    rig = {"name": "inline", "telescope": SCOPE, "camera": CAM, "mount": MNT, "accessories": EXTRAS}
    assert prices(client, [rig], alice.headers) == prices(client, [rig]) == [(2740, 2740)]
