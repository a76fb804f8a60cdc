"""api/clubs/shelf.py: each item on the club's equipment view is available, on loan (with its due date) or retired.

The borrower is shown only to the club's officers and to the borrower; overdue loans only to officers.
Dates are relative to today, so the loans are current whenever the test runs.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

from club_people import CLUB, club_telescope, club_with_people, loan_body


def day(offset: int) -> str:
    return (datetime.now(UTC).date() + timedelta(days=offset)).isoformat()


def shelf(client, headers=None) -> dict[int, dict]:
    answer = client.get(f"/v1/clubs/{CLUB}/equipment", headers=headers or {})
    assert answer.status_code == 200, answer.text
    return {item["id"]: item for item in answer.json()["telescopes"]}


def test_availability_without_the_borrower_for_anyone_outside(client, make_account):
    people = club_with_people(client, make_account)
    lent, free, late = (club_telescope(client, people) for _ in range(3))
    client.post(f"/v1/clubs/{CLUB}/loans", json=loan_body(lent, start=day(-1), due=day(6)), headers=people.officer.headers)
    client.post(f"/v1/clubs/{CLUB}/loans", json=loan_body(late, borrower="olive", start=day(-9), due=day(-2)),
                headers=people.officer.headers)
    for headers in (None, people.other.headers):
        seen = shelf(client, headers)
        assert seen[lent]["availability"] == "on loan" and seen[lent]["due"] == day(6)
        assert seen[free]["availability"] == "available" and seen[free]["due"] is None
        assert all(item["borrower"] is None and item["overdue"] is None for item in seen.values())
    # The member sees their own name on what they borrowed, nobody else's.
    mine = shelf(client, people.member.headers)
    assert mine[lent]["borrower"] == "mira" and mine[late]["borrower"] is None
    # Officers see who has what and what is overdue.
    officer = shelf(client, people.officer.headers)
    assert officer[late]["borrower"] == "olive" and officer[late]["overdue"] is True
    assert officer[lent]["overdue"] is False
    csv = client.get(f"/v1/clubs/{CLUB}/equipment?format=csv").text
    assert "on loan" in csv and "mira" not in csv


def test_a_loan_that_starts_later_leaves_the_item_available_now(client, make_account):
    people = club_with_people(client, make_account)
    scope = club_telescope(client, people)
    client.post(f"/v1/clubs/{CLUB}/loans", json=loan_body(scope, start=day(3), due=day(5)), headers=people.officer.headers)
    assert shelf(client)[scope]["availability"] == "available"


def test_retired_and_members_only_items_are_shown_to_members_only(client, make_account):
    people = club_with_people(client, make_account)
    retired = club_telescope(client, people)
    hidden = club_telescope(client, people, "members")
    client.post(f"/v1/telescopes/{retired}/retire", headers=people.officer.headers)
    assert set(shelf(client)) == set() and set(shelf(client, people.other.headers)) == set()
    seen = shelf(client, people.member.headers)
    assert seen[retired]["availability"] == "retired" and seen[hidden]["availability"] == "available"


def test_the_public_page_shows_on_loan_until_the_due_date(client, make_account):
    people = club_with_people(client, make_account)
    scope = club_telescope(client, people)
    client.post(f"/v1/clubs/{CLUB}/loans", json=loan_body(scope, start=day(0), due=day(4)), headers=people.officer.headers)
    page = client.get(f"/clubs/{CLUB}").text
    # The date's hyphens are non-breaking (U+2011), so it stays on one line.
    assert "On loan until " + day(4).replace("-", "\u2011") in page and "mira" not in page
