"""Tests of calculators/builtin/diffraction_spikes.py, checked against a numerical Fraunhofer pattern.

The reference is physics rather than a quoted number: the Fraunhofer far field is the Fourier
transform of the pupil (Hecht, Optics, 5th ed. 2017, ch. 10), computed here with numpy's FFT for a
pupil with n straight vanes, and its spikes are counted on circles around the star.
"""

import math
from functools import cache

import numpy as np
import pytest
from example_rigs import demo_outcome, outputs
from hypothesis import given
from hypothesis import strategies as st

from calculators.builtin.diffraction_spikes import DiffractionSpikes, DiffractionSpikesParams
from calculators.schemas import Camera, Rig, Telescope
from plugins.testing import conformance_checks

CALC = DiffractionSpikes()
GRID = 1024  # FFT size; the pupil's radius is RADIUS pixels, so the far field is well sampled
RADIUS = 160
OBSTRUCTION = 0.3  # obstruction diameter over aperture
VANE_PX = 3.0


@cache
def pupil(vanes: int) -> np.ndarray:
    """Transmission of an annular pupil with ``vanes`` straight radial vanes, the first along +x.
    Edges are anti-aliased (each pixel transmits its uncovered fraction) so that the square grid does
    not add spikes of its own."""
    y, x = np.mgrid[-GRID // 2:GRID // 2, -GRID // 2:GRID // 2] + 0.5
    r = np.hypot(x, y)
    t = np.clip(RADIUS + 0.5 - r, 0, 1) * np.clip(r - OBSTRUCTION * RADIUS + 0.5, 0, 1)
    for k in range(vanes):
        a = 2 * np.pi * k / vanes
        along = x * np.cos(a) + y * np.sin(a)
        across = -x * np.sin(a) + y * np.cos(a)
        t = t * (1 - np.clip(VANE_PX / 2 + 0.5 - np.abs(across), 0, 1) * (along > 0))
    return t


@cache
def far_field(vanes: int) -> np.ndarray:
    """Fraunhofer intensity |FT(pupil)|², star at the centre (Hecht ch. 10)."""
    return np.abs(np.fft.fftshift(np.fft.fft2(pupil(vanes)))) ** 2


def spikes_on_circle(vanes: int, radius: float) -> list[float]:
    """Directions (deg, from +x) of the bright spikes crossing a circle of ``radius`` FFT pixels."""
    intensity = far_field(vanes)
    centre = GRID // 2
    angles = np.radians(np.arange(0, 360, 0.5))
    radii = np.arange(radius - 5, radius + 6)[:, None]
    cols = np.round(centre + radii * np.cos(angles)).astype(int)
    rows = np.round(centre + radii * np.sin(angles)).astype(int)
    profile = intensity[rows, cols].mean(axis=0)
    # An 8° circular running mean merges the fine fringes across each spike (opposite vanes are two
    # collinear strips, which interfere) into one bump; spikes are then runs above a quarter of the peak.
    width = 16
    padded = np.concatenate([profile[-width // 2:], profile, profile[:width // 2 - 1]])
    smooth = np.convolve(padded, np.ones(width) / width, mode="valid")
    hot = smooth > 0.25 * smooth.max()
    if hot.all() or not hot.any():
        return []
    starts = np.flatnonzero(hot & ~np.roll(hot, 1))
    centres = []
    for start in starts:
        run = start + np.arange(np.argmin(np.roll(hot, -start)))
        chosen = angles[run % len(angles)]  # a circular mean, since a run may wrap through 0°
        centres.append(float(np.degrees(np.arctan2(np.sin(chosen).mean(), np.cos(chosen).mean())) % 360))
    return centres


def rig(vanes, design="newtonian", aperture=200.0, obstruction=70.0) -> Rig:
    return Rig(
        name="r",
        telescope=Telescope(design=design, aperture_mm=aperture, focal_length_mm=aperture * 5,
                            obstruction_mm=obstruction, spider_vanes=vanes),
        camera=Camera(pixel_size_um=3.8, width_px=100, height_px=100),
    )


# --- reference tests -------------------------------------------------------------------------

@pytest.mark.parametrize("vanes", [1, 2, 3, 4, 5, 6, 8])
def test_spike_count_matches_numerical_fraunhofer_pattern(vanes):
    expected = outputs(CALC, [rig(vanes)])["spike_count"][0]
    # Hecht ch. 10 (Fraunhofer pattern = Fourier transform of the pupil), computed by FFT; counted on
    # two circles far enough out that the spikes outshine the Airy rings.
    for radius in (180, 250):
        assert len(spikes_on_circle(vanes, radius)) == expected


@pytest.mark.parametrize("vanes", [2, 3, 4, 5])
def test_spike_directions_are_perpendicular_to_the_vanes(vanes):
    values = outputs(CALC, [rig(vanes)])
    spacing, first = values["spike_spacing_deg"][0], values["first_spike_from_vane_deg"][0]
    # Hecht ch. 10: each vane diffracts like a slit, perpendicular to itself. The FFT pattern's spike
    # directions, folded into one spacing, sit at the predicted offset from the first vane (+x); the
    # 0.5° angular sampling and the 8° smoothing bound the error to about 1°.
    for direction in spikes_on_circle(vanes, 250):
        offset = (direction - first + spacing / 2) % spacing - spacing / 2
        assert abs(offset) < 1.0


def test_no_vanes_no_spikes():
    # An annulus has a circularly symmetric pattern (Hecht ch. 10): no spikes.
    assert spikes_on_circle(0, 250) == []
    assert outputs(CALC, [rig(0)])["spike_count"][0] == 0


@pytest.mark.parametrize("vanes", [2, 3, 4, 6])
def test_light_in_the_spikes_is_bounded_by_the_vane_area_fraction(vanes):
    # Parseval's theorem: the energy of the vanes' own pattern equals their blocked area (Hecht
    # ch. 10 with Babinet's principle). Measured: the light the vanes add outside 2.5 Airy radii.
    open_pupil, vaned = pupil(0), pupil(vanes)
    f = np.fft.fftfreq(GRID) * GRID
    outside = np.hypot(*np.meshgrid(f, f)) > 10  # Airy core radius 1.22·GRID/(2·RADIUS) ≈ 3.9 px
    def fraction_outside(p):
        intensity = np.abs(np.fft.fft2(p)) ** 2
        return intensity[outside].sum() / intensity.sum()
    measured = fraction_outside(vaned) - fraction_outside(open_pupil)
    blocked = (open_pupil.sum() - vaned.sum()) / open_pupil.sum()
    # The output is an upper estimate: part of the vanes' pattern falls within the core, so the
    # measured spike light is less than the blocked fraction but of the same size (above half).
    assert 0.5 * blocked < measured < blocked


def test_vane_area_of_a_four_vane_spider():
    values = outputs(CALC, [rig(4)], DiffractionSpikesParams(vane_width_mm=1.0))
    # Plane geometry: four 1 mm vanes spanning (200 − 70)/2 = 65 mm of the beam each: 260 mm².
    assert values["vane_area_mm2"][0] == pytest.approx(260.0, rel=1e-12)
    clear = math.pi / 4 * (200**2 - 70**2)
    assert values["spike_energy_fraction"][0] == pytest.approx(260.0 / clear, rel=1e-12)
    assert values["spike_spacing_deg"][0] == 90
    assert values["first_spike_from_vane_deg"][0] == 0  # four vanes: spikes along the vanes' lines


def test_curved_vanes_spread_into_fans():
    values = outputs(CALC, [rig(3)], DiffractionSpikesParams(vane_shape="curved"))
    assert values["spike_count"][0] == 0
    assert values["pattern"][0] == "fans"
    assert math.isnan(values["spike_spacing_deg"][0])


def test_missing_vane_count():
    rigs = [rig(None), rig(None, design="refractor", obstruction=0), rig(None, design="schmidt-cassegrain")]
    values = outputs(CALC, rigs)
    # A newtonian without a stated spider is unknown; a refractor and a schmidt-cassegrain have none
    # (common practice: no spider where a corrector holds the secondary, or no secondary at all).
    assert math.isnan(values["spike_count"][0])
    assert list(values["pattern"]) == ["unknown", "none", "none"]
    assert list(values["spike_count"][1:]) == [0, 0]


# --- property tests --------------------------------------------------------------------------

@given(st.integers(1, 16))
def test_even_vane_counts_give_n_spikes_and_odd_give_2n(vanes):
    count = outputs(CALC, [rig(vanes)])["spike_count"][0]
    assert count == (vanes if vanes % 2 == 0 else 2 * vanes)
    # either way the spikes are spaced by 180°/n or 360°/n and always come in opposite pairs
    assert count % 2 == 0


@given(st.integers(1, 16), st.floats(0.1, 5), st.floats(50, 600), st.floats(0.0, 0.5))
def test_spike_light_is_proportional_to_vane_count_and_width(vanes, width, aperture, obstruction_ratio):
    one = outputs(CALC, [rig(1, aperture=aperture, obstruction=aperture * obstruction_ratio)],
                  DiffractionSpikesParams(vane_width_mm=width))
    many = outputs(CALC, [rig(vanes, aperture=aperture, obstruction=aperture * obstruction_ratio)],
                   DiffractionSpikesParams(vane_width_mm=2 * width))
    np.testing.assert_allclose(many["spike_energy_fraction"], 2 * vanes * one["spike_energy_fraction"],
                               rtol=1e-12)


@pytest.mark.parametrize("check", conformance_checks(DiffractionSpikes), ids=str)
def test_meets_the_conformance_kit(check):
    # plugins/testing.py: the contract and the invariants every calculator shares
    check()


def test_runs_through_compare_with_default_params():
    outcome = demo_outcome("diffraction_spikes")
    assert outcome.outputs["spike_count"].values == [4, 4, 0]
