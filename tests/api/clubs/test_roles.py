"""Roles are checked on the server for every club-operations route: each route x each caller -> status.

Callers: anonymous (no key), other (a person outside the club), member, officer, owner (the club
account's own key). Each case runs on a fresh database, so one case's change cannot help another.
"""

from __future__ import annotations

from dataclasses import dataclass

import pytest
from club_people import CLUB, club_telescope, club_with_people, loan_body

WHO = ("anonymous", "other", "member", "officer", "owner")


@dataclass
class Route:
    name: str
    method: str
    path: str  # {scope}: a public club telescope; {hidden}: a members-only one; {private}: a private one;
    #            {loan}: a loan to the member; {request}: the member's loan request
    body: dict | None
    expected: tuple[int, int, int, int, int]  # in the order of WHO


ASK = {"item": {"kind": "telescopes", "id": 0}, "start": "2027-01-10", "due": "2027-01-12"}

ROUTES = [
    Route("list members", "GET", "/v1/clubs/{club}/members", None, (401, 403, 200, 200, 200)),
    Route("add a member", "PUT", "/v1/clubs/{club}/members/pat", {"role": "member"}, (401, 403, 403, 201, 201)),
    Route("remove a member", "DELETE", "/v1/clubs/{club}/members/olive", None, (401, 403, 403, 204, 204)),
    Route("list loans", "GET", "/v1/clubs/{club}/loans", None, (401, 403, 200, 200, 200)),
    Route("lend", "POST", "/v1/clubs/{club}/loans", "lend", (401, 403, 403, 201, 201)),
    Route("ask to borrow", "POST", "/v1/clubs/{club}/loan-requests", "ask", (401, 403, 201, 201, 403)),
    Route("read a loan", "GET", "/v1/clubs/{club}/loans/{loan}", None, (401, 403, 200, 200, 200)),
    Route("a loan's history", "GET", "/v1/clubs/{club}/loans/{loan}/history", None, (401, 403, 200, 200, 200)),
    Route("record a return", "POST", "/v1/clubs/{club}/loans/{loan}/return", {}, (401, 403, 403, 200, 200)),
    Route("accept a request", "POST", "/v1/clubs/{club}/loans/{request}/accept", {}, (401, 403, 403, 200, 200)),
    Route("decline a request", "POST", "/v1/clubs/{club}/loans/{request}/decline", None, (401, 403, 403, 200, 200)),
    Route("retire", "POST", "/v1/telescopes/{scope}/retire", None, (401, 403, 403, 200, 200)),
    Route("change the club's item", "PATCH", "/v1/telescopes/{scope}", {"name": "renamed"}, (401, 403, 403, 200, 200)),
    Route("delete the club's item", "DELETE", "/v1/telescopes/{private}", None, (401, 404, 404, 204, 204)),
    Route("read a members-only item", "GET", "/v1/telescopes/{hidden}", None, (404, 404, 200, 200, 200)),
    Route("read a private item", "GET", "/v1/telescopes/{private}", None, (404, 404, 404, 200, 200)),
    Route("a public item's history", "GET", "/v1/telescopes/{scope}/history", None, (200, 200, 200, 200, 200)),
    Route("a members-only item's history", "GET", "/v1/telescopes/{hidden}/history", None, (404, 404, 200, 200, 200)),
    Route("the club's equipment", "GET", "/v1/clubs/{club}/equipment", None, (200, 200, 200, 200, 200)),
    Route("import for the club", "POST", "/v1/imports?kind=mounts&owner={club}", "import", (401, 403, 403, 201, 201)),
    Route("export the club's items", "GET", "/v1/exports?owner={club}", None, (401, 200, 200, 200, 200)),
]


@pytest.mark.parametrize("who", WHO)
@pytest.mark.parametrize("route", ROUTES, ids=lambda r: r.name)
def test_each_route_answers_each_caller_as_its_role_allows(client, make_account, route, who):
    people = club_with_people(client, make_account)
    make_account("pat")
    scope = club_telescope(client, people)
    hidden = club_telescope(client, people, "members")
    private = club_telescope(client, people, "private")
    loan = client.post(f"/v1/clubs/{CLUB}/loans", json=loan_body(scope, start="2026-12-01", due="2026-12-05"),
                       headers=people.officer.headers).json()
    request = client.post(f"/v1/clubs/{CLUB}/loan-requests", json={**ASK, "item": {"kind": "telescopes", "id": hidden}},
                          headers=people.member.headers).json()
    path = route.path.format(club=CLUB, scope=scope, hidden=hidden, private=private, loan=loan["id"],
                             request=request["id"])
    body = {"lend": loan_body(scope, start="2027-02-01", due="2027-02-03"),
            "ask": {**ASK, "item": {"kind": "telescopes", "id": scope}},
            "import": [{"name": "imported mount", "capacity_kg": 12}]}.get(route.body) if isinstance(route.body, str) \
        else route.body
    answer = client.request(route.method, path, json=body, headers=people.headers(who))
    expected = route.expected[WHO.index(who)]
    assert answer.status_code == expected, f"{route.name} as {who}: {answer.status_code} {answer.text[:300]}"
    if answer.status_code >= 400:
        assert answer.headers["content-type"].startswith("application/problem+json")
