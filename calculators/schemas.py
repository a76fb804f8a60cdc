"""Rig schemas: the validated, canonical-unit description of equipment that calculators read.

Lengths are in millimetres and masses in kilograms (the unit is in each field name); each such
field also accepts a string with a unit, parsed with pint (see :mod:`calculators.units`).
Unknown fields are rejected rather than silently dropped.
"""

from __future__ import annotations

from enum import StrEnum
from typing import Annotated

from pydantic import BaseModel, BeforeValidator, ConfigDict, Field, ValidationInfo, field_validator, model_validator

from calculators.units import (
    Micrometres,
    Millimetres,
    NonNegativeKilograms,
    NonNegativeMillimetres,
    PositiveKilograms,
    PositiveMillimetres,
)

Name = Annotated[str, Field(min_length=1, max_length=120)]
Throughput = Annotated[float, Field(gt=0, le=1)]


MIN_FOCAL_RATIO = 0.5

#: Largest aperture: 50 m, above the largest telescopes ever planned (about 40 m).
MAX_APERTURE_MM = 50_000.0
#: Longest focal length: 1 km (the longest effective focal lengths of giant telescopes' instruments
#: are some hundreds of metres; an amateur's, a few metres). Every other length: 1 km as well
#: (calculators.units.MAX_LENGTH_MM); every mass at most 100 t (MAX_MASS_KG).
MAX_FOCAL_LENGTH_MM = 1_000_000.0


def check_focal_ratio(ratio: float) -> None:
    """Refuse an (effective) focal ratio below 0.5, which no real optical system reaches."""
    if ratio < MIN_FOCAL_RATIO:
        raise ValueError(
            f"gives a focal ratio of {ratio:.3g}, below the physical minimum of {MIN_FOCAL_RATIO}; "
            "check focal_length_mm, aperture_mm and the train's factors"
        )


class Strict(BaseModel):
    """Base for every input schema: unknown fields and non-finite numbers are errors."""

    model_config = ConfigDict(extra="forbid", allow_inf_nan=False)


class Price(Strict):
    amount: float = Field(ge=0, le=1e12, description="Price in the given currency.")
    currency: str = Field(
        pattern=r"^[A-Z]{3}$",
        description="ISO 4217 alphabetic currency code, e.g. EUR.",
        examples=["EUR"],
    )


class Design(StrEnum):
    """Optical designs, by their trade names (what a telescope is used for is not a design)."""

    refractor = "refractor"
    newtonian = "newtonian"
    schmidt_cassegrain = "schmidt-cassegrain"
    ritchey_chretien = "ritchey-chretien"
    maksutov_cassegrain = "maksutov-cassegrain"
    dall_kirkham = "dall-kirkham"
    schmidt_newtonian = "schmidt-newtonian"
    maksutov_newtonian = "maksutov-newtonian"
    other = "other"


# Typical total optical transmission of the bare telescope, used when `throughput` is not given.
# Common practice (no single published source): protected aluminium ~0.90 per reflection,
# a multi-coated refractor ~0.95, a full-aperture corrector plate or meniscus ~0.92.
DEFAULT_THROUGHPUT: dict[Design, float] = {
    Design.refractor: 0.95,
    Design.newtonian: 0.81,
    Design.schmidt_cassegrain: 0.75,
    Design.ritchey_chretien: 0.81,
    Design.maksutov_cassegrain: 0.75,
    Design.dall_kirkham: 0.81,
    Design.schmidt_newtonian: 0.75,
    Design.maksutov_newtonian: 0.75,
    Design.other: 0.80,
}

# Renamed values, accepted for one release (README, "Renamed in this release"). "astrograph" names a
# purpose, not a design: such a telescope becomes "other", keeping the 0.85 default transmission the
# old value had when it states none, so its results do not change.
OLD_DESIGNS = {"astrograph": Design.other}
OLD_DESIGN_THROUGHPUT = 0.85


def _old_design(value):
    return OLD_DESIGNS.get(value, value) if isinstance(value, str) else value


def upgrade_old_telescope(data):
    """A telescope body in the previous release's words, in this release's (see ``OLD_DESIGNS``)."""
    if isinstance(data, dict) and isinstance(data.get("design"), str) and data["design"] in OLD_DESIGNS:
        data = {**data, "design": OLD_DESIGNS[data["design"]].value}
        if data.get("throughput") is None:
            data["throughput"] = OLD_DESIGN_THROUGHPUT
    return data


class Telescope(Strict):
    name: Name | None = None
    design: Annotated[Design, BeforeValidator(_old_design)] = Field(
        default=Design.other, description="Optical design; sets default transmission, spikes, coma."
    )
    aperture_mm: Annotated[Millimetres, Field(gt=0, le=MAX_APERTURE_MM)] = Field(
        description="Clear aperture (at most 50 m)."
    )
    focal_length_mm: Annotated[Millimetres, Field(gt=0, le=MAX_FOCAL_LENGTH_MM)] = Field(
        description="Focal length of the bare telescope (at most 1 km)."
    )
    obstruction_mm: NonNegativeMillimetres = Field(
        default=0.0, description="Central obstruction diameter; 0 for an unobstructed design."
    )
    throughput: Throughput | None = Field(
        default=None,
        description="Total optical transmission 0-1; when omitted, a per-design default "
        "(common practice) is used.",
    )
    mass_kg: NonNegativeKilograms | None = None
    length_mm: PositiveMillimetres | None = None
    tube_diameter_mm: PositiveMillimetres | None = None
    spider_vanes: int | None = Field(default=None, ge=0, le=16)
    mirror_thickness_mm: PositiveMillimetres | None = None
    image_circle_mm: PositiveMillimetres | None = Field(
        default=None, description="Diameter of the fully illuminated field at focus, if stated."
    )
    outward_focus_travel_mm: NonNegativeMillimetres | None = Field(
        default=None, le=1000,
        description="How far behind the focuser's face, racked fully in, the focus lies (designs "
        "whose focus can run out, such as newtonians); the train and the camera's flange distance "
        "must fit in it.",
    )
    price: Price | None = None

    @model_validator(mode="before")
    @classmethod
    def _old_names(cls, data):
        return upgrade_old_telescope(data)

    # Cross-field rules are field validators (fields validate in declaration order), so the
    # error's location names the offending field.
    @field_validator("focal_length_mm")
    @classmethod
    def _focal_ratio_possible(cls, value: float, info: ValidationInfo) -> float:
        aperture = info.data.get("aperture_mm")
        if aperture is not None:
            check_focal_ratio(value / aperture)
        return value

    @field_validator("obstruction_mm")
    @classmethod
    def _obstruction_smaller_than_aperture(cls, value: float, info: ValidationInfo) -> float:
        aperture = info.data.get("aperture_mm")
        if aperture is not None and value >= aperture:
            raise ValueError(f"must be smaller than aperture_mm ({aperture:g} mm), got {value:g} mm")
        return value

    @property
    def effective_throughput(self) -> float:
        return self.throughput if self.throughput is not None else DEFAULT_THROUGHPUT[self.design]


class ModifierKind(StrEnum):
    """Kinds of the old single-element slot (deprecated: see :class:`Modifier`)."""

    reducer = "reducer"
    corrector = "corrector"
    flattener = "flattener"
    reducer_flattener = "reducer-flattener"
    barlow = "barlow"


# Common practice: a few multi-coated elements pass about 97-98% of the light.
DEFAULT_MODIFIER_THROUGHPUT: dict[ModifierKind, float] = {
    ModifierKind.reducer: 0.97,
    ModifierKind.corrector: 0.97,
    ModifierKind.flattener: 0.98,
    ModifierKind.reducer_flattener: 0.97,
    ModifierKind.barlow: 0.96,
}


class Modifier(Strict):
    """The old single optical element of a rig, read for one release (deprecated).

    A rig's ``modifier`` becomes a one-element ``train``; :meth:`to_element` gives that element.
    """

    name: Name | None = None
    kind: ModifierKind
    factor: float = Field(gt=0, le=10, description="Multiplies the telescope's focal length.")
    throughput: Throughput | None = None
    mass_kg: NonNegativeKilograms | None = None
    price: Price | None = None
    corrected_field_mm: PositiveMillimetres | None = Field(
        default=None, description="Diameter of the well-corrected image circle, if stated."
    )

    @property
    def effective_throughput(self) -> float:
        if self.throughput is not None:
            return self.throughput
        return DEFAULT_MODIFIER_THROUGHPUT[self.kind]

    def to_element(self) -> dict:
        """The train element this modifier stands for (a reducer or barlow whose factor is on
        the wrong side of 1 becomes a corrector, the kind that takes any factor)."""
        return modifier_to_element(self.model_dump(exclude_none=True))


def modifier_to_element(spec: dict) -> dict:
    """An old modifier's spec (a dict, as stored or sent) as a train element's spec."""
    spec = dict(spec)
    if "corrected_field_mm" in spec:
        spec["image_circle_mm"] = spec.pop("corrected_field_mm")
    kind, factor = spec.get("kind"), spec.get("factor", 1.0)
    if (kind in ("reducer", "reducer-flattener") and factor > 1) or (kind == "barlow" and factor < 1):
        spec["kind"] = "corrector"
    return spec


class SensorType(StrEnum):
    mono = "mono"
    colour = "colour"


class Camera(Strict):
    name: Name | None = None
    pixel_size_um: Micrometres = Field(gt=0, le=100, description="Pixel pitch in micrometres.")
    width_px: int = Field(gt=0, le=200_000)
    height_px: int = Field(gt=0, le=200_000)
    quantum_efficiency: float | None = Field(default=None, gt=0, le=1)
    read_noise_e: float | None = Field(default=None, ge=0, le=1000)
    dark_current_e_per_s: float | None = Field(default=None, ge=0, le=1e6)
    mass_kg: NonNegativeKilograms | None = None
    price: Price | None = None
    flange_to_sensor_mm: NonNegativeMillimetres | None = Field(
        default=None, le=200,
        description="Distance from the camera's front face to its sensor (in air, cover glass "
        "included).",
    )
    sensor: SensorType | None = Field(default=None, description="mono or colour (a colour "
                                      "filter array); not stated when omitted.")


class MountType(StrEnum):
    german_equatorial = "german-equatorial"
    fork = "fork"
    alt_azimuth = "alt-azimuth"
    dobsonian = "dobsonian"
    other = "other"


class Drive(StrEnum):
    """How the motors turn the axes."""

    worm = "worm"
    strain_wave = "strain-wave"
    belt = "belt"
    direct = "direct"
    other = "other"


# Renamed values, accepted for one release (README, "Renamed in this release"): the type named after
# a gear's trade name is a german-equatorial mount with a strain-wave drive.
OLD_MOUNT_TYPES = {"harmonic-equatorial": (MountType.german_equatorial, Drive.strain_wave)}


def upgrade_old_mount(data):
    """A mount body in the previous release's words, in this release's (see ``OLD_MOUNT_TYPES``)."""
    if isinstance(data, dict) and isinstance(data.get("type"), str) and data["type"] in OLD_MOUNT_TYPES:
        kind, drive = OLD_MOUNT_TYPES[data["type"]]
        data = {**data, "type": kind.value}
        if data.get("drive") is None:
            data["drive"] = drive.value
    return data


class Mount(Strict):
    name: Name | None = None
    type: MountType = Field(default=MountType.german_equatorial, description="Mount geometry.")
    drive: Drive | None = Field(default=None, description="Gearing of the axes, when known.")
    capacity_kg: PositiveKilograms = Field(description="Rated instrument payload (at most 100 t).")
    mass_kg: NonNegativeKilograms | None = None
    price: Price | None = None

    @model_validator(mode="before")
    @classmethod
    def _old_names(cls, data):
        return upgrade_old_mount(data)


class Accessory(Strict):
    name: Name
    mass_kg: NonNegativeKilograms = 0.0
    price: Price | None = None


def one_currency(accessories: list[Accessory]) -> list[Accessory]:
    """The accessories, if their prices share one currency (they are added up); ValueError otherwise."""
    currencies = {a.price.currency for a in accessories if a.price is not None}
    if len(currencies) > 1:
        raise ValueError(f"accessories of one rig must share a currency, got {sorted(currencies)}")
    return accessories


class Geometry(Strict):
    """Where the payload sits on a german-equatorial mount, for moments and inertia."""

    payload_arm_mm: PositiveMillimetres = Field(
        description="Distance from the right-ascension axis to the payload's centre of mass, "
        "along the declination axis."
    )
    counterweight_kg: PositiveKilograms


def __getattr__(name: str):
    # Rig lives in calculators.rig (it needs the train's elements, which need the types above);
    # it is still importable from here, as it always was.
    if name == "Rig":
        from calculators.rig import Rig

        return Rig
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
