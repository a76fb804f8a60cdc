"""api/transfer/imports.py and routes.py: POST /v1/imports stores all rows or none, naming each bad row."""

from __future__ import annotations

from club_people import CLUB, club_with_people
from rigbench_testing import CAMERA, MODIFIER, TELESCOPE, assert_problem

CSV = (
    "equipment,name,design,aperture_mm,focal_length_mm,price.amount,price.currency,visibility\r\n"
    "telescopes,Club 200 mm reflector,newtonian,200,1000,450,EUR,public\r\n"
    "telescopes,Club 80 mm refractor,refractor,80,480,,,public\r\n"
)


def post_csv(client, text: str, headers: dict, query: str = ""):
    return client.post(f"/v1/imports{query}", content=text.encode(), headers={**headers, "Content-Type": "text/csv"})


def test_a_csv_of_the_clubs_telescopes_is_stored_for_the_club_by_an_officer(client, make_account):
    people = club_with_people(client, make_account)
    answer = post_csv(client, CSV, people.officer.headers, f"?owner={CLUB}")
    assert answer.status_code == 201, answer.text
    assert answer.json()["owner"] == CLUB and answer.json()["total"] == 2
    listed = client.get(f"/v1/telescopes?owner={CLUB}").json()["items"]
    assert [(t["name"], t["aperture_mm"], t["price"]) for t in listed] == [
        ("Club 200 mm reflector", 200.0, {"amount": 450.0, "currency": "EUR"}), ("Club 80 mm refractor", 80.0, None)]
    history = client.get(f"/v1/telescopes/{listed[0]['id']}/history").json()["items"]
    assert [(h["action"], h["actor"]) for h in history] == [("import", "olive")]
    # A member may not import for the club.
    assert_problem(post_csv(client, CSV, people.member.headers, f"?owner={CLUB}"), 403, "owner")


def test_a_json_list_of_one_kind_and_a_mixed_list(client, alice):
    one_kind = client.post("/v1/imports?kind=cameras", json=[CAMERA, {**CAMERA, "name": "second"}], headers=alice.headers)
    assert one_kind.status_code == 201 and len(one_kind.json()["stored"]["cameras"]) == 2
    mixed = client.post("/v1/imports", json={"items": [{"equipment": "telescopes", **TELESCOPE},
                                                       {"equipment": "modifiers", **MODIFIER}]}, headers=alice.headers)
    assert mixed.status_code == 201, mixed.text
    assert client.get("/v1/modifiers", headers=alice.headers).json()["items"][0]["kind"] == "reducer"


def test_one_bad_row_names_its_row_and_field_and_nothing_is_stored(client, alice):
    bad = CSV + "telescopes,too fast,newtonian,200,-5,,,public\r\n"
    body = assert_problem(post_csv(client, bad, alice.headers), 422, "rows.4.focal_length_mm")
    assert "nothing stored" in body["detail"]
    assert client.get("/v1/telescopes", headers=alice.headers).json()["total"] == 0
    json_bad = client.post("/v1/imports?kind=telescopes", json=[TELESCOPE, {**TELESCOPE, "aperture_mm": "wide"}],
                           headers=alice.headers)
    assert_problem(json_bad, 422, "items.1.aperture_mm")
    assert_problem(post_csv(client, "equipment,name\r\nspaceships,x\r\n", alice.headers), 422, "rows.2.kind")
    assert_problem(post_csv(client, "name,colour\r\nx,red\r\n", alice.headers, "?kind=mounts"), 422, "rows.2.colour")
    assert client.get("/v1/telescopes", headers=alice.headers).json()["total"] == 0


def test_10001_rows_are_refused_by_name(client, alice):
    rows = "".join(f"telescopes,t{i},newtonian,200,1000,,,private\r\n" for i in range(10_001))
    body = assert_problem(post_csv(client, CSV.splitlines()[0] + "\r\n" + rows, alice.headers), 422, "rows")
    assert "at most 10000" in body["detail"]
    assert_problem(client.post("/v1/imports?kind=cameras", json=[CAMERA] * 10_001, headers=alice.headers), 422, "items")


def test_a_formula_looking_cell_is_stored_as_text(client, alice):
    text = 'name,aperture_mm,focal_length_mm\r\n"=HYPERLINK(""http://127.0.0.1/x"",""click"")",100,500\r\n'
    assert post_csv(client, text, alice.headers, "?kind=telescopes").status_code == 201
    stored = client.get("/v1/telescopes", headers=alice.headers).json()["items"][0]
    assert stored["name"] == '=HYPERLINK("http://127.0.0.1/x","click")'


def test_other_bodies_are_named(client, alice):
    assert_problem(client.post("/v1/imports", content=b"{nope", headers={**alice.headers, "Content-Type": "application/json"}), 400)
    assert_problem(client.post("/v1/imports", content=b"x", headers={**alice.headers, "Content-Type": "text/plain"}), 415)
    assert_problem(client.post("/v1/imports", json={"rows": 3}, headers=alice.headers), 422, "items")
    assert_problem(client.post("/v1/imports", json=[], headers=alice.headers), 422, "items")
    assert_problem(post_csv(client, "name,aperture_mm\r\nx,1\r\n", alice.headers), 422, "kind")
    assert_problem(client.post("/v1/imports", content="é".encode("latin-1"),
                               headers={**alice.headers, "Content-Type": "text/csv"}), 422, "body")
    assert_problem(post_csv(client, CSV, {}), 401)
