"""How figures are shown to people, in one place for the club page, the CSV headers and the CLI table.

* :func:`unit_text` turns a pint spelling into print: ``"mm^2"`` -> ``"mm²"``, ``"EUR/cm^2"`` ->
  ``"EUR/cm²"``, ``"m^2*deg^2"`` -> ``"m²·deg²"``, ``"um"`` -> ``"µm"``, ``"degC"`` -> ``"°C"``;
  angles keep their names (``"arcsec"``, ``"arcmin"``, ``"deg"``), which read the same in a header,
  a spreadsheet and a terminal.
* :func:`header` puts the unit beside a label or key in brackets: ``"Pixel scale [arcsec]"``.
* :func:`number_text` gives sensible digits: three significant figures (whole numbers from 100 up),
  counts as integers, "yes"/"no" for booleans and a dash for no value.
"""

from __future__ import annotations

import math
import re
from typing import Any

# Unit names spelled differently in print; anything else is shown as pint spells it.
_NAMES = {"um": "µm", "micrometer": "µm", "degC": "°C", "delta_degC": "K", "pixel": "px", "ohm": "Ω"}
_SUPERSCRIPT = str.maketrans("0123456789-", "⁰¹²³⁴⁵⁶⁷⁸⁹⁻")
_POWER = re.compile(r"\s*(?:\^|\*\*)\s*(-?\d+)")
_NAME = re.compile(r"[A-Za-z_]+")


def unit_text(unit: str) -> str:
    """A unit as a reader expects it (see the module docstring); ``""`` stays ``""``."""
    if not unit:
        return ""
    text = _POWER.sub(lambda m: m.group(1).translate(_SUPERSCRIPT), unit)
    text = _NAME.sub(lambda m: _NAMES.get(m.group(0), m.group(0)), text)
    text = re.sub(r"\s*\*\s*", "·", text)
    text = re.sub(r"\s*/\s*", "/", text)
    if text.startswith("1/") and re.fullmatch(r"1/[^/·]+", text):
        text = text[2:] + "⁻¹"  # "1/s" -> "s⁻¹"
    return text


def header(heading: str, unit: str) -> str:
    """``heading`` with the unit (already in print) in brackets; no brackets when dimensionless."""
    return f"{heading} [{unit}]" if unit else heading


def number_text(value: Any, *, integer: bool = False) -> str:
    """What a reader sees: three significant figures (whole numbers from 100 up), a count as an
    integer, yes/no, or a dash for no value."""
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, str):
        return value
    value = float(value)
    if not math.isfinite(value):
        return "—"
    if integer:
        return f"{round(value):d}"
    size = abs(value)
    if size >= 100:
        return f"{value:.0f}"
    if size >= 10:
        return f"{value:.1f}"
    if size >= 1 or size == 0:
        return f"{value:.2f}"
    return f"{value:#.3g}"


def data_value(value: Any) -> str:
    """The exact value, for a machine to read beside the rounded text (JSON spelling)."""
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "true" if value else "false"
    return value if isinstance(value, str) else repr(float(value))
