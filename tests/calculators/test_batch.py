"""Tests of calculators/batch.py: columns of a comparison batch and of a sweep batch, the baseline."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from calculators.batch import AXES, PRICE_SLOTS, RigBatch
from calculators.schemas import Camera, Modifier, Mount, Rig, Telescope
from plugins.testing import rig_lists, sweeps

SCOPE_200 = Telescope(name="200 mm f/5 newtonian", design="newtonian", aperture_mm=200,
                      focal_length_mm=1000, obstruction_mm=70, mass_kg=9.5,
                      price={"amount": 900, "currency": "EUR"})
SCOPE_80 = Telescope(name="80 mm f/6 refractor", design="refractor", aperture_mm=80,
                     focal_length_mm=480)
CAMERA = Camera(pixel_size_um=3.8, width_px=6000, height_px=4000, mass_kg=0.7)
REDUCER = Modifier(kind="reducer", factor=0.8, mass_kg=0.3)
MOUNT = Mount(capacity_kg=20, price={"amount": 1500, "currency": "EUR"})


def test_comparison_batch_has_one_row_per_rig_and_neutral_defaults():
    rigs = [
        Rig(name="a", telescope=SCOPE_200, camera=CAMERA, modifier=REDUCER, mount=MOUNT,
            accessories=[{"name": "guider", "mass_kg": 0.4, "price": {"amount": 200, "currency": "EUR"}},
                         {"name": "dew heater", "mass_kg": 0.1}],
            geometry={"payload_arm_mm": 300, "counterweight_kg": 10}),
        Rig(name="b", telescope=SCOPE_80, camera=CAMERA),
    ]
    batch = RigBatch.from_rigs(rigs, baseline=1)
    assert batch.shape == (2,) and batch.size == 2 and batch.baseline == (1,)
    assert all(np.shape(v) == (2,) for v in batch.values())
    np.testing.assert_array_equal(batch["modifier_factor"], [0.8, 1.0])  # no modifier: factor 1
    np.testing.assert_array_equal(batch["modifier_throughput"], [0.97, 1.0])
    np.testing.assert_array_equal(batch["modifier_mass_kg"], [0.3, 0.0])
    assert batch["modifier_kind"].tolist() == ["reducer", ""]
    np.testing.assert_array_equal(batch["capacity_kg"], [20, np.nan])  # no mount: NaN
    assert batch["mount_currency"].tolist() == ["EUR", ""]
    np.testing.assert_allclose(batch["accessories_mass_kg"], [0.5, 0.0], rtol=1e-15)
    np.testing.assert_array_equal(batch["accessories_price"], [200, np.nan])
    np.testing.assert_array_equal(batch["payload_arm_mm"], [300, np.nan])
    np.testing.assert_array_equal(batch["telescope_throughput"], [0.81, 0.95])  # design defaults
    assert batch["design"].tolist() == ["newtonian", "refractor"]
    for slot in PRICE_SLOTS:
        assert f"{slot}_price" in batch and f"{slot}_currency" in batch


def test_sweep_batch_lays_each_kind_along_its_own_axis():
    batch = RigBatch.from_components(
        [SCOPE_200, SCOPE_80, SCOPE_80], [CAMERA, CAMERA], [None, REDUCER], [MOUNT], baseline=(1, 0, 1, 0)
    )
    assert AXES == ("telescope", "camera", "modifier", "mount")
    assert batch.shape == (3, 2, 2, 1) and batch.size == 12
    assert batch["aperture_mm"].shape == (3, 1, 1, 1)
    assert batch["design"].shape == (3, 1, 1, 1)
    assert batch["pixel_size_um"].shape == (1, 2, 1, 1)
    assert batch["modifier_factor"].shape == (1, 1, 2, 1)
    assert batch["capacity_kg"].shape == (1, 1, 1, 1)
    assert batch["accessories_mass_kg"].shape == (1, 1, 1, 1)
    assert np.isnan(batch["payload_arm_mm"]).all()  # a sweep carries no geometry


def test_at_baseline_picks_the_baseline_element_of_outputs_over_some_axes():
    batch = RigBatch.from_components(
        [SCOPE_200, SCOPE_80, SCOPE_80], [CAMERA, CAMERA], [None, REDUCER], [MOUNT], baseline=(1, 0, 1, 0)
    )
    focal = batch["focal_length_mm"] * batch["modifier_factor"]  # (3, 1, 2, 1)
    assert float(batch.at_baseline(focal)) == 480 * 0.8
    assert float(batch.at_baseline(batch["aperture_mm"])) == 80
    full = np.arange(12.0).reshape(3, 2, 2, 1)
    assert float(batch.at_baseline(full)) == full[1, 0, 1, 0]
    relative = batch.relative(focal)
    assert relative.shape == (3, 1, 2, 1) and relative[1, 0, 1, 0] == 1.0
    assert batch.at_baseline(np.float64(3.0)) == 3.0


def test_at_baseline_aligns_an_output_with_fewer_axes_to_the_last_ones():
    batch = RigBatch.from_components([SCOPE_200, SCOPE_80], [CAMERA], [None, REDUCER], [MOUNT],
                                     baseline=(0, 0, 1, 0))
    # An output shaped (2, 1) broadcasts against (T, C, M, K) along the modifier and mount axes.
    by_modifier = np.array([[10.0], [20.0]])
    assert float(batch.at_baseline(by_modifier)) == 20.0


@given(rig_lists(min_size=1, max_size=5), st.data())
@settings(deadline=None, max_examples=50)
def test_relative_is_one_at_the_baseline_and_ratios_multiply_through_a_third_rig(rigs, data):
    base = data.draw(st.integers(0, len(rigs) - 1))
    other = data.draw(st.integers(0, len(rigs) - 1))
    a = RigBatch.from_rigs(rigs, baseline=base)
    b = RigBatch.from_rigs(rigs, baseline=other)
    values = a["aperture_mm"] * a["focal_length_mm"]
    assert a.relative(values)[base] == 1.0
    # x/base = (x/other)·(other/base); 1e-15-level rounding of three divisions, so 1e-14.
    np.testing.assert_allclose(a.relative(values), b.relative(values) * a.relative(values)[other],
                               rtol=1e-14)


@given(sweeps())
@settings(deadline=None, max_examples=30)
def test_sweep_columns_equal_the_comparison_columns_of_every_combination(sweep):
    telescopes, cameras, modifiers, mounts, baseline = sweep
    batch = RigBatch.from_components(telescopes, cameras, modifiers, mounts, baseline=baseline)
    rigs = [Rig(name="c", telescope=t, camera=c, modifier=m, mount=k)
            for t in telescopes for c in cameras for m in modifiers for k in mounts]
    flat = RigBatch.from_rigs(rigs)
    assert set(batch) == set(flat)
    for name in flat:
        np.testing.assert_array_equal(np.broadcast_to(batch[name], batch.shape).reshape(-1), flat[name],
                                      err_msg=name)


@pytest.mark.parametrize(("baseline", "error"), [((2,), IndexError), ((-1,), IndexError),
                                                 ((0, 0), ValueError)])
def test_a_baseline_outside_the_batch_is_refused(baseline, error):
    with pytest.raises(error):
        RigBatch(columns={"aperture_mm": np.array([100.0, 200.0])}, baseline=baseline)


def test_an_empty_comparison_and_an_unknown_column_are_refused():
    with pytest.raises(ValueError, match="at least one rig"):
        RigBatch.from_rigs([])
    batch = RigBatch.from_rigs([Rig(name="a", telescope=SCOPE_80, camera=CAMERA)])
    with pytest.raises(KeyError, match="no column 'colour'"):
        batch["colour"]


# --- per_batch: quantities shared by several calculators, computed once per batch -------------------

CORE = ("light_grasp", "etendue", "speed", "sampling", "payload", "cost")


def test_a_per_batch_helper_runs_once_per_batch_and_its_result_is_read_only():
    from calculators.batch import per_batch

    calls = []

    @per_batch
    def doubled_aperture(batch):
        calls.append(1)
        return batch["aperture_mm"] * 2

    rig = Rig(name="a", telescope={"aperture_mm": 100, "focal_length_mm": 500},
              camera={"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000})
    batch, other = RigBatch.from_rigs([rig]), RigBatch.from_rigs([rig])
    first = doubled_aperture(batch)
    assert doubled_aperture(batch) is first and len(calls) == 1
    assert doubled_aperture(other) is not first and len(calls) == 2  # another batch: computed afresh
    with pytest.raises(ValueError, match="read-only"):
        first *= 2  # one calculator cannot change the shared value for the others
    # A plain mapping of columns has nowhere to keep it: computed on every call.
    doubled_aperture(dict(batch))
    doubled_aperture(dict(batch))
    assert len(calls) == 4


def _core_outputs(batch_for):
    from plugins.registry import load_registry
    from plugins.runner import parse_params

    registry = load_registry()
    return {name: registry.get(name).compute(batch_for(name), parse_params(registry.get(name), None))
            for name in CORE}


@given(rig_lists(min_size=1, max_size=6))
@settings(deadline=None, max_examples=40)
def test_sharing_quantities_across_calculators_changes_no_number(rigs):
    """One batch for all six core calculators gives bit-for-bit the outputs of a fresh batch each."""
    shared = RigBatch.from_rigs(rigs)
    together = _core_outputs(lambda name: shared)
    apart = _core_outputs(lambda name: RigBatch.from_rigs(rigs))
    for name in CORE:
        for output, values in apart[name].items():
            np.testing.assert_array_equal(together[name][output], values, err_msg=f"{name}.{output}")


@given(sweeps())
@settings(deadline=None, max_examples=20)
def test_sharing_in_a_sweep_batch_changes_no_number(sweep):
    telescopes, cameras, modifiers, mounts, baseline = sweep

    def batch():
        return RigBatch.from_components(telescopes, cameras, modifiers, mounts, baseline=baseline)

    shared = batch()
    together = _core_outputs(lambda name: shared)
    apart = _core_outputs(lambda name: batch())
    for name in CORE:
        for output, values in apart[name].items():
            np.testing.assert_array_equal(together[name][output], values, err_msg=f"{name}.{output}")
