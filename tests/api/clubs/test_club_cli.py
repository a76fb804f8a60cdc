"""api/clubs/cli.py: `rigbench clubs add-member CLUB PERSON --role officer|member`, `remove-member`, `members`."""

from __future__ import annotations

import pytest

from api.cli import main
from api.storage import db


@pytest.fixture
def env(monkeypatch, database_url, tmp_path):
    monkeypatch.setenv("RIGBENCH_DATABASE_URL", database_url)
    monkeypatch.setenv("RIGBENCH_DATA_DIR", str(tmp_path / "data"))
    engine = db.make_engine(database_url)
    db.upgrade(engine)
    yield engine
    engine.dispose()


def test_add_two_officers_and_a_member_then_list_and_remove(env, capsys):
    assert main(["accounts", "create", "kestrel-ridge", "--kind", "club"]) == 0
    for person in ("olive", "oscar", "mira"):
        assert main(["accounts", "create", person]) == 0
    capsys.readouterr()
    assert main(["clubs", "add-member", "kestrel-ridge", "olive", "--role", "officer"]) == 0
    assert main(["clubs", "add-member", "kestrel-ridge", "oscar", "--role", "officer"]) == 0
    assert main(["clubs", "add-member", "kestrel-ridge", "mira", "--role", "member"]) == 0
    assert capsys.readouterr().out.splitlines()[0] == "olive is now officer of kestrel-ridge"
    assert main(["clubs", "members", "kestrel-ridge"]) == 0
    listed = [line.split()[:2] for line in capsys.readouterr().out.splitlines()]
    assert listed == [["mira", "member"], ["olive", "officer"], ["oscar", "officer"]]
    assert main(["clubs", "remove-member", "kestrel-ridge", "mira"]) == 0
    assert main(["clubs", "members", "kestrel-ridge"]) == 0
    assert "mira" not in capsys.readouterr().out.split("kestrel-ridge\n")[-1]


def test_a_club_cannot_be_made_a_member_and_a_person_is_no_club(env, capsys):
    for args in (["accounts", "create", "kestrel-ridge", "--kind", "club"],
                 ["accounts", "create", "dark-sky", "--kind", "club"], ["accounts", "create", "mira"]):
        assert main(args) == 0
    capsys.readouterr()
    assert main(["clubs", "add-member", "kestrel-ridge", "dark-sky", "--role", "member"]) == 2
    assert "club account" in capsys.readouterr().err
    assert main(["clubs", "add-member", "mira", "kestrel-ridge"]) == 2
    assert "no club named 'mira'" in capsys.readouterr().err
    with pytest.raises(SystemExit):
        main(["clubs", "add-member", "kestrel-ridge", "mira", "--role", "treasurer"])
