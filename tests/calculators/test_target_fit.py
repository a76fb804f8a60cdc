"""Tests of calculators/builtin/target_fit.py and calculators/builtin/catalogue.py (OpenNGC through pyongc)."""

import math

import astropy.units as u
import numpy as np
import pytest
from example_rigs import demo_outcome, demo_rigs, outputs
from hypothesis import given
from hypothesis import strategies as st
from pydantic import ValidationError
from pyongc import ongc

from calculators.builtin.target_fit import DEFAULT_TARGET, TargetFit, TargetFitParams, panels_along
from calculators.schemas import Camera, Modifier, Rig, Telescope
from plugins.compare import compare
from plugins.runner import InvalidParams
from plugins.testing import conformance_checks

CALC = TargetFit()


def rig(focal_length_mm=1000.0, pixel_um=3.8, width=6000, height=4000) -> Rig:
    return Rig(
        name="r",
        telescope=Telescope(aperture_mm=200, focal_length_mm=focal_length_mm),
        camera=Camera(pixel_size_um=pixel_um, width_px=width, height_px=height),
    )


# --- params validation ----------------------------------------------------------------------

def test_unknown_target_is_a_validation_error_naming_the_param():
    with pytest.raises(ValidationError) as caught:
        TargetFitParams(target="M 333")
    error = caught.value.errors()[0]
    assert error["loc"] == ("target",)
    assert "M 33" in error["msg"]


def test_unknown_target_through_compare_names_params_target_fit_target():
    with pytest.raises(InvalidParams) as caught:
        compare(demo_rigs()[:1], calculators=["target_fit"], params={"target_fit": {"target": "XYZ 1"}})
    assert caught.value.errors[0]["loc"] == ("params", "target_fit", "target")
    assert caught.value.status == 422


@pytest.mark.parametrize("text", ["NGC 224; DROP", "x" * 41, ""])
def test_malformed_names_are_refused_before_the_catalogue(text):
    with pytest.raises(ValidationError):
        TargetFitParams(target=text)


def test_default_target_is_named_in_the_docstring():
    import calculators.builtin.target_fit as module

    assert f'**default "{DEFAULT_TARGET}"**' in module.__doc__
    assert TargetFitParams().target == DEFAULT_TARGET


# --- reference tests -------------------------------------------------------------------------

def test_field_and_pixels_through_astropy_units():
    values = outputs(CALC, [rig()], TargetFitParams(target="NGC 891"))
    # astropy.units: the field is 2·atan(W/2f) for W = 6000 × 3.8 µm at 1000 mm (exact geometry).
    width = 2 * np.arctan((6000 * 3.8 * u.um / (2 * 1000 * u.mm)).decompose().value) * u.rad
    assert values["field_width_arcmin"][0] == pytest.approx(width.to_value(u.arcmin), rel=1e-12)
    # Pixels across 13.03′ at 206 264.806″ × 3.8e-3 mm / 1000 mm per pixel (astropy's arcsec/rad).
    scale = (3.8 * u.um / (1000 * u.mm) * u.rad).to_value(u.arcsec)
    major, _, _ = ongc.Dso("NGC891").dimensions
    assert values["major_axis_px"][0] == pytest.approx(major * 60 / scale, rel=1e-12)


def test_fill_fraction_is_ellipse_over_rectangle():
    values = outputs(CALC, [rig()], TargetFitParams(target="M 33"))
    major, minor, _ = ongc.Dso("M33").dimensions
    # Plane geometry: ellipse area π/4·a·b over the field's w·h.
    expected = math.pi / 4 * major * minor / (values["field_width_arcmin"][0] * values["field_height_arcmin"][0])
    assert values["fill_fraction"][0] == pytest.approx(expected, rel=1e-12)
    assert bool(values["fits_in_field"][0]) is True
    assert values["panels"][0] == 1


@pytest.mark.parametrize("length, frame, overlap, panels", [
    (10, 10, 0.2, 1), (10.5, 10, 0.2, 2), (18, 10, 0.2, 2), (18.01, 10, 0.2, 3), (26, 10, 0.2, 3),
    (25, 10, 0.0, 3), (30, 10, 0.5, 5),
])
def test_panel_count_by_hand(length, frame, overlap, panels):
    # Plane geometry worked by hand: n frames overlapping by o cover F + (n − 1)·F·(1 − o).
    assert panels_along(length, frame, overlap) == panels


def test_object_larger_than_the_field_needs_a_mosaic():
    # M 31 (OpenNGC: 177.8′ × 69.7′) at 1000 mm with a 23.5 × 15.7 mm sensor (80.8′ × 54.0′).
    values = outputs(CALC, [rig()], TargetFitParams(target="M 31", overlap=0.15))
    assert bool(values["fits_in_field"][0]) is False
    # Worked by hand: major axis along the width, 1 + ⌈(177.8 − 80.8)/(0.85·80.8)⌉ = 3 by
    # 1 + ⌈(69.7 − 54.0)/(0.85·54.0)⌉ = 2, six panels; along the height, 1 + ⌈(177.8 − 54.0)/(0.85·54.0)⌉
    # = 4 by 1 (69.7′ < 80.8′), four panels — the better orientation.
    assert values["panels"][0] == 4


# --- property tests --------------------------------------------------------------------------

@given(st.floats(200, 5000), st.floats(1.5, 10), st.floats(0, 0.5))
def test_fitting_objects_need_one_panel_and_more_overlap_never_needs_fewer(focal, pixel, overlap):
    low = outputs(CALC, [rig(focal, pixel)], TargetFitParams(target="NGC 891", overlap=overlap))
    high = outputs(CALC, [rig(focal, pixel)], TargetFitParams(target="NGC 891", overlap=overlap + 0.3))
    if low["fits_in_field"][0]:
        assert low["panels"][0] == 1
    assert high["panels"][0] >= low["panels"][0] >= 1


@given(st.floats(200, 5000), st.floats(1.5, 10), st.floats(1.01, 3))
def test_pixels_across_the_object_grow_with_focal_length(focal, pixel, k):
    a = outputs(CALC, [rig(focal, pixel)])
    b = outputs(CALC, [rig(focal * k, pixel)])
    np.testing.assert_allclose(b["major_axis_px"], a["major_axis_px"] * k, rtol=1e-12)
    assert b["fill_fraction"][0] > a["fill_fraction"][0]


@given(st.floats(200, 5000), st.floats(0.5, 2.0))
def test_a_modifier_acts_as_a_change_of_focal_length(focal, factor):
    modified = Rig(name="m", telescope=Telescope(aperture_mm=200, focal_length_mm=focal),
                   modifier=Modifier(kind="barlow" if factor > 1 else "reducer", factor=factor),
                   camera=Camera(pixel_size_um=3.8, width_px=6000, height_px=4000))
    np.testing.assert_allclose(outputs(CALC, [modified])["fill_fraction"],
                               outputs(CALC, [rig(focal * factor)])["fill_fraction"], rtol=1e-12)


@pytest.mark.parametrize("check", conformance_checks(TargetFit), ids=str)
def test_meets_the_conformance_kit(check):
    # plugins/testing.py: the contract and the invariants every calculator shares
    check()


def test_runs_through_compare_with_default_params():
    outcome = demo_outcome("target_fit")
    assert any("full-aperture solar filter" in c for c in outcome.cautions)
    assert outcome.outputs["target_name"].values[0].startswith("NGC 598")
    assert len(outcome.outputs["panels"].values) == 3
