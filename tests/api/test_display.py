"""api/display.py: one way to show a unit and a number, for the page, the CSV headers and the CLI."""

from __future__ import annotations

import math

import pytest

from api.display import header, number_text, unit_text
from plugins.registry import load_registry


@pytest.mark.parametrize(("unit", "text"), [
    ("", ""), ("mm", "mm"), ("mm^2", "mm²"), ("EUR/cm^2", "EUR/cm²"), ("m^2*deg^2", "m²·deg²"),
    ("m^2*arcsec^2", "m²·arcsec²"), ("kg*m^2", "kg·m²"), ("N*m", "N·m"), ("um", "µm"), ("degC", "°C"),
    ("1/s", "s⁻¹"), ("arcsec", "arcsec"), ("deg^2", "deg²"), ("pixel", "px"), ("W/m**2", "W/m²"),
    ("EUR/(cm^2*deg^2)", "EUR/(cm²·deg²)"), ("m^-1", "m⁻¹"),
])
def test_a_unit_is_printed_as_a_reader_expects(unit, text):
    assert unit_text(unit) == text


def test_every_declared_unit_prints_without_pint_syntax():
    for calculator in load_registry().calculators.values():
        for output in calculator.outputs:
            assert not set(unit_text(output.unit)) & set("^*_"), (calculator.name, output.name)


def test_a_header_has_the_unit_in_brackets_unless_dimensionless():
    assert header("Pixel scale", "arcsec") == "Pixel scale [arcsec]"
    assert header("Focal ratio", "") == "Focal ratio"


@pytest.mark.parametrize("value, text", [
    (None, "—"), (True, "yes"), (False, "no"), ("over-sampled", "over-sampled"), (math.nan, "—"),
    (math.inf, "—"), (62831.85, "62832"), (65.31, "65.3"), (4.0, "4.00"), (0.0, "0.00"),
    (0.6527, "0.653"), (0.08, "0.0800"), (-12.34, "-12.3"), (304.79999999999995, "305"),
])
def test_numbers_read_to_three_significant_figures_or_whole_numbers(value, text):
    assert number_text(value) == text


@pytest.mark.parametrize("value, text", [(4.0, "4"), (12.0, "12"), (2.9999999999, "3"), (None, "—")])
def test_a_count_reads_as_a_whole_number(value, text):
    assert number_text(value, integer=True) == text
