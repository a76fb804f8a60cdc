"""Migration 0002_one_name_per_quantity: stored old designs and mount types come out in the new words."""

from __future__ import annotations

from datetime import UTC, datetime
from json import loads as json_loads

import sqlalchemy as sa
from alembic import command
from fastapi.testclient import TestClient

from api.app import create_app
from api.storage import db

REVISION = "0002_one_name_per_quantity"

OLD_TELESCOPE = {"name": "fast imager", "design": "astrograph", "aperture_mm": 100.0, "focal_length_mm": 400.0}
STATED_TELESCOPE = {**OLD_TELESCOPE, "name": "stated", "throughput": 0.9}
OLD_MOUNT = {"name": "gearless", "type": "harmonic-equatorial", "capacity_kg": 15.0}
CAMERA = {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}


def _table(name: str, *columns: str) -> sa.Table:
    return sa.table(name, *(sa.column(c) for c in columns))


ITEM = ("id", "owner_id", "visibility", "name", "spec", "version", "created_at", "updated_at")


def _old_database(engine):
    """A database at revision 0001 holding items in the old words, as the previous release stored
    them (written with the columns of that revision, not today's models)."""
    db.upgrade(engine, "0001")
    now = datetime.now(UTC)
    json = sa.JSON()
    with engine.begin() as connection:
        connection.execute(_table("accounts", "id", "name", "kind", "display_name", "location", "contact_url",
                                  "created_at").insert().values(
            id=1, name="olduser", kind="person", display_name="", location="", contact_url="", created_at=now))

        def item(table, row_id, name, spec, **refs):
            columns = ITEM + tuple(refs)
            connection.execute(_table(table, *columns).insert().values(
                id=row_id, owner_id=1, visibility="public", name=name,
                spec=sa.literal(spec, json), version=1, created_at=now, updated_at=now, **refs))

        item("telescopes", 1, "fast imager", OLD_TELESCOPE)
        item("telescopes", 2, "stated", STATED_TELESCOPE)
        item("mounts", 1, "gearless", OLD_MOUNT)
        item("rigs", 1, "inline old", {
            "name": "inline old", "telescope": OLD_TELESCOPE, "camera": CAMERA, "mount": OLD_MOUNT,
            "modifier": None, "accessories": [], "geometry": None,
        })
        item("rigs", 2, "by reference", {
            "name": "by reference", "telescope": {"id": 1}, "camera": CAMERA, "mount": {"id": 1},
            "modifier": None, "accessories": [], "geometry": None,
        }, telescope_id=1, mount_id=1)
    return (1, 2, 1), 1, 2


def _spec(engine, table: str, row_id: int) -> tuple[dict, int]:
    with engine.connect() as connection:
        spec, version = connection.execute(
            sa.select(sa.column("spec", sa.JSON), sa.column("version")).select_from(sa.table(table))
            .where(sa.column("id") == row_id)
        ).one()
    return (json_loads(spec) if isinstance(spec, str) else spec), version


def test_a_database_with_old_values_migrates_to_the_new_words(settings):
    app = create_app(settings)
    engine = app.state.engine
    (old_id, stated_id, mount_id), rig_id, ref_id = _old_database(engine)
    db.upgrade(engine)
    assert db.current_revision(engine) == db.head_revision()
    old, old_version = _spec(engine, "telescopes", old_id)
    stated, _ = _spec(engine, "telescopes", stated_id)
    mount, mount_version = _spec(engine, "mounts", mount_id)
    rig, _ = _spec(engine, "rigs", rig_id)
    by_ref, ref_version = _spec(engine, "rigs", ref_id)
    # The old default transmission of the dropped design is kept, so results do not move...
    assert old["design"] == "other" and old["throughput"] == 0.85 and old_version == 2
    # ...and a stated one is left alone.
    assert stated["design"] == "other" and stated["throughput"] == 0.9
    assert mount["type"] == "german-equatorial" and mount["drive"] == "strain-wave" and mount_version == 2
    assert rig["telescope"]["design"] == "other"
    assert rig["mount"] == {**OLD_MOUNT, "type": "german-equatorial", "drive": "strain-wave"}
    # A rig that only references the equipment is unchanged (its parts changed in their tables).
    assert ref_version == 1 and by_ref["telescope"] == {"id": old_id}

    with TestClient(app) as client:
        read = client.get(f"/v1/rigs/{ref_id}")
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
    (old_id, _stated, mount_id), rig_id, _ref = _old_database(engine)
    db.upgrade(engine, REVISION)
    command.downgrade(db.alembic_config(engine), "0001")
    assert _spec(engine, "mounts", mount_id)[0] == OLD_MOUNT
    assert _spec(engine, "rigs", rig_id)[0]["mount"] == OLD_MOUNT
    # The dropped design has no way back; "other" is valid in the old schema too.
    assert _spec(engine, "telescopes", old_id)[0]["design"] == "other"
    engine.dispose()
