"""calculators/builtin/compatibility.py and the train formulas of calculators/train_elements.py."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from calculators.base import NoParams
from calculators.builtin import compatibility
from calculators.batch import RigBatch
from calculators.builtin.compatibility import IMPOSSIBLE, Compatibility
from calculators.schemas import Rig
from calculators.train_elements import barlow_factor, filter_focus_shift_mm, reducer_factor
from plugins.compare import comparison_tree
from plugins.testing import conformance_checks

CALC = Compatibility()
CAMERA = {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000, "flange_to_sensor_mm": 17.5}


def outputs(*rigs):
    return CALC.compute(RigBatch.from_rigs(list(rigs)), NoParams())


def rig(train=(), design="refractor", aperture=80.0, focal=480.0, camera=CAMERA, **telescope):
    return Rig(name="rig", telescope={"design": design, "aperture_mm": aperture, "focal_length_mm": focal,
                                      **telescope}, train=list(train), camera=camera)


@pytest.mark.parametrize("check", conformance_checks(Compatibility), ids=str)
def test_meets_the_conformance_kit(check):
    check()


# --- reference checks -----------------------------------------------------------------------------

def _lens(f):
    return np.array([[1.0, 0.0], [-1.0 / f, 1.0]])


def _gap(d):
    return np.array([[1.0, d], [0.0, 1.0]])


@pytest.mark.parametrize("objective, lens, separation", [(1000.0, 250.0, 900.0), (480.0, 160.0, 420.0),
                                                         (2000.0, 300.0, 1850.0)])
def test_thin_lens_reducer_factor_equals_a_paraxial_ray_trace(objective, lens, separation):
    # Ray transfer (ABCD) matrices (Gerrard & Burch, Introduction to Matrix Methods in Optics, 1975 —
    # from memory): system = lens · gap · objective; effective focal length −1/C, back focal
    # distance −A/C. The formula m = 1 − d/f (Hecht 2017 §5.2.3) must give EFL/F with d the back
    # focal distance; both are exact paraxial optics, so only rounding differs (1e-12).
    system = _lens(lens) @ _gap(separation) @ _lens(objective)
    efl, bfd = -1 / system[1, 0], -system[0, 0] / system[1, 0]
    assert reducer_factor(bfd, lens) == pytest.approx(efl / objective, rel=1e-12)


@pytest.mark.parametrize("objective, lens, separation", [(1000.0, 50.0, 970.0), (800.0, 100.0, 760.0)])
def test_thin_lens_barlow_factor_equals_a_paraxial_ray_trace(objective, lens, separation):
    # The same trace with a negative lens of focal length −f: m = 1 + d/f.
    system = _lens(-lens) @ _gap(separation) @ _lens(objective)
    efl, bfd = -1 / system[1, 0], -system[0, 0] / system[1, 0]
    assert barlow_factor(bfd, lens) == pytest.approx(efl / objective, rel=1e-12)


@pytest.mark.parametrize("thickness, index", [(2.0, 1.5), (3.0, 1.46), (1.0, 1.52)])
def test_filter_focus_shift_equals_snells_law_for_a_near_axis_ray(thickness, index):
    # Exact refraction (Snell's law) of a ray 1e-5 rad from the axis through a plate: it leaves
    # displaced along the axis by t − t·tan(θ')/tan(θ), which tends to t(1 − 1/n) (Smith 2008 §2.6)
    # as θ → 0; at 1e-5 rad the difference is of order θ² ~ 1e-10.
    theta = 1e-5
    inside = math.asin(math.sin(theta) / index)
    exact = thickness - thickness * math.tan(inside) / math.tan(theta)
    assert filter_focus_shift_mm(thickness, index) == pytest.approx(exact, rel=1e-9)


def test_backfocus_worked_example_of_the_docs():
    # Written down in calculators/train_columns.py: a reducer needing 55.0 mm, a 20.0 mm filter
    # wheel with a 2.0 mm n = 1.5 filter (shift 0.667 mm), a camera 17.5 mm deep:
    # 55.0 + 0.667 − 20.0 − 17.5 = 18.17 mm of spacers still needed.
    train = [{"kind": "reducer", "factor": 0.8, "backfocus_mm": 55, "image_circle_mm": 44},
             {"kind": "filter-wheel", "optical_length_mm": 20},
             {"kind": "filter", "thickness_mm": 2, "refractive_index": 1.5}]
    out = outputs(rig(train))
    assert float(out["spacer_mm"][0]) == pytest.approx(55 + 2 * (1 - 1 / 1.5) - 20 - 17.5, rel=1e-12)
    assert str(out["verdict"][0]) == "fits with spacers"
    # With the 18.17 mm found as spacers it fits; with 25 mm more it is too long.
    for extra, verdict in ((55 + 2 / 3 - 37.5, "fits"), (45.0, "too long")):
        spaced = outputs(rig([*train[:2], {"kind": "spacer", "optical_length_mm": extra}, train[2]]))
        assert str(spaced["verdict"][0]) == verdict


def test_a_reducer_made_for_another_design_is_the_wrong_design():
    sct_reducer = {"kind": "reducer", "factor": 0.63, "designs": ["schmidt-cassegrain"]}
    out = outputs(rig([sct_reducer], design="refractor", aperture=115, focal=805),
                  rig([sct_reducer], design="schmidt-cassegrain", aperture=200, focal=2000))
    assert out["verdict"].tolist()[0] == "wrong design" and out["design_match"].tolist() == [False, True]


def test_nothing_stated_is_not_stated_and_never_impossible():
    out = outputs(rig([{"kind": "reducer", "factor": 0.8}]))
    assert str(out["verdict"][0]) == "not stated"


def test_a_newtonian_whose_focus_runs_out_cannot_reach_focus():
    # 50 mm of travel; a 20 mm wheel, a 15 mm guider and a 17.5 mm camera need 52.5 mm.
    train = [{"kind": "filter-wheel", "optical_length_mm": 20}, {"kind": "off-axis-guider", "optical_length_mm": 15}]
    out = outputs(rig(train, design="newtonian", aperture=200, focal=1000, outward_focus_travel_mm=50))
    assert float(out["focus_margin_mm"][0]) == pytest.approx(-2.5) and str(out["verdict"][0]) == "cannot reach focus"


# --- properties -----------------------------------------------------------------------------------

@given(st.floats(20, 120), st.floats(1, 40), st.floats(0.5, 5))
@settings(deadline=None)
def test_a_spacer_takes_its_length_off_the_spacers_needed(backfocus, spacer, thickness):
    base = [{"kind": "reducer", "factor": 0.8, "backfocus_mm": backfocus},
            {"kind": "filter", "thickness_mm": thickness}]
    without, with_ = outputs(rig(base), rig([*base, {"kind": "spacer", "optical_length_mm": spacer}]))["spacer_mm"]
    # Arithmetic only: the same sums with one more term (rounding, 1e-9 mm).
    assert with_ == pytest.approx(without - spacer, abs=1e-9)


@given(st.sampled_from(["refractor", "newtonian", "schmidt-cassegrain"]), st.floats(2, 12),
       st.floats(2, 12), st.floats(0, 6))
@settings(deadline=None)
def test_the_verdict_is_impossible_exactly_when_design_or_range_forbid_it(design, native, low, width):
    element = {"kind": "corrector", "factor": 1.0, "designs": ["refractor"], "focal_ratio_min": low,
               "focal_ratio_max": low + width}
    out = outputs(rig([element], design=design, aperture=100, focal=100 * native))
    forbidden = design != "refractor" or not (low * (1 - 1e-9) <= native <= (low + width) * (1 + 1e-9))
    assert (str(out["verdict"][0]) in IMPOSSIBLE) == forbidden


# --- sweeps honour it -------------------------------------------------------------------------------

DESIGNS = ["refractor", "newtonian", "schmidt-cassegrain"]
scopes = st.builds(lambda d, a, n: {"design": d, "aperture_mm": a, "focal_length_mm": a * n,
                                    "price": {"amount": a * 10, "currency": "EUR"}},
                   st.sampled_from(DESIGNS), st.sampled_from([80.0, 150.0, 200.0]), st.sampled_from([4.0, 6.0, 10.0]))
optics = st.builds(lambda d, lo, f: {"kind": "reducer", "factor": f, "designs": d, "focal_ratio_min": lo,
                                     "focal_ratio_max": lo + 3},
                   st.lists(st.sampled_from(DESIGNS), max_size=2, unique=True), st.sampled_from([3.0, 5.0, 9.0]),
                   st.sampled_from([0.63, 0.8]))


@given(st.lists(scopes, min_size=1, max_size=3), st.lists(st.lists(optics, max_size=1), min_size=1, max_size=3))
@settings(deadline=None, max_examples=40)
def test_no_front_or_top_row_is_a_combination_the_calculator_calls_impossible(telescopes, trains):
    from calculators.schemas import Camera, Telescope
    from calculators.sweep import evaluate
    from plugins.registry import load_registry

    registry = load_registry().calculators
    t_models = [Telescope.model_validate(t) for t in telescopes]
    camera = Camera(**CAMERA)
    objectives = {"speed.time_factor_per_pixel": "min", "cost.total_price": "min"}
    result = evaluate(t_models, [camera], trains, objectives=objectives, calculators=registry, limit=50)
    kept = evaluate(t_models, [camera], trains, objectives=objectives, calculators=registry, limit=50,
                    allow_incompatible=True)
    assert result.evaluated == result.considered + sum(result.excluded.values())
    assert kept.excluded == {} and kept.considered == kept.evaluated
    alone = [[str(outputs(Rig(name="r", telescope=t, train=train, camera=camera))["verdict"][0])
              for train in trains] for t in t_models]
    assert sum(v in IMPOSSIBLE for row in alone for v in row) == sum(result.excluded.values())
    for row in result.front + result.top:
        assert alone[row.indices.telescope][row.indices.train] not in IMPOSSIBLE


def test_the_reason_for_a_small_image_circle_names_what_it_must_cover():
    # The image circle must cover the sensor diagonal (36.1 mm for 6000 × 4000 px at 3.8 µm) on an
    # imaging rig and the eyepiece's field stop on a visual one; the reason names the one in play.
    imaging = rig(image_circle_mm=20.0)
    eyepiece = {"kind": "eyepiece", "focal_length_mm": 25.0, "apparent_field_deg": 52.0, "field_stop_mm": 21.5}
    visual = Rig(name="visual", telescope={"design": "refractor", "aperture_mm": 80.0, "focal_length_mm": 480.0,
                                           "image_circle_mm": 20.0}, train=[eyepiece])
    out = outputs(imaging, visual)
    assert list(out["verdict"]) == ["vignettes", "vignettes"]
    assert "smaller than the sensor diagonal" in out["reasons"][0]
    assert "smaller than the eyepiece's field stop" in out["reasons"][1]
    assert "sensor" not in out["reasons"][1]


def test_a_null_spacer_or_focus_margin_says_which_field_of_the_rig_would_give_it():
    # Each rig lacks one thing the formulas of the module docstring need; the null says which, in
    # the rig's own fields, never the train's derived columns.
    camera = {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}
    telescope = {"design": "refractor", "aperture_mm": 80.0, "focal_length_mm": 480.0, "image_circle_mm": 40.0}
    reducer = {"kind": "reducer", "factor": 0.8, "backfocus_mm": 55.0}
    rigs = {
        "barlow": Rig(name="barlow", telescope={**telescope, "outward_focus_travel_mm": 40.0},
                      train=[{"kind": "barlow", "factor": 2.0}], camera={**camera, "flange_to_sensor_mm": 17.5}),
        "no flange": Rig(name="no flange", telescope={**telescope, "outward_focus_travel_mm": 40.0},
                         train=[{"kind": "spacer", "optical_length_mm": 10.0}], camera=camera),
        "reducer, no flange": Rig(name="reducer, no flange", telescope=telescope, train=[reducer], camera=camera),
        "no travel": Rig(name="no travel", telescope=telescope, camera={**camera, "flange_to_sensor_mm": 17.5}),
    }
    names = list(rigs)
    tree = comparison_tree(list(rigs.values()), ["compatibility"])
    outputs = tree["results"]["compatibility"]["outputs"]
    spacer = dict(zip(names, outputs["spacer_mm"]["null_reasons"]))
    margin = dict(zip(names, outputs["focus_margin_mm"]["null_reasons"]))
    assert margin["barlow"] == margin["reducer, no flange"] == compatibility.POWERED
    assert margin["no flange"] == spacer["reducer, no flange"] == compatibility.NO_FLANGE
    assert margin["no travel"] == compatibility.NO_TRAVEL
    assert spacer["barlow"] == spacer["no travel"] == compatibility.NO_BACKFOCUS
    every = [r for out in ("spacer_mm", "focus_margin_mm") for r in outputs[out]["null_reasons"] if r]
    assert not any("train_" in r for r in every)  # no derived column names
