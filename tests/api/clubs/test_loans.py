"""api/clubs/loans.py and loan_routes.py: lending, requests, returns, and the never-overlap rule."""

from __future__ import annotations

import pytest
from club_people import CLUB, club_telescope, club_with_people, loan_body
from rigbench_testing import assert_problem


@pytest.fixture
def people(client, make_account):
    return club_with_people(client, make_account)


def test_an_officer_lends_and_an_overlapping_loan_is_409(client, people):
    scope = club_telescope(client, people)
    first = client.post(f"/v1/clubs/{CLUB}/loans", json=loan_body(scope), headers=people.officer.headers)
    assert first.status_code == 201, first.text
    assert first.json()["status"] == "out" and first.json()["borrower"] == "mira"
    clash = client.post(f"/v1/clubs/{CLUB}/loans", json=loan_body(scope, borrower="olive", start="2026-12-09",
                                                                   due="2026-12-12"), headers=people.officer.headers)
    body = assert_problem(clash, 409, "start", "due")
    assert "already lent" in body["detail"]
    # The day after the due date is free.
    later = client.post(f"/v1/clubs/{CLUB}/loans", json=loan_body(scope, start="2026-12-10", due="2026-12-12"),
                        headers=people.club.headers)
    assert later.status_code == 201, later.text


def test_the_database_itself_refuses_overlapping_loans(app, client, people):
    # The last line of defence when two requests race past the check in Python.
    from datetime import date

    from sqlalchemy.exc import IntegrityError
    from sqlmodel import Session

    from api.storage.club_models import LoanRow

    scope = club_telescope(client, people)
    loan = client.post(f"/v1/clubs/{CLUB}/loans", json=loan_body(scope), headers=people.officer.headers).json()
    with Session(app.state.engine) as session, pytest.raises(IntegrityError):
        first = session.get(LoanRow, loan["id"])
        session.add(LoanRow(club_id=first.club_id, item_kind="telescopes", item_id=scope, borrower_id=first.borrower_id,
                            status="out", start=date(2026, 12, 5), due=date(2026, 12, 20), until=date(2026, 12, 20)))
        session.commit()


def test_due_before_start_is_named(client, people):
    scope = club_telescope(client, people)
    assert_problem(client.post(f"/v1/clubs/{CLUB}/loans", json=loan_body(scope, start="2026-12-09", due="2026-12-01"),
                               headers=people.officer.headers), 422)


def test_bad_loans_name_their_field(client, people):
    scope = club_telescope(client, people)
    post = lambda body: client.post(f"/v1/clubs/{CLUB}/loans", json=body, headers=people.officer.headers)  # noqa: E731
    assert_problem(post(loan_body(scope, borrower="otto")), 422, "borrower")  # not a member
    assert_problem(post(loan_body(scope, borrower=CLUB)), 422, "borrower")  # a club account
    assert_problem(post(loan_body(999)), 422, "item.id")
    assert_problem(post({**loan_body(scope), "start": "2026-13-01"}), 422, "start")
    assert_problem(post({**loan_body(scope), "item": {"kind": "spaceships", "id": 1}}), 422, "item.kind")


def test_a_retired_item_cannot_be_lent(client, people):
    scope = club_telescope(client, people)
    assert client.post(f"/v1/telescopes/{scope}/retire", headers=people.officer.headers).status_code == 200
    body = assert_problem(client.post(f"/v1/clubs/{CLUB}/loans", json=loan_body(scope), headers=people.officer.headers),
                          409, "item.id")
    assert "retired" in body["detail"]


def test_a_member_asks_and_an_officer_accepts_or_declines(client, people):
    scope = club_telescope(client, people)
    ask = {"item": {"kind": "telescopes", "id": scope}, "start": "2026-12-01", "due": "2026-12-05", "note": "star party"}
    request = client.post(f"/v1/clubs/{CLUB}/loan-requests", json=ask, headers=people.member.headers)
    assert request.status_code == 201 and request.json()["status"] == "requested"
    # A request holds nothing: an officer can still lend those days to someone else, and then the
    # request cannot be accepted.
    assert client.post(f"/v1/clubs/{CLUB}/loans", json=loan_body(scope, borrower="olive"),
                       headers=people.officer.headers).status_code == 201
    assert_problem(client.post(f"/v1/clubs/{CLUB}/loans/{request.json()['id']}/accept", json={},
                               headers=people.officer.headers), 409)
    declined = client.post(f"/v1/clubs/{CLUB}/loans/{request.json()['id']}/decline", headers=people.officer.headers)
    assert declined.json()["status"] == "declined"
    second = client.post(f"/v1/clubs/{CLUB}/loan-requests", json={**ask, "start": "2026-12-20", "due": "2026-12-22"},
                         headers=people.member.headers).json()
    accepted = client.post(f"/v1/clubs/{CLUB}/loans/{second['id']}/accept", json={"condition": "clean optics"},
                           headers=people.officer.headers)
    assert accepted.status_code == 200 and accepted.json()["status"] == "out"
    assert accepted.json()["condition_out"] == "clean optics"
    assert_problem(client.post(f"/v1/clubs/{CLUB}/loan-requests", json=ask, headers=people.other.headers), 403)


def test_a_return_records_the_condition_and_frees_the_item(client, people):
    scope = club_telescope(client, people)
    loan = client.post(f"/v1/clubs/{CLUB}/loans", json={**loan_body(scope), "condition": "dew cap cracked"},
                       headers=people.officer.headers).json()
    back = client.post(f"/v1/clubs/{CLUB}/loans/{loan['id']}/return",
                       json={"returned_on": "2026-12-04", "condition": "as lent"}, headers=people.officer.headers)
    assert back.status_code == 200, back.text
    assert back.json()["status"] == "returned" and back.json()["condition_in"] == "as lent"
    assert back.json()["condition_out"] == "dew cap cracked"
    # Back early: the days after the return are free again.
    assert client.post(f"/v1/clubs/{CLUB}/loans", json=loan_body(scope, start="2026-12-05", due="2026-12-07"),
                       headers=people.officer.headers).status_code == 201
    assert back.json()["version"] == 2
    history = client.get(f"/v1/clubs/{CLUB}/loans/{loan['id']}/history", headers=people.officer.headers).json()
    assert [(h["action"], h["actor"], h["version"]) for h in history["items"]] == [("lend", "olive", 1), ("return", "olive", 2)]
    assert_problem(client.post(f"/v1/clubs/{CLUB}/loans/{loan['id']}/return", json={},
                               headers=people.officer.headers), 409, "status")
    assert_problem(client.post(f"/v1/clubs/{CLUB}/loans/{loan['id'] + 99}/return", json={},
                               headers=people.officer.headers), 404)


def test_a_return_before_the_start_is_named(client, people):
    scope = club_telescope(client, people)
    loan = client.post(f"/v1/clubs/{CLUB}/loans", json=loan_body(scope), headers=people.officer.headers).json()
    assert_problem(client.post(f"/v1/clubs/{CLUB}/loans/{loan['id']}/return", json={"returned_on": "2026-11-01"},
                               headers=people.officer.headers), 422, "returned_on")


def test_officers_see_every_loan_and_a_member_their_own(client, people):
    scope = club_telescope(client, people)
    other = club_telescope(client, people)
    client.post(f"/v1/clubs/{CLUB}/loans", json=loan_body(scope), headers=people.officer.headers)
    client.post(f"/v1/clubs/{CLUB}/loans", json=loan_body(other, borrower="olive"), headers=people.officer.headers)
    everything = client.get(f"/v1/clubs/{CLUB}/loans", headers=people.officer.headers).json()
    assert [loan["borrower"] for loan in everything["items"]] == ["mira", "olive"]
    own = client.get(f"/v1/clubs/{CLUB}/loans", headers=people.member.headers).json()
    assert [loan["borrower"] for loan in own["items"]] == ["mira"]
    assert_problem(client.get(f"/v1/clubs/{CLUB}/loans/{everything['items'][1]['id']}", headers=people.member.headers), 404)
    history = client.get(f"/v1/clubs/{CLUB}/loans/{own['items'][0]['id']}/history", headers=people.member.headers).json()
    assert [(h["action"], h["actor"]) for h in history["items"]] == [("lend", "olive")]
