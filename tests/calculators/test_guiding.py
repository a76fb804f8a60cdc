"""Tests of calculators/builtin/guiding.py: tolerated RMS guiding error and the guide camera scale."""

import math

import astropy.units as u
import numpy as np
import pytest
from astropy.stats import gaussian_sigma_to_fwhm
from example_rigs import demo_outcome, outputs
from hypothesis import given
from hypothesis import strategies as st

from calculators.builtin.guiding import GAUSSIAN_FWHM_PER_SIGMA, Guiding, GuidingParams
from calculators.schemas import Camera, Rig, Telescope
from plugins.testing import conformance_checks

CALC = Guiding()


def rig(focal_length_mm, pixel_um=3.8) -> Rig:
    return Rig(
        name="r",
        telescope=Telescope(aperture_mm=200, focal_length_mm=focal_length_mm),
        camera=Camera(pixel_size_um=pixel_um, width_px=4000, height_px=3000),
    )


def measured_fwhm(profile: np.ndarray, x: np.ndarray) -> float:
    """Full width at half maximum of a sampled single-peaked profile, by linear interpolation."""
    half = profile.max() / 2
    above = np.flatnonzero(profile >= half)
    lo, hi = above[0], above[-1]
    left = np.interp(half, [profile[lo - 1], profile[lo]], [x[lo - 1], x[lo]])
    right = np.interp(half, [profile[hi + 1], profile[hi]], [x[hi + 1], x[hi]])
    return right - left


# --- reference tests -------------------------------------------------------------------------

def test_gaussian_fwhm_constant_matches_astropy():
    # astropy.stats as reference library: FWHM = 2√(2 ln 2)·σ; exact up to float rounding.
    assert GAUSSIAN_FWHM_PER_SIGMA == pytest.approx(gaussian_sigma_to_fwhm, rel=1e-15)


def test_pixel_scale_through_astropy_units():
    values = outputs(CALC, [rig(1000)])
    # astropy.units: 3.8 µm subtending at 1000 mm, small-angle; float rounding only.
    expected = (3.8 * u.um / (1000 * u.mm) * u.rad).to_value(u.arcsec)
    assert values["pixel_scale_arcsec"][0] == pytest.approx(expected, rel=1e-12)


def test_pixel_scale_of_38_um_pixels_at_1200_mm():
    values = outputs(CALC, [rig(1200, pixel_um=3.8)])
    # Common practice (fact of the trade quoted in issue 2): 3.8 µm at 1200 mm ≈ 0.65″ per pixel;
    # "about" — the exact figure is 0.653″, so half a unit in the second decimal.
    assert values["pixel_scale_arcsec"][0] == pytest.approx(0.65, abs=0.005)


@pytest.mark.parametrize("seeing, growth", [(2.0, 0.10), (1.2, 0.05), (3.5, 0.25)])
def test_seeing_rule_widens_the_star_by_the_stated_fraction(seeing, growth):
    params = GuidingParams(seeing_fwhm_arcsec=seeing, fwhm_growth=growth)
    total_rms = outputs(CALC, [rig(1000)], params)["seeing_rule_rms_arcsec"][0]
    per_axis = total_rms / math.sqrt(2)
    # Numerical convolution of the seeing profile (a gaussian of FWHM F) with the guiding error's
    # gaussian of σ per axis: the result's FWHM is (1 + g)·F. The 0.002″ grid bounds the
    # interpolated FWHM's error to well under 1e-4 relative.
    x = np.arange(-12, 12, 0.002)
    seeing_sigma = seeing / gaussian_sigma_to_fwhm
    star = np.exp(-0.5 * (x / seeing_sigma) ** 2)
    blur = np.exp(-0.5 * (x / per_axis) ** 2)
    blurred = np.convolve(star, blur / blur.sum(), mode="same")
    assert measured_fwhm(blurred, x) == pytest.approx((1 + growth) * seeing, rel=1e-4)


def test_worked_example_of_the_docstring():
    values = outputs(CALC, [rig(1000)])
    # Common-practice rules with the defaults: half of the pixel scale (0.784″ for 3.8 µm at 1000 mm,
    # through astropy.units) from the pixel rule; the seeing rule (2″, 10 %) is
    # √2·2·√0.21/2.3548 = 0.550″ and is the looser.
    scale = (3.8 * u.um / (1000 * u.mm) * u.rad).to_value(u.arcsec)
    assert values["pixel_rule_rms_arcsec"][0] == pytest.approx(scale / 2, rel=1e-12)
    assert values["seeing_rule_rms_arcsec"][0] == pytest.approx(math.sqrt(2) * 2 * math.sqrt(0.21)
                                                                / gaussian_sigma_to_fwhm, rel=1e-12)
    assert values["limited_by"][0] == "seeing"
    assert values["max_guide_pixel_scale_arcsec"][0] == pytest.approx(values["tolerated_rms_arcsec"][0] / 0.2)


# --- property tests --------------------------------------------------------------------------

@given(st.floats(100, 5000), st.floats(1, 15), st.floats(0.5, 5))
def test_tolerated_rms_is_the_looser_rule(focal_length, pixel, seeing):
    values = outputs(CALC, [rig(focal_length, pixel)], GuidingParams(seeing_fwhm_arcsec=seeing))
    tolerated = values["tolerated_rms_arcsec"][0]
    assert tolerated >= values["pixel_rule_rms_arcsec"][0]
    assert tolerated >= values["seeing_rule_rms_arcsec"][0]
    assert tolerated in (values["pixel_rule_rms_arcsec"][0], values["seeing_rule_rms_arcsec"][0])


@given(st.floats(100, 5000), st.floats(1, 15), st.floats(1.01, 4))
def test_pixel_rule_scales_inversely_with_focal_length(focal_length, pixel, k):
    short = outputs(CALC, [rig(focal_length, pixel)])
    long = outputs(CALC, [rig(focal_length * k, pixel)])
    np.testing.assert_allclose(long["pixel_rule_rms_arcsec"] * k, short["pixel_rule_rms_arcsec"], rtol=1e-12)


@given(st.floats(100, 5000), st.floats(1, 15), st.floats(1, 10), st.floats(0.05, 0.5))
def test_guide_focal_length_times_guide_scale_is_the_guide_pixel_in_arcsec_mm(
    focal_length, pixel, guide_pixel, centroid
):
    params = GuidingParams(guide_pixel_size_um=guide_pixel, centroid_fraction_px=centroid)
    values = outputs(CALC, [rig(focal_length, pixel)], params)
    product = values["min_guide_focal_length_mm"] * values["max_guide_pixel_scale_arcsec"]
    np.testing.assert_allclose(product, 206264.80624709636 * guide_pixel * 1e-3, rtol=1e-12)


@pytest.mark.parametrize("check", conformance_checks(Guiding), ids=str)
def test_meets_the_conformance_kit(check):
    # plugins/testing.py: the contract and the invariants every calculator shares
    check()


def test_runs_through_compare_with_default_params():
    outcome = demo_outcome("guiding")
    assert outcome.cautions
    assert all(v > 0 for v in outcome.outputs["tolerated_rms_arcsec"].values)
