"""Hypothesis strategies for generic rigs, and checks shared by the calculator tests.

Rigs are drawn as plain JSON-like dicts (what a client sends), so a test can also rewrite them with
unit strings; :func:`rigs` validates them into :class:`~calculators.schemas.Rig` models.
No real products: every rig is described by its specifications only.
"""

from __future__ import annotations

import itertools

import numpy as np
from hypothesis import strategies as st

from calculators.batch import RigBatch, as_train
from calculators.schemas import Camera, Design, Mount, MountType, Rig, Telescope
from calculators.train_elements import train_element

MM_PER_INCH = 25.4  # NIST SP 811 (2008), appendix B: 1 in = 2.54 cm exactly
KG_PER_POUND = 0.45359237  # NIST SP 811 (2008), appendix B: 1 lb (avoirdupois) exactly


def _floats(low: float, high: float):
    return st.floats(low, high, allow_nan=False, allow_infinity=False)


def _maybe(strategy):
    return st.none() | strategy


prices = st.builds(lambda amount: {"amount": amount, "currency": "EUR"}, _floats(0, 50_000))


@st.composite
def telescope_dicts(draw, obstructed: bool | None = None, with_masses: bool | None = None) -> dict:
    aperture = draw(_floats(50, 500))
    telescope = {
        "design": draw(st.sampled_from([d.value for d in Design])),
        "aperture_mm": aperture,
        "focal_length_mm": aperture * draw(_floats(2, 15)),
    }
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
        telescope["length_mm"] = draw(_floats(200, 2000))
        telescope["tube_diameter_mm"] = aperture * draw(_floats(1.0, 1.4))
    telescope["price"] = draw(_maybe(prices))
    return telescope


@st.composite
def optic_dicts(draw) -> dict:
    """A reducer, flattener, corrector or barlow, with or without what it is made for."""
    kind = draw(st.sampled_from(["reducer", "reducer-flattener", "flattener", "corrector", "barlow"]))
    # With f/2 or slower telescopes and at most two optics, never below f/1.
    low, high = {"reducer": (0.7, 1), "reducer-flattener": (0.7, 1), "barlow": (1, 2.5)}.get(kind, (0.9, 1.1))
    optic = {
        "kind": kind,
        "factor": draw(_floats(low, high)),
        "throughput": draw(_maybe(_floats(0.8, 1))),
        "mass_kg": draw(_maybe(_floats(0.05, 1))),
        "price": draw(_maybe(prices)),
        "designs": draw(st.lists(st.sampled_from([d.value for d in Design]), max_size=2, unique=True)),
        "image_circle_mm": draw(_maybe(_floats(10, 60))),
        "backfocus_mm": draw(_maybe(_floats(40, 120))),
        "optical_length_mm": draw(_maybe(_floats(0, 40))),
    }
    ratio_min = draw(_maybe(_floats(2, 8)))
    if ratio_min is not None:
        optic["focal_ratio_min"] = ratio_min
        optic["focal_ratio_max"] = ratio_min + draw(_floats(0, 6))
    return optic


@st.composite
def passive_dicts(draw) -> dict:
    """A filter, filter wheel, off-axis guider or spacer."""
    kind = draw(st.sampled_from(["filter", "filter-wheel", "off-axis-guider", "spacer"]))
    element = {"kind": kind, "mass_kg": draw(_maybe(_floats(0.01, 1))),
               "price": draw(_maybe(prices)), "image_circle_mm": draw(_maybe(_floats(20, 60)))}
    if kind == "filter":
        element["thickness_mm"] = draw(_maybe(_floats(0.5, 5)))
        element["refractive_index"] = draw(_floats(1.4, 1.8))
    elif kind == "spacer":
        element["optical_length_mm"] = draw(_floats(1, 50))
    else:
        element["optical_length_mm"] = draw(_maybe(_floats(5, 30)))
    return element


@st.composite
def train_dicts(draw, max_size: int = 4) -> list[dict]:
    """An ordered train of up to ``max_size`` elements, at most two with focusing power, in one
    currency."""
    optics = draw(st.lists(optic_dicts(), max_size=2))
    passives = draw(st.lists(passive_dicts(), max_size=max(0, max_size - len(optics))))
    train = optics + passives
    currency = next((e["price"]["currency"] for e in train if e.get("price")), None)
    for e in train:
        if e.get("price"):
            e["price"] = {**e["price"], "currency": currency}
    return train


def modifier_dicts():
    """A single optic (what the old modifier slot held)."""
    return optic_dicts()


@st.composite
def camera_dicts(draw, with_mass: bool | None = None) -> dict:
    camera = {
        "pixel_size_um": draw(_floats(1.5, 15)),
        "width_px": draw(st.integers(320, 12_000)),
        "height_px": draw(st.integers(240, 9_000)),
        "price": draw(_maybe(prices)),
    }
    if with_mass if with_mass is not None else draw(st.booleans()):
        camera["mass_kg"] = draw(_floats(0.1, 2))
    return camera


@st.composite
def mount_dicts(draw) -> dict:
    return {
        "type": draw(st.sampled_from([m.value for m in MountType])),
        "capacity_kg": draw(_floats(3, 150)),
        "mass_kg": draw(_maybe(_floats(2, 100))),
        "price": draw(_maybe(prices)),
    }


@st.composite
def rig_dicts(draw, obstructed: bool | None = None, complete: bool = False) -> dict:
    """A rig; ``complete`` fills every optional input the payload calculator needs."""
    rig = {
        "name": "rig",
        "telescope": draw(telescope_dicts(obstructed, with_masses=True if complete else None)),
        "camera": draw(camera_dicts(with_mass=True if complete else None)),
        "accessories": draw(st.lists(
            st.builds(lambda m: {"name": "accessory", "mass_kg": m}, _floats(0, 3)), max_size=3
        )),
    }
    train = draw(train_dicts())
    if complete:
        train = train or [draw(optic_dicts())]
        for element in train:
            element["mass_kg"] = element["mass_kg"] or 0.2
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
    """Validated :class:`Rig` models."""
    return rig_dicts(**kwargs).map(Rig.model_validate)


def rig_lists(min_size: int = 1, max_size: int = 6, **kwargs):
    return st.lists(rigs(**kwargs), min_size=min_size, max_size=max_size)


# Lengths and masses of each part, by the field names of the schemas.
_LENGTHS = {
    "telescope": ("aperture_mm", "focal_length_mm", "obstruction_mm", "length_mm", "tube_diameter_mm"),
    "geometry": ("payload_arm_mm",),
}
_MASSES = {
    "telescope": ("mass_kg",), "camera": ("mass_kg",),
    "mount": ("capacity_kg", "mass_kg"), "geometry": ("counterweight_kg",),
}


def in_imperial_units(rig: dict) -> dict:
    """The same rig with every length as a string in inches and every mass in pounds."""
    out = {key: (dict(value) if isinstance(value, dict) else value) for key, value in rig.items()}
    for part, fields in _LENGTHS.items():
        for name in fields:
            if out.get(part) and out[part].get(name) is not None:
                out[part][name] = f"{out[part][name] / MM_PER_INCH!r} in"
    for part, fields in _MASSES.items():
        for name in fields:
            if out.get(part) and out[part].get(name) is not None:
                out[part][name] = f"{out[part][name] / KG_PER_POUND!r} lb"
    out["train"] = [
        {**e, **({"mass_kg": f"{e['mass_kg'] / KG_PER_POUND!r} lb"} if e.get("mass_kg") is not None else {}),
         **({"optical_length_mm": f"{e['optical_length_mm'] / MM_PER_INCH!r} in"}
            if e.get("optical_length_mm") is not None else {})}
        for e in rig.get("train", [])
    ]
    out["accessories"] = [
        {**a, "mass_kg": f"{a['mass_kg'] / KG_PER_POUND!r} lb"} for a in rig.get("accessories", [])
    ]
    return out


def compute(calculator, batch: RigBatch, params=None) -> dict[str, np.ndarray]:
    """Outputs of ``calculator`` on ``batch``, each broadcast to the batch's shape."""
    params = params if params is not None else calculator.Params()
    raw = calculator.compute(batch, params)
    assert set(raw) == {o.name for o in calculator.outputs}, "outputs differ from the declaration"
    return {name: np.broadcast_to(values, batch.shape) for name, values in raw.items()}


def assert_outputs_equal(calculator, actual: dict, expected: dict, rtol: float = 1e-12) -> None:
    """Numbers equal to ``rtol`` (NaN where NaN), texts exactly.

    The same elementwise formula on the same inputs; the relative tolerance only allows for numpy
    taking a different (vectorised or scalar) loop for arrays of different lengths.
    """
    for output in calculator.outputs:
        a, e = np.asarray(actual[output.name]), np.asarray(expected[output.name])
        if output.kind == "number":
            np.testing.assert_allclose(a, e, rtol=rtol, atol=0, equal_nan=True, err_msg=output.name)
        else:
            np.testing.assert_array_equal(a, e, err_msg=output.name)


def assert_batch_equals_single_rigs(calculator, rig_list: list[Rig], params=None) -> None:
    """Each row of one batch equals the same rig computed alone (beside the baseline, for ratios)."""
    batch = compute(calculator, RigBatch.from_rigs(rig_list), params)
    for i, rig in enumerate(rig_list):
        pair = compute(calculator, RigBatch.from_rigs([rig_list[0], rig]), params)
        assert_outputs_equal(
            calculator, {k: v[i] for k, v in batch.items()}, {k: v[1] for k, v in pair.items()}
        )


def assert_sweep_equals_rigs(calculator, telescopes, cameras, trains, mounts, baseline, params=None):
    """A sweep batch gives, combination by combination, what one row per combined rig gives."""
    sweep = RigBatch.from_components(telescopes, cameras, trains, mounts, baseline=baseline)
    combos = itertools.product(telescopes, cameras, trains, mounts)
    rig_list = [Rig(name="combination", telescope=t, camera=c, train=as_train(m), mount=k)
                for t, c, m, k in combos]
    flat_baseline = int(np.ravel_multi_index(baseline, sweep.shape))
    rows = compute(calculator, RigBatch.from_rigs(rig_list, baseline=flat_baseline), params)
    swept = compute(calculator, sweep, params)
    assert_outputs_equal(calculator, {k: v.reshape(-1) for k, v in swept.items()}, rows)


@st.composite
def sweeps(draw, max_each: int = 3):
    """Component lists and a baseline index for :meth:`RigBatch.from_components`."""
    telescopes = draw(st.lists(telescope_dicts(), min_size=1, max_size=max_each))
    cameras = draw(st.lists(camera_dicts(), min_size=1, max_size=max_each))
    trains = draw(st.lists(train_dicts(max_size=3), min_size=1, max_size=max_each))
    mounts = draw(st.lists(_maybe(mount_dicts()), min_size=1, max_size=max_each))
    t_models = [Telescope.model_validate(t) for t in telescopes]
    c_models = [Camera.model_validate(c) for c in cameras]
    m_models = [[train_element(e) for e in train] for train in trains]
    k_models = [None if k is None else Mount.model_validate(k) for k in mounts]
    sizes = (len(t_models), len(c_models), len(m_models), len(k_models))
    baseline = tuple(draw(st.integers(0, n - 1)) for n in sizes)
    return t_models, c_models, m_models, k_models, baseline
