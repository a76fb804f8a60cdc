"""api/evaluations/report.py and sample.py through the real engine: the chart draws exactly the
answer's front, the sample follows the sweep's own feasibility rule, every pick has a sheet with
what it is made of and costs, and the sheet calculators appear when they are loaded.

The reference for the front and the feasible count is :func:`calculators.sweep.evaluate_spec`, the
engine behind ``POST /v1/evaluations``.
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from test_evaluations import CAMERAS, MODIFIERS, MOUNTS, TELESCOPES, request

from api.evaluations import report, sample, sheets
from calculators.base import Calculator, Output
from calculators.evaluation_schemas import InlineEvaluationRequest
from calculators.sweep import evaluate_spec
from plugins.registry import CalculatorEntry, Registry, load_registry

REGISTRY = load_registry()


def answer(body, registry=REGISTRY):
    spec = InlineEvaluationRequest.model_validate(body)
    components = (spec.telescopes, spec.cameras, spec.trains, spec.mounts)
    return spec, components, evaluate_spec(*components, spec, calculators=registry.calculators)


def key(row) -> str:
    # The four indices and the binning factor, as the page's data-indices write them.
    return ",".join(str(getattr(row.indices, k)) for k in ("telescope", "camera", "train", "mount", "binning"))


def front_drawn(svg: str) -> list[str]:
    return sorted(e.get("data-indices") for e in ET.fromstring(svg).iter() if e.get("data-front") == "true")


scopes = st.lists(st.builds(
    lambda a, f, p: {"aperture_mm": a, "focal_length_mm": a * f, "price": {"amount": p, "currency": "EUR"}},
    st.integers(60, 400), st.floats(3, 12), st.integers(100, 5000)), min_size=1, max_size=6)
cameras = st.lists(st.builds(
    lambda px, p: {"pixel_size_um": px, "width_px": 4000, "height_px": 3000, "price": {"amount": p, "currency": "EUR"}},
    st.floats(1.5, 9), st.integers(100, 5000)), min_size=1, max_size=5)
objective_sets = st.sampled_from([
    {"cost.total_price": "min", "light_grasp.clear_area_mm2": "max"},
    {"speed.time_factor_per_arcsec2": "min", "cost.total_price": "min"},
    {"cost.total_price": "min", "light_grasp.clear_area_mm2": "max", "sampling.pixel_scale_arcsec": "max"},
    {"light_grasp.clear_area_mm2": "max"},
])


@settings(max_examples=25, deadline=None)
@given(scopes, cameras, objective_sets, st.booleans())
def test_the_points_drawn_on_the_front_are_exactly_the_answers_front(telescopes, cams, objectives, constrained):
    constraints = {"sampling.pixel_scale_arcsec": {"min": 0.5, "max": 3.0}} if constrained else {}
    spec, components, result = answer({"telescopes": telescopes, "cameras": cams, "objectives": objectives,
                                       "constraints": constraints})
    page = report.context(spec, components, result, REGISTRY)
    assert front_drawn(str(page["tradeoff"])) == sorted(key(r) for r in result.front)
    assert len(page["sheets"]) == min(len(result.top), report.MAX_PICKS)
    if len(objectives) >= 3 and result.front:
        lines = {e.get("data-indices") for e in ET.fromstring(str(page["parallel"])).iter() if e.get("data-indices")}
        assert lines == {key(r) for r in result.front}


def test_a_small_sweep_is_sampled_whole_and_its_feasible_count_is_the_engines():
    spec, components, result = answer(request())
    drawn = sample.sample(components, spec, REGISTRY.calculators)
    assert drawn.size == result.evaluated == 3 * 2 * 3 * 3
    assert int(drawn.feasible.sum()) == result.feasible
    feasible = {",".join(map(str, ix)) for ix in drawn.indices[drawn.feasible]}
    assert {key(r) for r in result.front} <= feasible and {key(r) for r in result.top} <= feasible
    for j, ix in enumerate(drawn.indices):
        row = next((r for r in result.front if key(r) == ",".join(map(str, ix))), None)
        if row is not None:  # the same values as the engine's one-row computation
            for k, v in row.values.items():
                assert drawn.values[k][j] == pytest.approx(v, rel=1e-12)


def test_a_large_sweep_is_sampled_the_same_way_every_time():
    first, again = sample.pick(1_000_000), sample.pick(1_000_000)
    assert first.size == sample.SAMPLE_SIZE and np.array_equal(first, again)
    assert np.unique(first).size == first.size and first.min() >= 0 and first.max() < 1_000_000
    assert np.array_equal(sample.pick(50), np.arange(50))


def test_the_page_says_how_many_points_were_drawn():
    scopes_many = [{"aperture_mm": 100 + i, "focal_length_mm": 700 + 3 * i,
                    "price": {"amount": 300 + 10 * i, "currency": "EUR"}} for i in range(60)]
    cams = [{"pixel_size_um": 2 + 0.1 * i, "width_px": 4000, "height_px": 3000,
             "price": {"amount": 400 + 5 * i, "currency": "EUR"}} for i in range(50)]
    spec, components, result = answer({"telescopes": scopes_many, "cameras": cams,
                                       "objectives": {"cost.total_price": "min", "light_grasp.clear_area_mm2": "max"}})
    page = report.context(spec, components, result, REGISTRY)
    assert page["sampled"].startswith(f"{sample.SAMPLE_SIZE:,} of 3,000 combinations sampled")
    cloud = [e for e in ET.fromstring(str(page["tradeoff"])).iter() if e.get("data-indices")
             and e.get("data-front") is None and e.get("data-pick") is None and e.get("data-baseline") is None]
    drawn_count = int(re.search(r"the ([\d,]+) feasible", page["sampled"]).group(1).replace(",", ""))
    drawn = sample.sample(components, spec, REGISTRY.calculators)
    feasible = {",".join(map(str, ix)) for ix in drawn.indices[drawn.feasible]}
    assert drawn_count == len(feasible)
    # The cloud is the feasible sample less what the front draws itself.
    assert sorted(e.get("data-indices") for e in cloud) == sorted(feasible - {key(r) for r in result.front})


def test_each_sheet_lists_parts_prices_bounds_and_cautions():
    spec, components, result = answer(request(limit=5))
    page = report.context(spec, components, result, REGISTRY)
    assert [s["indices"] for s in page["sheets"]] == [key(r) for r in result.top]
    for sheet, row in zip(page["sheets"], result.top):
        names = [p["name"] for p in sheet["parts"]]
        for kind, lists in (("telescope", TELESCOPES), ("camera", CAMERAS), ("train", MODIFIERS), ("mount", MOUNTS)):
            part = lists[getattr(row.indices, kind)]
            if part is not None:
                assert part["name"] in names
        total = sum(lists[getattr(row.indices, kind)]["price"]["amount"]
                    for kind, lists in (("telescope", TELESCOPES), ("camera", CAMERAS), ("train", MODIFIERS),
                                        ("mount", MOUNTS)) if lists[getattr(row.indices, kind)] is not None)
        # Nothing is owned in this request: the purchase is the whole combination, the cost calculator's total.
        assert sheet["purchase"] == sheet["total"] == f"{total:,.2f} EUR"
        assert total == pytest.approx(row.values["cost.total_price"])
        assert [c["key"] for c in sheet["constraints"]] == [k for k in spec.constraints if k not in spec.objectives]
        assert any("Sun" in c for c in sheet["cautions"])
        if getattr(row.indices, "mount") is not None and MOUNTS[row.indices.mount] is not None:
            assert any("counterweight" in c.lower() for c in sheet["cautions"])
        assert sheet["compatibility"][0]["label"] == "Fit"  # the built-in compatibility calculator
    assert page["constraints"][0].startswith("Pixel scale (sampling.pixel_scale_arcsec) between 0.6 and 2.5 arcsec")


class Compatibility(Calculator):
    """Stands in for the imaging-train compatibility calculator: whether the parts fit together."""

    name = "compatibility"
    version = "1.0.0"
    summary = "test stand-in"
    outputs = (Output("buildable", "", "Whether it can be assembled.", kind="boolean"),)
    sources = ("test",)

    def compute(self, batch, params):
        return {"buildable": np.broadcast_to(batch["aperture_mm"] > 100, batch.shape)}


def test_the_compatibility_verdict_shows_when_that_calculator_is_loaded():
    registry = Registry(entries=[*REGISTRY.entries,
                                 CalculatorEntry("compatibility", "test", "1.0.0", "loaded", calculator=Compatibility())])
    spec, components, result = answer(request(limit=4), registry)
    page = report.context(spec, components, result, registry)
    for sheet, row in zip(page["sheets"], result.top):
        verdict = "yes" if TELESCOPES[row.indices.telescope]["aperture_mm"] > 100 else "no"
        assert sheet["compatibility"] == [{"label": "Buildable", "value": verdict}]


def test_the_field_over_the_target_shows_when_the_request_names_one():
    body = request(constraints={"target_fit.panels": {"max": 9}}, params={"target_fit": {"target": "NGC 891"}})
    spec, components, result = answer(body)
    page = report.context(spec, components, result, REGISTRY)
    assert page["sheets"] and all("NGC 891" in s["field"]["target"] for s in page["sheets"])
    spec, components, result = answer(request())
    assert all(s["field"] is None for s in report.context(spec, components, result, REGISTRY)["sheets"])


def test_no_feasible_combination_gives_a_page_without_sheets():
    spec, components, result = answer(request(constraints={"sampling.pixel_scale_arcsec": {"min": 100}}))
    page = report.context(spec, components, result, REGISTRY)
    assert result.feasible == 0 and page["sheets"] == [] and front_drawn(str(page["tradeoff"])) == []


def test_an_old_output_name_draws_the_same_chart_as_the_new_one():
    # light_grasp.limiting_magnitude is accepted for one release as visual_limiting_magnitude.
    pages = []
    for name in ("limiting_magnitude", "visual_limiting_magnitude"):
        spec, components, result = answer(request(objectives={"cost.total_price": "min",
                                                              f"light_grasp.{name}": "max"}))
        page = report.context(spec, components, result, REGISTRY)
        assert front_drawn(str(page["tradeoff"])) == sorted(key(r) for r in result.front)
        pages.append(str(page["tradeoff"]))
    assert pages[0] == pages[1] and 'data-set="feasible-sample"' in pages[0]


def test_an_output_both_constrained_and_optimised_is_one_row_with_its_bound():
    spec, components, result = answer(request(objectives={"cost.total_price": "min",
                                                          "payload.capacity_fraction": "min"}))
    sheet = report.context(spec, components, result, REGISTRY)["sheets"][0]
    assert [c["key"] for c in sheet["constraints"]] == ["sampling.pixel_scale_arcsec"]
    row = next(o for o in sheet["objectives"] if o["key"] == "payload.capacity_fraction")
    assert row["bounds"] == "at most 0.8"


def test_what_is_owned_is_not_in_the_price_to_buy():
    # Parts that say they are owned (as the imaging-train work adds) count in the whole price only.
    from types import SimpleNamespace

    from calculators.evaluation_schemas import EvaluationRow, Ids, Indices
    from calculators.schemas import Price

    def part(amount, owned=False):
        return SimpleNamespace(price=Price(amount=amount, currency="EUR"), owned=owned, name=f"part {amount}")

    components = ([part(600, owned=True)], [part(1400)], [None], [[part(120), part(80, owned=True)]])
    row = EvaluationRow(indices=Indices(), ids=Ids(), values={}, score=0.0)
    assert sheets.purchase_prices(components, row) == ("1,520.00 EUR", "2,200.00 EUR")


def test_a_binned_sweep_is_sampled_at_each_factor_as_the_engine_sweeps_it():
    spec, components, result = answer(request(binning=[1, 2]))
    drawn = sample.sample(components, spec, REGISTRY.calculators)
    assert drawn.size == result.evaluated == 3 * 2 * 2 * 3 * 3
    assert int(drawn.feasible.sum()) == result.feasible
    assert set(drawn.indices[:, 4].tolist()) == {1, 2}
    for j, ix in enumerate(drawn.indices):
        row = next((r for r in result.front if key(r) == ",".join(map(str, ix))), None)
        if row is not None:
            for k, v in row.values.items():
                assert drawn.values[k][j] == pytest.approx(v, rel=1e-12)
