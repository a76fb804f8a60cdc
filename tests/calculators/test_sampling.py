"""Tests of calculators/builtin/sampling.py: pixel scale, field of view, pixels per FWHM, verdict, binning."""

from __future__ import annotations

import math

import astropy.units as u
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from pydantic import ValidationError

from calculators.batch import RigBatch
from calculators.builtin.sampling import ARCMIN_PER_RAD, ARCSEC_PER_RAD, Sampling, SamplingParams
from calculators.schemas import Camera, Rig, Telescope
from plugins.testing import compute, conformance_checks, rigs

CALC = Sampling()


def rig(focal_length_mm, pixel_um=3.8, width_px=6000, height_px=4000, aperture_mm=None,
        factor=None) -> Rig:
    return Rig(
        name="rig",
        telescope={"aperture_mm": aperture_mm or focal_length_mm / 5, "focal_length_mm": focal_length_mm},
        camera={"pixel_size_um": pixel_um, "width_px": width_px, "height_px": height_px},
        modifier=None if factor is None else {"kind": "barlow", "factor": factor},
    )


def outputs(*rig_list, **params):
    return compute(CALC, RigBatch.from_rigs(list(rig_list)), SamplingParams(**params))


# --- properties ----------------------------------------------------------------------------------

@given(rigs(), st.floats(0.2, 5))
@settings(deadline=None)
def test_pixel_scale_is_inversely_proportional_to_focal_length(r, k):
    f = r.telescope.focal_length_mm
    out = outputs(rig(f, r.camera.pixel_size_um), rig(f * k, r.camera.pixel_size_um))
    assert out["pixel_scale_arcsec"][1] * k == pytest.approx(out["pixel_scale_arcsec"][0], rel=1e-14)


@given(rigs(), st.floats(0.5, 2.5))
@settings(deadline=None)
def test_a_modifier_scales_the_pixel_scale_by_its_factor(r, factor):
    f = r.telescope.focal_length_mm
    out = outputs(rig(f, r.camera.pixel_size_um), rig(f, r.camera.pixel_size_um, factor=factor))
    assert out["pixel_scale_arcsec"][1] * factor == pytest.approx(out["pixel_scale_arcsec"][0], rel=1e-14)


@given(rigs())
@settings(deadline=None)
def test_diagonal_field_satisfies_the_pythagorean_relation_of_half_angle_tangents(r):
    # tan(diag/2)² = tan(w/2)² + tan(h/2)² exactly, since the half-sizes over f form a right triangle.
    out = outputs(r)
    half = {k: math.tan(out[k][0] / ARCMIN_PER_RAD / 2) for k in
            ("field_width_arcmin", "field_height_arcmin", "field_diagonal_arcmin")}
    assert half["field_diagonal_arcmin"] ** 2 == pytest.approx(
        half["field_width_arcmin"] ** 2 + half["field_height_arcmin"] ** 2, rel=1e-12
    )


@given(rigs())
@settings(deadline=None)
def test_field_is_no_wider_than_pixel_count_times_pixel_scale(r):
    # 2·atan(x) ≤ 2x, equal to first order: for small fields the two agree.
    out = outputs(r)
    scale_arcmin = out["pixel_scale_arcsec"][0] / 60
    paraxial = r.camera.width_px * scale_arcmin
    assert out["field_width_arcmin"][0] <= paraxial * (1 + 1e-12)
    x = paraxial / ARCMIN_PER_RAD / 2  # half-width over f
    if x < 0.05:
        # atan(x) = x(1 − x²/3 + …): relative difference below x²/3 + rounding.
        assert out["field_width_arcmin"][0] == pytest.approx(paraxial, rel=x * x / 3 + 1e-12)


@given(rigs(), st.floats(0.5, 6), st.floats(0.5, 4), st.floats(0, 4))
@settings(deadline=None)
def test_verdict_follows_pixels_per_fwhm_against_the_stated_band(r, seeing, low, width):
    params = {"seeing_fwhm_arcsec": seeing, "min_pixels_per_fwhm": low, "max_pixels_per_fwhm": low + width}
    out = outputs(r, **params)
    ppf = out["pixels_per_fwhm"][0]
    assert ppf == pytest.approx(seeing / out["pixel_scale_arcsec"][0], rel=1e-14)
    expected = ("under-sampled" if ppf < low else "over-sampled" if ppf > low + width else "well-sampled")
    assert out["sampling_verdict"][0] == expected


@given(rigs(), st.floats(0.3, 8), st.integers(1, 8))
@settings(deadline=None)
def test_suggested_binning_is_the_coarsest_that_keeps_the_minimum(r, seeing, max_binning):
    out = outputs(r, seeing_fwhm_arcsec=seeing, max_binning=max_binning)
    ppf, b = out["pixels_per_fwhm"][0], int(out["suggested_binning"][0])
    assert 1 <= b <= max_binning
    if b > 1:
        assert ppf / b >= 2.0  # binned pixels still meet the default minimum of 2 per FWHM
    if b < max_binning:
        assert ppf / (b + 1) < 2.0  # one step coarser would not


@pytest.mark.parametrize("check", conformance_checks(Sampling), ids=str)
def test_meets_the_conformance_kit(check):
    # plugins/testing.py: the contract and the invariants every calculator shares
    check()


def test_verdict_in_a_sweep_keeps_the_shape_of_its_inputs():
    scopes = [Telescope(aperture_mm=100, focal_length_mm=f) for f in (400, 800, 1600)]
    cameras = [Camera(pixel_size_um=p, width_px=1000, height_px=1000) for p in (2.5, 3.8)]
    batch = RigBatch.from_components(scopes, cameras, [None], [None, None])
    out = CALC.compute(batch, SamplingParams())
    # Text outputs are numpy string arrays over only the axes they depend on (not the mount's).
    assert out["sampling_verdict"].shape == (3, 2, 1, 1)
    assert out["sampling_verdict"].dtype.kind == "U"


# --- references ----------------------------------------------------------------------------------

def test_3_8_micron_pixels_at_1200_mm_give_about_0_65_arcsec():
    # Common practice: 3.8 µm pixels at 1200 mm give about 0.65″ per pixel ("about": ±1 %).
    assert outputs(rig(1200, 3.8))["pixel_scale_arcsec"][0] == pytest.approx(0.65, rel=0.01)


@pytest.mark.parametrize(("focal_mm", "pixel_um"), [(1200, 3.8), (1000, 5.0), (480, 3.0), (2800, 9.0)])
def test_pixel_scale_agrees_with_astropy_angle_conversion(focal_mm, pixel_um):
    # p/f radians converted to arcsec by astropy.units (reference library); 1e-14 relative.
    expected = (pixel_um * 1e-3 / focal_mm * u.rad).to(u.arcsec).value
    assert outputs(rig(focal_mm, pixel_um))["pixel_scale_arcsec"][0] == pytest.approx(expected, rel=1e-14)


def test_angle_constants_agree_with_astropy():
    # astropy.units: 1 rad = 206 264.806… arcsec = 3437.747… arcmin; 1e-15 relative.
    assert ARCSEC_PER_RAD == pytest.approx((1 * u.rad).to(u.arcsec).value, rel=1e-15)
    assert ARCMIN_PER_RAD == pytest.approx((1 * u.rad).to(u.arcmin).value, rel=1e-15)


@pytest.mark.parametrize(("focal_mm", "width", "height"), [(50, 36, 24), (400, 23.5, 15.6),
                                                            (2000, 6.4, 4.8)])
def test_field_of_view_equals_the_angle_between_the_rays_to_the_sensor_edges(focal_mm, width, height):
    # Vector geometry, independent of the 2·atan formula: the angle between the rays from the lens
    # centre to opposite edges, arccos(a·b / |a||b|), converted with astropy.units. Arccos near 1
    # loses digits for narrow fields, hence 1e-9 relative.
    def angle(half_size):
        a, b = np.array([-half_size, 0.0, focal_mm]), np.array([half_size, 0.0, focal_mm])
        cos = a @ b / (np.linalg.norm(a) * np.linalg.norm(b))
        return (np.arccos(cos) * u.rad).to(u.arcmin).value

    pixel_um = 4.0
    r = rig(focal_mm, pixel_um, round(width * 1000 / pixel_um), round(height * 1000 / pixel_um))
    w = r.camera.width_px * pixel_um / 1000
    h = r.camera.height_px * pixel_um / 1000
    out = outputs(r)
    assert out["field_width_arcmin"][0] == pytest.approx(angle(w / 2), rel=1e-9)
    assert out["field_height_arcmin"][0] == pytest.approx(angle(h / 2), rel=1e-9)
    assert out["field_diagonal_arcmin"][0] == pytest.approx(angle(math.hypot(w, h) / 2), rel=1e-9)


def test_two_pixels_per_fwhm_is_the_edge_of_well_sampled():
    # Sampling theorem (Nyquist 1928; Shannon 1949): at least two samples per resolution element.
    # 2″ seeing on 1″ pixels is exactly 2 pixels per FWHM: well sampled, bound included.
    f = ARCSEC_PER_RAD * 1e-3 * 5.0 / 1.0  # 5 µm pixels of exactly 1″
    out = outputs(rig(f, 5.0), rig(f, 5.0 * 1.01), rig(f, 5.0 / 1.49))
    assert out["sampling_verdict"].tolist() == ["well-sampled", "under-sampled", "well-sampled"]
    assert outputs(rig(f, 5.0 / 3.2))["sampling_verdict"][0] == "over-sampled"


def test_params_are_validated():
    with pytest.raises(ValidationError, match="must not exceed"):
        SamplingParams(min_pixels_per_fwhm=3, max_pixels_per_fwhm=2)
    with pytest.raises(ValidationError, match="greater than 0"):
        SamplingParams(seeing_fwhm_arcsec=0)
    with pytest.raises(ValidationError, match="Extra inputs"):
        SamplingParams(seeing=2)


def test_colour_sampling_is_twice_the_pixel_scale_for_a_bayer_sensor_and_equal_for_mono():
    # Convention (common practice): a Bayer mosaic samples each colour on 2 × 2 cells.
    import numpy as np

    from calculators.batch import RigBatch
    from calculators.builtin.sampling import Sampling, SamplingParams
    from calculators.schemas import Rig

    rig = Rig(name="r", telescope={"aperture_mm": 200, "focal_length_mm": 1200},
              camera={"pixel_size_um": 3.8, "width_px": 4000, "height_px": 3000})
    plain = RigBatch.from_rigs([rig, rig])
    batch = RigBatch(columns={**plain.columns, "sensor": np.array(["mono", "colour"])}, baseline=(0,))
    out = Sampling().compute(batch, SamplingParams(seeing_fwhm_arcsec=3.0))
    scale = out["pixel_scale_arcsec"]
    assert out["colour_pixel_scale_arcsec"].tolist() == [scale[0], 2 * scale[1]]
    assert out["colour_pixels_per_fwhm"][1] == 3.0 / (2 * scale[1])
    # Without a sensor column (no sensor stated): the pixel scale, as for mono.
    plain_out = Sampling().compute(plain, SamplingParams())
    assert (plain_out["colour_pixel_scale_arcsec"] == plain_out["pixel_scale_arcsec"]).all()


def test_a_visual_rig_has_no_suggested_binning_and_says_why():
    # An eyepiece rig has no pixels: every pixel figure, the suggested binning included, is null
    # (it was 0), with the reason beside it.
    from plugins.compare import compare
    from plugins.null_reasons import NO_CAMERA
    from plugins.registry import load_registry

    visual = Rig(name="by eye", telescope={"aperture_mm": 200, "focal_length_mm": 1200},
                 train=[{"kind": "eyepiece", "focal_length_mm": 25, "apparent_field_deg": 52}])
    result = compare([rig(1200), visual], ["sampling"], registry=load_registry()).results["sampling"]
    for name in ("suggested_binning", "pixel_scale_arcsec", "image_width_px"):
        output = result.outputs[name]
        assert output.values[1] is None and output.values[0] is not None
        assert output.null_reasons == [None, NO_CAMERA]
    assert result.outputs["suggested_binning"].values[0] == 1
