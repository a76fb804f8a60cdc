"""Tests of calculators/builtin/integration_time.py: AB zero points, electron rates, the CCD equation."""

import math

import astropy.constants as const
import astropy.units as u
import numpy as np
import pytest
from example_rigs import demo_outcome, outputs
from hypothesis import given, settings
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


# --- emission-line objects, filters and colour sensors (issue 12) ----------------------------------

from calculators.batch import RigBatch  # noqa: E402
from calculators.builtin import emission_lines  # noqa: E402
from pydantic import ValidationError  # noqa: E402
from plugins.runner import run  # noqa: E402

SUBURBAN_SKY = 19.5  # mag/arcsec², an invented suburban site (demo figure)


def line_params(**extra) -> IntegrationTimeParams:
    return IntegrationTimeParams(line="H-alpha", line_surface_brightness_rayleigh=200,
                                 sky_brightness_mag_arcsec2=SUBURBAN_SKY, **extra)


def with_columns(rigs, **columns) -> RigBatch:
    """A comparison batch with extra columns (the train's filter, the camera's sensor)."""
    batch = RigBatch.from_rigs(rigs)
    return RigBatch(columns={**batch.columns, **{k: np.asarray(v) for k, v in columns.items()}}, baseline=(0,))


def compute(batch, params):
    result = run(CALC, batch, params)
    assert result.error is None, result.error
    return result.values


def test_h_alpha_line_rate_worked_example():
    # Worked by hand (see the README's example): 200 R of H-alpha through a 7 nm filter of peak 0.9,
    # 200 mm f/5 newtonian (70 mm obstruction, throughput 0.81), 3.8 µm pixels, QE 0.8:
    # photons = 200 R × 1e10/(4π)/(648000/π)² = 3.7408 s⁻¹ m⁻² arcsec⁻² (Hunten et al. 1956);
    # area π/4·(0.2² − 0.07²) m² = 0.027567 m²; pixel (206.265·3.8/1000)² arcsec²;
    # rate = 3.7408 × 0.9 × 0.027567 × 0.81 × 0.8 × pixel, about 0.037 e⁻/s.
    values = outputs(CALC, [rig()], line_params(filter_centre_nm=656.0, filter_bandwidth_nm=7.0,
                                                filter_peak_transmission=0.9))
    expected = 3.7408 * 0.9 * 0.027567 * 0.81 * 0.8 * (206.265 * 3.8 / 1000) ** 2
    # Tolerance: the hand figures carry 4-5 significant figures.
    assert values["object_rate_e_s"][0] == pytest.approx(expected, rel=5e-4)
    assert values["line_transmission"][0] == pytest.approx(0.9)


def test_line_rate_through_astropy_units():
    rayleigh = 37.0
    values = outputs(CALC, [rig()], line_params(filter_centre_nm=656.0, filter_bandwidth_nm=7.0,
                                                filter_peak_transmission=0.8).model_copy(
        update={"line_surface_brightness_rayleigh": rayleigh}))
    # Independent path: rayleighs as photons per arcsec² with astropy's steradian, times the optics.
    per = (rayleigh * 1e10 / (4 * np.pi) * u.photon / (u.s * u.m**2 * u.sr)).to(u.photon / (u.s * u.m**2 * u.arcsec**2))
    area = np.pi / 4 * ((200 * u.mm) ** 2 - (70 * u.mm) ** 2)
    scale = (3.8 * u.um / (1000 * u.mm) * u.rad).to(u.arcsec)
    rate = per * 0.8 * area * 0.81 * 0.8 * scale**2
    assert values["object_rate_e_s"][0] == pytest.approx(rate.to_value(u.photon / u.s), rel=1e-9)


def test_sky_through_a_filter_is_the_continuum_over_its_equivalent_width():
    values = outputs(CALC, [rig()], line_params(filter_centre_nm=656.0, filter_bandwidth_nm=7.0,
                                                filter_peak_transmission=0.9))
    no_filter = outputs(CALC, [rig()], line_params(wavelength_nm=656.0, bandwidth_nm=7.0 * 0.9))
    # A top-hat of width w and peak T passes the continuum of an equivalent width T·w.
    assert values["sky_rate_e_s"][0] == pytest.approx(no_filter["sky_rate_e_s"][0], rel=1e-12)


def test_the_filter_in_the_train_wins_over_the_params():
    batch = with_columns([rig()], filter_centre_nm=[500.7], filter_bandwidth_nm=[7.0], filter_peak_transmission=[0.9])
    values = compute(batch, line_params(filter_centre_nm=656.0, filter_bandwidth_nm=7.0))
    assert values["line_transmission"][0] == 0.0  # the train's [O III] filter, not the params' H-alpha one


@settings(max_examples=60, deadline=None)
@given(st.floats(3.0, 300.0), st.floats(0.1, 0.95), st.floats(17.0, 21.0))
def test_a_narrower_band_shortens_the_time_for_a_line_in_the_sky_limited_regime(width, narrower, sky):
    # Sky-limited (read noise negligible: long subs, 0 read noise), the line inside both bands:
    # the sky falls with the bandwidth, the line's signal does not.
    r = rig(read=0.0, dark=0.0)
    wide = line_params(filter_centre_nm=656.28, filter_bandwidth_nm=width).model_copy(update={"sky_brightness_mag_arcsec2": sky})
    narrow = wide.model_copy(update={"filter_bandwidth_nm": width * narrower})
    t_wide = outputs(CALC, [r], wide)["total_time_s"][0]
    t_narrow = outputs(CALC, [r], narrow)["total_time_s"][0]
    assert t_narrow < t_wide


@settings(max_examples=60, deadline=None)
@given(st.floats(3.0, 300.0), st.floats(0.1, 0.95), st.floats(17.0, 23.0), st.floats(18.0, 26.0))
def test_a_narrower_band_never_shortens_the_time_for_a_continuum(width, narrower, sky, mu):
    r = rig()
    wide = IntegrationTimeParams(surface_brightness_mag_arcsec2=mu, sky_brightness_mag_arcsec2=sky,
                                 filter_centre_nm=656.28, filter_bandwidth_nm=width)
    narrow = wide.model_copy(update={"filter_bandwidth_nm": width * narrower})
    t_wide = outputs(CALC, [r], wide)["total_time_s"][0]
    t_narrow = outputs(CALC, [r], narrow)["total_time_s"][0]
    assert t_narrow >= t_wide * (1 - 1e-12)


@settings(max_examples=40, deadline=None)
@given(st.sampled_from(sorted(emission_lines.LINES)), st.floats(300, 1000), st.floats(1, 20))
def test_a_line_outside_the_passband_gives_null_with_a_reason(line, centre, width):
    wavelengths = [w for w, _ in emission_lines.LINES[line]]
    if any(abs(w - centre) <= width / 2 for w in wavelengths):
        return  # inside: covered by the tests above
    from plugins.compare import compare

    body = {"name": "r", "telescope": {"aperture_mm": 200, "focal_length_mm": 1000},
            "camera": {"pixel_size_um": 3.8, "width_px": 100, "height_px": 100, "quantum_efficiency": 0.8,
                       "read_noise_e": 1.5, "dark_current_e_per_s": 0.003}}
    result = compare([body], ["integration_time"], params={"integration_time": {
        "line": line, "line_surface_brightness_rayleigh": 50, "filter_centre_nm": centre, "filter_bandwidth_nm": width,
    }}).results["integration_time"]
    total = result.outputs["total_time_s"]
    assert total.values == [None]
    assert line in total.null_reasons[0] and "outside the filter's passband" in total.null_reasons[0]
    assert result.outputs["object_rate_e_s"].values == [0.0]


def test_a_colour_sensor_counts_only_the_pixels_that_see_the_line():
    params = line_params(filter_centre_nm=656.0, filter_bandwidth_nm=7.0)
    mono = compute(with_columns([rig()], sensor=["mono"]), params)
    colour = compute(with_columns([rig()], sensor=["colour"]), params)
    # Convention (common practice): H-alpha reaches the red quarter of a Bayer mosaic, so the time to
    # the same S/N per pixel of the final image is 4 times the per-pixel time.
    assert colour["line_pixel_fraction"][0] == 0.25 and mono["line_pixel_fraction"][0] == 1.0
    assert colour["total_time_s"][0] == pytest.approx(4 * mono["total_time_s"][0], rel=1e-12)
    oiii = compute(with_columns([rig()], sensor=["colour"]),
                   params.model_copy(update={"line": "[O III]", "filter_centre_nm": 500.7}))
    assert oiii["line_pixel_fraction"][0] == 0.75


def test_a_mono_sensor_and_a_continuum_are_unchanged_by_the_sensor_column():
    params = IntegrationTimeParams()
    plain = outputs(CALC, [rig()], params)
    for sensor in ("mono", "colour"):
        values = compute(with_columns([rig()], sensor=[sensor]), params)
        assert values["total_time_s"][0] == pytest.approx(plain["total_time_s"][0], rel=1e-12)


def test_unknown_line_is_refused_listing_the_known_ones():
    with pytest.raises(ValidationError) as info:
        IntegrationTimeParams(line="H-gamma", line_surface_brightness_rayleigh=5)
    error = info.value.errors()[0]
    assert error["loc"] == ("line",)
    for name in emission_lines.LINES:
        assert name in error["msg"]


def test_a_surface_brightness_given_both_ways_is_refused():
    with pytest.raises(ValidationError) as info:
        IntegrationTimeParams(line="H-alpha", line_surface_brightness_rayleigh=5,
                              line_surface_brightness_erg_s_cm2_arcsec2=1e-17)
    assert info.value.errors()[0]["loc"] == ("line_surface_brightness_erg_s_cm2_arcsec2",)


@pytest.mark.parametrize("params", [
    {"line": "H-alpha"},
    {"line_surface_brightness_rayleigh": 5},
    {"line": "H-alpha", "line_surface_brightness_rayleigh": 5, "surface_brightness_mag_arcsec2": 21},
    {"filter_centre_nm": 656},
])
def test_incomplete_or_doubled_objects_and_filters_are_refused(params):
    with pytest.raises(ValidationError):
        IntegrationTimeParams(**params)


def test_erg_and_rayleigh_give_the_same_answer():
    erg = emission_lines.RAYLEIGH_PHOTONS_M2_ARCSEC2 * 25 * emission_lines.photon_energy_j(656.28) * 1e7 / 1e4
    a = outputs(CALC, [rig()], IntegrationTimeParams(line="H-alpha", line_surface_brightness_rayleigh=25))
    b = outputs(CALC, [rig()], IntegrationTimeParams(line="H-alpha", line_surface_brightness_erg_s_cm2_arcsec2=erg))
    assert a["total_time_s"][0] == pytest.approx(b["total_time_s"][0], rel=1e-9)
