"""A comparison as CSV: one row per rig, one column per calculator output keyed by name, the unit (as
the club page prints it, api.display) in the header."""

from __future__ import annotations

import csv
import io
import re

from api import display
from plugins.results import Comparison

# A cell a spreadsheet would run as a formula (OWASP "CSV injection"); numbers are left alone.
_FORMULA = re.compile(r"^[=+\-@\t\r]")
_NUMBER = re.compile(r"^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$")


def _cell(value: object) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return repr(value)
    text = str(value)
    if _FORMULA.match(text) and not _NUMBER.match(text):
        return "'" + text
    return text


def header(calculator: str, output: str, unit: str) -> str:
    """The column of an output: its key (what scripts look up) and its unit as the page prints it."""
    return display.header(f"{calculator}.{output}", display.unit_text(unit))


def comparison_csv(comparison: Comparison) -> str:
    columns: list[str] = ["rig_id", "rig", "baseline"]
    values: list[list[object]] = []
    for name, result in comparison.results.items():
        if result.error is not None:
            columns.append(f"{name}.error")
            values.append([result.error] * len(comparison.rigs))
            continue
        for output, data in result.outputs.items():
            columns.append(header(name, output, data.unit))
            values.append(data.values)
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\r\n")  # RFC 4180 line breaks
    writer.writerow(columns)
    for i, rig in enumerate(comparison.rigs):
        row = [rig.id, rig.name, i == comparison.baseline, *(column[i] for column in values)]
        writer.writerow([_cell(v) for v in row])
    return buffer.getvalue()


def records_csv(columns: list[str], rows: list[list[object]]) -> str:
    """Any table as CSV, with the same cell rules and line breaks as a comparison."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\r\n")
    writer.writerow(columns)
    for row in rows:
        writer.writerow([_cell(v) for v in row])
    return buffer.getvalue()
