"""Tests of calculators/builtin/resolution.py: Dawes, Rayleigh, Airy disc, seeing or diffraction limited."""

import math

import astropy.units as u
import numpy as np
import pytest
from example_rigs import cooled_camera, demo_outcome, demo_rigs, newtonian_200_f5, outputs, refractor_80_f6
from hypothesis import given
from hypothesis import strategies as st

from calculators.builtin.optics import ARCSEC_PER_RAD, BESSEL_J1_FIRST_ZERO, RAYLEIGH_FACTOR
from calculators.builtin.resolution import Resolution, ResolutionParams
from calculators.schemas import Camera, Modifier, Rig, Telescope
from plugins.testing import conformance_checks

CALC = Resolution()


def rig(aperture_mm, focal_length_mm, pixel_size_um=3.8, modifier=None) -> Rig:
    return Rig(
        name=f"{aperture_mm} mm",
        telescope=Telescope(aperture_mm=aperture_mm, focal_length_mm=focal_length_mm),
        camera=Camera(pixel_size_um=pixel_size_um, width_px=1000, height_px=1000),
        modifier=modifier,
    )


def bessel_j1(x: float) -> float:
    """J₁ from Bessel's integral J₁(x) = (1/π)∫₀^π cos(τ − x sin τ) dτ (DLMF 10.9.1), by the
    trapezoidal rule, which converges geometrically for this smooth periodic integrand."""
    tau = np.linspace(0.0, np.pi, 4001)
    values = np.cos(tau - x * np.sin(tau))
    return float(np.trapezoid(values, tau) / np.pi)


# --- reference tests -------------------------------------------------------------------------

def test_first_zero_of_j1_from_bessels_integral():
    lo, hi = 3.0, 4.5  # J1(3) > 0 > J1(4.5) (sign change brackets the first positive zero)
    for _ in range(60):
        mid = (lo + hi) / 2
        lo, hi = (mid, hi) if bessel_j1(mid) > 0 else (lo, mid)
    # DLMF 10.9.1 (Bessel's integral), bisection to 1e-15; tolerance covers the quadrature's error.
    assert lo == pytest.approx(BESSEL_J1_FIRST_ZERO, abs=1e-9)
    # Born & Wolf, Principles of Optics, §8.5.2: the Rayleigh factor is 1.21967 (given to 6 figures).
    assert RAYLEIGH_FACTOR == pytest.approx(1.21967, abs=5e-6)


def test_arcsec_per_radian_matches_astropy():
    # astropy.units as the reference library: 206 264.806…″ per radian; exact up to float rounding.
    assert ARCSEC_PER_RAD == pytest.approx((1 * u.rad).to_value(u.arcsec), rel=1e-14)
    # The figure quoted in issue 5 and in every handbook, to its 9 significant figures.
    assert ARCSEC_PER_RAD == pytest.approx(206264.806, abs=5e-4)


def test_rayleigh_limit_of_100_mm_at_550_nm():
    values = outputs(CALC, [rig(100, 800)], ResolutionParams(wavelength_nm=550))
    # Born & Wolf §8.5.2: θ = 1.21967 λ/D = 1.3837″ for D = 100 mm, λ = 550 nm (value as quoted
    # in issue 5, to 5 figures, so the tolerance is half a unit in the last place).
    assert values["rayleigh_arcsec"][0] == pytest.approx(1.3837, abs=5e-5)


def test_rayleigh_limit_through_astropy_units():
    values = outputs(CALC, [rig(254, 1200)], ResolutionParams(wavelength_nm=656.3))
    # Born & Wolf §8.5.2 formula with the units carried by astropy; float rounding only.
    expected = (1.21967 * (656.3 * u.nm) / (254 * u.mm) * u.rad).to_value(u.arcsec)
    # The 1.21967 constant is given to 6 figures, hence 5e-6 relative.
    assert values["rayleigh_arcsec"][0] == pytest.approx(expected, rel=5e-6)


def test_airy_diameter_at_f8_and_550_nm():
    values = outputs(CALC, [rig(100, 800)], ResolutionParams(wavelength_nm=550))
    # Born & Wolf §8.5.2: Airy disc diameter 2.43934·λ·N = 10.733 µm at f/8 and 550 nm (as quoted in
    # issue 5 to 5 figures: half a unit in the last place).
    assert values["airy_diameter_um"][0] == pytest.approx(10.733, abs=5e-4)
    # In pixels of 3.8 µm: the same figure divided by the pitch.
    assert values["airy_diameter_px"][0] == pytest.approx(10.733 / 3.8, abs=5e-4 / 3.8)


def test_airy_diameter_uses_the_effective_focal_ratio():
    barlow = Modifier(kind="barlow", factor=2.0)
    values = outputs(CALC, [rig(100, 400, modifier=barlow)])
    # A 2× barlow on f/4 gives f/8: the same 10.733 µm (Born & Wolf §8.5.2, as above).
    assert values["airy_diameter_um"][0] == pytest.approx(10.733, abs=5e-4)


def test_dawes_limit_is_456_arcsec_per_inch():
    values = outputs(CALC, [rig(25.4, 250), rig(203.2, 2000)])
    # Dawes 1867: 4.56″ for a one-inch aperture (figure from memory). 116″·mm is 4.567″ per inch,
    # so the two agree to 0.2 %, the rounding in the usual "116".
    assert values["dawes_arcsec"][0] == pytest.approx(4.56, rel=2e-3)
    assert values["dawes_arcsec"][1] == pytest.approx(4.56 / 8, rel=2e-3)


def test_verdict_follows_the_stated_criterion():
    # 100 mm at 550 nm: Rayleigh 1.38″. Seeing of 2″ is worse, 1″ better (criterion: common practice).
    seeing_2 = outputs(CALC, [rig(100, 800)], ResolutionParams(seeing_fwhm_arcsec=2.0))
    seeing_1 = outputs(CALC, [rig(100, 800)], ResolutionParams(seeing_fwhm_arcsec=1.0))
    assert seeing_2["limited_by"][0] == "seeing-limited"
    assert seeing_1["limited_by"][0] == "diffraction-limited"
    assert seeing_2["seeing_to_rayleigh"][0] == pytest.approx(2.0 / 1.3837, rel=1e-4)


# --- property tests --------------------------------------------------------------------------

@given(st.floats(30, 1000), st.floats(1.5, 20), st.floats(0.1, 10))
def test_rayleigh_scales_inversely_with_aperture_and_airy_um_depends_only_on_focal_ratio(
    aperture, ratio, scale
):
    a = outputs(CALC, [rig(aperture, aperture * ratio)])
    b = outputs(CALC, [rig(aperture * scale, aperture * scale * ratio)])
    np.testing.assert_allclose(b["rayleigh_arcsec"] * scale, a["rayleigh_arcsec"], rtol=1e-12)
    np.testing.assert_allclose(b["dawes_arcsec"] * scale, a["dawes_arcsec"], rtol=1e-12)
    np.testing.assert_allclose(b["airy_diameter_um"], a["airy_diameter_um"], rtol=1e-12)


@given(st.floats(30, 1000), st.floats(1.5, 20), st.floats(300, 1000))
def test_linear_airy_diameter_equals_angular_diameter_times_focal_length(aperture, ratio, wavelength):
    values = outputs(CALC, [rig(aperture, aperture * ratio)], ResolutionParams(wavelength_nm=wavelength))
    linear_um = values["airy_diameter_arcsec"] / ARCSEC_PER_RAD * aperture * ratio * 1e3
    np.testing.assert_allclose(values["airy_diameter_um"], linear_um, rtol=1e-12)


@given(st.floats(30, 1000), st.floats(300, 600), st.floats(1.01, 3))
def test_rayleigh_is_proportional_to_wavelength(aperture, wavelength, factor):
    short = outputs(CALC, [rig(aperture, aperture * 5)], ResolutionParams(wavelength_nm=wavelength))
    long = outputs(CALC, [rig(aperture, aperture * 5)],
                   ResolutionParams(wavelength_nm=wavelength * factor))
    np.testing.assert_allclose(long["rayleigh_arcsec"], short["rayleigh_arcsec"] * factor, rtol=1e-12)
    np.testing.assert_allclose(long["dawes_arcsec"], short["dawes_arcsec"], rtol=0)


@pytest.mark.parametrize("check", conformance_checks(Resolution), ids=str)
def test_meets_the_conformance_kit(check):
    # plugins/testing.py: the contract and the invariants every calculator shares
    check()


def test_demo_rigs_compute_with_default_params():
    values = outputs(CALC, [Rig(name="a", telescope=newtonian_200_f5(), camera=cooled_camera()),
                            Rig(name="b", telescope=refractor_80_f6(), camera=cooled_camera())])
    assert np.isfinite(values["rayleigh_arcsec"]).all()
    assert math.isclose(values["dawes_arcsec"][0], 116 / 200)


def test_runs_through_compare_with_default_params():
    outcome = demo_outcome("resolution", demo_rigs()[:2])
    assert outcome.outputs["rayleigh_arcsec"].unit == "arcsec"
    assert len(outcome.outputs["airy_diameter_um"].values) == 2
