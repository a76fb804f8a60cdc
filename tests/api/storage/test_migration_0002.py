"""Migration 0002_one_name_per_quantity: stored old designs and mount types come out in the new words."""

from __future__ import annotations

import json
from datetime import UTC, datetime

from alembic import command
from sqlalchemy import text
from fastapi.testclient import TestClient
from sqlmodel import Session

from api.app import create_app
from api.accounts.keys import hash_key, new_key
from api.storage import db
from api.storage.models import AccountKind, MountRow, RigRow, TelescopeRow

REVISION = "0002_one_name_per_quantity"

OLD_TELESCOPE = {"name": "fast imager", "design": "astrograph", "aperture_mm": 100.0, "focal_length_mm": 400.0}
STATED_TELESCOPE = {**OLD_TELESCOPE, "name": "stated", "throughput": 0.9}
OLD_MOUNT = {"name": "gearless", "type": "harmonic-equatorial", "capacity_kg": 15.0}
CAMERA = {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}


def _insert(session, table: str, **values) -> int:
    """A row written with the columns of revision 0001 only (the models of today have more)."""
    now = datetime.now(UTC)
    values = {"version": 1, "created_at": now, "updated_at": now, **values, "spec": json.dumps(values["spec"])}
    names = ", ".join(values)
    marks = ", ".join(f":{name}" for name in values)
    return session.execute(text(f"INSERT INTO {table} ({names}) VALUES ({marks}) RETURNING id"), values).scalar_one()


def _old_database(engine):
    """A database at revision 0001 holding items in the old words, as the previous release stored them."""
    db.upgrade(engine, "0001")
    with Session(engine) as session:
        owner = session.execute(text(
            "INSERT INTO accounts (name, kind, display_name, location, contact_url, created_at) "
            "VALUES ('olduser', 'person', 'olduser', '', '', :now) RETURNING id"), {"now": datetime.now(UTC)}).scalar_one()
        key = new_key()
        session.execute(text("INSERT INTO api_keys (account_id, key_hash, prefix, scope, created_at) "
                             "VALUES (:owner, :hash, :prefix, 'write', :now)"),
                        {"owner": owner, "hash": hash_key(key), "prefix": key[:10], "now": datetime.now(UTC)})
        account = type("OldAccount", (), {"id": owner})
        ids = [
            _insert(session, "telescopes", owner_id=account.id, visibility="public", name="fast imager", spec=OLD_TELESCOPE),
            _insert(session, "telescopes", owner_id=account.id, visibility="public", name="stated", spec=STATED_TELESCOPE),
            _insert(session, "mounts", owner_id=account.id, visibility="public", name="gearless", spec=OLD_MOUNT),
        ]
        rig = _insert(session, "rigs", owner_id=account.id, visibility="public", name="inline old", spec={
            "name": "inline old", "telescope": OLD_TELESCOPE, "camera": CAMERA, "mount": OLD_MOUNT,
            "modifier": None, "accessories": [], "geometry": None,
        })
        by_ref = _insert(session, "rigs", owner_id=account.id, visibility="public", name="by reference",
                         telescope_id=ids[0], mount_id=ids[2], spec={
            "name": "by reference", "telescope": {"id": ids[0]}, "camera": CAMERA,
            "mount": {"id": ids[2]}, "modifier": None, "accessories": [], "geometry": None,
        })
        session.commit()
        return key, ids, rig, by_ref


def test_a_database_with_old_values_migrates_to_the_new_words(settings):
    app = create_app(settings)
    engine = app.state.engine
    key, (old_id, stated_id, mount_id), rig_id, ref_id = _old_database(engine)
    db.upgrade(engine)
    assert db.current_revision(engine) == db.head_revision()
    with Session(engine) as session:
        old = session.get(TelescopeRow, old_id)
        stated = session.get(TelescopeRow, stated_id)
        mount = session.get(MountRow, mount_id)
        rig = session.get(RigRow, rig_id)
        by_ref = session.get(RigRow, ref_id)
        # The old default transmission of the dropped design is kept, so results do not move...
        assert old.spec["design"] == "other" and old.spec["throughput"] == 0.85 and old.version == 2
        # ...and a stated one is left alone.
        assert stated.spec["design"] == "other" and stated.spec["throughput"] == 0.9
        assert mount.spec["type"] == "german-equatorial" and mount.spec["drive"] == "strain-wave"
        assert mount.version == 2
        assert rig.spec["telescope"]["design"] == "other"
        assert rig.spec["mount"] == {**OLD_MOUNT, "type": "german-equatorial", "drive": "strain-wave"}
        # A rig that only references the equipment is unchanged (its parts changed in their tables).
        assert by_ref.version == 1 and by_ref.spec["telescope"] == {"id": old_id}

    with TestClient(app) as client:
        headers = {"Authorization": f"Bearer {key}"}
        read = client.get(f"/v1/rigs/{ref_id}", headers=headers)
        assert read.status_code == 200, read.text
        assert read.json()["resolved"]["mount"]["drive"] == "strain-wave"
        assert client.get(f"/v1/mounts/{mount_id}").headers["ETag"] != '"1"'
        # The migrated rows still compute as before: 0.85 of the clear aperture.
        compared = client.post("/v1/comparisons", json={"rigs": [{"id": rig_id}], "calculators": ["speed"]})
        assert compared.status_code == 200, compared.text
        assert compared.json()["results"]["speed"]["outputs"]["throughput"]["values"] == [0.85]
    engine.dispose()


def test_downgrade_gives_the_old_mount_type_back_and_drops_the_drive(settings):
    app = create_app(settings)
    engine = app.state.engine
    _key, (_old, _stated, mount_id), rig_id, _ref = _old_database(engine)
    db.upgrade(engine, REVISION)
    command.downgrade(db.alembic_config(engine), "0001")
    with Session(engine) as session:
        def spec(table: str, item_id: int) -> dict:
            # Read with the columns of revision 0001 only (the models of today have more).
            found = session.execute(text(f"SELECT spec FROM {table} WHERE id = :id"), {"id": item_id}).scalar_one()
            return json.loads(found) if isinstance(found, str) else found

        assert spec("mounts", mount_id) == OLD_MOUNT
        assert spec("rigs", rig_id)["mount"] == OLD_MOUNT
        # The dropped design has no way back; "other" is valid in the old schema too.
        assert spec("telescopes", _old)["design"] == "other"
    engine.dispose()
