"""api/comparisons/csv_table.py: a comparison as CSV (RFC 4180)."""

from __future__ import annotations

import csv
import io

from api.comparisons.csv_table import comparison_csv
from plugins.results import CalculatorResult, Comparison, OutputValues, RigRef


def test_one_row_per_rig_one_column_per_output_with_units():
    comparison = Comparison(
        rigs=[RigRef(id=3, name="a"), RigRef(name="b, with comma")], baseline=0,
        results={"calc": CalculatorResult(version="1", outputs={
            "area": OutputValues(unit="mm^2", values=[1.5, None]),
            "ok": OutputValues(unit="", values=[True, False]),
        })},
    )
    text = comparison_csv(comparison)
    assert "\r\n" in text  # RFC 4180 line breaks
    rows = list(csv.reader(io.StringIO(text)))
    assert rows == [
        ["rig_id", "rig", "baseline", "calc.area [mm²]", "calc.ok", "null_reasons"],
        ["3", "a", "true", "1.5", "true", ""],
        ["", "b, with comma", "false", "", "false", ""],
    ]


def test_text_that_spreadsheets_would_evaluate_is_quoted_but_numbers_are_not():
    comparison = Comparison(
        rigs=[RigRef(name="@SUM(A1)"), RigRef(name="-2")], baseline=0,
        results={"c": CalculatorResult(version="1", outputs={"x": OutputValues(unit="", values=[-1.0, "+danger"])})},
    )
    rows = list(csv.reader(io.StringIO(comparison_csv(comparison))))
    assert rows[1][1] == "'@SUM(A1)" and rows[1][3] == "-1.0"
    assert rows[2][1] == "-2" and rows[2][3] == "'+danger"


def test_null_reasons_column_and_the_final_block_of_cautions():
    comparison = Comparison(
        rigs=[RigRef(name="a"), RigRef(name="b")], baseline=0,
        results={"calc": CalculatorResult(version="1", cautions=["Mind the Sun, always."], outputs={
            "x": OutputValues(unit="", values=[1.0, None], null_reasons=[None, "no camera"]),
            "y": OutputValues(unit="", values=[None, None], null_reasons=["no mass", "no camera"]),
        })},
    )
    text = comparison_csv(comparison)
    rows = list(csv.reader(io.StringIO(text)))
    assert rows[1][-1] == "no mass [calc.y]"
    assert rows[2][-1] == "no camera [calc.x, calc.y]"
    assert rows[3] == [] and rows[4] == ["# caution: calc", "Mind the Sun, always."]
    # A spreadsheet-style reader takes the table and skips the block with comment="#" (pandas).
    pandas = __import__("pytest").importorskip("pandas")
    table = pandas.read_csv(io.StringIO(text), comment="#")
    assert len(table) == 2 and table["null_reasons"].tolist()[1] == "no camera [calc.x, calc.y]"
