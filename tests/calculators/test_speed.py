"""Tests of calculators/builtin/speed.py: effective focal ratio and the two relative exposure times."""

from __future__ import annotations

import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from calculators.base import NoParams
from calculators.batch import RigBatch
from calculators.builtin.speed import Speed
from calculators.schemas import Rig
from plugins.testing import compute, conformance_checks, rigs

CALC = Speed()
TIME_FACTORS = ("time_factor_per_pixel", "time_factor_per_arcsec2")


def rig(aperture_mm, focal_length_mm, pixel_um=3.8, obstruction_mm=0.0, throughput=0.9,
        modifier=None) -> Rig:
    return Rig(
        name="rig",
        telescope={"aperture_mm": aperture_mm, "focal_length_mm": focal_length_mm,
                   "obstruction_mm": obstruction_mm, "throughput": throughput},
        camera={"pixel_size_um": pixel_um, "width_px": 4000, "height_px": 3000},
        modifier=modifier,
    )


def outputs(*rig_list, baseline=0):
    return compute(CALC, RigBatch.from_rigs(list(rig_list), baseline=baseline), NoParams())


ratios = st.floats(2, 15)
apertures = st.floats(50, 500)


# --- properties ----------------------------------------------------------------------------------

@given(rigs(), st.floats(0.2, 5))
@settings(deadline=None)
def test_scaling_aperture_and_focal_length_together_leaves_focal_ratio_and_time_factor_per_pixel_unchanged(r, k):
    t = r.telescope
    plain = rig(t.aperture_mm, t.focal_length_mm, r.camera.pixel_size_um, t.obstruction_mm,
                t.effective_throughput, r.modifier)
    scaled = rig(t.aperture_mm * k, t.focal_length_mm * k, r.camera.pixel_size_um,
                 t.obstruction_mm * k, t.effective_throughput, r.modifier)
    out = outputs(plain, scaled)
    # Same formula on scaled inputs: only rounding differs, 1e-12 relative.
    assert out["focal_ratio"][1] == pytest.approx(out["focal_ratio"][0], rel=1e-12)
    assert out["time_factor_per_pixel"][1] == pytest.approx(1.0, rel=1e-12)
    # ... while per unit sky area the bigger aperture is faster by its area, k².
    assert out["time_factor_per_arcsec2"][1] == pytest.approx(1 / k**2, rel=1e-12)


@given(apertures, ratios, apertures, ratios, st.floats(1.5, 15), st.floats(0.5, 1))
@settings(deadline=None)
def test_time_factor_per_pixel_is_the_focal_ratio_squared_for_equal_pixels_and_throughput(
    d0, n0, d1, n1, pixel_um, tau
):
    out = outputs(rig(d0, d0 * n0, pixel_um, throughput=tau), rig(d1, d1 * n1, pixel_um, throughput=tau))
    assert out["focal_ratio"].tolist() == pytest.approx([n0, n1], rel=1e-14)
    # (N/N₀)² with unobstructed apertures (the obstruction would change the clear area).
    assert out["time_factor_per_pixel"][1] == pytest.approx((n1 / n0) ** 2, rel=1e-12)


@pytest.mark.parametrize("check", conformance_checks(Speed), ids=str)
def test_meets_the_conformance_kit(check):
    # plugins/testing.py: the contract and the invariants every calculator shares
    check()


@given(rigs(), st.floats(0.5, 1.0))
@settings(deadline=None)
def test_a_reducer_shortens_the_time_per_pixel_but_not_per_unit_sky_area(r, factor):
    t = r.telescope
    assume(t.focal_length_mm * factor / t.aperture_mm >= 0.5)
    bare = rig(t.aperture_mm, t.focal_length_mm, r.camera.pixel_size_um, t.obstruction_mm)
    reduced = rig(t.aperture_mm, t.focal_length_mm, r.camera.pixel_size_um, t.obstruction_mm,
                  modifier={"kind": "reducer", "factor": factor, "throughput": 1.0})
    out = outputs(bare, reduced)
    assert out["time_factor_per_pixel"][1] == pytest.approx(factor**2, rel=1e-12)
    assert out["time_factor_per_arcsec2"][1] == pytest.approx(1.0, rel=1e-12)


@given(rigs(), st.floats(0.3, 1.0))
@settings(deadline=None)
def test_time_factors_are_inversely_proportional_to_throughput(r, tau):
    t = r.telescope
    full = rig(t.aperture_mm, t.focal_length_mm, throughput=1.0)
    lossy = rig(t.aperture_mm, t.focal_length_mm, throughput=tau)
    out = outputs(full, lossy)
    for name in TIME_FACTORS:
        assert out[name][1] == pytest.approx(1 / tau, rel=1e-12)


# --- references ----------------------------------------------------------------------------------

def test_an_hour_at_f4_needs_about_two_and_a_half_hours_at_f6_3():
    # Common practice: "an hour at f/4 needs about 2.5 hours at f/6.3" — (6.3/4)² = 2.48; "about"
    # read as ±2 %. Same 200 mm aperture, pixels and throughput.
    out = outputs(rig(200, 800), rig(200, 1260))
    assert out["time_factor_per_pixel"][1] == pytest.approx(2.5, rel=0.02)
    assert out["time_factor_per_arcsec2"][1] == pytest.approx(1.0, rel=1e-15)


@pytest.mark.parametrize(("slow", "fast"), [(5.6, 4), (8, 5.6), (4, 2.8), (2.8, 2)])
def test_one_full_stop_doubles_the_time_per_pixel(slow, fast):
    # Common practice (the photographic f-number series steps by √2, one "stop" = 2× the time);
    # the marked numbers are rounded, so ±2.5 % (e.g. (5.6/4)² = 1.96).
    out = outputs(rig(100, 100 * fast), rig(100, 100 * slow))
    assert out["time_factor_per_pixel"][1] == pytest.approx(2.0, rel=0.025)


def test_a_central_obstruction_costs_its_share_of_the_area():
    # Plane geometry: a 35 % obstruction removes 0.35² = 12.25 % of the aperture's area, so both
    # times grow by 1/(1 − 0.1225) = 1.1396… (exact in the formula; 1e-12 for rounding).
    out = outputs(rig(200, 1000), rig(200, 1000, obstruction_mm=70))
    for name in TIME_FACTORS:
        assert out[name][1] == pytest.approx(1 / (1 - 0.35**2), rel=1e-12)


def test_the_docstring_says_why_both_time_factors_are_given():
    import calculators.builtin.speed as module

    assert "Why two time factors" in module.__doc__
    assert "disagree" in module.__doc__
