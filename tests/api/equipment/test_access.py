"""Ownership and visibility, for every stored resource: anonymous, another account, the owner.

Rules (issue 3): writes need a key (401); only the owner changes or deletes (403 when the item is
visible to the caller, 404 when it is private); private items are invisible to others (404);
public ones are readable without a key.
"""

from __future__ import annotations

import pytest
from rigbench_testing import BODIES, INLINE_RIG, assert_problem

RESOURCES = {**BODIES, "rigs": INLINE_RIG}


def _create(client, owner, kind, visibility):
    response = client.post(f"/v1/{kind}", json={**RESOURCES[kind], "visibility": visibility}, headers=owner.headers)
    assert response.status_code == 201, response.text
    return response.json()


@pytest.mark.parametrize("kind", sorted(RESOURCES))
def test_private_items_are_invisible_to_everyone_else(client, alice, bob, kind):
    item = _create(client, alice, kind, "private")
    url = f"/v1/{kind}/{item['id']}"
    assert client.get(url, headers=alice.headers).status_code == 200
    assert_problem(client.get(url), 404)
    assert_problem(client.get(url, headers=bob.headers), 404)
    assert client.get(f"/v1/{kind}").json()["total"] == 0
    assert client.get(f"/v1/{kind}", headers=bob.headers).json()["total"] == 0
    # Not even a hint through writes: the same 404 as for an id that does not exist.
    assert_problem(client.patch(url, json={"name": "mine now"}, headers=bob.headers), 404)
    assert_problem(client.delete(url, headers=bob.headers), 404)


@pytest.mark.parametrize("kind", sorted(RESOURCES))
def test_public_items_are_readable_by_all_and_changeable_by_the_owner_only(client, alice, bob, kind):
    item = _create(client, alice, kind, "public")
    url = f"/v1/{kind}/{item['id']}"
    assert client.get(url).json()["id"] == item["id"]
    assert client.get(url, headers=bob.headers).status_code == 200
    assert client.get(f"/v1/{kind}").json()["total"] == 1

    assert_problem(client.patch(url, json={"name": "taken"}), 401)
    assert_problem(client.patch(url, json={"name": "taken"}, headers=bob.headers), 403)
    full = {**RESOURCES[kind], "visibility": "public"}
    assert_problem(client.put(url, json=full, headers=bob.headers), 403)
    assert_problem(client.delete(url, headers=bob.headers), 403)
    assert client.get(url).json()["version"] == 1

    assert client.delete(url, headers=alice.headers).status_code == 204


@pytest.mark.parametrize("kind", sorted(RESOURCES))
def test_writes_need_a_valid_key(client, kind):
    assert_problem(client.post(f"/v1/{kind}", json=RESOURCES[kind]), 401)
    response = client.post(f"/v1/{kind}", json=RESOURCES[kind], headers={"Authorization": "Bearer rb_not-a-key"})
    assert_problem(response, 401)
    assert response.headers["www-authenticate"].startswith("Bearer")


def test_a_bad_key_is_refused_even_for_reads(client):
    # Silently treating a mistyped key as anonymous would hide the caller's own items without a word.
    assert_problem(client.get("/v1/telescopes", headers={"Authorization": "Bearer rb_wrong"}), 401)


def test_read_only_keys_read_private_items_but_cannot_write(client, make_account):
    writer = make_account("carol")
    item = _create(client, writer, "telescopes", "private")
    from sqlmodel import Session, select

    from api.accounts.keys import add_key
    from api.storage.models import Account, KeyScope

    app = client.app
    with Session(app.state.engine) as session:
        account = session.exec(select(Account).where(Account.name == "carol")).one()
        read_key = add_key(session, account, KeyScope.read)
        session.commit()
    reader = {"Authorization": f"Bearer {read_key}"}
    assert client.get(f"/v1/telescopes/{item['id']}", headers=reader).status_code == 200
    assert_problem(client.patch(f"/v1/telescopes/{item['id']}", json={"name": "x"}, headers=reader), 403)
    assert client.get("/v1/accounts/me", headers=reader).json()["key_scope"] == "read"


def test_me_names_the_account_behind_the_key(client, make_account):
    club = make_account("lakeside-astro", kind="club")
    me = client.get("/v1/accounts/me", headers=club.headers)
    assert me.status_code == 200
    assert me.json()["name"] == "lakeside-astro" and me.json()["kind"] == "club"
    assert me.json()["key_scope"] == "write"
    assert_problem(client.get("/v1/accounts/me"), 401)


def test_keys_are_stored_only_as_hashes(client, alice):
    import hashlib

    from sqlmodel import Session, select

    from api.storage.models import ApiKey

    with Session(client.app.state.engine) as session:
        stored = session.exec(select(ApiKey)).all()
    assert [k.key_hash for k in stored] == [hashlib.sha256(alice.key.encode()).hexdigest()]
    assert all(alice.key not in (k.key_hash, k.prefix) for k in stored)
