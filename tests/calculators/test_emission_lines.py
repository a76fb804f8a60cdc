"""Tests of calculators/builtin/emission_lines.py: the rayleigh, photon energies, passbands, Bayer fractions."""

import math

import astropy.constants as const
import astropy.units as u
import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from calculators.builtin import emission_lines as lines


def test_rayleigh_in_photons_per_m2_per_arcsec2_through_astropy_units():
    # Hunten, Roach & Chamberlain 1956: 1 R = 1e10/(4π) photons s⁻¹ m⁻² sr⁻¹. astropy.units converts
    # the steradian to arcsec² on its own; only floating-point rounding may differ.
    one = (1e10 / (4 * math.pi) * u.photon / (u.s * u.m**2 * u.sr)).to(u.photon / (u.s * u.m**2 * u.arcsec**2))
    assert lines.RAYLEIGH_PHOTONS_M2_ARCSEC2 == pytest.approx(one.value, rel=1e-12)
    # The figure written in the module docstring, to its 5 significant figures.
    assert lines.RAYLEIGH_PHOTONS_M2_ARCSEC2 == pytest.approx(0.018704, rel=5e-5)


def test_photon_energy_matches_astropy_constants():
    # hc/λ with astropy's CODATA h and c (both exact in the 2019 SI).
    for wavelength in (486.13, 500.68, 656.28, 671.64):
        expected = (const.h * const.c / (wavelength * u.nm)).to_value(u.J)
        assert lines.photon_energy_j(wavelength) == pytest.approx(expected, rel=1e-12)


def test_one_rayleigh_of_h_alpha_in_erg():
    # 1 R at H-alpha = 2.41e-7 erg s⁻¹ cm⁻² sr⁻¹ (the conversion quoted by Haffner et al. 2003, ApJS
    # 149, 405, from memory), i.e. 5.66e-18 per arcsec²; the tolerance covers its 3 figures.
    energy = (1e6 / (4 * math.pi) * u.photon / (u.s * u.cm**2 * u.sr)) * (const.h * const.c / (656.28 * u.nm)) / u.photon
    per_sr = energy.to_value(u.erg / (u.s * u.cm**2 * u.sr))
    assert per_sr == pytest.approx(2.41e-7, rel=3e-3)
    per_arcsec2 = (energy).to_value(u.erg / (u.s * u.cm**2 * u.arcsec**2))
    assert lines.erg_to_rayleigh(per_arcsec2, 656.28) == pytest.approx(1.0, rel=1e-12)
    assert per_arcsec2 == pytest.approx(5.66e-18, rel=2e-3)


@given(st.floats(1e-20, 1e-10), st.floats(300, 1000))
def test_erg_to_rayleigh_scales_with_wavelength(flux, wavelength):
    # More photons per erg at longer wavelength: R ∝ F·λ (photon energy hc/λ).
    ratio = lines.erg_to_rayleigh(flux, 2 * wavelength) / lines.erg_to_rayleigh(flux, wavelength)
    assert ratio == pytest.approx(2.0, rel=1e-9)


def test_a_line_passes_inside_the_band_at_peak_and_not_outside():
    centre = np.array([656.0, 500.7, np.nan, 672.4])
    width = np.array([7.0, 7.0, np.nan, 3.0])
    passed = lines.line_passed("H-alpha", centre, width, 0.9)
    assert passed.tolist()[:3] == pytest.approx([0.9, 0.0, 1.0])
    # The [S II] doublet (671.64 and 673.08 nm) in a 3 nm band at 672.4: both lines pass.
    assert lines.line_passed("[S II]", centre, width, 0.9)[3] == pytest.approx(0.9)
    # A 1 nm band at 671.6 passes only the bluer line: half the doublet by our equal-split convention.
    assert lines.line_passed("[S II]", 671.6, 1.0, 1.0) == pytest.approx(0.5)


def test_bayer_fractions_by_the_stated_convention():
    # Common practice: red lines reach the one red pixel in four; [O III] and H-beta the blue and both greens.
    assert lines.bayer_fraction("H-alpha") == 0.25
    assert lines.bayer_fraction("[S II]") == 0.25
    assert lines.bayer_fraction("[O III]") == 0.75
    assert lines.bayer_fraction("H-beta") == 0.75
