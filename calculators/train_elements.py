"""The elements of an imaging train: what sits between the telescope's focuser and the camera (or eye).

A rig's ``train`` is an ordered list, telescope side first, of at most :data:`MAX_TRAIN_ELEMENTS`
elements. Each element has a ``kind`` and only the fields its kind takes (any other field is an
error naming it). What an element is made for — ``designs``, ``focal_ratio_min``/``focal_ratio_max``,
``image_circle_mm``, ``backfocus_mm`` — is optional: "not stated" is a valid state, and a check that
needs a value nobody stated says so instead of guessing (see :mod:`calculators.builtin.compatibility`).

Kinds and what they take (besides ``name``, ``mass_kg``, ``price`` and ``image_circle_mm``, which
every kind but the eyepiece takes, and ``optical_length_mm``, the light path the element takes up
from its front face to its rear face):

=====================  ==========================================================================
reducer,               ``factor`` ≤ 1, ``throughput``, ``designs``, ``focal_ratio_min``,
reducer-flattener      ``focal_ratio_max``, ``backfocus_mm``, ``backfocus_tolerance_mm``,
                       ``lens_focal_length_mm`` and ``spacing_mm`` (the factor then follows the
                       spacing, thin lens m = 1 − d/f)
flattener, corrector   ``factor`` (default 1), the same "made for" fields, no lens spacing
barlow (extender)      ``factor`` ≥ 1, ``throughput``, ``lens_focal_length_mm`` and ``spacing_mm``
                       (m = 1 + d/f), ``designs``, ``focal_ratio_min``/``max``
filter                 ``thickness_mm`` (≤ 20), ``refractive_index`` (default 1.5), ``centre_nm``,
                       ``bandwidth_nm``, ``peak_transmission``; ``optical_length_mm`` 0 unless given
                       (a filter sits in a wheel, a drawer or an element's thread)
filter-wheel,          ``optical_length_mm``
off-axis-guider
spacer                 ``optical_length_mm`` (required)
eyepiece               ``focal_length_mm``, ``apparent_field_deg`` (≤ 130), ``field_stop_mm``,
                       ``eye_relief_mm``; only as the last element, and a rig with one has no camera
=====================  ==========================================================================

Thin-lens spacing (Gaussian lens equation 1/s' − 1/s = 1/f for a converging beam meeting a thin lens
whose rear distance to the new focus is d; Hecht, E., *Optics*, 5th ed., Pearson 2017, §5.2.3 —
from memory): a positive lens of focal length f (a reducer) gives the magnification m = 1 − d/f, a
negative lens of focal length −f (a barlow) gives m = 1 + d/f.

Filter focus shift: a plane-parallel plate of thickness t and index n in a converging beam moves the
focus away from the lens by t·(1 − 1/n) (paraxial; Smith, W. J., *Modern Optical Engineering*, 4th
ed., McGraw-Hill 2008, §2.6 "plane parallel plates" — from memory).
"""

from __future__ import annotations

from enum import StrEnum
from typing import Annotated, Any, Literal

from pydantic import BeforeValidator, Discriminator, Field, Tag, TypeAdapter, field_validator, model_validator

from calculators.schemas import Design, Name, Price, Strict, Throughput
from calculators.units import NonNegativeKilograms, NonNegativeMillimetres, PositiveMillimetres

#: Most elements one train may hold.
MAX_TRAIN_ELEMENTS = 8
#: Thickest filter accepted (mm): thicker glass is not a filter in an imaging train.
MAX_FILTER_THICKNESS_MM = 20.0
#: Widest apparent field an eyepiece may state, in degrees.
MAX_APPARENT_FIELD_DEG = 130.0
#: Backfocus tolerance used when an element states its backfocus but no tolerance, in mm
#: (common practice: correctors are usually specified to about ±0.5 mm).
DEFAULT_BACKFOCUS_TOLERANCE_MM = 0.5
#: Refractive index assumed for a filter that does not state one (common practice: crown glass
#: and fused silica substrates lie between 1.45 and 1.52 in the visible).
DEFAULT_REFRACTIVE_INDEX = 1.5


class ElementKind(StrEnum):
    reducer = "reducer"
    flattener = "flattener"
    corrector = "corrector"
    reducer_flattener = "reducer-flattener"
    barlow = "barlow"
    filter = "filter"
    filter_wheel = "filter-wheel"
    off_axis_guider = "off-axis-guider"
    spacer = "spacer"
    eyepiece = "eyepiece"


#: Other names accepted for a kind (the stored and returned kind is the canonical one).
KIND_ALIASES = {"extender": ElementKind.barlow}

#: Kinds with optical power: they change the focal length and focus position.
POWERED = frozenset({ElementKind.reducer, ElementKind.flattener, ElementKind.corrector,
                     ElementKind.reducer_flattener, ElementKind.barlow})

# Common practice: a few multi-coated lens elements pass about 96-98% of the light.
DEFAULT_ELEMENT_THROUGHPUT: dict[ElementKind, float] = {
    ElementKind.reducer: 0.97,
    ElementKind.corrector: 0.97,
    ElementKind.flattener: 0.98,
    ElementKind.reducer_flattener: 0.97,
    ElementKind.barlow: 0.96,
}

Ratio = Annotated[float, Field(ge=0.5, le=100)]
Nanometres = Annotated[float, Field(gt=0, le=100_000)]


class ElementBase(Strict):
    """Fields every kind of element takes."""

    name: Name | None = None
    mass_kg: NonNegativeKilograms | None = None
    price: Price | None = None


class Passive(ElementBase):
    """An element the light crosses without focusing power: filter, wheel, guider, spacer."""

    image_circle_mm: PositiveMillimetres | None = Field(
        default=None, description="Clear aperture: the largest circle it passes unvignetted."
    )
    optical_length_mm: NonNegativeMillimetres | None = Field(
        default=None, le=500, description="Light path it takes up, front face to rear face."
    )


class Optic(ElementBase):
    """Fields of the elements with focusing power."""

    factor: float = Field(default=1.0, gt=0, le=10, description="Multiplies the focal length.")
    throughput: Throughput | None = Field(
        default=None, description="Transmission 0-1; default per kind (common practice)."
    )
    designs: list[Design] = Field(
        default_factory=list, max_length=len(Design),
        description="Telescope designs it is made for; empty means any (or not stated).",
    )
    focal_ratio_min: Ratio | None = Field(default=None, description="Smallest native focal "
                                          "ratio it is made for.")
    focal_ratio_max: Ratio | None = Field(default=None, description="Largest native focal ratio "
                                          "it is made for.")
    image_circle_mm: PositiveMillimetres | None = Field(
        default=None, description="Diameter of the corrected (or illuminated) circle it delivers."
    )
    backfocus_mm: PositiveMillimetres | None = Field(
        default=None, le=500,
        description="Distance it needs from its rear face to the sensor (in air).",
    )
    backfocus_tolerance_mm: NonNegativeMillimetres | None = Field(
        default=None, le=50,
        description=f"Allowed error of that distance; default ±{DEFAULT_BACKFOCUS_TOLERANCE_MM} mm "
        "(common practice).",
    )
    optical_length_mm: NonNegativeMillimetres | None = Field(
        default=None, le=500, description="Light path it takes up, front face to rear face."
    )

    @field_validator("focal_ratio_max")
    @classmethod
    def _range_in_order(cls, value: float | None, info) -> float | None:
        low = info.data.get("focal_ratio_min")
        if value is not None and low is not None and value < low:
            raise ValueError(f"must be at least focal_ratio_min ({low:g}), got {value:g}")
        return value

    @property
    def effective_throughput(self) -> float:
        return self.throughput if self.throughput is not None else DEFAULT_ELEMENT_THROUGHPUT[self.kind]


def reducer_factor(spacing_mm, lens_focal_length_mm):
    """Thin positive lens d before the focus it forms: m = 1 − d/f (Hecht 2017, §5.2.3)."""
    return 1.0 - spacing_mm / lens_focal_length_mm


def barlow_factor(spacing_mm, lens_focal_length_mm):
    """Thin negative lens of focal length −f, d before the focus it forms: m = 1 + d/f."""
    return 1.0 + spacing_mm / lens_focal_length_mm


def filter_focus_shift_mm(thickness_mm, refractive_index):
    """Outward focus shift of a plane-parallel plate in a converging beam: t·(1 − 1/n), in mm."""
    return thickness_mm * (1.0 - 1.0 / refractive_index)


class Spaced(Optic):
    """An optic whose factor may follow its spacing to the sensor (thin lens)."""

    factor: float | None = Field(default=None, gt=0, le=10, description="Multiplies the focal "
                                 "length; computed from lens_focal_length_mm and spacing_mm when "
                                 "those are given.")
    lens_focal_length_mm: PositiveMillimetres | None = Field(
        default=None, le=10_000, description="Focal length of the element's lens group (its "
        "magnitude, for a barlow's negative lens).",
    )
    spacing_mm: NonNegativeMillimetres | None = Field(
        default=None, le=2000, description="Distance from the lens group to the sensor."
    )

    def _thin_lens(self, spacing: float, focal: float) -> float:
        raise NotImplementedError

    @model_validator(mode="after")
    def _factor_from_spacing(self):
        if self.lens_focal_length_mm is not None and self.spacing_mm is not None:
            computed = self._thin_lens(self.spacing_mm, self.lens_focal_length_mm)
            if not 0 < computed <= 10:
                raise ValueError(f"spacing_mm: {self.spacing_mm:g} mm with lens_focal_length_mm "
                                 f"{self.lens_focal_length_mm:g} mm gives a factor of "
                                 f"{computed:.3g}, outside 0-10")
            if self.factor is not None and abs(self.factor - computed) > 0.02 * computed:
                raise ValueError(f"factor: {self.factor:g} disagrees with the {computed:.3f} that "
                                 "lens_focal_length_mm and spacing_mm give (thin lens); give one")
            self.factor = computed if self.factor is None else self.factor
        elif self.factor is None:
            raise ValueError("factor: give the factor, or lens_focal_length_mm and spacing_mm")
        return self


class _Reducing(Spaced):
    @field_validator("factor")
    @classmethod
    def _at_most_one(cls, value: float | None) -> float | None:
        if value is not None and value > 1:
            raise ValueError(f"a reducer's factor is at most 1, got {value:g}")
        return value

    def _thin_lens(self, spacing: float, focal: float) -> float:
        return reducer_factor(spacing, focal)


class Reducer(_Reducing):
    kind: Literal[ElementKind.reducer]


class ReducerFlattener(_Reducing):
    kind: Literal[ElementKind.reducer_flattener]


class Barlow(Spaced):
    kind: Literal[ElementKind.barlow, "extender"]

    @field_validator("kind")
    @classmethod
    def _canonical(cls, value: str) -> ElementKind:
        return ElementKind(KIND_ALIASES.get(value, value))

    @field_validator("factor")
    @classmethod
    def _at_least_one(cls, value: float | None) -> float | None:
        if value is not None and value < 1:
            raise ValueError(f"a barlow's factor is at least 1, got {value:g}")
        return value

    def _thin_lens(self, spacing: float, focal: float) -> float:
        return barlow_factor(spacing, focal)


class Flattener(Optic):
    kind: Literal[ElementKind.flattener]


class Corrector(Optic):
    kind: Literal[ElementKind.corrector]


class Filter(Passive):
    kind: Literal[ElementKind.filter]
    thickness_mm: PositiveMillimetres | None = Field(
        default=None, le=MAX_FILTER_THICKNESS_MM, description="Glass thickness."
    )
    refractive_index: float = Field(
        default=DEFAULT_REFRACTIVE_INDEX, ge=1, le=4,
        description="Of the substrate (1.5 when not stated: common practice).",
    )
    centre_nm: Nanometres | None = Field(default=None, description="Centre wavelength of the band.")
    bandwidth_nm: Nanometres | None = Field(default=None, description="Full width at half maximum.")
    peak_transmission: Throughput | None = Field(default=None, description="0-1, at the centre.")

    @property
    def focus_shift_mm(self) -> float | None:
        if self.thickness_mm is None:
            return None
        return float(filter_focus_shift_mm(self.thickness_mm, self.refractive_index))


class FilterWheel(Passive):
    kind: Literal[ElementKind.filter_wheel]


class OffAxisGuider(Passive):
    kind: Literal[ElementKind.off_axis_guider]


class Spacer(Passive):
    kind: Literal[ElementKind.spacer]
    optical_length_mm: PositiveMillimetres = Field(le=500, description="Its length along the light.")


class Eyepiece(ElementBase):
    kind: Literal[ElementKind.eyepiece]
    focal_length_mm: PositiveMillimetres = Field(le=200)
    apparent_field_deg: float | None = Field(default=None, gt=0, le=MAX_APPARENT_FIELD_DEG)
    field_stop_mm: PositiveMillimetres | None = Field(default=None, le=100)
    eye_relief_mm: NonNegativeMillimetres | None = Field(default=None, le=100)


ELEMENT_MODELS: dict[ElementKind, type[ElementBase]] = {
    ElementKind.reducer: Reducer,
    ElementKind.flattener: Flattener,
    ElementKind.corrector: Corrector,
    ElementKind.reducer_flattener: ReducerFlattener,
    ElementKind.barlow: Barlow,
    ElementKind.filter: Filter,
    ElementKind.filter_wheel: FilterWheel,
    ElementKind.off_axis_guider: OffAxisGuider,
    ElementKind.spacer: Spacer,
    ElementKind.eyepiece: Eyepiece,
}

#: Prefix of the union tags (they are dropped from error paths, see api.http.problems).
TAG_PREFIX = "kind="


def element_tag(value: Any) -> str | None:
    kind = value.get("kind") if isinstance(value, dict) else getattr(value, "kind", None)
    if not isinstance(kind, str):  # null, a number, an object...: no kind this union knows
        return None
    kind = KIND_ALIASES.get(kind, kind)
    try:
        return TAG_PREFIX + ElementKind(kind).value
    except ValueError:
        return None


def old_modifier_fields(value: Any) -> Any:
    """Read an old modifier body for one release: ``corrected_field_mm`` is now ``image_circle_mm``."""
    if isinstance(value, dict) and "corrected_field_mm" in value and "image_circle_mm" not in value:
        value = dict(value)
        value["image_circle_mm"] = value.pop("corrected_field_mm")
    return value


TrainElement = Annotated[
    Annotated[Reducer, Tag(TAG_PREFIX + "reducer")]
    | Annotated[Flattener, Tag(TAG_PREFIX + "flattener")]
    | Annotated[Corrector, Tag(TAG_PREFIX + "corrector")]
    | Annotated[ReducerFlattener, Tag(TAG_PREFIX + "reducer-flattener")]
    | Annotated[Barlow, Tag(TAG_PREFIX + "barlow")]
    | Annotated[Filter, Tag(TAG_PREFIX + "filter")]
    | Annotated[FilterWheel, Tag(TAG_PREFIX + "filter-wheel")]
    | Annotated[OffAxisGuider, Tag(TAG_PREFIX + "off-axis-guider")]
    | Annotated[Spacer, Tag(TAG_PREFIX + "spacer")]
    | Annotated[Eyepiece, Tag(TAG_PREFIX + "eyepiece")],
    Discriminator(
        element_tag, custom_error_type="invalid_kind",
        custom_error_message="kind: must be one of " + ", ".join(k.value for k in ElementKind)
        + " (or extender, another name for barlow)",
    ),
    BeforeValidator(old_modifier_fields),
]


_ELEMENT = TypeAdapter(TrainElement)


def train_element(spec: Any) -> ElementBase:
    """One element from its spec (a dict as stored or sent), validated."""
    return _ELEMENT.validate_python(spec)


def train_factor(train) -> float:
    """Product of the elements' factors (1 for an empty train)."""
    factor = 1.0
    for element in train:
        factor *= getattr(element, "factor", None) or 1.0
    return factor


def check_train(train, native_focal_ratio: float | None) -> None:
    """Rules across a train's elements; ValueError naming the element (``train.N``) otherwise."""
    from calculators.schemas import check_focal_ratio

    for i, element in enumerate(train[:-1]):
        if element.kind == ElementKind.eyepiece:
            raise ValueError(f"train.{i}: an eyepiece may only be the last element of a train")
    currencies = {e.price.currency for e in train if e.price is not None}
    if len(currencies) > 1:
        raise ValueError(f"the elements of one train must share a currency, got {sorted(currencies)}")
    if native_focal_ratio is not None:
        check_focal_ratio(native_focal_ratio * train_factor(train))
