"""Tests of calculators/builtin/mirror_cooldown.py, checked against a finite-difference heat equation."""

import math

import astropy.constants as const
import numpy as np
import pytest
from example_rigs import demo_outcome, outputs
from hypothesis import given
from hypothesis import strategies as st

from calculators.builtin.mirror_cooldown import (
    GLASSES,
    STEFAN_BOLTZMANN,
    MirrorCooldown,
    MirrorCooldownParams,
    plane_wall_first_coefficient,
    plane_wall_first_root,
    radiative_conductance_w_m2k,
)
from calculators.schemas import Camera, Rig, Telescope
from plugins.testing import conformance_checks

CALC = MirrorCooldown()


def rig(thickness_mm) -> Rig:
    return Rig(
        name="r",
        telescope=Telescope(design="newtonian", aperture_mm=250, focal_length_mm=1200, obstruction_mm=60,
                            mirror_thickness_mm=thickness_mm),
        camera=Camera(pixel_size_um=3.8, width_px=100, height_px=100),
    )


def convective_only(h_still, h_fan=30.0, **extra) -> MirrorCooldownParams:
    """Params with radiation switched off, so that the face conductance is exactly ``h_still``."""
    return MirrorCooldownParams(convection_still_w_m2k=h_still, convection_fan_w_m2k=h_fan,
                                emissivity=0.0, **extra)


def slab(thickness_mm, h, material="borosilicate", nodes=20):
    """Explicit finite differences for the half plate [0, L]: symmetry at the mid-plane, convection
    −k∂T/∂x = h(T − T_air) at the face (Incropera §5.10, ghost-node form). Returns a stepper."""
    rho, c, k = GLASSES[material]
    alpha = k / (rho * c)
    half = thickness_mm * 1e-3 / 2
    dx = half / nodes
    dt = 0.4 * dx**2 / alpha / (1 + h * dx / k)  # inside the explicit scheme's stability limit

    def step(temps, air):
        padded = np.concatenate([[temps[1]], temps, [temps[-2] - 2 * dx * h / k * (temps[-1] - air)]])
        return temps + alpha * dt / dx**2 * (padded[2:] - 2 * padded[1:-1] + padded[:-2])

    return step, dt


def settle_by_finite_differences(thickness_mm, h, initial_k, tolerance_k):
    step, dt = slab(thickness_mm, h)
    temps, time = np.full(21, initial_k), 0.0
    while temps[0] > tolerance_k:
        temps, time = step(temps, 0.0), time + dt
    return time / 60


def lag_by_finite_differences(thickness_mm, h, fall_k_per_h, hours):
    step, dt = slab(thickness_mm, h)
    rate = fall_k_per_h / 3600
    temps, time = np.zeros(21), 0.0
    while time < hours * 3600:
        time += dt
        temps = step(temps, -rate * time)
    return temps[0] + rate * time


# --- reference tests -------------------------------------------------------------------------

def test_stefan_boltzmann_constant_matches_astropy():
    # astropy.constants (CODATA 2018): σ = 5.670374419…e-8 W m⁻² K⁻⁴; our 10-figure value is the
    # rounded one, so they agree to 1e-10 (abs=0: approx's default absolute slack would hide σ).
    assert STEFAN_BOLTZMANN == pytest.approx(const.sigma_sb.si.value, rel=1e-10, abs=0)


def test_radiative_conductance_near_room_temperature():
    # Incropera eq. 1.9 linearised: 4εσT³ at 300 K and ε = 1 is 6.12 W/m²K (σ from astropy).
    expected = 4 * const.sigma_sb.si.value * 300**3
    assert radiative_conductance_w_m2k(1.0, 300.0) == pytest.approx(expected, rel=1e-10)
    assert expected == pytest.approx(6.12, abs=0.005)


@pytest.mark.parametrize("biot, zeta, coefficient", [(0.1, 0.3111, 1.0161), (1.0, 0.8603, 1.1191)])
def test_plane_wall_one_term_constants(biot, zeta, coefficient):
    # Incropera et al., Table 5.1 (plane wall), values from memory, tabulated to 4 decimals.
    root = plane_wall_first_root(biot)
    assert root == pytest.approx(zeta, abs=5e-5)
    assert plane_wall_first_coefficient(root) == pytest.approx(coefficient, abs=5e-5)


def test_lumped_time_constant_is_rho_c_t_over_2h():
    values = outputs(CALC, [rig(25.0)], convective_only(8.0))
    # Incropera §5.2: τ = ρcV/(hA) with V/A = t/2 for a plate losing heat from both faces.
    rho, c, _ = GLASSES["borosilicate"]
    assert values["time_constant_minutes"][0] == pytest.approx(rho * c * 0.0125 / 8.0 / 60, rel=1e-12)


@pytest.mark.parametrize("thickness_mm, h", [(25.0, 8.0), (25.0, 25.0), (60.0, 40.0)])
def test_settling_time_matches_the_heat_equation(thickness_mm, h):
    values = outputs(CALC, [rig(thickness_mm)], convective_only(h, initial_difference_k=10, tolerance_k=1))
    # Finite-difference solution of the heat equation (Incropera §5.10) with 20 cells across the
    # half plate: its discretisation error is about (1/20)² ≈ 0.3 %, hence 1 %. The last case has
    # Bi ≈ 0.86, where the lumped model would be 30 % off.
    expected = settle_by_finite_differences(thickness_mm, h, 10.0, 1.0)
    assert values["settle_time_minutes"][0] == pytest.approx(expected, rel=0.01)


@pytest.mark.parametrize("thickness_mm, h", [(25.0, 8.0), (60.0, 40.0)])
def test_lag_behind_falling_air_matches_the_heat_equation(thickness_mm, h):
    params = convective_only(h, ambient_fall_k_per_h=2.0)
    values = outputs(CALC, [rig(thickness_mm)], params)
    # Finite differences as above, run for 12 time constants so the start-up has died away.
    hours = 12 * values["time_constant_minutes"][0] / 60
    expected = lag_by_finite_differences(thickness_mm, h, 2.0, hours)
    assert values["lag_k"][0] == pytest.approx(expected, rel=0.01)


def test_missing_thickness_gives_nulls():
    values = outputs(CALC, [Rig(name="r", telescope=Telescope(aperture_mm=100, focal_length_mm=600),
                                camera=Camera(pixel_size_um=3.8, width_px=10, height_px=10))])
    assert math.isnan(values["time_constant_minutes"][0])
    assert math.isnan(values["settle_time_fan_minutes"][0])
    assert values["model_note"][0] == "unknown (mirror thickness not stated)"


# --- property tests --------------------------------------------------------------------------

@given(st.floats(5, 100), st.floats(1.01, 4))
def test_time_constant_is_proportional_to_thickness(thickness, k):
    thin = outputs(CALC, [rig(thickness)])
    thick = outputs(CALC, [rig(thickness * k)])
    np.testing.assert_allclose(thick["time_constant_minutes"], thin["time_constant_minutes"] * k, rtol=1e-12)


@given(st.floats(5, 100), st.floats(1, 10), st.floats(10.5, 100))
def test_fans_cool_faster_and_lag_less(thickness, still, fan):
    values = outputs(CALC, [rig(thickness)], MirrorCooldownParams(convection_still_w_m2k=still,
                                                                  convection_fan_w_m2k=fan))
    assert values["time_constant_fan_minutes"][0] < values["time_constant_minutes"][0]
    assert values["settle_time_fan_minutes"][0] < values["settle_time_minutes"][0]
    assert values["lag_fan_k"][0] < values["lag_k"][0]


@given(st.floats(5, 100), st.floats(0.1, 10))
def test_lag_is_proportional_to_the_cooling_rate(thickness, rate):
    one = outputs(CALC, [rig(thickness)], MirrorCooldownParams(ambient_fall_k_per_h=1.0))
    many = outputs(CALC, [rig(thickness)], MirrorCooldownParams(ambient_fall_k_per_h=rate))
    np.testing.assert_allclose(many["lag_k"], one["lag_k"] * rate, rtol=1e-12)


@given(st.floats(5, 100), st.floats(2, 20))
def test_each_factor_e_of_initial_difference_adds_one_slowest_mode_time(thickness, initial):
    # θ = C₁·exp(−t/τ₁): multiplying the start difference by e adds τ₁ = L²/(αζ₁²) to the settle time,
    # and τ₁ tends to the lumped τ as Bi → 0 (so it lies between τ and τ·(1 + Bi/3 + …)).
    a = outputs(CALC, [rig(thickness)], MirrorCooldownParams(initial_difference_k=initial))
    b = outputs(CALC, [rig(thickness)], MirrorCooldownParams(initial_difference_k=initial * math.e))
    added = b["settle_time_minutes"][0] - a["settle_time_minutes"][0]
    assert a["time_constant_minutes"][0] <= added <= a["time_constant_minutes"][0] * (1 + a["biot_number"][0] / 2)


@pytest.mark.parametrize("check", conformance_checks(MirrorCooldown), ids=str)
def test_meets_the_conformance_kit(check):
    # plugins/testing.py: the contract and the invariants every calculator shares
    check()


def test_runs_through_compare_with_default_params():
    outcome = demo_outcome("mirror_cooldown")
    assert outcome.outputs["time_constant_minutes"].unit == "min"
    assert outcome.outputs["time_constant_minutes"].values[2] is None  # the refractor states no mirror
    assert outcome.outputs["time_constant_minutes"].values[0] > 0
