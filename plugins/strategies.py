"""Hypothesis strategies for generic rigs, part of the conformance kit (:mod:`plugins.testing`).

Rigs are drawn as the plain JSON-like dicts a client sends, so a test can also rewrite them with
unit strings (:func:`in_imperial_units`); :func:`rigs` validates them into
:class:`~calculators.schemas.Rig` models. Every optional input of the schemas is sometimes given and
sometimes missing, so a calculator meets both. No real products: every rig is described by its
specifications only.
"""

from __future__ import annotations

from hypothesis import strategies as st

from calculators.schemas import (
    Camera,
    Design,
    Drive,
    ModifierKind,
    Mount,
    MountType,
    Rig,
    Telescope,
)
from calculators.train_elements import ElementKind, train_element

MM_PER_INCH = 25.4  # NIST SP 811 (2008), appendix B: 1 in = 2.54 cm exactly
KG_PER_POUND = 0.45359237  # NIST SP 811 (2008), appendix B: 1 lb (avoirdupois) exactly


def _floats(low: float, high: float):
    return st.floats(low, high, allow_nan=False, allow_infinity=False)


def _maybe(strategy):
    return st.none() | strategy


# What is drawn. The narrow ranges suit property tests that rebuild a drawn rig at other sizes;
# ``wide=True`` (the conformance checks) reaches further: f/1.5 to f/20, 30 mm to 1 m.
_RANGES = {
    False: {"aperture_mm": (50, 500), "focal_ratio": (2, 15), "pixel_size_um": (1.5, 15)},
    True: {"aperture_mm": (30, 1000), "focal_ratio": (1.5, 20), "pixel_size_um": (1, 20)},
}

prices = st.builds(lambda amount: {"amount": amount, "currency": "EUR"}, _floats(0, 50_000))


def _some(draw, part: dict, values: dict, keep: bool | None) -> None:
    """Put ``values`` (name: strategy) into ``part``: all when ``keep``, each maybe otherwise."""
    for name, strategy in values.items():
        value = draw(strategy if keep else _maybe(strategy))
        if value is not None:
            part[name] = value


@st.composite
def telescope_dicts(
    draw, obstructed: bool | None = None, with_masses: bool | None = None, wide: bool = False
) -> dict:
    ranges = _RANGES[wide]
    aperture, ratio = draw(_floats(*ranges["aperture_mm"])), draw(_floats(*ranges["focal_ratio"]))
    telescope = {"design": draw(st.sampled_from([d.value for d in Design])),
                 "aperture_mm": aperture, "focal_length_mm": aperture * ratio}
    if obstructed is None:
        fraction = draw(st.just(0.0) | _floats(0, 0.5))
    else:
        fraction = draw(_floats(0.05, 0.5)) if obstructed else 0.0
    if fraction:
        telescope["obstruction_mm"] = aperture * fraction
    telescope["throughput"] = draw(_maybe(_floats(0.5, 1)))
    masses = draw(st.booleans()) if with_masses is None else with_masses
    if masses:
        telescope["mass_kg"] = draw(_floats(0.5, 40))
        lengths = _floats(200, 2000)
        if wide:  # also a tube about as long as its focal length
            lengths |= _floats(0.3, 1.1).map(lambda k: k * aperture * ratio)
        telescope["length_mm"] = draw(lengths)
        telescope["tube_diameter_mm"] = aperture * draw(_floats(1.0, 1.4))
    _some(draw, telescope, {"spider_vanes": st.integers(0, 16),
                            "mirror_thickness_mm": _floats(1 / 12, 1 / 5).map(lambda k: k * aperture)},
          with_masses)
    telescope["price"] = draw(_maybe(prices))
    return telescope


#: The kinds an imaging train is drawn from (an eyepiece ends a visual train, which has no camera).
TRAIN_KINDS = tuple(k.value for k in ElementKind if k != ElementKind.eyepiece)
_REDUCING = {"reducer", "reducer-flattener"}
#: Smallest product of a drawn train's factors: with the fastest telescope drawn (f/1.5) the rig
#: stays above the physical minimum of f/0.5 that the Rig schema enforces.
MIN_TRAIN_FACTOR = 0.34


@st.composite
def element_dicts(draw, kind: str | None = None, complete: bool = False,
                  min_factor: float = 0.5) -> dict:
    """One train element of ``kind`` (drawn from :data:`TRAIN_KINDS` when None) with the fields its
    kind takes; ``complete`` states every optional one. A reducing factor is at least
    ``min_factor``."""
    kind = kind or draw(st.sampled_from(TRAIN_KINDS))
    element: dict = {"kind": kind}
    optional: dict = {"mass_kg": _floats(0.02, 1.5), "price": prices}
    if kind in _REDUCING:
        element["factor"] = draw(_floats(max(0.5, min(min_factor, 1.0)), 1.0))
    elif kind == "barlow":
        element["factor"] = draw(_floats(1.0, 2.5))
    elif kind in ("flattener", "corrector"):
        element["factor"] = draw(st.just(1.0) | _floats(0.95, 1.05))
    if "factor" in element:  # the powered kinds
        optional.update(
            throughput=_floats(0.8, 1), image_circle_mm=_floats(10, 60),
            backfocus_mm=_floats(20, 150), backfocus_tolerance_mm=_floats(0, 2),
            optical_length_mm=_floats(5, 120),
            designs=st.lists(st.sampled_from([d.value for d in Design]), min_size=1, max_size=3,
                             unique=True),
        )
    elif kind == "filter":
        optional.update(thickness_mm=_floats(0.5, 5), refractive_index=_floats(1.4, 1.8),
                        centre_nm=_floats(350, 1000), bandwidth_nm=_floats(3, 150),
                        peak_transmission=_floats(0.5, 1), image_circle_mm=_floats(25, 60))
    elif kind == "spacer":
        element["optical_length_mm"] = draw(_floats(1, 60))
    else:  # filter wheel, off-axis guider
        optional.update(optical_length_mm=_floats(5, 40), image_circle_mm=_floats(25, 60))
    _some(draw, element, optional, complete or None)
    if "factor" in element and (complete or draw(st.booleans())):
        low = draw(_floats(1.5, 12))
        element.update(focal_ratio_min=low, focal_ratio_max=low + draw(_floats(0, 10)))
    return element


@st.composite
def train_dicts(draw, min_size: int = 0, max_size: int = 3, complete: bool = False) -> list[dict]:
    """An imaging train of ``min_size`` to ``max_size`` elements (telescope side first), whose
    factors multiply to at least :data:`MIN_TRAIN_FACTOR`."""
    kinds = draw(st.lists(st.sampled_from(TRAIN_KINDS), min_size=min_size, max_size=max_size))
    train, product = [], 1.0
    for kind in kinds:
        element = draw(element_dicts(kind, complete, min_factor=MIN_TRAIN_FACTOR / product))
        product *= element.get("factor", 1.0)
        train.append(element)
    return train


@st.composite
def modifier_dicts(draw) -> dict:
    """An old single modifier (read as a one-element train for one release); new tests draw
    :func:`train_dicts` or :func:`element_dicts`."""
    return {
        "kind": draw(st.sampled_from([k.value for k in ModifierKind])),
        "factor": draw(_floats(0.5, 2.5)),  # with f/1.5 or slower telescopes, f/0.75 at the fastest
        "throughput": draw(_maybe(_floats(0.8, 1))),
        "mass_kg": draw(_maybe(_floats(0.05, 1))),
        "price": draw(_maybe(prices)),
        "corrected_field_mm": draw(_maybe(_floats(10, 60))),
    }


@st.composite
def camera_dicts(draw, with_mass: bool | None = None, wide: bool = False) -> dict:
    camera = {"pixel_size_um": draw(_floats(*_RANGES[wide]["pixel_size_um"])),
              "width_px": draw(st.integers(320, 12_000)), "height_px": draw(st.integers(240, 9_000)),
              "price": draw(_maybe(prices))}
    _some(draw, camera, {"quantum_efficiency": _floats(0.2, 0.95), "read_noise_e": _floats(0.5, 15),
                         "dark_current_e_per_s": _floats(0, 0.5)}, with_mass)
    if with_mass if with_mass is not None else draw(st.booleans()):
        camera["mass_kg"] = draw(_floats(0.1, 2))
    # Where the sensor sits behind the mounting face, and the kind of sensor: maybe stated, as on
    # real cameras' sheets (a calculator must not assume either is there).
    _some(draw, camera, {"flange_to_sensor_mm": _floats(5, 60),
                         "sensor": st.sampled_from(["mono", "colour"])}, None)
    return camera


@st.composite
def mount_dicts(draw) -> dict:
    return {"type": draw(st.sampled_from([m.value for m in MountType])),
            "drive": draw(_maybe(st.sampled_from([d.value for d in Drive]))),
            "capacity_kg": draw(_floats(3, 150)), "mass_kg": draw(_maybe(_floats(2, 100))),
            "price": draw(_maybe(prices))}


@st.composite
def rig_dicts(
    draw, obstructed: bool | None = None, complete: bool | None = False, wide: bool = False
) -> dict:
    """A rig; ``complete`` fills every optional input (None: drawn, so sometimes all of them)."""
    if complete is None:
        complete = draw(st.booleans())
    rig = {
        "name": "rig",
        "telescope": draw(telescope_dicts(obstructed, True if complete else None, wide)),
        "camera": draw(camera_dicts(True if complete else None, wide)),
        "accessories": draw(st.lists(
            st.builds(lambda m: {"name": "accessory", "mass_kg": m}, _floats(0, 3)), max_size=3
        )),
    }
    train = draw(train_dicts(min_size=1 if complete else 0, complete=bool(complete)))
    if train:
        rig["train"] = train
    mount = draw(mount_dicts() if complete else _maybe(mount_dicts()))
    if mount is not None:
        rig["mount"] = mount
    if complete or draw(st.booleans()):
        rig["geometry"] = {"payload_arm_mm": draw(_floats(50, 800)),
                           "counterweight_kg": draw(_floats(1, 40))}
    return rig


def rigs(**kwargs):
    """Validated :class:`Rig` models (``kwargs`` as for :func:`rig_dicts`)."""
    return rig_dicts(**kwargs).map(Rig.model_validate)


def rig_lists(min_size: int = 1, max_size: int = 6, **kwargs):
    return st.lists(rigs(**kwargs), min_size=min_size, max_size=max_size)


@st.composite
def sweeps(draw, max_each: int = 3, complete: bool | None = False, wide: bool = False):
    """Component lists (telescopes, cameras, trains — each a list of 0-3 elements — and mounts)
    and a baseline index for :meth:`RigBatch.from_components`."""
    full = (draw(st.booleans()) if complete is None else complete) or None
    telescopes = draw(st.lists(telescope_dicts(None, full, wide), min_size=1, max_size=max_each))
    cameras = draw(st.lists(camera_dicts(full, wide), min_size=1, max_size=max_each))
    trains = draw(st.lists(train_dicts(complete=bool(full)), min_size=1, max_size=max_each))
    mounts = draw(st.lists(_maybe(mount_dicts()), min_size=1, max_size=max_each))
    lists = ([Telescope.model_validate(t) for t in telescopes], [Camera.model_validate(c) for c in cameras],
             [[train_element(e) for e in train] for train in trains],
             [None if k is None else Mount.model_validate(k) for k in mounts])
    baseline = tuple(draw(st.integers(0, len(items) - 1)) for items in lists)
    return (*lists, baseline)


# Lengths and masses of each part, by the field names of the schemas.
_LENGTHS = {
    "telescope": ("aperture_mm", "focal_length_mm", "obstruction_mm", "length_mm", "tube_diameter_mm",
                  "mirror_thickness_mm"),
    "modifier": ("corrected_field_mm",), "geometry": ("payload_arm_mm",),
}
_MASSES = {
    "telescope": ("mass_kg",), "camera": ("mass_kg",), "modifier": ("mass_kg",),
    "mount": ("capacity_kg", "mass_kg"), "geometry": ("counterweight_kg",),
}
#: The same for each element of the train.
_ELEMENT_LENGTHS = ("image_circle_mm", "backfocus_mm", "backfocus_tolerance_mm", "optical_length_mm",
                    "thickness_mm", "lens_focal_length_mm", "spacing_mm")


def in_imperial_units(rig: dict) -> dict:
    """The same rig with every length as a string in inches and every mass in pounds."""
    out = {key: (dict(value) if isinstance(value, dict) else value) for key, value in rig.items()}
    for table, to_unit in ((_LENGTHS, lambda mm: f"{mm / MM_PER_INCH!r} in"),
                           (_MASSES, lambda kg: f"{kg / KG_PER_POUND!r} lb")):
        for part, fields in table.items():
            for name in fields:
                if out.get(part) and out[part].get(name) is not None:
                    out[part][name] = to_unit(out[part][name])
    out["accessories"] = [
        {**a, "mass_kg": f"{a['mass_kg'] / KG_PER_POUND!r} lb"} for a in rig.get("accessories", [])
    ]
    if rig.get("train"):
        out["train"] = [_element_in_imperial_units(e) for e in rig["train"]]
    return out


def _element_in_imperial_units(element: dict) -> dict:
    out = dict(element)
    for name in _ELEMENT_LENGTHS:
        if out.get(name) is not None:
            out[name] = f"{out[name] / MM_PER_INCH!r} in"
    if out.get("mass_kg") is not None:
        out["mass_kg"] = f"{out['mass_kg'] / KG_PER_POUND!r} lb"
    return out
