"""api/accounts/cli.py and the key functions of api/accounts/keys.py: list, add, revoke and rotate keys.

A key is shown once, when it is made; afterwards only its prefix. Revoking takes effect on the next
request, for every server process, because each request looks the key's hash up in the database.
"""

from __future__ import annotations

import hashlib
import re

import pytest
from rigbench_testing import TELESCOPE, assert_problem
from sqlmodel import Session, select

from api.accounts.keys import authenticate, hmac
from api.cli import main
from api.storage.models import ApiKey

KEY = re.compile(r"rb_[A-Za-z0-9_-]{43}")


@pytest.fixture
def env(monkeypatch, app, settings):
    # The CLI reads the same database as the app under test.
    monkeypatch.setenv("RIGBENCH_DATABASE_URL", settings.database_url)
    monkeypatch.setenv("RIGBENCH_DATA_DIR", str(settings.data_dir))
    return app.state.engine


def last_line(capsys) -> str:
    return capsys.readouterr().out.strip().splitlines()[-1]


def test_listing_shows_prefixes_and_scopes_never_keys(env, client, alice, capsys):
    assert main(["accounts", "add-key", "alice", "--scope", "read"]) == 0
    read_key = last_line(capsys)
    assert KEY.fullmatch(read_key)
    assert main(["accounts", "keys", "alice"]) == 0
    listing = capsys.readouterr().out
    assert alice.key[:10] in listing and read_key[:10] in listing
    assert alice.key not in listing and read_key not in listing
    assert re.search(r"read .* live", listing) and re.search(r"write .* live", listing)
    assert client.get("/v1/accounts/me", headers={"Authorization": f"Bearer {read_key}"}).json()["key_scope"] == "read"


def test_a_revoked_key_is_refused_at_once(env, client, alice, capsys):
    assert client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).status_code == 201
    assert main(["accounts", "revoke-key", "alice", alice.key[:10]]) == 0
    assert "revoked" in capsys.readouterr().out.lower()
    assert_problem(client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers), 401)
    assert_problem(client.get("/v1/accounts/me", headers=alice.headers), 401)
    assert main(["accounts", "keys", "alice"]) == 0
    assert "revoked" in capsys.readouterr().out


def test_the_whole_key_also_names_it(env, client, alice, capsys):
    assert main(["accounts", "revoke-key", "alice", alice.key]) == 0
    assert alice.key not in capsys.readouterr().out  # never echoed, even when given
    assert_problem(client.get("/v1/accounts/me", headers=alice.headers), 401)


def test_rotation_gives_a_working_key_of_the_same_scope_and_revokes_the_old(env, client, make_account, capsys):
    club = make_account("lakeside-astro", kind="club", scope="read")
    assert main(["accounts", "rotate-key", "lakeside-astro", club.key]) == 0
    new_key = last_line(capsys)
    assert KEY.fullmatch(new_key) and new_key != club.key
    assert_problem(client.get("/v1/accounts/me", headers=club.headers), 401)
    me = client.get("/v1/accounts/me", headers={"Authorization": f"Bearer {new_key}"})
    assert me.json()["name"] == "lakeside-astro" and me.json()["key_scope"] == "read"


@pytest.mark.parametrize("args", [
    ["accounts", "revoke-key", "nobody", "rb_1234567"],
    ["accounts", "revoke-key", "alice", "rb_notmine"],
    ["accounts", "keys", "nobody"],
    ["accounts", "add-key", "nobody"],
])
def test_unknown_accounts_and_keys_are_errors(env, alice, capsys, args):
    assert main(args) == 2
    assert "error:" in capsys.readouterr().err


def test_a_key_of_another_account_cannot_be_revoked_through_this_one(env, alice, bob, capsys):
    assert main(["accounts", "revoke-key", "alice", bob.key]) == 2
    with Session(env) as session:
        assert authenticate(session, bob.key) is not None


def test_keys_are_kept_as_sha256_and_compared_in_constant_time(env, alice, monkeypatch):
    with Session(env) as session:
        [row] = session.exec(select(ApiKey)).all()
        # FIPS 180-4 SHA-256 of the whole key, hex: the only form in which a key is kept.
        assert row.key_hash == hashlib.sha256(alice.key.encode()).hexdigest()
        compared = []
        real = hmac.compare_digest
        monkeypatch.setattr(hmac, "compare_digest", lambda a, b: compared.append((a, b)) or real(a, b))
        assert authenticate(session, alice.key) is not None
        assert compared == [(row.key_hash, row.key_hash)]


def test_a_new_key_works_on_a_running_server_through_the_cli(env, client, alice, capsys):
    assert main(["accounts", "add-key", "alice"]) == 0
    key = last_line(capsys)
    assert client.post("/v1/telescopes", json=TELESCOPE, headers={"Authorization": f"Bearer {key}"}).status_code == 201
