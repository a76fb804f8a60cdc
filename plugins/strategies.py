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
    Modifier,
    ModifierKind,
    Mount,
    MountType,
    Rig,
    Telescope,
)

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


@st.composite
def modifier_dicts(draw) -> dict:
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
    modifier = draw(modifier_dicts() if complete else _maybe(modifier_dicts()))
    if complete:
        modifier["mass_kg"] = modifier["mass_kg"] or 0.2
    if modifier is not None:
        rig["modifier"] = modifier
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
    """Component lists and a baseline index for :meth:`RigBatch.from_components`."""
    full = (draw(st.booleans()) if complete is None else complete) or None
    telescopes = draw(st.lists(telescope_dicts(None, full, wide), min_size=1, max_size=max_each))
    cameras = draw(st.lists(camera_dicts(full, wide), min_size=1, max_size=max_each))
    modifiers = draw(st.lists(_maybe(modifier_dicts()), min_size=1, max_size=max_each))
    mounts = draw(st.lists(_maybe(mount_dicts()), min_size=1, max_size=max_each))
    lists = ([Telescope.model_validate(t) for t in telescopes], [Camera.model_validate(c) for c in cameras],
             [None if m is None else Modifier.model_validate(m) for m in modifiers],
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
    return out
