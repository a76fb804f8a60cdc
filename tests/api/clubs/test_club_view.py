"""api/clubs/view.py: the page's tables and pictures come from the comparison, units in the headers."""

from __future__ import annotations

from api.clubs import view as club_view
from api.clubs.schemas import ClubComparison
from plugins.results import CalculatorResult, OutputValues, RigRef


def comparison(results: dict[str, CalculatorResult], n: int = 2, baseline: int = 0) -> ClubComparison:
    return ClubComparison(
        rigs=[RigRef(id=i + 1, name=f"rig {i + 1}") for i in range(n)], baseline=baseline, results=results,
        club="c", baseline_rig_id=baseline + 1, target="M 33", rigs_total=n,
    )


def result(outputs: dict[str, tuple], error: str | None = None) -> CalculatorResult:
    """``{"name": (unit, values)}`` or ``(unit, values, label)``."""
    return CalculatorResult(version="1.0.0", error=error, cautions=["Mind the Sun."], outputs={
        k: OutputValues(unit=spec[0], values=spec[1], label=spec[2] if len(spec) > 2 else "")
        for k, spec in outputs.items()
    })


def test_columns_of_a_failed_or_missing_calculator_are_left_out_and_the_failure_noted():
    table = club_view.comparison_table(comparison({
        "light_grasp": result({"clear_area_mm2": ("mm^2", [10.0, 20.0], "Clear area"),
                               "area_ratio": ("", [1.0, 2.0], "Light grasp")}),
        "speed": result({}, error="speed broke"),
    }))
    assert table.headers == ["Clear area [mm²]", "Light grasp [× baseline]"]
    assert [[c.value for c in row.cells] for row in table.rows] == [["10.0", "1.0"], ["20.0", "2.0"]]
    assert table.notes == ["speed: speed broke"]
    assert [row.baseline for row in table.rows] == [True, False]


def test_the_unit_in_a_header_is_the_one_the_api_reports_when_not_fixed():
    table = club_view.comparison_table(comparison({"cost": result({"total_price": ("CHF", [100.0, None], "Price")})}))
    assert table.headers == ["Price [CHF]"]
    assert [c.text for c in table.rows[1].cells] == ["—"] and table.rows[1].cells[0].value == "null"


def test_every_figure_is_headed_by_its_label_and_unit_keeping_the_key():
    groups = club_view.all_figures(comparison({
        "sampling": result({"pixel_scale_arcsec": ("arcsec", [1.0, 2.0], "Pixel scale"),
                            "sampling_verdict": ("", ["a", "b"], "Sampling"),
                            "suggested_binning": ("", [2.0, 1.0], "Suggested binning")}),
        "cost": result({"price_per_cm2": ("EUR/cm^2", [304.79999999999995, 12.345], "Price per aperture area")}),
    }), counts={"sampling.suggested_binning"})
    sampling, cost = groups
    assert [f.heading for f in sampling.rows] == ["Pixel scale [arcsec]", "Sampling", "Suggested binning"]
    assert [f.key for f in sampling.rows] == ["sampling.pixel_scale_arcsec", "sampling.sampling_verdict",
                                              "sampling.suggested_binning"]
    assert [c.kind for c in sampling.rows[1].cells] == ["text", "text"]
    assert [c.kind for c in sampling.rows[0].cells] == ["number", "number"]
    # A count reads as a whole number; a price with sensible digits, the exact value kept beside it.
    assert [c.text for c in sampling.rows[2].cells] == ["2", "1"]
    assert cost.rows[0].heading == "Price per aperture area [EUR/cm²]"
    assert [c.text for c in cost.rows[0].cells] == ["305", "12.3"]
    assert cost.rows[0].cells[0].value == "304.79999999999995"


def test_a_plugin_output_without_a_label_is_headed_by_its_key():
    [group] = club_view.all_figures(comparison({"dew": result({"dew_margin_k": ("K", [1.0, 2.0])})}))
    assert group.rows[0].heading == "dew_margin_k [K]"


def test_counts_are_the_outputs_declared_integer():
    from plugins.registry import load_registry

    assert {"diffraction_spikes.spike_count", "integration_time.sub_exposures", "target_fit.panels",
            "sampling.suggested_binning"} <= club_view.counts(load_registry())


def test_cautions_are_gathered_once():
    both = comparison({"a": result({}), "b": result({})})
    assert club_view.cautions(both) == ["Mind the Sun."]


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
