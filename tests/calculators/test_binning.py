"""Tests of calculators/binning.py and of the calculators that honour a rig's binning (sampling,
target_fit, integration_time): properties against the unbinned rig, the noise convention checked
against the variance of a sum of independent draws, and the rig's refusals."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from pydantic import ValidationError

from calculators.batch import RigBatch
from calculators.binning import MAX_BINNING, binned_read_noise_e
from calculators.builtin.integration_time import IntegrationTime, IntegrationTimeParams
from calculators.builtin.sampling import Sampling, SamplingParams
from calculators.builtin.target_fit import TargetFit, TargetFitParams
from calculators.schemas import Rig
from plugins.testing import compute

TELESCOPE = {"aperture_mm": 200, "focal_length_mm": 1000, "obstruction_mm": 70}


def rig(b=1, pixel_um=3.8, width_px=6000, height_px=4000, focal_length_mm=1000, read_noise_e=1.5,
        dark=0.01) -> Rig:
    return Rig(name=f"bin {b}", telescope={**TELESCOPE, "focal_length_mm": focal_length_mm},
               camera={"pixel_size_um": pixel_um, "width_px": width_px, "height_px": height_px,
                       "quantum_efficiency": 0.8, "read_noise_e": read_noise_e,
                       "dark_current_e_per_s": dark},
               binning=b)


def both(calculator, params, b, **kw):
    """Outputs for the unbinned rig (row 0) and the same rig binned b × b (row 1)."""
    return compute(calculator, RigBatch.from_rigs([rig(1, **kw), rig(b, **kw)]), params)


factors = st.integers(1, MAX_BINNING)
pixels = st.floats(1.0, 12.0)
focals = st.floats(200.0, 4000.0)


@given(factors, pixels, focals, st.integers(500, 10_000), st.integers(500, 8000))
@settings(deadline=None, max_examples=60)
def test_sampling_sees_a_pixel_b_times_larger_and_floor_n_over_b_of_them(b, p, f, w, h):
    out = both(Sampling(), SamplingParams(), b, pixel_um=p, focal_length_mm=f, width_px=w, height_px=h)
    assert out["pixel_scale_arcsec"][1] == pytest.approx(b * out["pixel_scale_arcsec"][0], rel=1e-13)
    assert out["pixels_per_fwhm"][1] == pytest.approx(out["pixels_per_fwhm"][0] / b, rel=1e-13)
    assert out["image_width_px"].tolist() == [w, w // b] and out["image_height_px"].tolist() == [h, h // b]
    # The field is an angle on the sky: binning does not change it.
    for key in ("field_width_arcmin", "field_height_arcmin", "field_diagonal_arcmin"):
        assert out[key][1] == out[key][0]


@given(factors, pixels, focals, st.floats(0.5, 6.0))
@settings(deadline=None, max_examples=60)
def test_suggested_binning_is_counted_on_the_sensors_own_pixels_whatever_the_binning(b, p, f, seeing):
    out = both(Sampling(), SamplingParams(seeing_fwhm_arcsec=seeing), b, pixel_um=p, focal_length_mm=f)
    assert out["suggested_binning"][1] == out["suggested_binning"][0]


@given(factors, pixels, focals)
@settings(deadline=None, max_examples=40)
def test_target_fit_counts_binned_pixels_across_the_object(b, p, f):
    out = both(TargetFit(), TargetFitParams(), b, pixel_um=p, focal_length_mm=f)
    assert out["major_axis_px"][1] == pytest.approx(out["major_axis_px"][0] / b, rel=1e-13)
    assert out["fill_fraction"][1] == out["fill_fraction"][0]


@given(factors, pixels, st.floats(0.0, 8.0), st.floats(0.0, 0.5), st.floats(10.0, 1200.0))
@settings(deadline=None, max_examples=60)
def test_binned_pixels_reach_the_snr_in_one_over_b_squared_of_the_time(b, p, read, dark, sub):
    # Every term under the CCD equation's root grows as b² (signal, sky and dark as the area,
    # read noise squared as the b² pixels summed), so T(b) = T(1)/b² exactly.
    params = IntegrationTimeParams(sub_exposure_s=sub)
    out = both(IntegrationTime(), params, b, pixel_um=p, read_noise_e=read, dark=dark)
    assert out["total_time_s"][1] == pytest.approx(out["total_time_s"][0] / b**2, rel=1e-12)
    assert out["snr_per_sub"][1] == pytest.approx(out["snr_per_sub"][0] * b, rel=1e-12)
    for key in ("object_rate_e_s", "sky_rate_e_s", "dark_rate_e_s"):
        assert out[key][1] == pytest.approx(out[key][0] * b**2, rel=1e-12)
    if read > 0:
        assert out["sky_limited_sub_s"][1] == pytest.approx(out["sky_limited_sub_s"][0], rel=1e-12)


def test_the_read_noise_of_b_squared_pixels_summed_is_b_times_one_pixels():
    # Reference: the variance of a sum of independent variables is the sum of their variances
    # (Bienaymé's formula; e.g. Papoulis & Pillai, Probability, Random Variables and Stochastic
    # Processes, 4th ed. 2002, §7.1 — from memory), so b² pixels of read noise R sum to √(b²)·R.
    # Checked by drawing 200,000 sums of b² independent Gaussian read-outs: the standard error of
    # a sample standard deviation is about σ/√(2n) = 0.16 %, so 1 % is over six of them.
    rng = np.random.default_rng(20261202)
    read = 1.7
    for b in range(1, MAX_BINNING + 1):
        sums = rng.normal(0.0, read, size=(200_000, b * b)).sum(axis=1)
        batch = RigBatch.from_rigs([rig(b, read_noise_e=read)])
        assert float(binned_read_noise_e(batch)[0]) == pytest.approx(sums.std(), rel=0.01)


def test_a_worked_example_at_two_by_two():
    # Written down for this test: 3.8 µm pixels at 1000 mm give 206.265 · 3.8 / 1000 = 0.7838″;
    # binned 2 × 2 they are 1.5676″, so 2″ seeing spans 1.276 pixels (under-sampled), and the
    # 6000 × 4000 sensor gives a 3000 × 2000 image. The sensor's own 2.55 pixels per FWHM suggest 1.
    out = compute(Sampling(), RigBatch.from_rigs([rig(2)]), SamplingParams())
    assert out["pixel_scale_arcsec"][0] == pytest.approx(2 * 206.264806 * 3.8 / 1000, rel=1e-8)
    assert out["pixels_per_fwhm"][0] == pytest.approx(2.0 / 1.567613, rel=1e-6)
    assert str(out["sampling_verdict"][0]) == "under-sampled"
    assert (out["image_width_px"][0], out["image_height_px"][0]) == (3000, 2000)
    assert out["suggested_binning"][0] == 1


def test_a_rig_without_binning_is_read_unbinned():
    assert RigBatch.from_rigs([rig()])["binning"].tolist() == [1.0]


@pytest.mark.parametrize("b", [0, MAX_BINNING + 1, 2.5])
def test_a_binning_outside_one_to_four_is_refused_naming_the_field(b):
    with pytest.raises(ValidationError) as caught:
        rig(b)
    assert [e["loc"] for e in caught.value.errors()] == [("binning",)]


def test_a_visual_rig_cannot_be_binned():
    with pytest.raises(ValidationError) as caught:
        Rig(name="eye", telescope=TELESCOPE, train=[{"kind": "eyepiece", "focal_length_mm": 25}], binning=2)
    assert [e["loc"] for e in caught.value.errors()] == [("binning",)]
    assert "no pixels to bin" in str(caught.value)
