"""A purchase evaluation as CSV: one line per row of the front, then of the top, then the baseline.

Columns: ``set`` (front, top or baseline), ``rank`` (1-based within its set), the four indices into
the request's lists, ``binning`` (the factor; empty for a visual combination) and ``eyepiece`` (its
index, empty for an imaging one), the five stored ids (empty when inline or none), one column per
constrained or
objective output with its unit in the header (as a comparison's CSV writes them), and ``score``.
Every cell is a number, a fixed word or empty, so no cell can be read as a spreadsheet formula.
After the table comes the final block of the calculators' cautions, as in a comparison's CSV
(:func:`api.comparisons.csv_table.cautions_block`).
"""

from __future__ import annotations

import csv
import io

from api.comparisons.csv_table import cautions_block, header
from calculators.batch import AXES
from calculators.evaluation_schemas import EvaluationResult, EvaluationRow

#: Index columns: one per axis, then the binning factor and the eyepiece of a visual combination.
INDICES = (*AXES, "binning", "eyepiece")
IDS = (*AXES, "eyepiece")


def _cell(value: object) -> object:
    if value is None:
        return ""
    if isinstance(value, list):  # a train's stored ids, one per element ("" where inline)
        return ";".join("inline" if v is None else str(v) for v in value)
    return repr(value) if isinstance(value, float) else value


def evaluation_csv(result: EvaluationResult) -> str:
    keys = list(result.units)
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\r\n")  # RFC 4180 line breaks
    writer.writerow([
        "set", "rank", *INDICES, *(f"{kind}_id" for kind in IDS),
        *(header(*key.split(".", 1), result.units[key]) for key in keys), "score",
    ])

    def write(name: str, rows: list[EvaluationRow]) -> None:
        for rank, row in enumerate(rows, 1):
            indices, ids = row.indices, row.ids
            writer.writerow([_cell(v) for v in (
                name, rank, *(getattr(indices, kind, None) for kind in INDICES),
                *(getattr(ids, kind, None) for kind in IDS), *(row.values.get(key) for key in keys),
                row.score,
            )])

    write("front", result.front)
    write("top", result.top)
    write("baseline", [result.baseline])
    seen: dict[str, str] = {}
    for name, texts in result.cautions.items():
        for text in texts:
            seen.setdefault(text, name)
    cautions_block(writer, [(name, text) for text, name in seen.items()])
    return buffer.getvalue()
