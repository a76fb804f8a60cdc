"""Migration 0002_one_name_per_quantity: stored old designs and mount types come out in the new words."""

from __future__ import annotations

from alembic import command
from fastapi.testclient import TestClient
from sqlmodel import Session

from api.app import create_app
from api.accounts.keys import create_account
from api.storage import db
from api.storage.models import AccountKind, MountRow, RigRow, TelescopeRow

REVISION = "0002_one_name_per_quantity"

OLD_TELESCOPE = {"name": "fast imager", "design": "astrograph", "aperture_mm": 100.0, "focal_length_mm": 400.0}
STATED_TELESCOPE = {**OLD_TELESCOPE, "name": "stated", "throughput": 0.9}
OLD_MOUNT = {"name": "gearless", "type": "harmonic-equatorial", "capacity_kg": 15.0}
CAMERA = {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}


def _old_database(engine):
    """A database at revision 0001 holding items in the old words, as the previous release stored them."""
    db.upgrade(engine, "0001")
    with Session(engine) as session:
        account, key = create_account(session, "olduser", AccountKind.person)
        rows = [
            TelescopeRow(owner_id=account.id, visibility="public", name="fast imager", spec=OLD_TELESCOPE),
            TelescopeRow(owner_id=account.id, visibility="public", name="stated", spec=STATED_TELESCOPE),
            MountRow(owner_id=account.id, visibility="public", name="gearless", spec=OLD_MOUNT),
        ]
        session.add_all(rows)
        session.flush()
        rig = RigRow(owner_id=account.id, visibility="public", name="inline old", spec={
            "name": "inline old", "telescope": OLD_TELESCOPE, "camera": CAMERA, "mount": OLD_MOUNT,
            "modifier": None, "accessories": [], "geometry": None,
        })
        by_ref = RigRow(owner_id=account.id, visibility="public", name="by reference",
                        telescope_id=rows[0].id, mount_id=rows[2].id, spec={
            "name": "by reference", "telescope": {"id": rows[0].id}, "camera": CAMERA,
            "mount": {"id": rows[2].id}, "modifier": None, "accessories": [], "geometry": None,
        })
        session.add_all([rig, by_ref])
        session.commit()
        return key, [r.id for r in rows], rig.id, by_ref.id


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
        assert session.get(MountRow, mount_id).spec == OLD_MOUNT
        assert session.get(RigRow, rig_id).spec["mount"] == OLD_MOUNT
        # The dropped design has no way back; "other" is valid in the old schema too.
        assert session.get(TelescopeRow, _old).spec["design"] == "other"
    engine.dispose()
