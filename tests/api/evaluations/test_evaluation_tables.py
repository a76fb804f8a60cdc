"""api/evaluations/csv_table.py: a purchase evaluation as CSV (RFC 4180)."""

from __future__ import annotations

import csv
import io

from api.evaluations.csv_table import evaluation_csv
from calculators.evaluation_schemas import EvaluationResult, EvaluationRow, Ids, Indices


def row(t, score, area, price, telescope_id=None, binning=1):
    return EvaluationRow(indices=Indices(telescope=t, binning=binning), ids=Ids(telescope=telescope_id),
                         values={"light.area": area, "cost.price": price}, score=score)


def test_front_then_top_then_baseline_with_units_and_empty_cells_for_null():
    result = EvaluationResult(
        evaluated=3, feasible=2,
        front=[row(0, 0.0, 2.5, None, telescope_id=7), row(2, 1.0, 1.0, 100.0, binning=2)],
        top=[row(0, 0.0, 2.5, None, telescope_id=7)],
        baseline=row(1, None, 0.5, 90.0), baseline_feasible=False,
        units={"light.area": "mm^2", "cost.price": ""},
    )
    text = evaluation_csv(result)
    assert text.endswith("\r\n")  # RFC 4180 line breaks
    assert list(csv.reader(io.StringIO(text))) == [
        ["set", "rank", "telescope", "camera", "train", "mount", "binning", "eyepiece", "telescope_id",
         "camera_id", "train_id", "mount_id", "eyepiece_id", "light.area [mm²]", "cost.price", "score"],
        ["front", "1", "0", "0", "0", "0", "1", "", "7", "", "", "", "", "2.5", "", "0.0"],
        ["front", "2", "2", "0", "0", "0", "2", "", "", "", "", "", "", "1.0", "100.0", "1.0"],
        ["top", "1", "0", "0", "0", "0", "1", "", "7", "", "", "", "", "2.5", "", "0.0"],
        ["baseline", "1", "1", "0", "0", "0", "1", "", "", "", "", "", "", "0.5", "90.0", ""],
    ]


def test_floats_keep_every_digit():
    value = 0.1 + 0.2  # not 0.3 in binary floating point
    result = EvaluationResult(evaluated=1, feasible=1, front=[row(0, 0.0, value, 1.0)], top=[],
                              baseline=row(0, 0.0, value, 1.0), baseline_feasible=True,
                              units={"light.area": "mm^2", "cost.price": "EUR"})
    lines = list(csv.DictReader(io.StringIO(evaluation_csv(result))))
    assert float(lines[0]["light.area [mm²]"]) == value


def test_the_calculators_cautions_follow_the_table_in_a_final_block():
    result = EvaluationResult(
        evaluated=1, feasible=1, front=[row(0, 0.0, 1.0, 1.0)], top=[], baseline=row(0, 0.0, 1.0, 1.0),
        baseline_feasible=True, units={"light.area": "mm^2", "cost.price": ""},
        cautions={"light": ["Never near the Sun, without a solar filter."], "cost": []},
    )
    text = evaluation_csv(result)
    rows = list(csv.reader(io.StringIO(text)))
    assert rows[-2] == [] and rows[-1] == ["# caution: light", "Never near the Sun, without a solar filter."]
    pandas = __import__("pytest").importorskip("pandas")
    table = pandas.read_csv(io.StringIO(text), comment="#")
    assert len(table) == 2 and list(table.columns)[-1] == "score"
