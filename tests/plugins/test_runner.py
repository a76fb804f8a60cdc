"""Tests of plugins/runner.py: a calculator that misbehaves at run time spoils only its own result.

Broken plugins come from ``plugin_fakes`` through injected entry points and run next to the built-in
light_grasp through ``plugins.compare.compare``, the engine behind ``POST /v1/comparisons``.
"""

from __future__ import annotations

import math
import threading

import numpy as np
import pytest
from hypothesis import given
from hypothesis.extra import numpy as hnp

import plugin_fakes
from calculators.batch import RigBatch
from calculators.schemas import Camera, Rig, Telescope
from plugin_fakes import LIGHT_GRASP, builtin, entry_point
from plugins.compare import compare
from plugins.registry import load_registry
from plugins.runner import InvalidParams, parse_params, run, to_json_values

# Generic rigs: a 200 mm f/5 newtonian with a 44 mm central obstruction and a 102 mm f/7 refractor.
RIGS = [
    {"name": "200 mm f/5 newtonian",
     "telescope": {"design": "newtonian", "aperture_mm": 200, "focal_length_mm": 1000, "obstruction_mm": 44},
     "camera": {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}},
    {"name": "102 mm f/7 refractor",
     "telescope": {"design": "refractor", "aperture_mm": 102, "focal_length_mm": 714},
     "camera": {"pixel_size_um": 3.0, "width_px": 4000, "height_px": 3000}},
]


def annulus_area_mm2(outer_mm: float, inner_mm: float) -> float:
    # plane geometry: the area of an annulus is π/4·(D² − d²)
    return math.pi / 4 * (outer_mm**2 - inner_mm**2)


def assert_light_grasp_still_answers(comparison) -> None:
    result = comparison.results["light_grasp"]
    assert result.error is None
    # independent of rigbench's code: the annulus formula above; 1e-12 relative covers float rounding
    assert result.outputs["clear_area_mm2"].values == pytest.approx(
        [annulus_area_mm2(200, 44), annulus_area_mm2(102, 0)], rel=1e-12
    )


def registry_with(name: str, target: str, **kwargs):
    return load_registry([builtin(*LIGHT_GRASP), entry_point(name, target)], **kwargs)


FAULTS = [
    ("raises", "Raises", "raises failed: ZeroDivisionError: deliberate failure in compute"),
    ("exits", "ExitsProcess", "exits failed: SystemExit: 3"),
    ("returns_nan", "ReturnsNaN", "output 'scaled_aperture_mm' has NaN or infinite values but is declared finite"),
    ("returns_infinity", "ReturnsInfinity", "has NaN or infinite values but is declared finite"),
    ("wrong_shape", "WrongShape", "output 'scaled_aperture_mm' has shape (3,), which does not fit the batch's (2,)"),
    ("missing_output", "MissingOutput", "did not return its declared output 'scaled_aperture_mm'"),
    ("not_a_mapping", "NotAMapping", "compute returned a list, not a mapping of output name to array"),
    ("non_numeric", "NonNumeric", "output 'scaled_aperture_mm' is not numeric"),
    ("ragged", "Ragged", "output 'scaled_aperture_mm' is not an array"),
    ("writes_into_batch", "WritesIntoBatch", "ValueError: output array is read-only"),
]


@pytest.mark.parametrize(("name", "target", "error"), FAULTS, ids=[f[0] for f in FAULTS])
def test_a_failing_plugin_gets_an_error_and_the_other_calculators_still_answer(name, target, error):
    registry = registry_with(name, f"plugin_fakes:{target}")
    # the plugin runs first, so a plugin that corrupted shared state would spoil light_grasp
    comparison = compare(RIGS, [name, "light_grasp"], registry=registry)
    broken = comparison.results[name]
    assert error in broken.error
    assert broken.outputs == {}
    assert broken.version == "1.2.0"
    assert_light_grasp_still_answers(comparison)


def test_the_same_faults_are_caught_for_a_built_in_running_inline():
    registry = load_registry([builtin(*LIGHT_GRASP), builtin("returns_nan", "plugin_fakes:ReturnsNaN")])
    comparison = compare(RIGS, ["returns_nan", "light_grasp"], registry=registry)
    assert "declared finite" in comparison.results["returns_nan"].error
    assert_light_grasp_still_answers(comparison)


def test_nan_is_allowed_and_becomes_null_where_the_output_is_declared_nullable():
    registry = registry_with("nullable_nan", "plugin_fakes:NullableNaN")
    result = compare(RIGS, ["nullable_nan"], registry=registry).results["nullable_nan"]
    assert result.error is None
    assert result.outputs["scaled_aperture_mm"].values == [None, None]


def test_a_scalar_output_broadcasts_to_one_value_per_rig():
    registry = registry_with("scalar_output", "plugin_fakes:ScalarOutput")
    result = compare(RIGS, ["scalar_output"], registry=registry, params={"scalar_output": {"scale": 3}})
    assert result.results["scalar_output"].outputs["scaled_aperture_mm"].values == [3.0, 3.0]


def test_a_working_plugin_computes_with_its_params_and_unit():
    registry = registry_with("good", "plugin_fakes:Good")
    result = compare(RIGS, ["good"], registry=registry, params={"good": {"scale": 0.5}}).results["good"]
    assert result.error is None
    assert result.outputs["scaled_aperture_mm"].unit == "mm"
    assert result.outputs["scaled_aperture_mm"].values == [100.0, 51.0]


def test_a_plugin_writing_into_the_batch_leaves_the_caller_s_arrays_intact():
    batch = RigBatch.from_rigs([Rig.model_validate(r) for r in RIGS])
    registry = registry_with("writes_into_batch", "plugin_fakes:WritesIntoBatch")
    calculator = registry.get("writes_into_batch")
    outcome = run(calculator, batch, parse_params(calculator, None))
    assert "read-only" in outcome.error
    assert batch["aperture_mm"].tolist() == [200.0, 102.0]
    assert batch["aperture_mm"].flags.writeable  # the caller's own arrays stay writable


def test_a_slow_plugin_exceeds_its_time_budget_without_holding_up_the_others():
    plugin_fakes.release_slow.clear()
    registry = registry_with("slow", "plugin_fakes:Slow", time_budget_s=0.2)
    try:
        first = compare(RIGS, ["slow", "light_grasp"], registry=registry)
        assert first.results["slow"].error == "slow exceeded its time budget of 0.2 s"
        assert_light_grasp_still_answers(first)
        # the overrunning call is still running: it is not started a second time
        second = compare(RIGS, ["slow", "light_grasp"], registry=registry)
        assert "still busy with an earlier call that exceeded its time budget" in second.results["slow"].error
        assert_light_grasp_still_answers(second)
    finally:
        plugin_fakes.release_slow.set()
    runaway = [t for t in threading.enumerate() if t.name == "rigbench-calculator-slow"]
    for thread in runaway:
        thread.join(timeout=10)
    assert len(runaway) == 1  # one thread, however many requests arrived while it ran
    # once the runaway call has ended, the calculator is tried again and, released, answers
    third = compare(RIGS, ["slow"], registry=registry)
    assert third.results["slow"].error is None
    assert third.results["slow"].outputs["scaled_aperture_mm"].values == [400.0, 204.0]


class RecordsThread(plugin_fakes.Good):
    name = "records_thread"
    seen: list[threading.Thread] = []

    def compute(self, batch, params):
        self.seen.append(threading.current_thread())
        return super().compute(batch, params)


def test_built_ins_run_in_the_caller_s_thread_and_plugins_in_a_worker():
    batch = RigBatch.from_rigs([Rig.model_validate(r) for r in RIGS])
    eps = {
        "inline": builtin("records_thread", "test_runner:RecordsThread"),
        "worker": entry_point("records_thread", "test_runner:RecordsThread"),
    }
    threads = {}
    for how, ep in eps.items():
        RecordsThread.seen.clear()
        calculator = load_registry([ep]).get("records_thread")
        assert run(calculator, batch, parse_params(calculator, None)).error is None
        [threads[how]] = RecordsThread.seen
    assert threads["inline"] is threading.current_thread()
    assert threads["worker"] is not threading.current_thread()


def test_outputs_may_broadcast_over_a_sweep_batch():
    telescopes = [Telescope(aperture_mm=200, focal_length_mm=1000), Telescope(aperture_mm=80, focal_length_mm=480)]
    cameras = [Camera(pixel_size_um=3.8, width_px=6000, height_px=4000)] * 3
    batch = RigBatch.from_components(telescopes, cameras)
    calculator = load_registry([entry_point("good", "plugin_fakes:Good")]).get("good")
    outcome = run(calculator, batch, parse_params(calculator, None))
    assert outcome.error is None
    values = outcome.values["scaled_aperture_mm"]
    assert values.shape == (2, 3, 1, 1)
    assert values[:, 0, 0, 0].tolist() == [400.0, 160.0]


def test_invalid_params_name_the_calculator_and_field():
    calculator = plugin_fakes.Good()
    with pytest.raises(InvalidParams) as caught:
        parse_params(calculator, {"scale": -1})
    assert caught.value.errors[0]["loc"] == ("params", "good", "scale")
    assert "params for 'good': scale:" in str(caught.value)


@given(hnp.arrays(np.float64, hnp.array_shapes(min_dims=1, max_dims=4, max_side=9)))
def test_to_json_values_keeps_finite_values_in_order_and_nulls_the_rest(values):
    out = to_json_values(values)
    flat = values.ravel()
    assert len(out) == flat.size
    for got, expected in zip(out, flat.tolist()):
        if math.isfinite(expected):
            assert got == expected and type(got) is float
        else:
            assert got is None


@pytest.mark.parametrize("n", [4, 1000])  # below and above the small-array fast path
def test_to_json_values_nulls_nan_and_infinities(n):
    values = np.arange(n, dtype=float)
    values[:3] = [np.nan, np.inf, -np.inf]
    assert to_json_values(values)[:4] == [None, None, None, 3.0]


def test_to_json_values_passes_integers_booleans_and_text_through():
    assert to_json_values(np.array([1, 2])) == [1, 2]
    assert to_json_values(np.array([True, False])) == [True, False]
    assert to_json_values(np.array(["a", "b"])) == ["a", "b"]
