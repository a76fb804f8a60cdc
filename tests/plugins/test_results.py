"""plugins/results.py: the answer of built-in calculators written without validating it again is
the very JSON the result model writes."""

from __future__ import annotations

import json

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from calculators.schemas import Rig
from plugin_fakes import LIGHT_GRASP, builtin
from plugins.compare import comparison_tree
from plugins.registry import load_registry
from plugins.results import Comparison, SkippedRig, comparison_json
from plugins.runner import time_budget
from plugins.strategies import rig_lists


@pytest.fixture(scope="module")
def registry():
    return load_registry()


def builtins(registry) -> list[str]:
    return [name for name, calc in registry.calculators.items() if time_budget(calc) is None]


def model_json(tree, skipped=()) -> bytes:
    model = Comparison.model_validate(tree)
    model.skipped = list(skipped)
    return model.model_dump_json().encode()


@settings(deadline=None, max_examples=60)
@given(rigs=rig_lists(max_size=6, complete=None, wide=True), baseline=st.integers(0, 5))
def test_the_unvalidated_json_of_every_built_in_is_the_models_byte_for_byte(registry, rigs, baseline):
    # Byte equality: the same keys in the same order, every default, integers written as the
    # floats the model makes of them, the same float digits.
    tree = comparison_tree(rigs, builtins(registry), baseline % len(rigs), registry=registry)
    assert comparison_json(tree) == model_json(tree)


def test_the_core_comparison_of_the_benchmark_matches_and_has_integer_outputs_as_floats(registry):
    from tests.bench.load import CORE_CALCULATORS, comparison_body

    body = json.loads(comparison_body())
    tree = comparison_tree([Rig.model_validate(r) for r in body["rigs"]], CORE_CALCULATORS, registry=registry)
    written = comparison_json(tree)
    assert written == model_json(tree)
    binning = json.loads(written)["results"]["sampling"]["outputs"]["suggested_binning"]["values"]
    assert all(type(v) is float for v in binning) and b'"suggested_binning"' in written


def test_row_errors_skipped_rigs_and_third_party_values_go_through_the_model():
    registry = load_registry([builtin(*LIGHT_GRASP), builtin("ten_to_the_aperture", "test_overflow:TenToTheAperture")])
    rigs = [Rig.model_validate({"name": f"{d} mm", "camera": {"pixel_size_um": 3.8, "width_px": 100, "height_px": 100},
                                "telescope": {"aperture_mm": d, "focal_length_mm": d * 5}}) for d in (100, 250)]
    tree = comparison_tree(rigs, ["ten_to_the_aperture", "light_grasp"], registry=registry)
    assert tree["results"]["ten_to_the_aperture"]["row_errors"]  # the overflowing rig
    assert comparison_json(tree) == model_json(tree)
    skipped = [SkippedRig(index=2, id=7, name="old", reasons=["telescope.aperture_mm: missing"])]
    assert comparison_json(tree, skipped) == model_json(tree, skipped)
    assert json.loads(comparison_json(tree, skipped))["skipped"][0]["id"] == 7
    assert comparison_json(tree, validate=True) == model_json(tree)
