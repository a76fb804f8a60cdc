"""A purchase evaluation as CSV: one line per row of the front, then of the top, then the baseline.

Columns: ``set`` (front, top or baseline), ``rank`` (1-based within its set), the four indices into
the request's lists, the four stored ids (empty when inline or none), one column per constrained or
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


def _cell(value: object) -> object:
    if value is None:
        return ""
    return repr(value) if isinstance(value, float) else value


def evaluation_csv(result: EvaluationResult) -> str:
    keys = list(result.units)
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\r\n")  # RFC 4180 line breaks
    writer.writerow([
        "set", "rank", *AXES, *(f"{kind}_id" for kind in AXES),
        *(header(*key.split(".", 1), result.units[key]) for key in keys), "score",
    ])

    def write(name: str, rows: list[EvaluationRow]) -> None:
        for rank, row in enumerate(rows, 1):
            indices, ids = row.indices, row.ids
            writer.writerow([_cell(v) for v in (
                name, rank, *(getattr(indices, kind) for kind in AXES),
                *(getattr(ids, kind) for kind in AXES), *(row.values.get(key) for key in keys),
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
