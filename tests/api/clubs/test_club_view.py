"""api/clubs/view.py: the page's tables and pictures come from the comparison, units in the headers."""

from __future__ import annotations

import math

import pytest

from api.clubs import view as club_view
from api.clubs.schemas import ClubComparison
from plugins.results import CalculatorResult, OutputValues, RigRef


def comparison(results: dict[str, CalculatorResult], n: int = 2, baseline: int = 0) -> ClubComparison:
    return ClubComparison(
        rigs=[RigRef(id=i + 1, name=f"rig {i + 1}") for i in range(n)], baseline=baseline, results=results,
        club="c", baseline_rig_id=baseline + 1, target="M 33", rigs_total=n,
    )


def result(outputs: dict[str, tuple[str, list]], error: str | None = None) -> CalculatorResult:
    return CalculatorResult(version="1.0.0", error=error, cautions=["Mind the Sun."],
                            outputs={k: OutputValues(unit=u, values=v) for k, (u, v) in outputs.items()})


def test_columns_of_a_failed_or_missing_calculator_are_left_out_and_the_failure_noted():
    table = club_view.comparison_table(comparison({
        "light_grasp": result({"clear_area_mm2": ("mm^2", [10.0, 20.0]), "area_ratio": ("", [1.0, 2.0])}),
        "speed": result({}, error="speed broke"),
    }))
    assert table.headers == ["Clear area [mm²]", "Light grasp [× baseline]"]
    assert [[c.value for c in row.cells] for row in table.rows] == [["10.0", "1.0"], ["20.0", "2.0"]]
    assert table.notes == ["speed: speed broke"]
    assert [row.baseline for row in table.rows] == [True, False]


def test_the_unit_in_a_header_is_the_one_the_api_reports_when_not_fixed():
    table = club_view.comparison_table(comparison({"cost": result({"total_price": ("CHF", [100.0, None])})}))
    assert table.headers == ["Price [CHF]"]
    assert [c.text for c in table.rows[1].cells] == ["—"] and table.rows[1].cells[0].value == "null"


def test_every_figure_lists_every_output_with_its_unit():
    groups = club_view.all_figures(comparison({
        "sampling": result({"pixel_scale_arcsec": ("arcsec", [1.0, 2.0]), "sampling_verdict": ("", ["a", "b"])}),
    }))
    [group] = groups
    assert [heading for heading, _ in group.rows] == ["pixel_scale_arcsec [″]", "sampling_verdict"]
    assert [c.kind for c in group.rows[1][1]] == ["text", "text"]
    assert [c.kind for c in group.rows[0][1]] == ["number", "number"]


def test_cautions_are_gathered_once():
    both = comparison({"a": result({}), "b": result({})})
    assert club_view.cautions(both) == ["Mind the Sun."]


@pytest.mark.parametrize("value, text", [
    (None, "—"), (True, "yes"), (False, "no"), ("over-sampled", "over-sampled"), (math.nan, "—"),
    (62831.85, "62832"), (65.31, "65.3"), (4.0, "4.00"), (0.0, "0.00"), (0.6527, "0.653"), (0.08, "0.0800"),
    (-12.34, "-12.3"),
])
def test_numbers_read_to_three_or_more_significant_figures(value, text):
    assert club_view.number_text(value) == text


def test_pictures_need_the_calculators_they_draw():
    lonely = comparison({"cost": result({"total_price": ("EUR", [1.0, 2.0])})})
    assert club_view.fields_picture(lonely) is None
    assert club_view.bars_picture(lonely) is None


def test_the_fields_picture_falls_back_to_the_sampling_field():
    fields = comparison({"sampling": result({"field_width_arcmin": ("arcmin", [60.0, 120.0]),
                                             "field_height_arcmin": ("arcmin", [40.0, 80.0])})})
    svg = club_view.fields_picture(fields)
    assert svg is not None and "rig 1: field 60.0′ × 40.0′." in svg and "rig 2: field 120′ × 80.0′." in svg


def test_the_bars_picture_draws_the_series_it_has():
    only_light = comparison({"light_grasp": result({"area_ratio": ("", [1.0, 0.5])})}, baseline=1)
    svg = club_view.bars_picture(only_light)
    assert "Light grasp" in svg and "Exposure time" not in svg and "Relative to the baseline, rig 2" in svg
