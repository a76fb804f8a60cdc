"""Tests of calculators/builtin/light_grasp.py: clear area, area ratio, gain over the eye, limiting magnitude."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from calculators.batch import RigBatch
from calculators.builtin.light_grasp import LightGrasp, LightGraspParams
from calculators.schemas import Rig
from plugins.testing import MM_PER_INCH, compute, conformance_checks, rigs

CALC = LightGrasp()
CAMERA = {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}


def rig(aperture_mm, obstruction_mm=0.0) -> Rig:
    return Rig(name=f"{aperture_mm} mm", camera=CAMERA,
               telescope={"aperture_mm": aperture_mm, "focal_length_mm": 5 * aperture_mm,
                          "obstruction_mm": obstruction_mm})


def outputs(*rig_list, baseline=0, **params):
    return compute(CALC, RigBatch.from_rigs(list(rig_list), baseline=baseline), LightGraspParams(**params))


# --- properties ----------------------------------------------------------------------------------

@pytest.mark.parametrize("check", conformance_checks(LightGrasp), ids=str)
def test_meets_the_conformance_kit(check):
    # plugins/testing.py: the contract and the invariants every calculator shares
    check()


@given(rigs(), st.floats(0.1, 10))
@settings(deadline=None)
def test_clear_area_scales_as_the_square_of_the_size(r, k):
    t = r.telescope
    scaled = rig(t.aperture_mm * k, t.obstruction_mm * k)
    plain = rig(t.aperture_mm, t.obstruction_mm)
    ratio = outputs(plain, scaled)["area_ratio"][1]
    assert ratio == pytest.approx(k * k, rel=1e-12)  # a few roundings of squares and products


# --- references ----------------------------------------------------------------------------------

@pytest.mark.parametrize(
    ("other_mm", "more_light", "tolerance"),
    [
        # Facts of the trade (common practice): a 12-inch aperture gathers about 19 % more light than
        # an 11-inch, 125 % more than an 8-inch, about 600 % more than a 115 mm. "About" is read
        # as ±0.5 percentage points for 19 %, exact for 125 %, ±1 % of the ratio for 600 %.
        (11 * MM_PER_INCH, 0.19, 0.005),
        (8 * MM_PER_INCH, 1.25, 1e-12),
        (115.0, 6.00, 0.07),
    ],
)
def test_twelve_inch_light_grasp_against_smaller_apertures(other_mm, more_light, tolerance):
    ratio = outputs(rig(other_mm), rig(12 * MM_PER_INCH))["area_ratio"][1]
    assert ratio - 1 == pytest.approx(more_light, abs=tolerance)


def test_clear_area_is_the_annulus_area():
    # Plane geometry: the area of an annulus is π(R² − r²). 200 mm with a 70 mm obstruction.
    area = outputs(rig(200, 70))["clear_area_mm2"][0]
    assert area == pytest.approx(math.pi * (100**2 - 35**2), rel=1e-15)


def test_limiting_magnitude_gains_five_magnitudes_for_ten_times_the_aperture():
    # Pogson (1856): five magnitudes are a factor 100 in brightness, and 10× the aperture is 100×
    # the area. Exact in the formula; 1e-12 absolute for the logarithms' rounding.
    m = outputs(rig(50), rig(500))["visual_limiting_magnitude"]
    assert m[1] - m[0] == pytest.approx(5.0, abs=1e-12)


def test_limiting_magnitude_uses_the_stated_rule_of_thumb():
    # m = 2.7 + 5·log10(D[mm]) (common practice; Sinnott 1973 as commonly quoted). 100 mm → 12.7.
    assert outputs(rig(100))["visual_limiting_magnitude"][0] == pytest.approx(12.7, abs=1e-12)


def test_eye_gain_is_the_area_ratio_to_a_seven_millimetre_pupil():
    # A 7 mm dark-adapted pupil (common practice); 70 mm unobstructed is (70/7)² = 100 times its area.
    assert outputs(rig(70))["light_gain_over_eye"][0] == pytest.approx(100.0, rel=1e-14)
    assert outputs(rig(70), eye_pupil_mm=5)["light_gain_over_eye"][0] == pytest.approx(196.0, rel=1e-14)


def test_outputs_are_finite_numbers_with_declared_units():
    out = outputs(rig(200, 70), rig(80))
    assert all(np.isfinite(v).all() for v in out.values())
    assert {o.name: o.unit for o in CALC.outputs}["clear_area_mm2"] == "mm^2"
