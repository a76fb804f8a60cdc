"""Generic example rigs and hypothesis strategies shared by the calculator tests (no real products)."""

from __future__ import annotations

import itertools

import numpy as np
from hypothesis import strategies as st

from calculators.batch import RigBatch, as_train
from calculators.schemas import Camera, Modifier, Mount, Rig, Telescope
from plugins.runner import run


def newtonian_200_f5(**extra) -> Telescope:
    return Telescope(
        name="200 mm f/5 newtonian", design="newtonian", aperture_mm=200, focal_length_mm=1000,
        obstruction_mm=70, mass_kg=9.5, length_mm=950, tube_diameter_mm=235, spider_vanes=4,
        mirror_thickness_mm=25, **extra,
    )


def refractor_80_f6(**extra) -> Telescope:
    return Telescope(
        name="80 mm f/6 refractor", design="refractor", aperture_mm=80, focal_length_mm=480,
        mass_kg=3.2, length_mm=520, tube_diameter_mm=95, **extra,
    )


def camera_376(**extra) -> Camera:
    return Camera(
        name="3.76 µm cooled camera", pixel_size_um=3.76, width_px=6248, height_px=4176,
        quantum_efficiency=0.8, read_noise_e=1.5, dark_current_e_per_s=0.003, mass_kg=0.7, **extra,
    )


def camera_bare(**extra) -> Camera:
    """A camera that states only its pixel grid: optional inputs are missing."""
    return Camera(name="bare camera", pixel_size_um=2.9, width_px=1936, height_px=1096, **extra)


def coma_corrector(**extra) -> Modifier:
    return Modifier(name="coma corrector", kind="corrector", factor=1.0, corrected_field_mm=44, **extra)


def mount_gem() -> Mount:
    return Mount(name="mid-size german-equatorial", type="german-equatorial", capacity_kg=20)


def demo_rigs() -> list[Rig]:
    """A handful of rigs covering the cases the calculators distinguish."""
    return [
        Rig(name="200 mm f/5 newtonian, cooled camera", telescope=newtonian_200_f5(),
            camera=camera_376(), mount=mount_gem()),
        Rig(name="200 mm f/5 newtonian with coma corrector", telescope=newtonian_200_f5(),
            modifier=coma_corrector(), camera=camera_376(), mount=mount_gem()),
        Rig(name="80 mm f/6 refractor, bare camera", telescope=refractor_80_f6(), camera=camera_bare()),
    ]


# --- hypothesis strategies -------------------------------------------------------------------

apertures = st.floats(min_value=30, max_value=1000, allow_nan=False)
focal_ratios = st.floats(min_value=1.5, max_value=20, allow_nan=False)
pixel_sizes = st.floats(min_value=1.0, max_value=20, allow_nan=False)


@st.composite
def telescopes(draw, design=None) -> Telescope:
    aperture = draw(apertures)
    ratio = draw(focal_ratios)
    chosen = design or draw(st.sampled_from(["newtonian", "refractor", "schmidt-cassegrain",
                                             "ritchey-chretien", "astrograph"]))
    obstruction = 0.0 if chosen == "refractor" else aperture * draw(st.floats(0.0, 0.5))
    return Telescope(
        design=chosen, aperture_mm=aperture, focal_length_mm=aperture * ratio,
        obstruction_mm=obstruction,
        length_mm=aperture * ratio * draw(st.floats(0.3, 1.1)),
        tube_diameter_mm=aperture * draw(st.floats(1.05, 1.4)),
        spider_vanes=draw(st.integers(0, 8)),
        mirror_thickness_mm=aperture * draw(st.floats(1 / 12, 1 / 5)),
    )


@st.composite
def cameras(draw) -> Camera:
    return Camera(
        pixel_size_um=draw(pixel_sizes),
        width_px=draw(st.integers(640, 12000)),
        height_px=draw(st.integers(480, 9000)),
        quantum_efficiency=draw(st.floats(0.2, 0.95)),
        read_noise_e=draw(st.floats(0.5, 15)),
        dark_current_e_per_s=draw(st.floats(0.0, 0.5)),
    )


@st.composite
def modifiers(draw):
    kind = draw(st.sampled_from([None, "reducer", "corrector", "flattener", "barlow"]))
    if kind is None:
        return None
    factor = {"reducer": 0.8, "corrector": 1.0, "flattener": 1.0, "barlow": 2.0}[kind]
    field = draw(st.one_of(st.none(), st.floats(10, 60)))
    return Modifier(kind=kind, factor=factor, corrected_field_mm=field)


# --- batch helpers ---------------------------------------------------------------------------

def outputs(calculator, rigs, params=None, baseline=0) -> dict[str, np.ndarray]:
    """Run ``calculator`` on a comparison batch of ``rigs`` through the real runner."""
    batch = RigBatch.from_rigs(rigs, baseline=baseline)
    result = run(calculator, batch, params if params is not None else calculator.Params())
    assert result.error is None, result.error
    return result.values


def assert_sweep_equals_rows(calculator, telescopes, cameras, modifiers=(None,), params=None):
    """A sweep batch (each component along its own axis) gives, at every index, the value that a
    one-rig comparison batch of that combination gives."""
    params = params if params is not None else calculator.Params()
    sweep = RigBatch.from_components(telescopes, cameras, modifiers)
    swept = run(calculator, sweep, params)
    assert swept.error is None, swept.error
    for (t, c, m) in itertools.product(range(len(telescopes)), range(len(cameras)), range(len(modifiers))):
        rig = Rig(name="row", telescope=telescopes[t], camera=cameras[c], train=as_train(modifiers[m]))
        single = outputs(calculator, [rig], params)
        for name, values in swept.values.items():
            got, want = values[t, c, m, 0], single[name][0]
            if np.issubdtype(np.asarray(want).dtype, np.floating):
                np.testing.assert_allclose(got, want, rtol=1e-12, equal_nan=True, err_msg=name)
            else:
                assert got == want, name
