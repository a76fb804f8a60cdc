"""Tests of calculators/sweep/.

The reference for every sweep is the comparison path: the same combinations built as ``Rig`` models
and computed one row per rig by ``plugins.compare.compare``, then filtered, fronted (brute force,
O(n²), from the definition of Pareto dominance) and ranked in plain Python by the rules the engine
documents.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from sweep_stand_ins import STAND_INS, Broken, Misshapen

from calculators.batch import as_train
from calculators.builtin.light_grasp import LightGrasp
from calculators.errors import CalculationError, RigbenchError
from calculators.evaluation_schemas import EvaluationResult, InlineEvaluationRequest
from calculators.schemas import Camera, Modifier, Mount, Price, Rig, Telescope
from calculators.sweep import (
    CalculatorFailed,
    ContradictoryBounds,
    EvaluationError,
    FrontTooLarge,
    InvalidCalculatorParams,
    NotNumeric,
    TooManyCombinations,
    UnknownOutput,
    evaluate,
    evaluate_spec,
)
from plugins.compare import compare
from plugins.registry import CalculatorEntry, Registry

CALCULATORS = {c.name: c for c in (*STAND_INS, LightGrasp())}
REGISTRY = Registry(entries=[
    CalculatorEntry(name=n, distribution="rigbench-tests", version="0", status="loaded", calculator=c)
    for n, c in CALCULATORS.items()
])
NUMERIC_KEYS = [
    "optics.focal_ratio", "optics.pixel_scale_arcsec", "optics.time_factor",
    "load.payload_kg", "load.capacity_fraction", "price.total_price",
    "light_grasp.clear_area_mm2", "light_grasp.area_ratio",
]


def eur(amount):
    return Price(amount=amount, currency="EUR")


# Generic equipment drawn from a few values each, so that equal objective values are common.
telescopes = st.builds(
    lambda aperture, ratio, obstructed, mass, price: Telescope(
        design="newtonian" if obstructed else "refractor", aperture_mm=aperture,
        focal_length_mm=aperture * ratio, obstruction_mm=0.3 * aperture if obstructed else 0,
        mass_kg=mass, price=eur(price),
    ),
    st.sampled_from([80.0, 100.0, 150.0, 200.0]), st.sampled_from([4.0, 5.0, 8.0]), st.booleans(),
    st.sampled_from([3.0, 5.5, 8.0]), st.sampled_from([500.0, 900.0]),
)
cameras = st.builds(
    lambda pixel, mass, price: Camera(pixel_size_um=pixel, width_px=4000, height_px=3000,
                                      mass_kg=mass, price=eur(price)),
    st.sampled_from([3.0, 3.8, 4.5]), st.sampled_from([0.4, 0.7]), st.sampled_from([300.0, 800.0]),
)
modifiers = st.one_of(st.none(), st.builds(
    lambda factor, mass, price: Modifier(kind="reducer" if factor < 1 else "barlow", factor=factor,
                                         mass_kg=mass, price=eur(price)),
    st.sampled_from([0.7, 0.8, 2.0]), st.sampled_from([0.2, 0.5]), st.sampled_from([150.0, 300.0]),
))
mounts = st.one_of(st.none(), st.builds(
    lambda capacity, price: Mount(capacity_kg=capacity, mass_kg=10, price=eur(price)),
    st.sampled_from([5.0, 9.0, 15.0]), st.sampled_from([700.0, 1500.0]),
))


@st.composite
def sweeps(draw):
    lists = (
        draw(st.lists(telescopes, min_size=1, max_size=3)),
        draw(st.lists(cameras, min_size=1, max_size=3)),
        draw(st.lists(modifiers, min_size=1, max_size=3)),
        draw(st.lists(mounts, min_size=1, max_size=2)),
    )
    baseline = tuple(draw(st.integers(0, len(items) - 1)) for items in lists)
    objectives = draw(st.dictionaries(st.sampled_from(NUMERIC_KEYS), st.sampled_from(["min", "max"]),
                                      min_size=1, max_size=3))
    constrained = draw(st.lists(st.sampled_from(NUMERIC_KEYS), unique=True, max_size=3))
    params = draw(st.sampled_from([{}, {"load": {"extra_kg": 1.5}}]))
    if "load" in params and not any(k.startswith("load.") for k in [*objectives, *constrained]):
        params = {}
    # Bounds are values some combination really has, so inclusive edges are met exactly.
    picks = [(key, draw(st.integers(0, 10**6)), draw(st.integers(0, 10**6)), draw(st.integers(0, 2)))
             for key in constrained]
    limit = draw(st.integers(0, 6))
    return lists, baseline, objectives, picks, params, limit


def combinations(lists):
    return list(itertools.product(*(range(len(items)) for items in lists)))


def by_comparison(lists, baseline, keys, params):
    """Values per key per combination (telescope-major order), one rig per row via compare()."""
    combos = combinations(lists)
    rigs = [
        Rig(name=f"rig {n}", telescope=lists[0][t], camera=lists[1][c], train=as_train(lists[2][m]),
            mount=lists[3][l])
        for n, (t, c, m, l) in enumerate(combos)
    ]
    names = sorted({k.split(".")[0] for k in keys})
    result = compare(rigs, calculators=names, baseline=combos.index(baseline),
                     params={n: p for n, p in params.items() if n in names}, registry=REGISTRY)
    return combos, {
        k: result.results[k.split(".")[0]].outputs[k.split(".")[1]].values for k in keys
    }


def constraints_from(picks, values):
    constraints = {}
    for key, a, b, sides in picks:
        defined = sorted(v for v in values[key] if v is not None)
        if not defined:
            constraints[key] = {"min": 0.0}
            continue
        low, high = sorted((defined[a % len(defined)], defined[b % len(defined)]))
        constraints[key] = [{"min": low}, {"max": high}, {"min": low, "max": high}][sides]
    return constraints


def reference(combos, values, constraints, objectives, limit):
    """Feasible rows, front and top, row by row, by the rules the engine documents."""
    def ok(i):
        for key, b in constraints.items():
            v = values[key][i]
            if v is None or v < b.get("min", -math.inf) or v > b.get("max", math.inf):
                return False
        return all(values[key][i] is not None for key in objectives)

    feasible = [i for i in range(len(combos)) if ok(i)]
    oriented = {i: tuple(values[k][i] if d == "min" else -values[k][i] for k, d in objectives.items())
                for i in feasible}

    def dominated(q):
        return any(
            all(a <= b for a, b in zip(oriented[p], oriented[q]))
            and any(a < b for a, b in zip(oriented[p], oriented[q]))
            for p in feasible
        )

    front = sorted((i for i in feasible if not dominated(i)), key=lambda i: (oriented[i], i))
    # Scale: 0 at the ideal point (best value per objective), 1 at the nadir point (worst value
    # per objective among the front rows); an objective all front rows agree on does not count.
    scores = {}
    for i in feasible:
        score = 0.0
        for j in range(len(objectives)):
            column = [oriented[f][j] for f in front]
            low, high = min(column), max(column)
            if high > low:
                score += (oriented[i][j] - low) / (high - low)
        scores[i] = score
    top = sorted(feasible, key=lambda i: (scores[i], oriented[i], i))[:limit]
    return feasible, front, top, scores


def as_indices(row):
    return (row.indices.telescope, row.indices.camera, row.indices.train, row.indices.mount)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(sweeps())
def test_counts_front_top_and_values_equal_row_by_row_comparison(case):
    lists, baseline, objectives, picks, params, limit = case
    keys = list(dict.fromkeys([*(p[0] for p in picks), *objectives]))
    combos, values = by_comparison(lists, baseline, keys, params)
    constraints = constraints_from(picks, values)

    result = evaluate(*lists, objectives=objectives, constraints=constraints, params=params,
                      baseline=baseline, limit=limit, calculators=CALCULATORS)

    feasible, front, top, scores = reference(combos, values, constraints, objectives, limit)
    assert result.evaluated == len(combos)
    assert result.feasible == len(feasible)
    assert [as_indices(r) for r in result.front] == [combos[i] for i in front]
    assert [as_indices(r) for r in result.top] == [combos[i] for i in top]
    for row in [*result.front, *result.top, result.baseline]:
        i = combos.index(as_indices(row))
        assert row.values == {k: values[k][i] for k in keys}
        assert row.score == (scores[i] if i in scores else None)
    assert result.baseline_feasible == (combos.index(baseline) in feasible)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(sweeps(), st.data())
def test_results_do_not_depend_on_chunk_size(case, data):
    lists, baseline, objectives, picks, params, limit = case
    keys = [p[0] for p in picks]
    _, values = by_comparison(lists, baseline, keys + list(objectives), params)
    constraints = constraints_from(picks, values)
    per_telescope = len(lists[1]) * len(lists[2]) * len(lists[3])
    chunk_rows = data.draw(st.sampled_from([1, per_telescope, 2 * per_telescope + 1]))

    def run(rows):
        return evaluate(*lists, objectives=objectives, constraints=constraints, params=params,
                        baseline=baseline, limit=limit, calculators=CALCULATORS,
                        chunk_rows=rows).model_dump()

    assert run(chunk_rows) == run(10**9)


def test_progress_reports_every_chunk_of_both_passes():
    scopes = [Telescope(aperture_mm=100 + 10 * i, focal_length_mm=600) for i in range(5)]
    camera = [Camera(pixel_size_um=3.8, width_px=10, height_px=10)]

    def calls(**options):
        seen = []
        evaluate(scopes, camera, [None, None], objectives={"light_grasp.clear_area_mm2": "max"},
                 calculators=CALCULATORS, progress=lambda done, total: seen.append((done, total)),
                 **options)
        return seen

    # 2 combinations per telescope, 4 per chunk: telescopes in chunks of 2, so 3 chunks, each
    # computed twice (ranges first, then the ranking); once when no ranking is asked for.
    assert calls(chunk_rows=4) == [(i, 6) for i in range(1, 7)]
    assert calls(chunk_rows=4, limit=0) == [(1, 3), (2, 3), (3, 3)]
    assert calls() == [(1, 1)]
    nothing = {"light_grasp.clear_area_mm2": {"min": 1e9}}
    assert calls(chunk_rows=4, constraints=nothing)[-1] == (6, 6)


class ShapeSpy(LightGrasp):
    """light_grasp that records the shapes of the batches it is handed."""

    def __init__(self):
        self.seen = []

    def compute(self, batch, params):
        self.seen.append((batch.shape, batch["aperture_mm"].shape, batch["pixel_size_um"].shape,
                          batch["train_factor"].shape, batch["capacity_kg"].shape))
        return super().compute(batch, params)


def test_each_kind_lies_on_its_own_axis_and_chunks_bound_the_batch():
    spy = ShapeSpy()
    scopes = [Telescope(aperture_mm=100 + i, focal_length_mm=700) for i in range(7)]
    cams = [Camera(pixel_size_um=3 + i, width_px=10, height_px=10) for i in range(3)]
    mods = [None, Modifier(kind="reducer", factor=0.8)]
    mnts = [Mount(capacity_kg=10), Mount(capacity_kg=20)]
    evaluate(scopes, cams, mods, mnts, objectives={"light_grasp.area_ratio": "max"},
             baseline=(5, 0, 0, 0), calculators={"light_grasp": spy}, chunk_rows=25)
    sweep_shapes = [s for s in spy.seen if len(s[0]) == 4]
    # 12 combinations per telescope, 25 per chunk: 2 telescopes a chunk (plus the baseline
    # telescope prepended where it is missing), 4 chunks, each computed in both passes.
    assert [s[0] for s in sweep_shapes] == [(3, 3, 2, 2), (3, 3, 2, 2), (2, 3, 2, 2),
                                            (2, 3, 2, 2)] * 2
    for shape, aperture, pixel, factor, capacity in sweep_shapes:
        assert aperture == (shape[0], 1, 1, 1) and pixel == (1, 3, 1, 1)
        assert factor == (1, 1, 2, 1) and capacity == (1, 1, 1, 2)
    # The returned rows are computed once more, one row per combination.
    assert all(len(s[0]) == 1 for s in spy.seen if s not in sweep_shapes)


def test_null_modifier_leaves_the_focal_ratio_of_the_telescope():
    # Definition of the focal ratio N = f/D: 1000 mm / 200 mm = 5; a ×0.8 reducer gives f/4.
    scope = Telescope(aperture_mm=200, focal_length_mm=1000)
    result = evaluate([scope], [Camera(pixel_size_um=3.8, width_px=10, height_px=10)],
                      [None, Modifier(kind="reducer", factor=0.8)],
                      objectives={"optics.focal_ratio": "min"}, calculators=CALCULATORS)
    assert result.baseline.values == {"optics.focal_ratio": 5.0}
    assert [r.values["optics.focal_ratio"] for r in result.front] == [pytest.approx(4.0, rel=1e-15)]


def test_a_combination_the_rig_schema_refuses_is_never_feasible():
    # f/1 with a ×0.4 reducer would be f/0.4, below the 0.5 minimum the Rig schema enforces.
    scope = Telescope(aperture_mm=100, focal_length_mm=100)
    reducer = Modifier(kind="reducer", factor=0.4)
    camera = Camera(pixel_size_um=3.8, width_px=10, height_px=10)
    with pytest.raises(ValueError, match="below the physical minimum"):
        Rig(name="too fast", telescope=scope, modifier=reducer, camera=camera)
    result = evaluate([scope], [camera], [None, reducer],
                      objectives={"optics.focal_ratio": "min"}, calculators=CALCULATORS)
    assert (result.evaluated, result.feasible) == (2, 1)
    assert [r.indices.train for r in result.front] == [0]


def test_equal_objective_values_are_all_on_the_front():
    same = Telescope(aperture_mm=150, focal_length_mm=750)
    result = evaluate([same, Telescope(aperture_mm=100, focal_length_mm=500), same],
                      [Camera(pixel_size_um=3.8, width_px=10, height_px=10)],
                      objectives={"light_grasp.clear_area_mm2": "max"}, calculators=CALCULATORS)
    assert [r.indices.telescope for r in result.front] == [0, 2]


def test_relative_outputs_are_against_the_chosen_baseline():
    # Clear area π/4·D²: a 200 mm aperture collects (200/100)² = 4 times a 100 mm one.
    scopes = [Telescope(aperture_mm=100, focal_length_mm=500),
              Telescope(aperture_mm=200, focal_length_mm=1000)]
    camera = [Camera(pixel_size_um=3.8, width_px=10, height_px=10)]
    for baseline, expected in (((0, 0, 0, 0), 4.0), ((1, 0, 0, 0), 1.0)):
        result = evaluate(scopes, camera, objectives={"light_grasp.area_ratio": "max"},
                          baseline=baseline, calculators=CALCULATORS, chunk_rows=1)
        # 1e-15: one division of two areas, each a few roundings from exact.
        assert result.front[0].values["light_grasp.area_ratio"] == pytest.approx(expected, rel=1e-15)


def test_inline_request_model_runs_and_the_result_validates():
    request = InlineEvaluationRequest.model_validate({
        "telescopes": [{"aperture_mm": "8 in", "focal_length_mm": 1000, "price":
                        {"amount": 900, "currency": "EUR"}}],
        "cameras": [{"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}],
        "trains": [[], [{"kind": "reducer", "factor": 0.8}]],
        "mounts": [{"capacity_kg": 15, "mass_kg": 12}],
        "constraints": {"optics.pixel_scale_arcsec": {"min": 0.5}},
        "objectives": {"price.total_price": "min", "optics.time_factor": "min"},
        "params": {},
        "limit": 5,
    })
    result = evaluate_spec(request.telescopes, request.cameras, request.trains, request.mounts,
                           request, calculators=CALCULATORS,
                           ids={"telescope": [42], "camera": [None], "train": [[], [None]],
                                "mount": [7]})
    assert EvaluationResult.model_validate(result.model_dump()) == result
    assert result.evaluated == 2 and result.feasible == 2
    assert result.units == {"optics.pixel_scale_arcsec": "arcsec", "price.total_price": "EUR",
                            "optics.time_factor": ""}
    assert result.top[0].ids.telescope == 42 and result.top[0].ids.mount == 7
    assert result.cautions == {}


def test_cautions_of_the_calculators_used_are_returned():
    result = evaluate([Telescope(aperture_mm=100, focal_length_mm=500, mass_kg=3)],
                      [Camera(pixel_size_um=3.8, width_px=10, height_px=10, mass_kg=0.5)],
                      mounts=[Mount(capacity_kg=10)],
                      objectives={"load.capacity_fraction": "min"}, calculators=CALCULATORS)
    assert result.cautions == {"load": list(CALCULATORS["load"].cautions)}


# --- bad input --------------------------------------------------------------------------------

SCOPES = [Telescope(aperture_mm=100, focal_length_mm=500, price=eur(400)),
          Telescope(aperture_mm=150, focal_length_mm=750, price=eur(700))]
CAMS = [Camera(pixel_size_um=3.8, width_px=10, height_px=10)]
GOOD = {"light_grasp.clear_area_mm2": "max"}


def run(**changes):
    args = dict(objectives=GOOD, calculators=CALCULATORS)
    args.update(changes)
    lists = args.pop("lists", (SCOPES, CAMS))
    return evaluate(*lists, **args)


@pytest.mark.parametrize(
    ("changes", "error", "loc", "words"),
    [
        ({"objectives": {"nosuch.value": "min"}}, UnknownOutput, ("objectives", "nosuch.value"),
         "no loaded calculator 'nosuch'"),
        ({"objectives": {"optics.nosuch": "min"}}, UnknownOutput, ("objectives", "optics.nosuch"),
         "has no output 'nosuch'"),
        ({"constraints": {"focal_ratio": {"max": 5}}}, UnknownOutput,
         ("constraints", "focal_ratio"), "<calculator>.<output>"),
        ({"constraints": {"optics.label": {"min": 1}}}, NotNumeric, ("constraints", "optics.label"),
         "text output"),
        ({"objectives": {"optics.is_fast": "max"}}, NotNumeric, ("objectives", "optics.is_fast"),
         "boolean output"),
        ({"constraints": {"optics.focal_ratio": {"min": 6, "max": 4}}}, ContradictoryBounds,
         ("constraints", "optics.focal_ratio"), "min 6 is greater than max 4"),
        ({"constraints": {"optics.focal_ratio": {}}}, EvaluationError,
         ("constraints", "optics.focal_ratio"), "give min, max or both"),
        ({"constraints": {"optics.focal_ratio": {"min": "fast"}}}, EvaluationError,
         ("constraints", "optics.focal_ratio"), "min"),
        ({"objectives": {}}, EvaluationError, ("objectives",), "at least one"),
        ({"objectives": {"optics.focal_ratio": "up"}}, EvaluationError,
         ("objectives", "optics.focal_ratio"), '"min" or "max"'),
        ({"params": {"load": {"extra_kg": 1}}}, EvaluationError, ("params", "load"),
         "not a calculator named"),
        ({"objectives": {"load.payload_kg": "min"}, "params": {"load": {"extra_kg": -1}}},
         InvalidCalculatorParams, ("params", "load"), "extra_kg"),
        ({"baseline": (2, 0, 0, 0)}, EvaluationError, ("baseline", "telescope"),
         "not an index into the 2 telescopes"),
        ({"baseline": (0, 0)}, EvaluationError, ("baseline",), "one index per kind"),
        ({"lists": (SCOPES, [])}, EvaluationError, ("cameras",), "at least one camera"),
        ({"lists": (SCOPES, CAMS, [])}, EvaluationError, ("trains",), "[] means none"),
        ({"limit": -1}, EvaluationError, ("limit",), "≥ 0"),
        ({"max_combinations": 1}, TooManyCombinations, (), "2 × 1 × 1 × 1 = 2 combinations (telescopes × cameras × trains × mounts)"),
        ({"objectives": {"broken.value": "min"}}, CalculatorFailed, ("objectives", "broken.value"),
         "ZeroDivisionError"),
        ({"constraints": {"misshapen.value": {"max": 1}}}, CalculatorFailed,
         ("constraints", "misshapen.value"), "does not fit"),
    ],
)
def test_bad_input_is_a_clear_error_naming_the_field(changes, error, loc, words):
    calculators = {**CALCULATORS, "broken": Broken(), "misshapen": Misshapen()}
    with pytest.raises(error) as caught:
        run(calculators=calculators, **changes)
    assert isinstance(caught.value, RigbenchError) and isinstance(caught.value, ValueError)
    assert caught.value.loc == loc
    assert words in str(caught.value)
    if "nosuch.value" in str(caught.value):
        assert "available: broken, light_grasp, load" in str(caught.value)


def test_too_many_combinations_is_refused_before_computing_anything():
    with pytest.raises(TooManyCombinations) as caught:
        run(objectives={"broken.value": "min"}, calculators={**CALCULATORS, "broken": Broken()},
            max_combinations=1)
    assert (caught.value.combinations, caught.value.maximum) == (2, 1)


@pytest.mark.parametrize("chunk_rows", [1, 10**9])
def test_mixed_currencies_are_an_error_whatever_the_chunking(chunk_rows):
    # The baseline telescope is unpriced, so no chunk holding it shows both currencies at once.
    scopes = [Telescope(aperture_mm=80, focal_length_mm=400),
              Telescope(aperture_mm=100, focal_length_mm=500, price=eur(400)),
              Telescope(aperture_mm=150, focal_length_mm=750,
                        price=Price(amount=700, currency="USD"))]
    with pytest.raises(CalculatorFailed) as caught:
        evaluate(scopes, CAMS, objectives={"price.total_price": "min"}, calculators=CALCULATORS,
                 chunk_rows=chunk_rows)
    assert isinstance(caught.value, CalculationError)
    assert "several currencies (EUR, USD)" in str(caught.value)
    assert caught.value.loc == ("objectives", "price.total_price")


def test_nothing_feasible_gives_empty_front_and_top_and_the_baseline_row():
    result = run(constraints={"light_grasp.clear_area_mm2": {"min": 1e9}})
    assert (result.feasible, result.front, result.top) == (0, [], [])
    assert result.baseline_feasible is False and result.baseline.score is None
    assert result.baseline.values["light_grasp.clear_area_mm2"] == pytest.approx(
        math.pi / 4 * 100**2, rel=1e-15)  # area of a 100 mm circle, π/4·D²


def test_a_front_above_max_front_rows_is_refused_and_one_at_it_is_answered():
    # One objective that depends on the telescope only, and the same telescope three times: all
    # 3 × 4 combinations tie, so all twelve are on the front.
    lists = (SCOPES[:1] * 3, CAMS * 4)
    assert len(run(lists=lists, max_front_rows=12).front) == 12
    with pytest.raises(FrontTooLarge) as caught:
        run(lists=lists, max_front_rows=11)
    assert caught.value.loc == ("objectives",) and "12 combinations are on the Pareto front" in str(
        caught.value)
    assert len(run(lists=lists).front) == 12  # no maximum unless asked


def test_ids_must_match_the_lists():
    with pytest.raises(ValueError, match="has 1 entries for 2 telescopes"):
        run(ids={"telescope": [1]})


def test_rows_are_numbers_or_null_never_nan():
    result = evaluate(SCOPES, CAMS, mounts=[None, Mount(capacity_kg=10)],
                      objectives={"light_grasp.clear_area_mm2": "max"},
                      constraints={"load.payload_kg": {"min": 0}}, calculators=CALCULATORS)
    # No masses given, so the payload is undefined and nothing is feasible; the baseline row
    # still reports null rather than NaN.
    assert result.feasible == 0
    assert result.baseline.values["load.payload_kg"] is None
    assert np.isfinite(result.baseline.values["light_grasp.clear_area_mm2"])
