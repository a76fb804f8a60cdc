"""A club with its people for the club-operations tests: the club's own key, an officer, a member, an outsider."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from rigbench_testing import TELESCOPE

CLUB = "kestrel-ridge"


@dataclass
class People:
    club: Any  # the club account itself (its key is the owner's)
    officer: Any
    member: Any
    other: Any

    def headers(self, who: str) -> dict[str, str]:
        return {} if who == "anonymous" else getattr(self, {"owner": "club"}.get(who, who)).headers


def club_with_people(client, make_account) -> People:
    club = make_account(CLUB, kind="club")
    people = People(club, make_account("olive"), make_account("mira"), make_account("otto"))
    for person, role in ((people.officer, "officer"), (people.member, "member")):
        answer = client.put(f"/v1/clubs/{CLUB}/members/{person.name}", json={"role": role}, headers=club.headers)
        assert answer.status_code == 201, answer.text
    return people


def club_telescope(client, people: People, visibility: str = "public", **spec: Any) -> int:
    answer = client.post("/v1/telescopes", json={**TELESCOPE, **spec, "visibility": visibility},
                         headers=people.club.headers)
    assert answer.status_code == 201, answer.text
    return answer.json()["id"]


def loan_body(item_id: int, borrower: str = "mira", start: str = "2026-12-01", due: str = "2026-12-09",
              kind: str = "telescopes") -> dict:
    return {"item": {"kind": kind, "id": item_id}, "borrower": borrower, "start": start, "due": due}
