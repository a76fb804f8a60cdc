"""A comparison as CSV: one row per rig, one column per calculator output keyed by name, the unit (as
the club page prints it, api.display) in the header.

Two additions keep a spreadsheet's reader complete without breaking it:

* the last column, ``null_reasons``, says for each rig why its empty cells are empty
  (``"<reason> [calculator.output, …]; …"``, empty when every value of the rig is defined);
* after the table, a **final block**: one empty line, then one line per caution of the calculators
  shown, ``# caution: <calculator>,<text>`` (two cells). A spreadsheet shows them below the table;
  ``csv.reader`` reads them as short rows; pandas reads them as rows of two cells, or skips them
  with ``read_csv(..., comment="#")`` (the line starts with ``#``).
"""

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


def null_notes(comparison: Comparison) -> list[str]:
    """Per rig, why its empty cells are empty: reasons, each with the outputs it explains."""
    notes: list[dict[str, list[str]]] = [{} for _ in comparison.rigs]
    for name, result in comparison.results.items():
        for output, data in result.outputs.items():
            for i, reason in enumerate(data.null_reasons or ()):
                if reason is not None:
                    notes[i].setdefault(reason, []).append(f"{name}.{output}")
    return ["; ".join(f"{reason} [{', '.join(outputs)}]" for reason, outputs in rig.items()) for rig in notes]


def cautions_block(writer, cautions: list[tuple[str, str]]) -> None:
    """The final block: an empty line, then ``# caution: <calculator>`` and the text, per caution."""
    if not cautions:
        return
    writer.writerow([])
    for calculator, text in cautions:
        writer.writerow([f"# caution: {calculator}", _cell(text)])


def comparison_cautions(comparison: Comparison) -> list[tuple[str, str]]:
    seen: dict[str, str] = {}
    for name, result in comparison.results.items():
        for text in result.cautions:
            seen.setdefault(text, name)
    return [(name, text) for text, name in seen.items()]


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
    notes = null_notes(comparison)
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\r\n")  # RFC 4180 line breaks
    writer.writerow([*columns, "null_reasons"])
    for i, rig in enumerate(comparison.rigs):
        row = [rig.id, rig.name, i == comparison.baseline, *(column[i] for column in values), notes[i]]
        writer.writerow([_cell(v) for v in row])
    cautions_block(writer, comparison_cautions(comparison))
    return buffer.getvalue()


def records_csv(columns: list[str], rows: list[list[object]]) -> str:
    """Any table as CSV, with the same cell rules and line breaks as a comparison."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\r\n")
    writer.writerow(columns)
    for row in rows:
        writer.writerow([_cell(v) for v in row])
    return buffer.getvalue()
