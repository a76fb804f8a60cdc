"""Tests of calculators/sweep/detectors.py: the camera axis widened into camera × binning pairs and
eyepieces, checked against the comparison path (the same rig computed alone by
``plugins.compare.compare``), and its refusals."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from calculators.evaluation_schemas import Indices
from calculators.schemas import Camera, Rig, Telescope
from calculators.sweep import EvaluationError, TooManyCombinations, evaluate
from calculators.train_elements import train_element
from plugins.compare import compare
from plugins.registry import load_registry

REGISTRY = load_registry()
CALCULATORS = REGISTRY.calculators

telescopes = st.builds(
    lambda a, ratio, price: Telescope(design="newtonian", aperture_mm=a, focal_length_mm=a * ratio,
                                      obstruction_mm=0.3 * a, price={"amount": price, "currency": "EUR"}),
    st.sampled_from([100.0, 150.0, 200.0]), st.sampled_from([4.0, 5.0, 8.0]),
    st.sampled_from([400.0, 900.0]),
)
cameras = st.builds(
    lambda p, w, read, price: Camera(pixel_size_um=p, width_px=w, height_px=3001, quantum_efficiency=0.8,
                                     read_noise_e=read, dark_current_e_per_s=0.01,
                                     price={"amount": price, "currency": "EUR"}),
    st.sampled_from([2.4, 3.8, 5.9]), st.sampled_from([4000, 6001]), st.sampled_from([1.2, 3.5]),
    st.sampled_from([300.0, 800.0]),
)
factor_lists = st.lists(st.integers(1, 4), min_size=1, max_size=3, unique=True)
IMAGING = {"sampling.pixel_scale_arcsec": "max", "integration_time.total_time_s": "min",
           "cost.total_price": "min"}
SHOWN = ["sampling.image_width_px", "target_fit.major_axis_px", "integration_time.snr_per_sub"]


def alone(rig: Rig, keys) -> dict[str, float | None]:
    """The values of one rig computed by a comparison of it alone."""
    names = sorted({k.split(".")[0] for k in keys})
    results = compare([rig], names, registry=REGISTRY).results
    return {k: results[k.split(".")[0]].outputs[k.split(".")[1]].values[0] for k in keys}


@given(st.lists(telescopes, min_size=1, max_size=2), st.lists(cameras, min_size=1, max_size=2), factor_lists)
@settings(deadline=None, max_examples=25)
def test_every_binned_row_equals_a_comparison_of_that_rig_at_that_binning(scopes, cams, factors):
    constraints = {k: {"min": 0} for k in SHOWN}
    result = evaluate(scopes, cams, objectives=IMAGING, constraints=constraints, binning=factors,
                      calculators=CALCULATORS, limit=1000, allow_incompatible=True)
    assert result.evaluated == len(scopes) * len(cams) * len(factors)
    rows = result.top + result.front + [result.baseline]
    assert len(result.top) == result.feasible == result.evaluated
    seen = set()
    for row in rows:
        ix = row.indices
        assert ix.binning in factors and ix.eyepiece is None
        seen.add((ix.telescope, ix.camera, ix.binning))
        rig = Rig(name="r", telescope=scopes[ix.telescope], camera=cams[ix.camera], binning=ix.binning)
        want = alone(rig, row.values)
        assert row.values == pytest.approx(want, rel=1e-12)
    assert len(seen) == result.evaluated  # every camera at every factor, each once


def test_one_combination_at_binning_two_agrees_with_a_comparison_and_differs_from_binning_one():
    scope = Telescope(aperture_mm=200, focal_length_mm=1000, obstruction_mm=60)
    camera = Camera(pixel_size_um=3.8, width_px=6000, height_px=4000, quantum_efficiency=0.8,
                    read_noise_e=1.5, dark_current_e_per_s=0.01)
    objectives = {"integration_time.total_time_s": "min"}
    one = evaluate([scope], [camera], objectives=objectives, binning=[2], calculators=CALCULATORS)
    row = one.baseline
    assert (row.indices.camera, row.indices.binning) == (0, 2)
    want = alone(Rig(name="r", telescope=scope, camera=camera, binning=2), row.values)
    unbinned = alone(Rig(name="r", telescope=scope, camera=camera), row.values)
    assert row.values == want
    key = "integration_time.total_time_s"
    assert row.values[key] == pytest.approx(unbinned[key] / 4, rel=1e-12)


def test_the_baseline_names_its_binning_factor():
    scope = Telescope(aperture_mm=200, focal_length_mm=1000)
    cams = [Camera(pixel_size_um=3.8, width_px=6000, height_px=4000)] * 2
    objectives = {"sampling.pixel_scale_arcsec": "max"}
    result = evaluate([scope], cams, objectives=objectives, binning=[1, 3],
                      baseline=Indices(camera=1, binning=3), calculators=CALCULATORS)
    assert (result.baseline.indices.camera, result.baseline.indices.binning) == (1, 3)
    default = evaluate([scope], cams, objectives=objectives, binning=[3, 1], calculators=CALCULATORS)
    assert default.baseline.indices.binning == 3  # the first factor listed


@pytest.mark.parametrize("factors, loc", [
    ([], ("binning",)), ([1, 1], ("binning", 1)), ([0], ("binning", 0)), ([5], ("binning", 0)),
    ([True], ("binning", 0)),
])
def test_bad_binning_factors_are_refused_naming_the_entry(factors, loc):
    with pytest.raises(EvaluationError) as caught:
        evaluate([Telescope(aperture_mm=100, focal_length_mm=500)],
                 [Camera(pixel_size_um=3.8, width_px=10, height_px=10)],
                 objectives={"sampling.pixel_scale_arcsec": "max"}, binning=factors,
                 calculators=CALCULATORS)
    assert caught.value.loc == loc


def test_a_baseline_binning_not_listed_is_refused():
    with pytest.raises(EvaluationError) as caught:
        evaluate([Telescope(aperture_mm=100, focal_length_mm=500)],
                 [Camera(pixel_size_um=3.8, width_px=10, height_px=10)],
                 objectives={"sampling.pixel_scale_arcsec": "max"}, binning=[1, 2],
                 baseline=Indices(binning=4), calculators=CALCULATORS)
    assert caught.value.loc == ("baseline", "binning") and "1, 2" in str(caught.value)


def test_binning_multiplies_the_combinations_counted_against_the_limit():
    scope = Telescope(aperture_mm=100, focal_length_mm=500)
    camera = Camera(pixel_size_um=3.8, width_px=10, height_px=10)
    with pytest.raises(TooManyCombinations) as caught:
        evaluate([scope] * 3, [camera] * 2, objectives={"sampling.pixel_scale_arcsec": "max"},
                 binning=[1, 2, 3], max_combinations=17, calculators=CALCULATORS)
    assert "3 × (2 × 3) × 1 × 1 = 18 combinations" in str(caught.value)


# --- eyepieces: visual combinations beside the imaging ones ---------------------------------------

eyepieces = st.builds(
    lambda f, field, stop, mass, price: train_element({
        "kind": "eyepiece", "focal_length_mm": f, "apparent_field_deg": field, "field_stop_mm": stop,
        "mass_kg": mass, "price": None if price is None else {"amount": price, "currency": "EUR"}}),
    st.sampled_from([6.0, 10.0, 25.0, 40.0]), st.sampled_from([45.0, 68.0, 100.0]),
    st.sampled_from([None, 11.0, 27.0]), st.sampled_from([None, 0.2, 0.6]), st.sampled_from([None, 90.0]),
)
imaging_trains = st.lists(st.sampled_from([
    [], [{"kind": "barlow", "factor": 2.0, "mass_kg": 0.2, "price": {"amount": 100, "currency": "EUR"}}],
    [{"kind": "reducer", "factor": 0.8, "mass_kg": 0.3}], [{"kind": "filter", "thickness_mm": 2.0}],
]), min_size=1, max_size=3)
VISUAL = {"visual.magnification": "max", "visual.true_field_arcmin": "max"}
VISUAL_KEYS = {"visual.exit_pupil_mm": {"min": 0}, "cost.total_price": {"min": 0},
               "visual.surface_brightness_ratio": {"min": 0}}


@given(st.lists(telescopes, min_size=1, max_size=2), imaging_trains, st.lists(eyepieces, min_size=1, max_size=3))
@settings(deadline=None, max_examples=25)
def test_an_eyepieces_axis_sweeps_what_the_same_eyepieces_ending_explicit_trains_sweep(scopes, trains, eps):
    trains = [[train_element(e) for e in t] for t in trains]
    args = dict(objectives=VISUAL, calculators=CALCULATORS, limit=1000, allow_incompatible=True,
                constraints={"cost.total_price": {"min": 0}})
    axis = evaluate(scopes, [], trains, eyepieces=eps, **args)
    explicit_trains = [[*t, e] for t in trains for e in eps]
    explicit = evaluate(scopes, [], explicit_trains, **args)
    assert axis.evaluated == explicit.evaluated == len(scopes) * len(trains) * len(eps)
    assert axis.feasible == explicit.feasible
    for row in axis.top + [axis.baseline]:
        ix = row.indices
        assert ix.camera is None and ix.binning is None and ix.eyepiece is not None
        rig = Rig(name="r", telescope=scopes[ix.telescope], train=[*trains[ix.train], eps[ix.eyepiece]])
        assert row.values == pytest.approx(alone(rig, row.values), rel=1e-12, nan_ok=True)


@given(st.lists(telescopes, min_size=1, max_size=2), st.lists(cameras, min_size=1, max_size=2), imaging_trains,
       st.lists(eyepieces, min_size=1, max_size=2))
@settings(deadline=None, max_examples=20)
def test_visual_and_imaging_rows_side_by_side_each_null_in_the_other_modes_outputs(scopes, cams, trains, eps):
    trains = [[train_element(e) for e in t] for t in trains]
    objectives = {"visual.magnification": "max", "cost.total_price": "min"}
    both_modes = evaluate(scopes, cams, trains, eyepieces=eps, objectives=objectives,
                          calculators=CALCULATORS, limit=1000, allow_incompatible=True)
    imaging = len(scopes) * len(cams) * len(trains)
    visual = len(scopes) * len(eps) * len(trains)
    assert both_modes.evaluated == imaging + visual
    # An objective on a visual output leaves the imaging rows infeasible (null), and the other way.
    assert both_modes.feasible <= visual
    for row in both_modes.top:
        assert row.indices.eyepiece is not None and row.values["visual.magnification"] is not None
    imaging_only = evaluate(scopes, cams, trains, eyepieces=eps, calculators=CALCULATORS, limit=1000,
                            objectives={"sampling.pixel_scale_arcsec": "max"}, allow_incompatible=True)
    assert imaging_only.feasible == imaging
    assert all(r.indices.camera is not None and r.indices.eyepiece is None for r in imaging_only.top)


def test_the_eyepiece_columns_of_the_axis_equal_those_of_explicit_trains():
    from calculators.batch import RigBatch

    scope = Telescope(aperture_mm=200, focal_length_mm=1200, obstruction_mm=50)
    trains = [[], [train_element({"kind": "barlow", "factor": 2, "mass_kg": 0.2,
                                  "price": {"amount": 80, "currency": "EUR"}})]]
    eps = [train_element({"kind": "eyepiece", "focal_length_mm": 25, "apparent_field_deg": 52,
                          "mass_kg": 0.3, "price": {"amount": 60, "currency": "EUR"}}),
           train_element({"kind": "eyepiece", "focal_length_mm": 9, "field_stop_mm": 10})]
    axis = RigBatch.from_components([scope], [None, None], trains, eyepieces=eps)
    explicit = RigBatch.from_components([scope], [None], [[*t, e] for e in eps for t in trains])
    for name in ("eyepiece_focal_length_mm", "eyepiece_apparent_field_deg", "eyepiece_field_stop_mm",
                 "train_has_eyepiece", "train_mass_kg", "train_price", "train_currency", "train_elements",
                 "train_kinds", "train_factor", "train_length_mm"):
        got = np.broadcast_to(axis[name], (1, 2, 2, 1)).reshape(-1)
        want = np.broadcast_to(explicit[name], (1, 1, 4, 1)).reshape(-1)
        assert got.tolist() == pytest.approx(want.tolist(), nan_ok=True) if got.dtype.kind == "f" \
            else got.tolist() == want.tolist(), name


def test_a_visual_baseline_names_its_eyepiece():
    scope = Telescope(aperture_mm=200, focal_length_mm=1200)
    camera = Camera(pixel_size_um=3.8, width_px=6000, height_px=4000)
    eps = [train_element({"kind": "eyepiece", "focal_length_mm": f}) for f in (25, 10)]
    result = evaluate([scope], [camera], eyepieces=eps, objectives={"cost.total_price": "min"},
                      baseline=Indices(eyepiece=1, camera=None), calculators=CALCULATORS)
    assert result.baseline.indices.eyepiece == 1 and result.baseline.indices.camera is None
    alone_visual = evaluate([scope], [], eyepieces=eps, objectives={"visual.magnification": "max"},
                            calculators=CALCULATORS)
    assert alone_visual.baseline.indices.eyepiece == 0  # default: the first eyepiece


EYEPIECE = train_element({"kind": "eyepiece", "focal_length_mm": 25})
SCOPE = Telescope(aperture_mm=200, focal_length_mm=1200)
CAMERA = Camera(pixel_size_um=3.8, width_px=6000, height_px=4000)


@pytest.mark.parametrize("cams, trains, eps, baseline, loc", [
    ([], [[]], [], None, ("cameras",)),
    ([CAMERA], [[EYEPIECE]], [], None, ("trains", 0, 0)),
    ([], [[EYEPIECE]], [EYEPIECE], None, ("trains", 0, 0)),
    ([], [[EYEPIECE], []], [], None, ("trains", 1)),
    ([CAMERA], [[]], [EYEPIECE], Indices(eyepiece=3, camera=None), ("baseline", "eyepiece")),
    ([CAMERA], [[]], [EYEPIECE], Indices(eyepiece=0, camera=0), ("baseline", "camera")),
    ([CAMERA], [[]], [EYEPIECE], Indices(eyepiece=0, camera=None, binning=2), ("baseline", "binning")),
    ([], [[]], [EYEPIECE], Indices(camera=0), ("baseline", "camera")),
    ([CAMERA], [[]], [EYEPIECE], Indices(camera=None), ("baseline",)),
])
def test_bad_visual_requests_are_refused_naming_the_field(cams, trains, eps, baseline, loc):
    with pytest.raises(EvaluationError) as caught:
        evaluate([SCOPE], cams, trains, eyepieces=eps, baseline=baseline,
                 objectives={"cost.total_price": "min"}, calculators=CALCULATORS)
    assert caught.value.loc == loc
