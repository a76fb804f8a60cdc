"""Tests of calculators/builtin/optics.py: shared optical relations, against astropy.units."""

import astropy.units as u
import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from calculators.builtin.optics import ARCSEC_PER_RAD, field_angle_arcmin, pixel_scale_arcsec


def test_pixel_scale_of_38_um_at_1200_mm():
    # Common practice (fact of the trade quoted in issue 2): about 0.65″ per pixel; exact 0.6532″.
    assert pixel_scale_arcsec(3.8, 1200) == pytest.approx(0.65, abs=0.005)
    # astropy.units: small-angle p/f in radians converted to arcsec; float rounding only.
    assert pixel_scale_arcsec(3.8, 1200) == pytest.approx(
        (3.8 * u.um / (1200 * u.mm) * u.rad).to_value(u.arcsec), rel=1e-12
    )


def test_field_angle_through_astropy_units():
    # Plane geometry, 2·atan(s/2f), evaluated with astropy's angle conversion; float rounding only.
    expected = (2 * np.arctan(36 / (2 * 135)) * u.rad).to_value(u.arcmin)
    assert field_angle_arcmin(36, 135) == pytest.approx(expected, rel=1e-12)


@given(st.floats(0.001, 50), st.floats(50, 5000))
def test_small_fields_approach_the_small_angle_pixel_scale(size_mm, focal_mm):
    # For s ≪ f, 2·atan(s/2f) → s/f (the error is (s/f)²/12 relative).
    small_angle = size_mm / focal_mm * ARCSEC_PER_RAD / 60
    ratio = size_mm / focal_mm
    assert field_angle_arcmin(size_mm, focal_mm) == pytest.approx(small_angle, rel=ratio**2 / 12 * 1.01 + 1e-12)
    assert field_angle_arcmin(size_mm, focal_mm) <= small_angle * (1 + 1e-12)
