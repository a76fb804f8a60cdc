"""Tests of calculators/builtin/coma_field.py: coma-free field of a paraboloid, sensor fit, collimation tolerance."""

import math

import numpy as np
import pytest
from example_rigs import demo_outcome, demo_rigs, outputs
from hypothesis import given
from hypothesis import strategies as st

from calculators.builtin.coma_field import ComaField, ComaFieldParams
from calculators.schemas import Camera, Modifier, Rig, Telescope
from plugins.testing import conformance_checks

CALC = ComaField()


def newtonian(aperture_mm, ratio, modifier=None, design="newtonian", pixel_um=3.8) -> Rig:
    return Rig(
        name="n",
        telescope=Telescope(design=design, aperture_mm=aperture_mm, focal_length_mm=aperture_mm * ratio,
                            obstruction_mm=0.3 * aperture_mm if design != "refractor" else 0),
        camera=Camera(pixel_size_um=pixel_um, width_px=6000, height_px=4000),
        modifier=modifier,
    )


def tilt_removed_rms(w131: float, samples: int = 801) -> float:
    """RMS over a uniformly filled circular pupil of W = W₁₃₁ρ³cos φ after a least-squares fit of
    piston and tilt is subtracted (the reference sphere that makes coma's RMS smallest)."""
    grid = np.linspace(-1, 1, samples)
    x, y = np.meshgrid(grid, grid)
    inside = x**2 + y**2 <= 1
    x, y = x[inside], y[inside]
    w = w131 * (x**2 + y**2) * y
    basis = np.column_stack([np.ones_like(x), x, y])
    coeffs, *_ = np.linalg.lstsq(basis, w, rcond=None)
    residual = w - basis @ coeffs
    return float(np.sqrt(np.mean(residual**2)))


# --- reference tests -------------------------------------------------------------------------

@pytest.mark.parametrize("ratio", [3.0, 4.0, 5.0, 8.0])
def test_airy_criterion_field_edge_has_schroeder_coma_equal_to_airy_diameter(ratio):
    values = outputs(CALC, [newtonian(250, ratio)], ComaFieldParams(criterion="airy", wavelength_nm=550))
    edge_mm = values["diffraction_limited_field_mm"][0] / 2
    # Schroeder, Astronomical Optics 2nd ed. §6.1: linear tangential coma 3y/(16N²) at image height y.
    tangential_coma_mm = 3 * edge_mm / (16 * ratio**2)
    # Born & Wolf §8.5.2: Airy diameter 2.43934·λ·N (constant to 6 figures, hence rel 1e-6).
    assert tangential_coma_mm == pytest.approx(2.43934 * 550e-6 * ratio, rel=1e-6)


@pytest.mark.parametrize("ratio", [3.5, 4.5, 6.0])
def test_marechal_field_edge_has_lambda_over_14_rms_wavefront(ratio):
    values = outputs(CALC, [newtonian(200, ratio)], ComaFieldParams(criterion="marechal", wavelength_nm=550))
    edge_mm = values["diffraction_limited_field_mm"][0] / 2
    # Schroeder §6.1: linear tangential coma at the field edge.
    tangential_coma_mm = 3 * edge_mm / (16 * ratio**2)
    # Transverse ray error ε = −(f/h)·∂W/∂y_n with f/h = 2N (Born & Wolf §5.1): for W = W₁₃₁ρ²y_n
    # the tangential ray at the pupil edge lands 2N·3·W₁₃₁ away — checked numerically here.
    h = 1e-6
    slope = ((1 + h) ** 3 - (1 - h) ** 3) / (2 * h)  # ∂(ρ²y_n)/∂y_n at x_n=0, y_n=1
    w131 = tangential_coma_mm / (2 * ratio * slope)
    # Born & Wolf §9.3, Maréchal: RMS wavefront error λ/14 (Strehl ≈ 0.8). The 801² pupil grid
    # approximates the integral to about 0.1 %, hence the tolerance.
    assert tilt_removed_rms(w131) == pytest.approx(550e-6 / 14, rel=2e-3)


def test_fields_per_cubed_focal_ratio_at_550_nm_match_the_quoted_coefficients():
    marechal = outputs(CALC, [newtonian(200, 1.0)], ComaFieldParams(criterion="marechal"))
    airy = outputs(CALC, [newtonian(200, 1.0)], ComaFieldParams(criterion="airy"))
    # Issue 5 quotes ≈ 0.0213·N³ mm (Maréchal) and ≈ 0.0143·N³ mm (Airy) at 550 nm, to 3 figures.
    assert marechal["diffraction_limited_field_mm"][0] == pytest.approx(0.0213, abs=5e-5)
    assert airy["diffraction_limited_field_mm"][0] == pytest.approx(0.0143, abs=5e-5)


def test_fast_newtonian_needs_a_corrector_and_corrected_one_fits():
    values = outputs(CALC, demo_rigs()[:2])
    # Schroeder's coma with the Maréchal criterion at f/5: 38.79·0.00055·125 ≈ 2.67 mm, far below the
    # 27.4 mm diagonal of a 6000 × 4000 sensor of 3.8 µm pixels (plane geometry).
    diagonal = math.hypot(6000, 4000) * 3.8e-3
    assert values["sensor_diagonal_mm"][0] == pytest.approx(diagonal, rel=1e-12)
    assert values["verdict"][0] == "corrector needed"
    assert values["field_to_sensor"][0] < 0.1
    # The corrector states a 44 mm field, larger than the diagonal.
    assert values["verdict"][1] == "sensor fits corrected field"
    assert values["field_to_sensor"][1] == pytest.approx(44 / diagonal)
    assert math.isnan(values["diffraction_limited_field_mm"][1])
    # Collimation still matters with a corrector (a tilted primary's coma is not corrected).
    assert values["collimation_tolerance_mm"][1] == pytest.approx(values["collimation_tolerance_mm"][0])


def test_refractor_and_corrected_designs_are_not_applicable():
    rigs = [newtonian(80, 6, design="refractor"), newtonian(200, 10, design="schmidt-cassegrain")]
    values = outputs(CALC, rigs)
    assert list(values["verdict"]) == ["not applicable", "not applicable"]
    assert np.isnan(values["diffraction_limited_field_mm"]).all()
    assert np.isnan(values["collimation_tolerance_mm"]).all()


def test_stated_corrected_field_too_small_is_reported():
    flattener = Modifier(kind="flattener", factor=1.0, corrected_field_mm=20)
    values = outputs(CALC, [newtonian(80, 6, design="refractor", modifier=flattener)])
    assert values["verdict"][0] == "sensor exceeds corrected field"


def test_corrector_without_stated_field():
    values = outputs(CALC, [newtonian(200, 4, modifier=Modifier(kind="corrector", factor=1.0))])
    assert values["verdict"][0] == "corrected (field not stated)"
    assert math.isnan(values["field_to_sensor"][0])


# --- property tests --------------------------------------------------------------------------

@given(st.floats(50, 600), st.floats(2, 12), st.floats(1.01, 3))
def test_coma_free_field_grows_as_cube_of_focal_ratio(aperture, ratio, k):
    slow = outputs(CALC, [newtonian(aperture, ratio * k)])
    fast = outputs(CALC, [newtonian(aperture, ratio)])
    np.testing.assert_allclose(slow["diffraction_limited_field_mm"],
                               fast["diffraction_limited_field_mm"] * k**3, rtol=1e-12)


@given(st.floats(50, 600), st.floats(2, 12), st.floats(0.2, 5))
def test_coma_free_field_is_independent_of_aperture_at_fixed_focal_ratio(aperture, ratio, k):
    a = outputs(CALC, [newtonian(aperture, ratio)])
    b = outputs(CALC, [newtonian(aperture * k, ratio)])
    np.testing.assert_allclose(a["diffraction_limited_field_mm"], b["diffraction_limited_field_mm"],
                               rtol=1e-12)


@given(st.floats(50, 600), st.floats(2, 12), st.floats(300, 1000), st.sampled_from(["marechal", "airy"]))
def test_collimation_tolerance_is_half_the_field_and_proportional_to_wavelength(
    aperture, ratio, wavelength, criterion
):
    params = ComaFieldParams(wavelength_nm=wavelength, criterion=criterion)
    values = outputs(CALC, [newtonian(aperture, ratio)], params)
    np.testing.assert_allclose(values["collimation_tolerance_mm"],
                               values["diffraction_limited_field_mm"] / 2, rtol=1e-12)
    double = outputs(CALC, [newtonian(aperture, ratio)],
                     ComaFieldParams(wavelength_nm=wavelength * 2, criterion=criterion))
    np.testing.assert_allclose(double["diffraction_limited_field_mm"],
                               values["diffraction_limited_field_mm"] * 2, rtol=1e-12)


@given(st.floats(50, 600), st.floats(2, 12), st.floats(1.5, 10))
def test_verdict_says_corrector_needed_exactly_when_field_is_smaller_than_diagonal(aperture, ratio, pixel):
    values = outputs(CALC, [newtonian(aperture, ratio, pixel_um=pixel)])
    smaller = values["diffraction_limited_field_mm"][0] < values["sensor_diagonal_mm"][0]
    assert (values["verdict"][0] == "corrector needed") == smaller


@given(st.floats(50, 600), st.floats(2, 12))
def test_barlow_scales_linear_field_but_not_angular_field(aperture, ratio):
    bare = outputs(CALC, [newtonian(aperture, ratio)])
    barlowed = outputs(CALC, [newtonian(aperture, ratio, modifier=Modifier(kind="barlow", factor=2))])
    np.testing.assert_allclose(barlowed["diffraction_limited_field_mm"],
                               2 * bare["diffraction_limited_field_mm"], rtol=1e-12)
    np.testing.assert_allclose(barlowed["diffraction_limited_field_arcmin"],
                               bare["diffraction_limited_field_arcmin"], rtol=1e-12)


@pytest.mark.parametrize("check", conformance_checks(ComaField), ids=str)
def test_meets_the_conformance_kit(check):
    # plugins/testing.py: the contract and the invariants every calculator shares
    check()


def test_runs_through_compare_with_default_params():
    outcome = demo_outcome("coma_field")
    assert outcome.outputs["verdict"].values[2] == "not applicable"
    assert outcome.outputs["diffraction_limited_field_mm"].values[2] is None
