"""Tests of calculators/builtin/integration_time.py: AB zero points, electron rates, the CCD equation."""

import math

import astropy.constants as const
import astropy.units as u
import numpy as np
import pytest
from example_rigs import demo_outcome, outputs
from hypothesis import given
from hypothesis import strategies as st

from calculators.builtin.integration_time import (
    PLANCK,
    IntegrationTime,
    IntegrationTimeParams,
    photon_rate_per_m2,
)
from calculators.schemas import Camera, Rig, Telescope
from plugins.testing import conformance_checks

CALC = IntegrationTime()


def rig(aperture=200.0, focal_length=1000.0, obstruction=70.0, pixel=3.8, qe=0.8, read=1.5, dark=0.003,
        throughput=0.81) -> Rig:
    return Rig(
        name="r",
        telescope=Telescope(design="newtonian", aperture_mm=aperture, focal_length_mm=focal_length,
                            obstruction_mm=obstruction, throughput=throughput),
        camera=Camera(pixel_size_um=pixel, width_px=100, height_px=100, quantum_efficiency=qe,
                      read_noise_e=read, dark_current_e_per_s=dark),
    )


def ccd_snr(signal, background, read, sub, total):
    """Howell 2006 §4.4, per pixel, n = total/sub reads."""
    return signal * total / math.sqrt((signal + background) * total + total / sub * read**2)


# --- reference tests -------------------------------------------------------------------------

def test_planck_constant_matches_astropy():
    # astropy.constants (CODATA 2018): h is exact in the SI since 2019.
    assert PLANCK == const.h.si.value


@pytest.mark.parametrize("wavelength, bandwidth", [(550.0, 88.0), (445.0, 94.0), (656.3, 7.0)])
def test_ab_zero_point_photon_rate_through_astropy_units(wavelength, bandwidth):
    # astropy.units: 0 AB mag as a photon flux density at the band centre, times the bandwidth (flat
    # f_ν across the band, as the calculator assumes). The AB zero point 3631 Jy is astropy's too.
    density = (0 * u.ABmag).to(u.photon / (u.s * u.m**2 * u.nm), u.spectral_density(wavelength * u.nm))
    expected = (density * bandwidth * u.nm).to_value(u.photon / (u.s * u.m**2))
    # astropy's ABmag zero point is 3631 Jy rounded from 10^(−48.6/2.5) erg/s/cm²/Hz = 3630.78 Jy,
    # a 6e-5 relative difference, hence the tolerance.
    assert photon_rate_per_m2(0.0, wavelength, bandwidth) == pytest.approx(expected, rel=1e-4)


def test_about_a_thousand_photons_per_cm2_per_angstrom_at_zero_magnitude():
    # "About 1000 photons s⁻¹ cm⁻² Å⁻¹ from a 0th-magnitude star in V": common practice / from memory.
    per_cm2_per_angstrom = photon_rate_per_m2(0.0, 550.0, 0.1) * 1e-4
    assert per_cm2_per_angstrom == pytest.approx(1000, rel=0.05)


def test_object_rate_through_astropy_units():
    mu, wavelength, bandwidth = 21.3, 550.0, 88.0
    values = outputs(CALC, [rig()], IntegrationTimeParams(surface_brightness_mag_arcsec2=mu))
    # Independent path in astropy.units: AB surface brightness → photons per area per time per
    # arcsec², times clear area, throughputs, QE and the pixel's solid angle (pixel scale from
    # astropy's arcsec per radian). Same physics, so only the 3631 Jy rounding (6e-5) differs.
    density = (mu * u.ABmag).to(u.photon / (u.s * u.m**2 * u.nm), u.spectral_density(wavelength * u.nm))
    area = np.pi / 4 * ((200 * u.mm) ** 2 - (70 * u.mm) ** 2)
    scale = (3.8 * u.um / (1000 * u.mm) * u.rad).to(u.arcsec)
    rate = density * bandwidth * u.nm * area * 0.81 * 0.8 * (scale**2 / u.arcsec**2)
    assert values["object_rate_e_s"][0] == pytest.approx(rate.to_value(u.photon / u.s), rel=1e-4)


def test_total_time_gives_the_target_snr_in_the_ccd_equation():
    params = IntegrationTimeParams(target_snr=25, sub_exposure_s=180)
    values = outputs(CALC, [rig()], params)
    signal, sky, dark = values["object_rate_e_s"][0], values["sky_rate_e_s"][0], values["dark_rate_e_s"][0]
    # Howell, Handbook of CCD Astronomy 2nd ed. 2006, §4.4: S/N = N*/√(N* + n_pix(N_S + N_D + N_R²))
    # with n_pix = 1 and one read per sub; float rounding only.
    snr = ccd_snr(signal, sky + dark, 1.5, 180, values["total_time_s"][0])
    assert snr == pytest.approx(25, rel=1e-12)
    assert values["snr_per_sub"][0] == pytest.approx(ccd_snr(signal, sky + dark, 1.5, 180, 180), rel=1e-12)


def test_sky_limited_sub_meets_the_stated_criterion():
    values = outputs(CALC, [rig(read=6.0)], IntegrationTimeParams(read_noise_penalty=0.05))
    background = values["sky_rate_e_s"][0] + values["dark_rate_e_s"][0]
    t = values["sky_limited_sub_s"][0]
    # Common-practice criterion: read noise raises the background noise of one sub by 5 %.
    assert math.sqrt(background * t + 36) / math.sqrt(background * t) == pytest.approx(1.05, rel=1e-12)


def test_missing_camera_data_gives_nulls():
    bare = Rig(name="r", telescope=Telescope(aperture_mm=100, focal_length_mm=600),
               camera=Camera(pixel_size_um=3.8, width_px=10, height_px=10))
    values = outputs(CALC, [bare, rig()])
    assert math.isnan(values["total_time_s"][0]) and math.isnan(values["sub_exposures"][0])
    assert np.isfinite(values["total_time_s"][1])


# --- property tests --------------------------------------------------------------------------

@given(st.floats(1, 200), st.floats(1.1, 10))
def test_total_time_grows_as_the_square_of_the_target_snr(snr, k):
    low = outputs(CALC, [rig()], IntegrationTimeParams(target_snr=snr))
    high = outputs(CALC, [rig()], IntegrationTimeParams(target_snr=snr * k))
    np.testing.assert_allclose(high["total_time_s"], low["total_time_s"] * k**2, rtol=1e-12)


@given(st.floats(15, 28), st.floats(-5, 5))
def test_each_five_magnitudes_is_a_factor_of_100_in_rate(mu, delta):
    a = outputs(CALC, [rig()], IntegrationTimeParams(surface_brightness_mag_arcsec2=mu))
    b = outputs(CALC, [rig()], IntegrationTimeParams(surface_brightness_mag_arcsec2=mu + delta))
    np.testing.assert_allclose(b["object_rate_e_s"], a["object_rate_e_s"] * 100 ** (-delta / 5), rtol=1e-12)


@given(st.floats(50, 500), st.floats(2, 12), st.floats(1, 20), st.floats(0.2, 0.95), st.floats(0, 10),
       st.floats(1, 1800))
def test_sub_exposures_cover_the_total_time_with_less_than_one_to_spare(
    aperture, ratio, pixel, qe, read, sub
):
    values = outputs(CALC, [rig(aperture, aperture * ratio, 0.3 * aperture, pixel, qe, read)],
                     IntegrationTimeParams(sub_exposure_s=sub))
    n, total = values["sub_exposures"][0], values["total_time_s"][0]
    assert n * sub >= total * (1 - 1e-12)
    assert (n - 1) * sub < total


@given(st.floats(50, 500), st.floats(2, 12), st.floats(0.5, 3))
def test_equal_focal_ratio_and_pixel_scale_rate_follows_clear_area(aperture, ratio, k):
    # Same pixel scale (focal length and pixel scaled together) ⇒ rate ∝ clear area.
    a = outputs(CALC, [rig(aperture, aperture * ratio, 0.0, 4.0)])
    b = outputs(CALC, [rig(aperture * k, aperture * ratio * k, 0.0, 4.0 * k)])
    np.testing.assert_allclose(b["object_rate_e_s"], a["object_rate_e_s"] * k**2, rtol=1e-12)


@pytest.mark.parametrize("check", conformance_checks(IntegrationTime), ids=str)
def test_meets_the_conformance_kit(check):
    # plugins/testing.py: the contract and the invariants every calculator shares
    check()


def test_runs_through_compare_with_default_params():
    outcome = demo_outcome("integration_time")
    assert any("full-aperture solar filter" in c for c in outcome.cautions)
    assert outcome.outputs["total_time_s"].values[2] is None  # the bare camera states no QE
    assert outcome.outputs["sub_exposures"].values[0] >= 1
