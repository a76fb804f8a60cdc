"""Demo data: an invented astronomy club with public rigs of generic equipment, and a member with
private items. Every name and number here is made up; no real product is described."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from sqlalchemy import Engine
from sqlmodel import Session, select

from api import schemas
from api.accounts.keys import Principal, add_key, create_account
from api.equipment import rules as resources
from api.equipment.rules import Resource
from api.storage.models import Account, AccountKind, KeyScope, StoredItem
from api.storage.store import insert

CLUB = "kestrel-ridge-astro"
MEMBER = "orla-demo"

EUR = {"currency": "EUR"}


def _price(amount: float) -> dict[str, Any]:
    return {"amount": amount, **EUR}


# Club equipment, by a short key used to wire the rigs below.
CLUB_EQUIPMENT: dict[str, tuple[Resource, dict[str, Any]]] = {
    "newtonian": (resources.TELESCOPES, {
        "name": "300 mm f/4 newtonian", "design": "newtonian", "aperture_mm": 300, "focal_length_mm": 1200,
        "obstruction_mm": 100, "mass_kg": 16, "length_mm": 1150, "tube_diameter_mm": 350,
        "spider_vanes": 4, "mirror_thickness_mm": 32, "image_circle_mm": 30,
        "outward_focus_travel_mm": 60, "price": _price(1600),
    }),
    "refractor": (resources.TELESCOPES, {
        "name": "80 mm f/6 refractor", "design": "refractor", "aperture_mm": 80, "focal_length_mm": 480,
        "mass_kg": 3.2, "length_mm": 520, "image_circle_mm": 36, "price": _price(900),
    }),
    "sct": (resources.TELESCOPES, {
        "name": "200 mm f/10 schmidt-cassegrain", "design": "schmidt-cassegrain", "aperture_mm": 200,
        "focal_length_mm": "2000 mm", "obstruction_mm": 70, "mass_kg": 6.4, "image_circle_mm": 30,
        "price": _price(1500),
    }),
    "dobsonian_200": (resources.TELESCOPES, {
        "name": "200 mm f/6 dobsonian tube", "design": "newtonian", "aperture_mm": 200, "focal_length_mm": 1200,
        "obstruction_mm": 50, "mass_kg": 9.5, "length_mm": 1180, "tube_diameter_mm": 240,
        "spider_vanes": 4, "mirror_thickness_mm": 25, "image_circle_mm": 18,
        "outward_focus_travel_mm": 45, "price": _price(450),
    }),
    "coma_corrector": (resources.TRAIN_ELEMENTS, {
        "name": "coma corrector 1.0x", "kind": "corrector", "factor": 1.0, "mass_kg": 0.4,
        "designs": ["newtonian"], "focal_ratio_min": 3.5, "focal_ratio_max": 6, "image_circle_mm": 44,
        "backfocus_mm": 55, "optical_length_mm": 25, "price": _price(250),
    }),
    "reducer_080": (resources.TRAIN_ELEMENTS, {
        "name": "reducer-flattener 0.8x", "kind": "reducer-flattener", "factor": 0.8, "mass_kg": 0.35,
        "designs": ["refractor"], "focal_ratio_min": 5, "focal_ratio_max": 7.5, "image_circle_mm": 40,
        "backfocus_mm": 55, "backfocus_tolerance_mm": 1, "optical_length_mm": 30, "price": _price(300),
    }),
    "reducer_063": (resources.TRAIN_ELEMENTS, {
        "name": "focal reducer 0.63x", "kind": "reducer", "factor": 0.63, "mass_kg": 0.3,
        "designs": ["schmidt-cassegrain"], "focal_ratio_min": 9.5, "focal_ratio_max": 11,
        "image_circle_mm": 26, "backfocus_mm": 105, "backfocus_tolerance_mm": 5,
        "optical_length_mm": 20, "price": _price(180),
    }),
    "filter_wheel": (resources.TRAIN_ELEMENTS, {
        "name": "filter wheel, 7 x 36 mm", "kind": "filter-wheel", "optical_length_mm": 20,
        "image_circle_mm": 34, "mass_kg": 0.8, "price": _price(600),
    }),
    "ha_filter": (resources.TRAIN_ELEMENTS, {
        "name": "hydrogen-alpha filter, 7 nm", "kind": "filter", "thickness_mm": 2, "refractive_index": 1.46,
        "centre_nm": 656.3, "bandwidth_nm": 7, "peak_transmission": 0.9, "price": _price(250),
    }),
    "off_axis_guider": (resources.TRAIN_ELEMENTS, {
        "name": "off-axis guider", "kind": "off-axis-guider", "optical_length_mm": 10,
        "image_circle_mm": 36, "mass_kg": 0.3, "price": _price(200),
    }),
    "spacer_15": (resources.TRAIN_ELEMENTS, {
        "name": "spacer 15 mm", "kind": "spacer", "optical_length_mm": 15, "mass_kg": 0.05,
        "price": _price(20),
    }),
    "spacer_37": (resources.TRAIN_ELEMENTS, {
        "name": "spacer 37.5 mm", "kind": "spacer", "optical_length_mm": 37.5, "mass_kg": 0.1,
        "price": _price(30),
    }),
    "eyepiece_25": (resources.TRAIN_ELEMENTS, {
        "name": "25 mm eyepiece, 52 degrees", "kind": "eyepiece", "focal_length_mm": 25,
        "apparent_field_deg": 52, "field_stop_mm": 21.5, "eye_relief_mm": 17, "mass_kg": 0.15,
        "price": _price(40),
    }),
    "eyepiece_9": (resources.TRAIN_ELEMENTS, {
        "name": "9 mm eyepiece, 82 degrees", "kind": "eyepiece", "focal_length_mm": 9,
        "apparent_field_deg": 82, "field_stop_mm": 12.5, "eye_relief_mm": 13, "mass_kg": 0.45,
        "price": _price(160),
    }),
    "mono_camera": (resources.CAMERAS, {
        "name": "cooled mono camera, 3.8 um pixels", "pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000,
        "quantum_efficiency": 0.8, "read_noise_e": 1.5, "dark_current_e_per_s": 0.003, "mass_kg": 0.9,
        "flange_to_sensor_mm": 17.5, "sensor": "mono", "price": _price(3500),
    }),
    "colour_camera": (resources.CAMERAS, {
        "name": "cooled colour camera, 3.0 um pixels", "pixel_size_um": 3.0, "width_px": 5000,
        "height_px": 3400, "quantum_efficiency": 0.75, "read_noise_e": 1.8, "mass_kg": 0.7,
        "flange_to_sensor_mm": 17.5, "sensor": "colour", "price": _price(1900),
    }),
    "heavy_mount": (resources.MOUNTS, {
        "name": "heavy german-equatorial mount, 50 kg", "type": "german-equatorial", "capacity_kg": 50,
        "mass_kg": 38, "price": _price(5500),
    }),
    "light_mount": (resources.MOUNTS, {
        "name": "light german-equatorial mount, 15 kg", "type": "german-equatorial", "capacity_kg": 15,
        "mass_kg": 9, "price": _price(1400),
    }),
    "dobsonian_base": (resources.MOUNTS, {
        "name": "dobsonian rocker box, 25 kg", "type": "dobsonian", "capacity_kg": 25, "mass_kg": 14,
        "price": _price(300),
    }),
}

#: The club's dobsonian-style telescopes (newtonian tubes) and the eyepieces lent with them.
DOBSONIAN_TELESCOPES = ("newtonian", "dobsonian_200")
EYEPIECES = ("eyepiece_25", "eyepiece_9")

CLUB_RIGS: list[dict[str, Any]] = [
    {
        "name": "Big newtonian imager", "telescope": "newtonian",
        "train": ["coma_corrector", "filter_wheel", "ha_filter", "spacer_15"],
        "camera": "mono_camera", "mount": "heavy_mount",
        "accessories": [{"name": "guide scope and camera", "mass_kg": 1.1, "price": _price(350)}],
        "geometry": {"payload_arm_mm": 320, "counterweight_kg": 24},
    },
    {
        "name": "Wide-field travel refractor", "telescope": "refractor", "train": ["reducer_080", "spacer_37"],
        "camera": "colour_camera", "mount": "light_mount",
        "accessories": [{"name": "guide scope and camera", "mass_kg": 0.6, "price": _price(250)}],
        "geometry": {"payload_arm_mm": 180, "counterweight_kg": 5},
    },
    {
        "name": "Reduced SCT for galaxies", "telescope": "sct",
        "train": ["reducer_063", "off_axis_guider", "filter_wheel"],
        "camera": "mono_camera", "mount": "heavy_mount",
        "geometry": {"payload_arm_mm": 250, "counterweight_kg": 12},
    },
] + [
    # Visual rigs: each dobsonian-style tube on the rocker box with each eyepiece, no camera.
    {"name": f"{CLUB_EQUIPMENT[scope][1]['name']} + {CLUB_EQUIPMENT[eyepiece][1]['focal_length_mm']} mm eyepiece",
     "telescope": scope, "train": [eyepiece], "mount": "dobsonian_base"}
    for scope in DOBSONIAN_TELESCOPES for eyepiece in EYEPIECES
]


@dataclass(frozen=True)
class DemoInfo:
    club: str
    club_key: str
    member: str
    member_key: str


def _store(session: Session, principal: Principal, resource: Resource, body: dict[str, Any]) -> StoredItem:
    model = resource.create.model_validate(body)
    return insert(session, resource.table, principal, resource.prepare(session, principal, model))


#: The club's observing field, an invented suburban site (demo figures).
DEMO_SITE = {
    "name": "Kestrel Ridge club field (suburban)", "latitude_deg": 52.0, "elevation_m": 140,
    "seeing_fwhm_arcsec": 3.0, "sky_brightness_mag_arcsec2": 19.5, "night_temperature_c": 6.0,
    "relative_humidity_percent": 80,
}


def _seed_site(session: Session, club_as: Principal) -> None:
    """The club's public observing site, set as its default site."""
    from api.sites.resource import SITES

    site = _store(session, club_as, SITES, {**DEMO_SITE, "visibility": "public"})
    club = session.get(Account, club_as.account.id)
    club.default_site_id = site.id
    session.add(club)
    session.commit()


def seed_demo(engine: Engine) -> DemoInfo:
    """Create the demo club and member with their equipment, or give them fresh keys if they exist."""
    with Session(engine) as session:
        existing = session.exec(select(Account).where(Account.name == CLUB)).first()
        if existing is not None:
            member = session.exec(select(Account).where(Account.name == MEMBER)).one()
            club_key, member_key = add_key(session, existing), add_key(session, member)
            session.commit()
            return DemoInfo(CLUB, club_key, MEMBER, member_key)

        club, club_key = create_account(
            session, CLUB, AccountKind.club, display_name="Kestrel Ridge Astronomy Club (demo)",
            location="An invented hill town", contact_url="https://example.org/kestrel-ridge-astro",
        )
        club_as = Principal(club, KeyScope.write)
        ids = {
            key: _store(session, club_as, resource, {**spec, "visibility": "public"}).id
            for key, (resource, spec) in CLUB_EQUIPMENT.items()
        }
        for rig in CLUB_RIGS:
            body = {**rig, "visibility": "public"}
            for slot in schemas.RIG_SLOTS:
                if slot in rig:
                    body[slot] = {"id": ids[rig[slot]]}
            body["train"] = [{"id": ids[key]} for key in rig.get("train", [])]
            _store(session, club_as, resources.RIGS, body)

        _seed_site(session, club_as)

        member, member_key = create_account(
            session, MEMBER, AccountKind.person, display_name="Orla (demo member)", location="Kestrel Ridge",
        )
        member_as = Principal(member, KeyScope.write)
        scope = _store(session, member_as, resources.TELESCOPES, {
            "name": "130 mm f/5 newtonian", "design": "newtonian", "aperture_mm": 130, "focal_length_mm": 650,
            "obstruction_mm": 40, "mass_kg": 5.5, "price": _price(450),
        })
        camera = _store(session, member_as, resources.CAMERAS, {
            "name": "uncooled colour camera, 2.9 um pixels", "pixel_size_um": 2.9, "width_px": 3800,
            "height_px": 2500, "mass_kg": 0.4, "price": _price(500),
        })
        # A private rig on the club's public mount: members may build on club equipment.
        _store(session, member_as, resources.RIGS, {
            "name": "Back-garden newtonian", "telescope": {"id": scope.id}, "camera": {"id": camera.id},
            "mount": {"id": ids["light_mount"]}, "geometry": {"payload_arm_mm": 200, "counterweight_kg": 5},
        })
        return DemoInfo(CLUB, club_key, MEMBER, member_key)
