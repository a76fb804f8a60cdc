"""Tests of calculators/builtin/dome_clearance.py: swept radius of the tube against the dome."""

import math

import numpy as np
import pytest
from example_rigs import demo_outcome, outputs
from hypothesis import given
from hypothesis import strategies as st

from calculators.builtin.dome_clearance import DomeClearance, DomeClearanceParams
from calculators.schemas import Camera, Mount, Rig, Telescope
from plugins.testing import conformance_checks

CALC = DomeClearance()


def rig(length_mm=950.0, diameter_mm=235.0, mount_type="german-equatorial") -> Rig:
    return Rig(
        name="r",
        telescope=Telescope(aperture_mm=200, focal_length_mm=1000, length_mm=length_mm,
                            tube_diameter_mm=diameter_mm),
        camera=Camera(pixel_size_um=3.8, width_px=100, height_px=100),
        mount=Mount(type=mount_type, capacity_kg=20),
    )


def tube_surface(length, diameter, offset, balance, n=721) -> np.ndarray:
    """Points on the tube's surface, in a frame centred on the axes' intersection: the tube's axis
    along z at distance ``offset`` along x, the declination axis (x) crossing it ``balance·L`` from
    the front end."""
    phi = np.linspace(0, 2 * np.pi, n)
    z = np.linspace(-balance * length, (1 - balance) * length, 201)
    phi, z = np.meshgrid(phi, z)
    return np.stack([offset + diameter / 2 * np.cos(phi), diameter / 2 * np.sin(phi), z], axis=-1).reshape(-1, 3)


# --- reference tests -------------------------------------------------------------------------

@pytest.mark.parametrize("length, diameter, offset, balance", [
    (950, 235, 250, 0.5), (1600, 300, 320, 0.4), (400, 110, 150, 0.65), (2000, 420, 0, 0.5),
])
def test_swept_radius_is_the_farthest_point_of_the_tube(length, diameter, offset, balance):
    params = DomeClearanceParams(dec_axis_offset_mm=offset, balance_point_fraction=balance)
    radius = outputs(CALC, [rig(length, diameter)], params)["swept_radius_mm"][0]
    # Solid geometry by brute force: the largest distance of sampled surface points from the
    # intersection. The 0.5° sampling round the rim can miss the maximum by r·(1 − cos 0.25°) < 0.01 mm.
    farthest = np.linalg.norm(tube_surface(length, diameter, offset, balance), axis=1).max()
    assert radius == pytest.approx(farthest, abs=0.01)


def test_offset_dome_centre_margin_is_the_worst_case_over_orientations():
    params = DomeClearanceParams(dome_inner_diameter_mm=2400, pier_offset_mm=120, height_offset_mm=-90)
    values = outputs(CALC, [rig()], params)
    points = tube_surface(950, 235, 250, 0.5, n=181)
    centre = np.array([120.0, 0.0, -90.0])  # the dome's centre seen from the intersection (any axis)
    rng = np.random.default_rng(5)
    worst = 0.0
    for _ in range(400):
        q, r = np.linalg.qr(rng.normal(size=(3, 3)))  # a random rotation (orientation of the mount)
        q = q * np.sign(np.diag(r))
        worst = max(worst, np.linalg.norm(points @ q.T - centre, axis=1).max())
    # Triangle inequality: no orientation reaches beyond R + e from the dome's centre, and random
    # orientations come within a few mm of it (400 draws cover the sphere to a few degrees).
    reach = params.dome_inner_diameter_mm / 2 - values["clearance_mm"][0]
    assert worst <= reach + 1e-9
    assert worst > reach - 15


def test_worked_example():
    values = outputs(CALC, [rig()])
    # Pythagoras: √(475² + (250 + 117.5)²) = 600.57 mm (plane geometry, float rounding only).
    assert values["swept_radius_mm"][0] == pytest.approx(math.hypot(475, 367.5), rel=1e-12)
    assert values["clearance_mm"][0] == pytest.approx(1250 - math.hypot(475, 367.5), rel=1e-12)
    assert values["verdict"][0] == "clear"


def test_verdicts_by_margin():
    radius = math.hypot(475, 367.5)
    tight = DomeClearanceParams(dome_inner_diameter_mm=2 * (radius + 20))
    hit = DomeClearanceParams(dome_inner_diameter_mm=2 * (radius - 20))
    assert outputs(CALC, [rig()], tight)["verdict"][0] == "tight"
    assert outputs(CALC, [rig()], hit)["verdict"][0] == "collision possible"


def test_fork_mount_has_no_declination_offset():
    values = outputs(CALC, [rig(mount_type="fork")])
    assert values["swept_radius_mm"][0] == pytest.approx(math.hypot(475, 117.5), rel=1e-12)


def test_missing_tube_size_is_unknown():
    bare = Rig(name="r", telescope=Telescope(aperture_mm=200, focal_length_mm=1000),
               camera=Camera(pixel_size_um=3.8, width_px=100, height_px=100))
    values = outputs(CALC, [bare])
    assert math.isnan(values["clearance_mm"][0])
    assert values["verdict"][0] == "unknown"


# --- property tests --------------------------------------------------------------------------

@given(st.floats(200, 3000), st.floats(60, 600), st.floats(0, 600), st.floats(0, 1))
def test_swept_radius_is_symmetric_in_the_balance_point(length, diameter, offset, balance):
    a = outputs(CALC, [rig(length, diameter)],
                DomeClearanceParams(dec_axis_offset_mm=offset, balance_point_fraction=balance))
    b = outputs(CALC, [rig(length, diameter)],
                DomeClearanceParams(dec_axis_offset_mm=offset, balance_point_fraction=1 - balance))
    np.testing.assert_allclose(a["swept_radius_mm"], b["swept_radius_mm"], rtol=1e-12)


@given(st.floats(200, 3000), st.floats(60, 600), st.floats(0, 2000), st.floats(-2000, 2000))
def test_clearance_falls_one_for_one_with_the_dome_offset(length, diameter, horizontal, vertical):
    centred = outputs(CALC, [rig(length, diameter)])
    offset = outputs(CALC, [rig(length, diameter)],
                     DomeClearanceParams(pier_offset_mm=horizontal, height_offset_mm=vertical))
    np.testing.assert_allclose(centred["clearance_mm"] - offset["clearance_mm"],
                               math.hypot(horizontal, vertical), atol=1e-9)


@given(st.floats(200, 3000), st.floats(60, 600), st.floats(1.001, 2))
def test_longer_tube_sweeps_farther(length, diameter, k):
    short = outputs(CALC, [rig(length, diameter)])
    long = outputs(CALC, [rig(length * k, diameter)])
    assert long["swept_radius_mm"][0] > short["swept_radius_mm"][0]


@pytest.mark.parametrize("check", conformance_checks(DomeClearance), ids=str)
def test_meets_the_conformance_kit(check):
    # plugins/testing.py: the contract and the invariants every calculator shares
    check()


def test_runs_through_compare_with_default_params():
    outcome = demo_outcome("dome_clearance")
    assert any("building codes" in c for c in outcome.cautions)
    assert outcome.outputs["verdict"].values[0] == "clear"
