"""api/clubs/members.py and member_routes.py: officers manage members; a club account is never a member."""

from __future__ import annotations

from club_people import CLUB, club_with_people
from rigbench_testing import assert_problem


def test_officers_add_change_and_remove_members(client, make_account):
    people = club_with_people(client, make_account)
    listed = client.get(f"/v1/clubs/{CLUB}/members", headers=people.officer.headers).json()
    assert [(m["person"], m["role"]) for m in listed["items"]] == [("mira", "member"), ("olive", "officer")]
    # An officer promotes the member: 200 (not new), then removes the outsider-to-be after adding them.
    promoted = client.put(f"/v1/clubs/{CLUB}/members/mira", json={"role": "officer"}, headers=people.officer.headers)
    assert promoted.status_code == 200 and promoted.json()["role"] == "officer"
    assert client.put(f"/v1/clubs/{CLUB}/members/otto", json={"role": "member"},
                      headers=people.officer.headers).status_code == 201
    assert client.delete(f"/v1/clubs/{CLUB}/members/otto", headers=people.officer.headers).status_code == 204
    names = [m["person"] for m in client.get(f"/v1/clubs/{CLUB}/members", headers=people.club.headers).json()["items"]]
    assert names == ["mira", "olive"]


def test_a_member_cannot_manage_members_but_may_leave(client, make_account):
    people = club_with_people(client, make_account)
    assert_problem(client.put(f"/v1/clubs/{CLUB}/members/otto", json={"role": "officer"},
                              headers=people.member.headers), 403)
    assert_problem(client.delete(f"/v1/clubs/{CLUB}/members/olive", headers=people.member.headers), 403)
    assert client.delete(f"/v1/clubs/{CLUB}/members/mira", headers=people.member.headers).status_code == 204


def test_a_club_account_cannot_be_a_member(client, make_account):
    people = club_with_people(client, make_account)
    make_account("dark-sky-society", kind="club")
    body = assert_problem(client.put(f"/v1/clubs/{CLUB}/members/dark-sky-society", json={"role": "member"},
                                     headers=people.club.headers), 422, "person")
    assert "club account" in body["detail"]


def test_bad_roles_and_unknown_people_are_named(client, make_account):
    people = club_with_people(client, make_account)
    assert_problem(client.put(f"/v1/clubs/{CLUB}/members/otto", json={"role": "treasurer"},
                              headers=people.club.headers), 422, "role")
    assert_problem(client.put(f"/v1/clubs/{CLUB}/members/nobody-here", json={"role": "member"},
                              headers=people.club.headers), 422, "person")
    assert_problem(client.delete(f"/v1/clubs/{CLUB}/members/otto", headers=people.club.headers), 404)
    # A person's handle is not a club.
    assert_problem(client.put("/v1/clubs/otto/members/mira", json={"role": "member"}, headers=people.other.headers), 404)


def test_membership_changes_are_in_the_history(app, client, make_account):
    from sqlmodel import Session, select

    from api.storage.club_models import HistoryRow

    club_with_people(client, make_account)
    with Session(app.state.engine) as session:
        rows = session.exec(select(HistoryRow).where(HistoryRow.kind == "memberships")).all()
    assert [(r.action, r.actor, r.changed["person"], r.changed["role"]["to"]) for r in rows] == [
        ("add", CLUB, "olive", "officer"), ("add", CLUB, "mira", "member")]
