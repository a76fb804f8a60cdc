"""Tests of calculators/units.py: numbers and unit strings read once, at the edge."""

from __future__ import annotations

import math

import astropy.units as u
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from pydantic import BaseModel, ValidationError

from calculators.units import Kilograms, Micrometres, Millimetres, to_canonical, unit_registry

finite = st.floats(1e-3, 1e6, allow_nan=False, allow_infinity=False)


# --- reference values -------------------------------------------------------------------------

def test_inch_is_exactly_25_4_mm():
    # NIST SP 811 (2008), appendix B.8: 1 in = 2.54 × 10⁻² m exactly. Relative tolerance 1e-14:
    # pint multiplies binary floats (12 in → 304.79999999999995 mm), an error of a few ulp.
    assert to_canonical("1 in", "mm") == pytest.approx(25.4, rel=1e-14, abs=0)
    assert to_canonical("12 in", "mm") == pytest.approx(304.8, rel=1e-14, abs=0)


def test_pound_is_exactly_0_45359237_kg():
    # NIST SP 811 (2008), appendix B.8: 1 lb (avoirdupois) = 0.453 592 37 kg exactly. pint stores
    # 0.4535923700000001 kg, so compare with a relative tolerance of a few ulp (1e-14).
    assert to_canonical("1 lb", "kg") == pytest.approx(0.45359237, rel=1e-14, abs=0)
    assert to_canonical("27 lb", "kg") == pytest.approx(27 * 0.45359237, rel=1e-14, abs=0)


@pytest.mark.parametrize(
    ("text", "unit", "reference"),
    [
        ("12 in", "mm", 12 * u.imperial.inch),
        ("3 ft", "mm", 3 * u.imperial.foot),
        ("27 lb", "kg", 27 * u.imperial.pound),
        ("500 g", "kg", 500 * u.g),
        ("0.3 m", "mm", 0.3 * u.m),
        ("3.8 um", "um", 3.8 * u.um),
        ("0.0038 mm", "um", 0.0038 * u.mm),
    ],
)
def test_conversions_agree_with_astropy_units(text, unit, reference):
    # astropy.units (an independent implementation from pint) as the reference library; 1e-14
    # relative allows for the different order of float operations in the two libraries.
    assert to_canonical(text, unit) == pytest.approx(reference.to(u.Unit(unit)).value, rel=1e-14)


# --- properties ----------------------------------------------------------------------------------

@given(finite)
@settings(deadline=None)  # the first example builds pint's registry
def test_unit_string_in_the_canonical_unit_gives_the_same_number(value):
    assert to_canonical(f"{value!r} mm", "mm") == value
    assert to_canonical(repr(value), "mm") == value  # a bare number string is in the field's unit


@given(finite)
@settings(deadline=None)
def test_inches_and_pounds_scale_by_their_exact_definitions(value):
    # NIST SP 811 definitions; 1e-14 relative as above.
    assert to_canonical(f"{value!r} in", "mm") == pytest.approx(value * 25.4, rel=1e-14)
    assert to_canonical(f"{value!r} lb", "kg") == pytest.approx(value * 0.45359237, rel=1e-14)


@given(finite)
@settings(deadline=None)
def test_plain_numbers_pass_through_unchanged(value):
    assert to_canonical(value, "mm") == value
    assert to_canonical(np.float64(value), "kg") == value


def test_numpy_integers_are_numbers():
    assert to_canonical(np.int32(200), "mm") == 200.0


# --- refusals --------------------------------------------------------------------------------------

@pytest.mark.parametrize(
    ("value", "unit", "message"),
    [
        ("12 kg", "mm", "is a mass, expected a length"),
        ("12 in", "kg", "is a length, expected a mass"),
        ("12 mm mm", "mm", "expected a length"),
        ("12 degC", "mm", "is a temperature"),
        ("12 blorp", "mm", "unknown unit 'blorp'"),
        ("twelve in", "mm", "cannot read"),
        ("9**9**9 mm", "mm", "cannot read"),  # no arithmetic is evaluated
        ("", "mm", "cannot read"),
        ("nan mm", "mm", "cannot read"),
        ("1e999 mm", "mm", "finite"),
        (float("nan"), "mm", "finite"),
        (float("inf"), "kg", "finite"),
        (10**400, "mm", "finite"),  # beyond the float range: a validation error, not OverflowError
        (True, "mm", "not a boolean"),
        (None, "mm", "expected a number"),
        ([12], "mm", "expected a number"),
    ],
)
def test_bad_values_are_refused_with_a_reason(value, unit, message):
    with pytest.raises(ValueError, match=message):
        to_canonical(value, unit)


class _Part(BaseModel):
    length_mm: Millimetres
    mass_kg: Kilograms
    pitch_um: Micrometres


@pytest.mark.parametrize(
    ("field", "value"),
    [("length_mm", "12 kg"), ("mass_kg", "12 in"), ("pitch_um", "3 lb"), ("length_mm", "12 blorp"),
     ("mass_kg", float("nan")), ("pitch_um", "inf um")],
)
def test_validation_errors_name_the_field(field, value):
    good = {"length_mm": 1, "mass_kg": 1, "pitch_um": 1}
    with pytest.raises(ValidationError) as info:
        _Part(**{**good, field: value})
    assert [e["loc"] for e in info.value.errors()] == [(field,)]


def test_unit_registry_is_built_once():
    assert unit_registry() is unit_registry()
    assert math.isclose(unit_registry().Quantity(1, "in").to("mm").magnitude, 25.4, rel_tol=1e-14)
