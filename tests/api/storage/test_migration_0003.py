"""api/storage/migrations/versions/0003_imaging_train.py: stored modifiers become train elements.

A database is brought to the revision before this one and filled the way the service wrote it then
(a ``modifiers`` table, rigs with a ``modifier`` slot inline or by id); after the upgrade every
rig must compare exactly as its old body does. The "before" results come from the old bodies sent
inline (this release still reads a ``modifier`` slot), the "after" results from the migrated rigs
by id, both through ``POST /v1/comparisons``; they must be identical, number for number.
"""

from __future__ import annotations

from datetime import UTC, datetime

import sqlalchemy as sa
from alembic.script import ScriptDirectory
from fastapi.testclient import TestClient

from api.app import create_app
from api.storage import db
from calculators.schemas import Camera, Modifier, Mount, Telescope

REVISION = "0003_imaging_train"
NOW = datetime(2026, 12, 1, 12, 0, tzinfo=UTC)
# Fields this release added; a row written before it has none of them.
NEW_FIELDS = {"image_circle_mm", "outward_focus_travel_mm", "flange_to_sensor_mm", "sensor"}


def old_dump(model) -> dict:
    return {k: v for k, v in model.model_dump(mode="json").items() if k not in NEW_FIELDS}


def eur(amount):
    return {"amount": amount, "currency": "EUR"}


SCOPE = old_dump(Telescope(name="120 mm f/7 refractor", design="refractor", aperture_mm=120,
                           focal_length_mm=840, mass_kg=6.5, length_mm=800, price=eur(1200)))
NEWT = old_dump(Telescope(name="200 mm f/5 newtonian", design="newtonian", aperture_mm=200,
                          focal_length_mm=1000, obstruction_mm=70, mass_kg=9, length_mm=950,
                          tube_diameter_mm=235, spider_vanes=4, mirror_thickness_mm=25, price=eur(700)))
CAMERA = old_dump(Camera(name="3.8 um camera", pixel_size_um=3.8, width_px=6000, height_px=4000,
                         quantum_efficiency=0.8, read_noise_e=1.5, dark_current_e_per_s=0.003,
                         mass_kg=0.8, price=eur(1500)))
MOUNT = old_dump(Mount(name="mount 20 kg", capacity_kg=20, mass_kg=15, price=eur(1300)))
REDUCER = old_dump(Modifier(name="reducer 0.8x", kind="reducer-flattener", factor=0.8, mass_kg=0.35,
                            corrected_field_mm=40, price=eur(300)))
CORRECTOR = old_dump(Modifier(name="coma corrector", kind="corrector", factor=1.0, mass_kg=0.4,
                              corrected_field_mm=44, throughput=0.96, price=eur(250)))
BARLOW = old_dump(Modifier(name="barlow 2x", kind="barlow", factor=2.0, mass_kg=0.2))
# The old schema took any factor for any kind; a "reducer" of 1.25 becomes a corrector.
ODD = old_dump(Modifier(name="odd reducer", kind="reducer", factor=1.25))


def write_old_rows(engine) -> tuple[list[int], list[dict], dict[str, int]]:
    """Rows as the service wrote them before this revision; the rigs' ids and their old bodies
    with every stored component filled in."""
    tables = sa.MetaData()
    tables.reflect(engine)
    stamp = {"created_at": NOW, "updated_at": NOW, "version": 1}

    def item(connection, table, spec, visibility="public"):
        return connection.execute(tables.tables[table].insert().values(
            owner_id=owner, visibility=visibility, name=spec.get("name"), spec=spec, **stamp,
        )).inserted_primary_key[0]

    with engine.begin() as connection:
        owner = connection.execute(tables.tables["accounts"].insert().values(
            name="old-timer", kind="person", display_name="", location="", contact_url="",
            created_at=NOW)).inserted_primary_key[0]
        ids = {
            "scope": item(connection, "telescopes", SCOPE),
            "camera": item(connection, "cameras", CAMERA),
            "mount": item(connection, "mounts", MOUNT),
            "corrector": item(connection, "modifiers", CORRECTOR),
            "barlow": item(connection, "modifiers", BARLOW, visibility="private"),
        }
        rigs = [
            # stored telescope, camera and mount; the modifier inline
            ({"name": "reduced refractor", "telescope": {"id": ids["scope"]}, "modifier": REDUCER,
              "camera": {"id": ids["camera"]}, "mount": {"id": ids["mount"]},
              "accessories": [{"name": "guide scope", "mass_kg": 1.0, "price": eur(200)}],
              "geometry": {"payload_arm_mm": 250, "counterweight_kg": 9}},
             {"telescope_id": ids["scope"], "camera_id": ids["camera"], "mount_id": ids["mount"]}),
            # the modifier stored, the rest inline
            ({"name": "corrected newtonian", "telescope": NEWT, "modifier": {"id": ids["corrector"]},
              "camera": CAMERA, "mount": MOUNT, "accessories": [], "geometry": None},
             {"modifier_id": ids["corrector"]}),
            ({"name": "barlowed newtonian", "telescope": NEWT, "modifier": {"id": ids["barlow"]},
              "camera": CAMERA, "mount": None, "accessories": [], "geometry": None},
             {"modifier_id": ids["barlow"]}),
            ({"name": "bare refractor", "telescope": SCOPE, "modifier": None, "camera": CAMERA,
              "mount": None, "accessories": [], "geometry": None}, {}),
            ({"name": "odd one", "telescope": SCOPE, "modifier": ODD, "camera": CAMERA, "mount": None,
              "accessories": [], "geometry": None}, {}),
        ]
        rig_ids = [connection.execute(tables.tables["rigs"].insert().values(
            owner_id=owner, visibility="private", name=spec["name"], spec=spec, **refs, **stamp,
        )).inserted_primary_key[0] for spec, refs in rigs]

    stored = {("telescope", ids["scope"]): SCOPE, ("camera", ids["camera"]): CAMERA,
              ("mount", ids["mount"]): MOUNT, ("modifier", ids["corrector"]): CORRECTOR,
              ("modifier", ids["barlow"]): BARLOW}
    bodies = []
    for spec, _ in rigs:
        body = dict(spec)
        for slot in ("telescope", "modifier", "camera", "mount"):
            value = body.get(slot)
            if isinstance(value, dict) and set(value) == {"id"}:
                body[slot] = stored[(slot, value["id"])]
        bodies.append(body)
    return rig_ids, bodies, ids


def results(answer: dict) -> dict:
    return {name: (r["error"], {o: v["values"] for o, v in r["outputs"].items()})
            for name, r in answer["results"].items()}


def test_every_rig_compares_the_same_before_and_after_the_migration(settings):
    engine = db.make_engine(settings.database_url)
    previous = ScriptDirectory.from_config(db.alembic_config()).get_revision(REVISION).down_revision
    db.upgrade(engine, previous)
    rig_ids, old_bodies, ids = write_old_rows(engine)
    db.upgrade(engine)
    engine.dispose()

    with TestClient(create_app(settings)) as client:
        before = client.post("/v1/comparisons", json={"rigs": old_bodies})
        after = client.post("/v1/comparisons", json={"rigs": [{"id": i} for i in rig_ids]})
        # Private rigs compared by id need their owner's key, which the old rows have none of:
        # the comparison reads them as an anonymous caller would, so make them public first.
        assert after.status_code == 422
    with db.make_engine(settings.database_url).begin() as connection:
        connection.execute(sa.text("UPDATE rigs SET visibility = 'public'"))
        connection.execute(sa.text("UPDATE train_elements SET visibility = 'public'"))
    with TestClient(create_app(settings)) as client:
        after = client.post("/v1/comparisons", json={"rigs": [{"id": i} for i in rig_ids]})
        assert before.status_code == after.status_code == 200, (before.text, after.text)
        assert results(after.json()) == results(before.json())

        # The rigs now hold trains: one element where the modifier was, none where it was null.
        rigs = [client.get(f"/v1/rigs/{i}").json() for i in rig_ids]
        assert [len(r["train"]) for r in rigs] == [1, 1, 1, 0, 1]
        assert rigs[1]["train"] == [{"id": ids["corrector"]}]
        assert rigs[0]["resolved"]["train"][0]["image_circle_mm"] == 40  # was corrected_field_mm
        assert rigs[4]["resolved"]["train"][0]["kind"] == "corrector"  # a 1.25 "reducer"
        # The stored modifiers kept their ids, under both names of the resource.
        corrector = client.get(f"/v1/train-elements/{ids['corrector']}").json()
        assert corrector["kind"] == "corrector" and corrector["image_circle_mm"] == 44
        assert client.get(f"/v1/modifiers/{ids['corrector']}").json() == corrector
        # and a rig still holds on to them: the database refuses to drop one in use.
        with db.make_engine(settings.database_url).begin() as connection:
            used = connection.execute(sa.text("SELECT train_0_id FROM rigs WHERE id = :i"),
                                      {"i": rig_ids[1]}).scalar()
        assert used == ids["corrector"]


def test_the_migration_goes_down_to_one_modifier_per_rig(settings):
    engine = db.make_engine(settings.database_url)
    previous = ScriptDirectory.from_config(db.alembic_config()).get_revision(REVISION).down_revision
    db.upgrade(engine, previous)
    rig_ids, old_bodies, ids = write_old_rows(engine)
    db.upgrade(engine)
    from alembic import command

    command.downgrade(db.alembic_config(engine), previous)
    with engine.connect() as connection:
        rows = connection.execute(sa.text("SELECT spec, modifier_id FROM rigs ORDER BY id")).all()
        kept = connection.execute(sa.text("SELECT id FROM modifiers ORDER BY id")).scalars().all()
    engine.dispose()
    import json

    specs = [json.loads(s) if isinstance(s, str) else s for s, _ in rows]
    assert [s["modifier"] for s in specs][1:4] == [{"id": ids["corrector"]}, {"id": ids["barlow"]}, None]
    assert specs[0]["modifier"]["corrected_field_mm"] == 40
    assert [m for _, m in rows] == [None, ids["corrector"], ids["barlow"], None, None]
    assert kept == [ids["corrector"], ids["barlow"]]
