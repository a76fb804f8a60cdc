"""Tests of calculators/builtin/etendue.py: field and pixel étendue, field solid angle, étendue ratio."""

from __future__ import annotations

import math

import astropy.units as u
import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from calculators.base import NoParams
from calculators.batch import RigBatch
from calculators.builtin.etendue import DEG2_PER_SR, Etendue, rectangle_solid_angle_sr
from calculators.schemas import Rig
from plugins.testing import compute, conformance_checks, rigs

CALC = Etendue()


def rig(aperture_mm, focal_length_mm, pixel_um=3.8, width_px=6000, height_px=4000,
        obstruction_mm=0.0, factor=None) -> Rig:
    return Rig(
        name="rig",
        telescope={"aperture_mm": aperture_mm, "focal_length_mm": focal_length_mm,
                   "obstruction_mm": obstruction_mm},
        camera={"pixel_size_um": pixel_um, "width_px": width_px, "height_px": height_px},
        modifier=None if factor is None else {"kind": "reducer", "factor": factor},
    )


def outputs(*rig_list, baseline=0):
    return compute(CALC, RigBatch.from_rigs(list(rig_list), baseline=baseline), NoParams())


# --- properties ----------------------------------------------------------------------------------

@given(rigs(obstructed=False))
@settings(deadline=None)
def test_etendue_is_conserved_aperture_area_times_sky_angle_equals_detector_area_times_beam_angle(r):
    # Welford & Winston (1989) ch. 2: A_aperture·Ω_sky = A_detector·Ω_beam, in the small-angle
    # (paraxial) limit where Ω_beam = π/4·(D/f)² and the sensor is small beside f.
    f = r.telescope.focal_length_mm * (r.modifier.factor if r.modifier else 1)
    width = r.camera.width_px * r.camera.pixel_size_um * 1e-3
    height = r.camera.height_px * r.camera.pixel_size_um * 1e-3
    half_diagonal_over_f = math.hypot(width, height) / (2 * f)
    small = half_diagonal_over_f < 0.02
    detector_area_mm2 = width * height
    beam_sr = math.pi / 4 * (r.telescope.aperture_mm / f) ** 2
    expected_m2_deg2 = detector_area_mm2 * 1e-6 * beam_sr * DEG2_PER_SR
    etendue = outputs(r)["etendue_m2_deg2"][0]
    # The exact field solid angle differs from w·h/f² by a relative O((d/2f)²) < 4e-4 here.
    tolerance = 1.5 * half_diagonal_over_f**2 + 1e-13
    if small:
        assert etendue == pytest.approx(expected_m2_deg2, rel=tolerance)
    else:  # wide fields: the exact solid angle is always below the paraxial w·h/f²
        assert etendue <= expected_m2_deg2 * (1 + 1e-13)


@pytest.mark.parametrize("check", conformance_checks(Etendue), ids=str)
def test_meets_the_conformance_kit(check):
    # plugins/testing.py: the contract and the invariants every calculator shares
    check()


@given(rigs(), st.floats(0.2, 5))
@settings(deadline=None)
def test_field_etendue_depends_on_the_beam_not_the_scale(r, k):
    # Scaling aperture, obstruction, focal length and sensor together leaves the sky angle and
    # multiplies the area by k²: the étendue grows as k² (area) at a fixed field.
    t, c = r.telescope, r.camera
    assume(1.5 <= c.pixel_size_um * k <= 100)  # a pixel the schema accepts
    plain = rig(t.aperture_mm, t.focal_length_mm, c.pixel_size_um, c.width_px, c.height_px,
                t.obstruction_mm)
    scaled = rig(t.aperture_mm * k, t.focal_length_mm * k, c.pixel_size_um * k, c.width_px,
                 c.height_px, t.obstruction_mm * k)
    out = outputs(plain, scaled)
    assert out["field_solid_angle_deg2"][1] == pytest.approx(out["field_solid_angle_deg2"][0], rel=1e-12)
    assert out["etendue_ratio"][1] == pytest.approx(k * k, rel=1e-12)


@given(rigs())
@settings(deadline=None)
def test_pixel_etendue_times_pixel_count_approaches_field_etendue_for_small_fields(r):
    f = r.telescope.focal_length_mm * (r.modifier.factor if r.modifier else 1)
    half_w = r.camera.width_px * r.camera.pixel_size_um * 1e-3 / (2 * f)
    half_h = r.camera.height_px * r.camera.pixel_size_um * 1e-3 / (2 * f)
    out = outputs(r)
    summed = out["pixel_etendue_m2_arcsec2"][0] / 3600**2 * r.camera.width_px * r.camera.height_px
    field = out["etendue_m2_deg2"][0]
    # Adding pixel angles is the paraxial w·h/f², never below the exact field; they agree to a
    # relative (a² + b²)/2 + O(a⁴), a and b the half-sizes over f.
    assert summed >= field * (1 - 1e-12)
    if half_w**2 + half_h**2 < 0.01:
        assert summed == pytest.approx(field, rel=half_w**2 + half_h**2 + 1e-12)


# --- references ----------------------------------------------------------------------------------

def test_a_cube_face_seen_from_the_centre_subtends_a_sixth_of_the_sphere():
    # Solid geometry: the six faces of a cube tile the sphere around its centre, so each subtends
    # 4π/6 sr. A 20 × 20 mm sensor at f = 10 mm is such a face. Converted to deg² with astropy.
    r = rig(aperture_mm=5, focal_length_mm=10, pixel_um=10, width_px=2000, height_px=2000)
    expected = (4 * math.pi / 6 * u.sr).to(u.deg**2).value
    # 1e-13 relative: one arcsin and a few products (the result is exact in real arithmetic).
    assert outputs(r)["field_solid_angle_deg2"][0] == pytest.approx(expected, rel=1e-13)


@pytest.mark.parametrize(("width", "height", "distance"), [(36.0, 24.0, 50.0), (23.5, 15.6, 14.0),
                                                             (4.8, 3.6, 400.0)])
def test_rectangle_solid_angle_matches_numerical_integration(width, height, distance):
    # Definition of solid angle (ISO 80000-3): dΩ = cos θ·dA / r² = L·dA / (x² + y² + L²)^(3/2),
    # integrated over the rectangle with the midpoint rule on a 2000 × 2000 grid.
    n = 2000
    x = (np.arange(n) + 0.5) / n * width - width / 2
    y = (np.arange(n) + 0.5) / n * height - height / 2
    xx, yy = np.meshgrid(x, y, sparse=True)
    integral = (distance / (xx**2 + yy**2 + distance**2) ** 1.5).sum() * (width / n) * (height / n)
    # The midpoint rule's error is O(h²·Ω''), below 1e-6 relative at this grid.
    assert float(rectangle_solid_angle_sr(width, height, distance)) == pytest.approx(integral, rel=1e-6)


def test_square_degrees_per_steradian_agree_with_astropy():
    # astropy.units as the reference library; 1e-15 relative (both are (180/π)² in floats).
    assert DEG2_PER_SR == pytest.approx((1 * u.sr).to(u.deg**2).value, rel=1e-15)
    # The whole sphere is 4π sr ≈ 41 253 deg².
    assert 4 * math.pi * DEG2_PER_SR == pytest.approx((4 * math.pi * u.sr).to(u.deg**2).value, rel=1e-15)


def test_pixel_etendue_is_area_times_the_pixel_angle_squared():
    # 200 mm with a 70 mm obstruction at 1000 mm, 3.8 µm pixels: the pixel's angle p/f in radians,
    # converted to arcsec by astropy. Small-angle form, exact to ~1e-11 at p/f = 3.8e-6.
    r = rig(200, 1000, obstruction_mm=70)
    area_m2 = math.pi / 4 * (0.2**2 - 0.07**2)
    pixel_arcsec = (3.8e-3 / 1000 * u.rad).to(u.arcsec).value
    assert outputs(r)["pixel_etendue_m2_arcsec2"][0] == pytest.approx(area_m2 * pixel_arcsec**2, rel=1e-12)


def test_a_reducer_raises_the_etendue_of_the_same_sensor():
    # A 0.8× reducer: (1/0.8)² = 1.5625 times the sky in the small-angle limit (small sensor here).
    plain, reduced = rig(200, 2000, width_px=500, height_px=500), rig(200, 2000, width_px=500,
                                                                     height_px=500, factor=0.8)
    assert outputs(plain, reduced)["etendue_ratio"][1] == pytest.approx(1.5625, rel=1e-5)
