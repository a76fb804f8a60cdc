"""api/storage/history.py: a line per change in the change's own transaction; deleting an account deletes its history."""

from __future__ import annotations

from sqlalchemy import delete, func
from sqlmodel import Session, select

from api.storage import history
from api.storage.club_models import HistoryRow
from api.storage.models import Account
from rigbench_testing import TELESCOPE


def count(app, **where) -> int:
    with Session(app.state.engine) as session:
        query = select(func.count()).select_from(HistoryRow)
        for column, value in where.items():
            query = query.where(getattr(HistoryRow, column) == value)
        return session.exec(query).one()


def test_changed_fields_name_only_what_differs():
    assert history.changed_fields({"a": 1, "b": 2}, {"a": 1, "b": 3, "c": 4}) == {
        "b": {"from": 2, "to": 3}, "c": {"from": None, "to": 4}}
    assert history.changed_fields({"name": "x" * 500}, {"name": "y"})["name"]["from"].endswith("…")


def test_a_refused_change_leaves_no_history(client, alice, bob, app):
    scope = client.post("/v1/telescopes", json=TELESCOPE, headers=alice.headers).json()["id"]
    assert client.patch(f"/v1/telescopes/{scope}", json={"aperture_mm": -1}, headers=alice.headers).status_code == 422
    assert client.patch(f"/v1/telescopes/{scope}", json={"name": "x"}, headers=bob.headers).status_code == 404
    assert count(app, kind="telescopes", item_id=scope) == 1  # only its creation


def test_deleting_an_account_deletes_its_history(client, alice, bob, app):
    scope = client.post("/v1/telescopes", json={**TELESCOPE, "visibility": "public"}, headers=alice.headers).json()["id"]
    client.patch(f"/v1/telescopes/{scope}", json={"name": "renamed"}, headers=alice.headers)
    client.post("/v1/telescopes", json=TELESCOPE, headers=bob.headers)
    with Session(app.state.engine) as session:
        alice_id = session.exec(select(Account.id).where(Account.name == "alice")).one()
        assert count(app, owner_id=alice_id) == 2
        session.execute(delete(Account).where(Account.id == alice_id))
        session.commit()
    assert count(app, owner_id=alice_id) == 0
    assert count(app, actor="bob") == 1  # others' history stays
