"""Tests of calculators/builtin/payload.py: payload, capacity, wind force, tube inertia, moments on the RA axis."""

from __future__ import annotations

import math

import astropy.constants
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from pydantic import ValidationError

from calculators.batch import RigBatch
from calculators.builtin.payload import (
    ISA_SEA_LEVEL_DENSITY,
    STANDARD_GRAVITY,
    Payload,
    PayloadParams,
    thin_tube_inertia_kg_m2,
)
from calculators.schemas import Rig
from calculators.units import unit_registry
from plugins.testing import compute, conformance_checks, rigs

CALC = Payload()
OUTPUTS = [o.name for o in CALC.outputs]
masses = st.floats(0, 20)


def rig(telescope_kg=8.0, camera_kg=0.8, modifier_kg=None, accessories=(), capacity_kg=20.0,
        length_mm=900.0, diameter_mm=230.0, arm_mm=300.0, counterweight_kg=10.0) -> Rig:
    data = {
        "name": "200 mm f/5 newtonian on a german-equatorial mount",
        "telescope": {"aperture_mm": 200, "focal_length_mm": 1000, "mass_kg": telescope_kg,
                      "length_mm": length_mm, "tube_diameter_mm": diameter_mm},
        "camera": {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000, "mass_kg": camera_kg},
        "accessories": [{"name": f"accessory {i}", "mass_kg": m} for i, m in enumerate(accessories)],
    }
    if modifier_kg is not None:
        data["modifier"] = {"kind": "corrector", "factor": 1.0, "mass_kg": modifier_kg}
    if capacity_kg is not None:
        data["mount"] = {"capacity_kg": capacity_kg}
    if arm_mm is not None:
        data["geometry"] = {"payload_arm_mm": arm_mm, "counterweight_kg": counterweight_kg}
    return Rig.model_validate(data)


def outputs(*rig_list, **params):
    return compute(CALC, RigBatch.from_rigs(list(rig_list)), PayloadParams(**params))


def row(out, i=0):
    return {k: float(v[i]) for k, v in out.items()}


# --- properties ----------------------------------------------------------------------------------

@given(masses.filter(bool), masses, masses, st.lists(st.floats(0, 3), max_size=4))
@settings(deadline=None)
def test_payload_is_additive(telescope_kg, camera_kg, modifier_kg, accessories):
    parts = row(outputs(rig(telescope_kg, camera_kg, modifier_kg, accessories)))
    expected = telescope_kg + camera_kg + modifier_kg + sum(accessories)
    assert parts["payload_kg"] == pytest.approx(expected, rel=1e-14, abs=1e-14)
    # Adding one more part adds exactly its mass.
    more = row(outputs(rig(telescope_kg, camera_kg, modifier_kg, [*accessories, 1.5])))
    assert more["payload_kg"] - parts["payload_kg"] == pytest.approx(1.5, abs=1e-12)


@given(rigs(complete=True))
@settings(deadline=None)
def test_capacity_fraction_and_margin_are_consistent_with_the_payload(r):
    out = row(outputs(r, imaging_fraction=0.6))
    capacity = r.mount.capacity_kg
    assert out["capacity_fraction"] * capacity == pytest.approx(out["payload_kg"], rel=1e-14)
    assert out["imaging_margin_kg"] + out["payload_kg"] == pytest.approx(0.6 * capacity, rel=1e-12)


@given(rigs(complete=True))
@settings(deadline=None)
def test_counterweight_balances_the_payload_moment(r):
    out = row(outputs(r))
    # Moments about the RA axis with the shaft level: W·g·x_w = payload moment.
    g = STANDARD_GRAVITY
    cw_moment = r.geometry.counterweight_kg * g * out["counterweight_arm_mm"] / 1000
    assert cw_moment == pytest.approx(out["payload_moment_nm"], rel=1e-13)


@given(rigs(complete=True))
@settings(deadline=None)
def test_ra_inertia_is_the_parallel_axis_sum(r):
    out = row(outputs(r))
    arm_m = r.geometry.payload_arm_mm / 1000
    cw_arm_m = out["counterweight_arm_mm"] / 1000
    # Parallel-axis theorem with point masses: I = I_tube + m·d² + W·x_w², written out directly.
    expected = out["tube_inertia_kg_m2"] + out["payload_kg"] * arm_m**2 + \
        r.geometry.counterweight_kg * cw_arm_m**2
    assert out["ra_inertia_kg_m2"] == pytest.approx(expected, rel=1e-12)


@given(rigs(complete=True), st.floats(0.5, 20), st.floats(1.01, 3))
@settings(deadline=None)
def test_wind_force_grows_as_the_square_of_the_wind_speed(r, speed, k):
    slow = row(outputs(r, wind_speed_m_s=speed))["wind_force_n"]
    fast = row(outputs(r, wind_speed_m_s=speed * k))["wind_force_n"]
    assert fast / slow == pytest.approx(k * k, rel=1e-12)


@given(rigs())
@settings(deadline=None)
def test_outputs_are_null_exactly_where_an_input_is_missing(r):
    out = row(outputs(r))
    masses_known = all(m is not None for m in (r.telescope.mass_kg, r.camera.mass_kg)) and (
        r.modifier is None or r.modifier.mass_kg is not None)
    assert math.isnan(out["payload_kg"]) == (not masses_known)
    assert math.isnan(out["capacity_fraction"]) == (not masses_known or r.mount is None)
    assert math.isnan(out["wind_force_n"]) == (r.telescope.length_mm is None)
    assert math.isnan(out["payload_moment_nm"]) == (not masses_known or r.geometry is None)


@pytest.mark.parametrize("check", conformance_checks(Payload), ids=str)
def test_meets_the_conformance_kit(check):
    # plugins/testing.py: the contract and the invariants every calculator shares
    check()


# --- references ----------------------------------------------------------------------------------

def test_default_air_density_is_the_isa_sea_level_value():
    # ISO 2533:1975 standard atmosphere at sea level: ρ₀ = 1.225 kg/m³, which follows from its
    # defining p₀ = 101 325 Pa, T₀ = 288.15 K and R = 287.052 87 J/(kg·K) (ideal gas, ρ = p/RT).
    assert PayloadParams().air_density_kg_m3 == ISA_SEA_LEVEL_DENSITY == 1.225
    # ISO tabulates ρ₀ to four significant figures: 1e-4 relative.
    assert 101_325 / (287.05287 * 288.15) == pytest.approx(ISA_SEA_LEVEL_DENSITY, rel=1e-4)


def test_standard_gravity_is_the_cgpm_value():
    # 3rd CGPM (1901): g_n = 9.806 65 m/s², exactly; astropy.constants and pint carry the same value.
    assert STANDARD_GRAVITY == 9.80665
    assert astropy.constants.g0.si.value == STANDARD_GRAVITY
    assert unit_registry().Quantity(1, "standard_gravity").to("m/s^2").magnitude == pytest.approx(
        STANDARD_GRAVITY, rel=1e-15)
    # 10 kg on a 1 m arm: 98.0665 N·m (exact product; 1e-15 relative for one rounding).
    out = row(outputs(rig(telescope_kg=9.2, camera_kg=0.8, arm_mm=1000)))
    assert out["payload_moment_nm"] == pytest.approx(98.0665, rel=1e-15)


def test_wind_force_follows_the_drag_equation_with_the_documented_defaults():
    # Drag equation F = ½·ρ·v²·C_d·A; ρ = 1.225 kg/m³ (ISO 2533), C_d = 1.2 for a long cylinder in
    # cross-flow (Hoerner, Fluid-Dynamic Drag, 1965 — from memory). A 230 mm × 900 mm tube side-on.
    out = row(outputs(rig()))
    expected = 0.5 * 1.225 * 5.0**2 * 1.2 * (0.230 * 0.900)
    assert out["wind_force_n"] == pytest.approx(expected, rel=1e-14)
    # Reynolds number check for the default: v·d/ν with ν ≈ 1.46e-5 m²/s (ISO 2533 sea level,
    # from memory) is about 8e4 — inside the subcritical range where C_d ≈ 1.2 holds.
    assert 1e4 < 5.0 * 0.230 / 1.46e-5 < 2e5


def test_tube_inertia_matches_a_numerical_integration_over_rings():
    # Independent check by integration: a thin tube is a stack of rings; a ring of mass dm and
    # radius r has dm·r²/2 about a diameter (perpendicular-axis theorem), moved to z by the
    # parallel-axis theorem: dI = dm·(r²/2 + z²). Midpoint rule on 10 000 rings: O(h²) ≈ 1e-9.
    mass, diameter_mm, length_mm = 9.5, 235.0, 950.0
    r, n = diameter_mm / 2000, 10_000
    z = ((np.arange(n) + 0.5) / n - 0.5) * length_mm / 1000
    integral = float(np.sum(mass / n * (r**2 / 2 + z**2)))
    assert float(thin_tube_inertia_kg_m2(mass, diameter_mm, length_mm)) == pytest.approx(integral, rel=1e-8)


def test_tube_inertia_reduces_to_a_ring_and_to_a_rod():
    # Textbook limits: a ring about a diameter m·r²/2; a thin rod about its centre m·L²/12.
    assert float(thin_tube_inertia_kg_m2(2.0, 1000.0, 0.0)) == pytest.approx(2.0 * 0.5**2 / 2, rel=1e-15)
    assert float(thin_tube_inertia_kg_m2(2.0, 0.0, 1000.0)) == pytest.approx(2.0 / 12, rel=1e-15)


def test_counterweight_arm_balances_the_payload():
    # Lever rule (Archimedes): 10 kg at 300 mm balances 10 kg at 300 mm, 20 kg at 150 mm.
    out = outputs(rig(telescope_kg=9.2, camera_kg=0.8), rig(telescope_kg=9.2, camera_kg=0.8,
                                                              counterweight_kg=20))
    assert out["counterweight_arm_mm"].tolist() == pytest.approx([300.0, 150.0], rel=1e-14)


def test_half_the_rated_capacity_is_the_default_imaging_limit():
    # Common practice: keep an imaging payload to about half of the mount's rated capacity.
    out = row(outputs(rig(telescope_kg=11.2, camera_kg=0.8, capacity_kg=20)))  # 12 kg on 20 kg
    assert out["capacity_fraction"] == pytest.approx(0.6, rel=1e-14)
    assert out["imaging_margin_kg"] == pytest.approx(-2.0, rel=1e-12)


def test_cautions_cover_lifts_counterweights_wind_and_ratings():
    text = " ".join(CALC.cautions).lower()
    for word in ("lift", "counterweight", "safety stop", "wind", "manufacturer", "local building codes",
                 "qualified professional"):
        assert word in text, word


def test_rigs_without_a_mount_or_geometry_give_nulls_not_errors():
    out = row(outputs(rig(capacity_kg=None, arm_mm=None)))
    assert math.isnan(out["capacity_fraction"]) and math.isnan(out["imaging_margin_kg"])
    assert math.isnan(out["payload_moment_nm"]) and math.isnan(out["ra_inertia_kg_m2"])
    assert not math.isnan(out["payload_kg"]) and not math.isnan(out["tube_inertia_kg_m2"])
    assert all(o.nullable for o in CALC.outputs)


def test_params_are_validated():
    with pytest.raises(ValidationError):
        PayloadParams(wind_speed_m_s=-1)
    with pytest.raises(ValidationError):
        PayloadParams(drag_coefficient=0)
    with pytest.raises(ValidationError, match="Extra inputs"):
        PayloadParams(gusts=True)
