"""Generic example rigs shared by the calculator tests (no real products); the hypothesis strategies
and the common invariants are the conformance kit's (plugins/testing.py)."""

from __future__ import annotations

import numpy as np

from calculators.batch import RigBatch
from calculators.schemas import Camera, Modifier, Mount, Rig, Telescope
from plugins.compare import compare
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


def cooled_camera(**extra) -> Camera:
    return Camera(
        name="3.8 µm cooled camera", pixel_size_um=3.8, width_px=6000, height_px=4000,
        quantum_efficiency=0.8, read_noise_e=1.5, dark_current_e_per_s=0.003, mass_kg=0.7, **extra,
    )


def camera_bare(**extra) -> Camera:
    """A camera that states only its pixel grid: optional inputs are missing."""
    return Camera(name="bare camera", pixel_size_um=3.0, width_px=2000, height_px=1200, **extra)


def coma_corrector(**extra) -> Modifier:
    return Modifier(name="coma corrector", kind="corrector", factor=1.0, corrected_field_mm=44, **extra)


def mount_gem() -> Mount:
    return Mount(name="mid-size german-equatorial", type="german-equatorial", capacity_kg=20)


def demo_rigs() -> list[Rig]:
    """A handful of rigs covering the cases the calculators distinguish."""
    return [
        Rig(name="200 mm f/5 newtonian, cooled camera", telescope=newtonian_200_f5(),
            camera=cooled_camera(), mount=mount_gem()),
        Rig(name="200 mm f/5 newtonian with coma corrector", telescope=newtonian_200_f5(),
            modifier=coma_corrector(), camera=cooled_camera(), mount=mount_gem()),
        Rig(name="80 mm f/6 refractor, bare camera", telescope=refractor_80_f6(), camera=camera_bare()),
    ]


# --- batch helpers ---------------------------------------------------------------------------

def outputs(calculator, rigs, params=None, baseline=0) -> dict[str, np.ndarray]:
    """Run ``calculator`` on a comparison batch of ``rigs`` through the real runner."""
    batch = RigBatch.from_rigs(rigs, baseline=baseline)
    result = run(calculator, batch, params if params is not None else calculator.Params())
    assert result.error is None, result.error
    return result.values


def demo_outcome(name: str, rigs=None):
    """One calculator's result for the demo rigs through :func:`plugins.compare.compare` with default
    params, checked to carry no error."""
    outcome = compare(rigs if rigs is not None else demo_rigs(), calculators=[name]).results[name]
    assert outcome.error is None, outcome.error
    return outcome
