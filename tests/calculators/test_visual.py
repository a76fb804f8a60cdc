"""Tests of calculators/builtin/visual.py: magnification, exit pupil, true field, range, surface brightness."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from calculators.batch import RigBatch
from calculators.builtin.visual import NO_EYEPIECE, Visual, VisualParams
from calculators.schemas import Rig
from plugins.runner import run

CALC = Visual()


def batch(eyepieces, aperture=250.0, focal=1250.0, obstruction=60.0, throughput=0.81):
    """A comparison batch of one telescope with each eyepiece (focal mm, apparent °, stop mm or NaN).

    The eyepiece columns are the ones the train's eyepiece element fills."""
    rig = Rig(name="r", telescope={"design": "newtonian", "aperture_mm": aperture, "focal_length_mm": focal,
                                   "obstruction_mm": obstruction, "throughput": throughput},
              camera={"pixel_size_um": 3.8, "width_px": 10, "height_px": 10})
    plain = RigBatch.from_rigs([rig] * len(eyepieces))
    cols = np.array(eyepieces, dtype=float).reshape(len(eyepieces), 3).T
    return RigBatch(columns={**plain.columns, "eyepiece_focal_length_mm": cols[0],
                             "eyepiece_apparent_field_deg": cols[1], "eyepiece_field_stop_mm": cols[2],
                             "pixel_size_um": np.full(len(eyepieces), np.nan)}, baseline=(0,))


def compute(b, params=VisualParams()):
    result = run(CALC, b, params)
    assert result.error is None, result.error
    return result.values


def test_worked_example_of_the_docstring():
    # 250 mm f/5 newtonian, 25 mm eyepiece of 52°: M = 1250/25, exit pupil 250/50 (first-order optics).
    out = compute(batch([(25, 52, np.nan), (25, 52, 22.0)]))
    assert out["magnification"].tolist() == [50.0, 50.0]
    assert out["exit_pupil_mm"][0] == pytest.approx(5.0, rel=1e-12)
    # Apparent field ÷ magnification: 52° × 60 / 50 = 62.4′ (common practice approximation).
    assert out["true_field_arcmin"][0] == pytest.approx(62.4, rel=1e-12)
    assert out["true_field_method"].tolist() == ["apparent field / magnification", "field stop"]
    # Field stop in the focal plane: 2·atan(22/2500) in arcmin (plane geometry) = 60.50′.
    assert out["true_field_arcmin"][1] == pytest.approx(2 * math.degrees(math.atan(22 / 2500)) * 60, rel=1e-12)
    assert out["true_field_arcmin"][1] == pytest.approx(60.5, abs=0.01)
    # Rule of thumb (common practice): D/7 mm to 2×D.
    assert out["min_useful_magnification"][0] == pytest.approx(250 / 7)
    assert out["max_useful_magnification"][0] == 500
    # τ(1 − (d/D)²)(p/7)² = 0.81 × (1 − 0.24²) × (5/7)² = 0.3895 (hand arithmetic, 4 figures).
    assert out["surface_brightness_ratio"][0] == pytest.approx(0.3895, abs=5e-5)
    assert out["surface_brightness_change_mag"][0] == pytest.approx(-2.5 * math.log10(0.81 * (1 - 0.24**2) * (5 / 7) ** 2))
    assert out["wasted_aperture_fraction"][0] == 0.0
    assert out["exit_pupil_verdict"][0] == "within the eye's pupil"


def test_an_exit_pupil_wider_than_the_eye_wastes_aperture_and_is_flagged():
    # 40 mm eyepiece on f/5: 8 mm exit pupil > 7 mm; the eye takes (7/8)² of the beam.
    out = compute(batch([(40, 68, np.nan)]))
    assert out["exit_pupil_mm"][0] == pytest.approx(8.0)
    assert out["wasted_aperture_fraction"][0] == pytest.approx(1 - (7 / 8) ** 2)
    assert "aperture wasted" in out["exit_pupil_verdict"][0]
    # Past the eye's pupil, the image is no brighter: τ(1 − (d/D)²), capped at the eye's.
    assert out["surface_brightness_ratio"][0] == pytest.approx(0.81 * (1 - 0.24**2))


@settings(max_examples=80, deadline=None)
@given(st.floats(2, 60), st.floats(30, 120), st.floats(60, 600), st.floats(3, 15), st.floats(0.5, 1))
def test_surface_brightness_never_exceeds_the_naked_eye(eyepiece, apparent, aperture, ratio, throughput):
    # Conservation of radiance: whatever the optics, ratio ≤ 1 and the magnitude change ≥ 0.
    out = compute(batch([(eyepiece, apparent, np.nan)], aperture=aperture, focal=aperture * ratio,
                        obstruction=0.0, throughput=throughput))
    assert 0 < out["surface_brightness_ratio"][0] <= 1
    assert out["surface_brightness_change_mag"][0] >= 0


@settings(max_examples=80, deadline=None)
@given(st.floats(2, 60), st.floats(30, 120), st.floats(60, 600), st.floats(3, 15))
def test_magnification_times_exit_pupil_is_the_aperture_and_field_falls_with_power(eyepiece, apparent, aperture, ratio):
    out = compute(batch([(eyepiece, apparent, np.nan), (eyepiece / 2, apparent, np.nan)], aperture=aperture,
                        focal=aperture * ratio, obstruction=0.0))
    assert out["magnification"][0] * out["exit_pupil_mm"][0] == pytest.approx(aperture, rel=1e-12)
    assert out["true_field_arcmin"][1] == pytest.approx(out["true_field_arcmin"][0] / 2, rel=1e-12)


def test_an_imaging_rig_has_null_visual_figures_with_the_reason():
    from plugins.compare import compare

    rig = {"name": "imaging", "telescope": {"aperture_mm": 200, "focal_length_mm": 1000},
           "camera": {"pixel_size_um": 3.76, "width_px": 100, "height_px": 100}}
    result = compare([rig], ["visual"]).results["visual"]
    assert result.error is None
    for name, data in result.outputs.items():
        if name in ("true_field_method", "exit_pupil_verdict"):
            assert data.values == [""]
            continue
        assert data.values == [None] and data.null_reasons == [NO_EYEPIECE], name
    assert any("Sun" in c for c in result.cautions)


def test_the_eye_pupil_param_moves_the_low_end_of_the_range():
    young = compute(batch([(25, 52, np.nan)]), VisualParams(eye_pupil_mm=7))
    older = compute(batch([(25, 52, np.nan)]), VisualParams(eye_pupil_mm=5))
    assert older["min_useful_magnification"][0] == pytest.approx(young["min_useful_magnification"][0] * 7 / 5)


@pytest.mark.parametrize("name", ["visual", "light_grasp", "resolution", "integration_time"])
def test_everything_an_eye_may_be_put_to_carries_the_sun_caution(name):
    from plugins.registry import load_registry

    calc = load_registry().get(name)
    assert any("Sun" in c and "solar filter" in c for c in calc.cautions)
