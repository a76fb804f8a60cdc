"""api/transfer/exports.py: an export imported into an empty account reproduces it (JSON, CSV, ZIP)."""

from __future__ import annotations

import csv
import io
import zipfile

from rigbench_testing import CAMERA, MODIFIER, MOUNT, TELESCOPE, assert_problem

ITEMS = {
    "telescopes": [{**TELESCOPE, "price": {"amount": 450, "currency": "EUR"}, "visibility": "public"},
                   {**TELESCOPE, "name": "=1+2 (a formula-looking name)", "spider_vanes": 3}],
    "cameras": [CAMERA], "modifiers": [MODIFIER], "mounts": [MOUNT],
}


def fill(client, who) -> None:
    for kind, bodies in ITEMS.items():
        for body in bodies:
            assert client.post(f"/v1/{kind}", json=body, headers=who.headers).status_code == 201


def without_owner(export: dict) -> list:
    return export["items"]


def test_json_round_trip(client, alice, bob):
    fill(client, alice)
    exported = client.get("/v1/exports", headers=alice.headers).json()
    assert exported["owner"] == "alice" and len(exported["items"]) == 5
    assert client.post("/v1/imports", json=exported, headers=bob.headers).status_code == 201
    assert client.get("/v1/exports", headers=bob.headers).json()["items"] == exported["items"]


def test_csv_and_zip_round_trip_and_formulas_are_escaped(client, alice, bob):
    fill(client, alice)
    telescopes = client.get("/v1/exports?format=csv&kind=telescopes", headers=alice.headers)
    assert telescopes.headers["content-type"].startswith("text/csv")
    # As a spreadsheet reads it: the name cell starts with an apostrophe, so it is text, not a formula.
    rows = list(csv.DictReader(io.StringIO(telescopes.text)))
    assert rows[1]["name"] == "'=1+2 (a formula-looking name)" and rows[0]["price.amount"] == "450.0"
    archive = zipfile.ZipFile(io.BytesIO(client.get("/v1/exports?format=zip", headers=alice.headers).content))
    assert sorted(archive.namelist()) == sorted(f"alice-{kind}.csv" for kind in ITEMS)
    for kind in ITEMS:
        answer = client.post(f"/v1/imports?kind={kind}", content=archive.read(f"alice-{kind}.csv"),
                             headers={**bob.headers, "Content-Type": "text/csv"})
        assert answer.status_code == 201, answer.text
    assert client.get("/v1/exports", headers=bob.headers).json()["items"] == \
        client.get("/v1/exports", headers=alice.headers).json()["items"]
    assert client.get("/v1/telescopes?owner=bob", headers=bob.headers).json()["items"][1]["name"] == "=1+2 (a formula-looking name)"


def test_an_export_holds_only_what_the_caller_may_read(client, alice, bob):
    fill(client, alice)
    seen = client.get("/v1/exports?owner=alice", headers=bob.headers).json()["items"]
    assert [item["equipment"] for item in seen] == ["telescopes"]  # alice's one public item
    assert_problem(client.get("/v1/exports?format=csv", headers=alice.headers), 422, "kind")
    assert_problem(client.get("/v1/exports?owner=nobody", headers=alice.headers), 404, "owner")
    assert_problem(client.get("/v1/exports"), 401)
