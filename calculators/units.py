"""Unit-bearing inputs, parsed once at the edge with pint.

Every length and mass field of the schemas accepts either a plain number in the field's canonical
unit (the unit is in the field name: ``aperture_mm``, ``mass_kg``) or a string with a unit, such as
``"12 in"`` or ``"27 lb"``. A string of the wrong dimension, an unknown unit, NaN or infinity is a
validation error that names the field.
"""

from __future__ import annotations

import math
import numbers
import re
from functools import cache
from typing import Annotated, Any

import numpy as np
import pint
from pydantic import BeforeValidator, Field


@cache
def unit_registry() -> pint.UnitRegistry:
    """The one pint registry rigbench uses (built on first use, not at import)."""
    return pint.UnitRegistry()


def to_canonical(value: Any, unit: str) -> float:
    """Convert a number (already in ``unit``) or a string with a unit into a float in ``unit``.

    >>> round(to_canonical("12 in", "mm"), 9)  # pint gives 304.79999999999995 (binary floats)
    304.8
    """
    kind = type(value)
    if kind is float:  # the common cases first: the ABC check below costs more than the rest
        number = value
    elif kind is int:  # a JSON integer (not a bool: its type is bool)
        try:
            number = float(value)
        except OverflowError:  # an int beyond the float range: a validation error, not a crash
            number = math.inf
    elif isinstance(value, (bool, np.bool_)):
        raise ValueError("expected a number or a string with a unit, not a boolean")
    elif isinstance(value, numbers.Real):  # int, float and numpy scalars alike
        try:
            number = float(value)
        except OverflowError:  # an int beyond the float range: a validation error, not a crash
            number = math.inf
    elif isinstance(value, str):
        number = _parse_string(value, unit)
    else:
        raise ValueError(f"expected a number in {unit} or a string with a unit, e.g. '12 in'")
    if not math.isfinite(number):
        raise ValueError("must be a finite number (NaN and infinity are not accepted)")
    return number


# A number followed by a plain unit name: nothing else is evaluated, so a string such as
# "9**9**9 mm" cannot make the parser compute a huge power.
_QUANTITY = re.compile(
    r"^\s*(?P<number>[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d{1,3})?)\s*"
    r"(?P<unit>[A-Za-zµμ_][A-Za-zµμ_ ]{0,30})?\s*$"
)


def _parse_string(text: str, unit: str) -> float:
    match = _QUANTITY.match(text)
    if match is None:
        raise ValueError(f"cannot read {text!r}: expected a number and a unit, such as '12 in' or '305 mm'")
    number = float(match["number"])
    if match["unit"] is None:
        return number
    ureg = unit_registry()
    try:
        given = ureg.parse_units(match["unit"].strip())
    except Exception:  # pint raises several error types for names it does not know
        raise ValueError(f"unknown unit {match['unit'].strip()!r} in {text!r}") from None
    target = ureg.parse_units(unit)
    if given.dimensionality != target.dimensionality:
        raise ValueError(
            f"{text!r} is a {_dimension_name(given)}, expected a {_dimension_name(target)} "
            f"(e.g. a value in {unit})"
        )
    return float(ureg.Quantity(number, given).to(target).magnitude)


def _dimension_name(units) -> str:
    names = {"[length]": "length", "[mass]": "mass", "[time]": "time", "[temperature]": "temperature"}
    dimensionality = str(units.dimensionality)
    return names.get(dimensionality, f"quantity of dimension {dimensionality}")


def _quantity(unit: str):
    def validate(value: Any) -> float:
        # A finite float is already canonical (the unit is the field's): no call for most fields.
        if type(value) is float and value - value == 0.0:
            return value
        return to_canonical(value, unit)

    return BeforeValidator(validate, json_schema_input_type=float | str)


# Annotated field types: the canonical unit is fixed here, the bounds at each field.
Millimetres = Annotated[float, _quantity("mm")]
Micrometres = Annotated[float, _quantity("um")]
Kilograms = Annotated[float, _quantity("kg")]

# Physical upper bounds. An amateur's equipment is far inside them; a value beyond one is a typing
# slip or an attack (1e308 overflows the calculators' products and squares), refused as a 422 that
# names the field. Tighter bounds sit at the fields that have them (calculators.schemas).
#: Longest length any field takes: 1 km (a tube, a pier, an arm; no instrument part is longer).
MAX_LENGTH_MM = 1_000_000.0
#: Heaviest mass any field takes: 100 t (more than any amateur or club instrument with its mount).
MAX_MASS_KG = 100_000.0

PositiveMillimetres = Annotated[Millimetres, Field(gt=0, le=MAX_LENGTH_MM)]
NonNegativeMillimetres = Annotated[Millimetres, Field(ge=0, le=MAX_LENGTH_MM)]
PositiveKilograms = Annotated[Kilograms, Field(gt=0, le=MAX_MASS_KG)]
NonNegativeKilograms = Annotated[Kilograms, Field(ge=0, le=MAX_MASS_KG)]
