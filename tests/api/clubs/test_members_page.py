"""api/clubs/members_page.py: sign-in with a key in a form, the session cookie, CSRF, and the borrow button."""

from __future__ import annotations

import re
import time

import pytest
from club_people import CLUB, club_telescope, club_with_people
from sqlmodel import Session

from api.accounts.keys import revoke_key

AREA = f"/clubs/{CLUB}/members-area"


def csrf(page: str) -> str:
    return re.search(r'name="csrf" value="([^"]+)"', page).group(1)


def sign_in(client, key: str):
    token = csrf(client.get(AREA).text)
    return client.post(f"/clubs/{CLUB}/sign-in", data={"csrf": token, "key": key}, follow_redirects=False)


@pytest.fixture
def people(client, make_account):
    return club_with_people(client, make_account)


def test_sign_in_sets_a_signed_http_only_same_site_expiring_cookie(client, people):
    answer = sign_in(client, people.member.key)
    assert answer.status_code == 303 and answer.headers["location"].endswith(AREA)
    cookie = answer.headers["set-cookie"]
    assert "httponly" in cookie.lower() and "samesite=lax" in cookie.lower()
    assert "path=/clubs" in cookie.lower() and "max-age=28800" in cookie.lower()
    assert people.member.key not in cookie  # the key itself is never in the cookie
    page = client.get(AREA)
    assert "Signed in as mira" in page.text and page.headers["cache-control"] == "no-store"


def test_a_borrow_request_from_the_form_reaches_the_officers(client, people):
    scope = club_telescope(client, people, name="Club 200 mm reflector")
    sign_in(client, people.member.key)
    token = csrf(client.get(AREA).text)
    answer = client.post(f"/clubs/{CLUB}/borrow", follow_redirects=False, data={
        "csrf": token, "kind": "telescopes", "id": str(scope), "start": "2027-01-10", "due": "2027-01-12"})
    assert answer.status_code == 303 and "asked=" in answer.headers["location"]
    loans = client.get(f"/v1/clubs/{CLUB}/loans", headers=people.officer.headers).json()["items"]
    assert [(loan["borrower"], loan["status"], loan["start"]) for loan in loans] == [("mira", "requested", "2027-01-10")]
    page = client.get(answer.headers["location"]).text
    assert "Your request is with the club" in page and "requested" in page


def test_forms_without_the_csrf_token_are_refused(client, people):
    scope = club_telescope(client, people)
    assert client.post(f"/clubs/{CLUB}/sign-in", data={"key": people.member.key}).status_code == 403
    sign_in(client, people.member.key)
    refused = client.post(f"/clubs/{CLUB}/borrow", data={"csrf": "forged", "kind": "telescopes", "id": str(scope),
                                                         "start": "2027-01-10", "due": "2027-01-12"})
    assert refused.status_code == 403 and "expired" in refused.text
    assert client.get(f"/v1/clubs/{CLUB}/loans", headers=people.officer.headers).json()["total"] == 0


def test_wrong_keys_outsiders_and_bad_dates_get_a_clear_page(client, people):
    assert sign_in(client, "rb_not-a-key").status_code == 401
    assert sign_in(client, people.other.key).status_code == 403
    scope = club_telescope(client, people)
    sign_in(client, people.member.key)
    token = csrf(client.get(AREA).text)
    bad = client.post(f"/clubs/{CLUB}/borrow", data={"csrf": token, "kind": "telescopes", "id": str(scope),
                                                     "start": "2027-01-12", "due": "2027-01-10"})
    assert bad.status_code == 422 and "before start" in bad.text
    assert client.post(f"/clubs/{CLUB}/borrow", data={"csrf": token, "kind": "telescopes", "id": str(scope),
                                                      "start": "soon", "due": "2027-01-10"}).status_code == 422
    assert client.post(f"/clubs/{CLUB}/borrow", data={"csrf": token, "kind": "spaceships", "id": "1",
                                                      "start": "2027-01-10", "due": "2027-01-12"}).status_code == 422


def test_a_tampered_cookie_or_a_revoked_key_signs_you_out(app, client, people):
    sign_in(client, people.member.key)
    value = client.cookies.get("rigbench_session")
    client.cookies.set("rigbench_session", value[:-3] + "AAA", path="/clubs")
    assert "Sign in" in client.get(AREA).text and "Signed in as" not in client.get(AREA).text
    client.cookies.clear()
    sign_in(client, people.member.key)
    with Session(app.state.engine) as session:
        revoke_key(session, "mira", people.member.key)
    assert "Signed in as" not in client.get(AREA).text


def test_the_session_expires(settings, make_account):
    from fastapi.testclient import TestClient

    from api.app import create_app
    from api.storage import db

    short = create_app(settings.model_copy(update={"session_max_age_s": 1}))
    db.upgrade(short.state.engine)
    with TestClient(short) as client:
        people = club_with_people(client, make_account)
        sign_in(client, people.member.key)
        assert "Signed in as" in client.get(AREA).text
        time.sleep(2.1)
        assert "Signed in as" not in client.get(AREA).text
    short.state.engine.dispose()


def test_wrong_keys_at_the_form_meet_the_failed_key_limit(settings, make_account):
    from fastapi.testclient import TestClient

    from api.app import create_app
    from api.storage import db

    strict = create_app(settings.model_copy(update={"rate_limit_failed_auth": "3/minute"}))
    db.upgrade(strict.state.engine)
    with TestClient(strict) as client:
        club_with_people(client, make_account)
        statuses = [sign_in(client, f"rb_wrong-{n}").status_code for n in range(4)]
    strict.state.engine.dispose()
    assert statuses == [401, 401, 401, 429]
