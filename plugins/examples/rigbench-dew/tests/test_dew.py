"""Tests of rigbench_dew/dew.py against the IAPWS saturation line, CODATA and an energy balance."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from calculators.batch import RigBatch
from calculators.schemas import Camera, Rig, Telescope
from plugins.testing import conformance_checks
from rigbench_dew.dew import (
    STEFAN_BOLTZMANN,
    ZERO_CELSIUS_K,
    Dew,
    DewParams,
    dew_point_c,
    heating_power_w,
)

iapws97 = pytest.importorskip("iapws.iapws97", reason="the reference tests need the test extra: pip install '.[test]'")
constants = pytest.importorskip("astropy.constants", reason="the reference tests need the test extra")
optimize = pytest.importorskip("scipy.optimize", reason="the reference tests need the test extra")

temperatures = st.floats(-40, 50, allow_nan=False)
humidities = st.floats(1, 100, allow_nan=False)
apertures = st.floats(20, 1000, allow_nan=False)


def rig(aperture_mm: float) -> Rig:
    # a generic rig: any aperture at f/5 with a small sensor
    return Rig(
        name=f"{aperture_mm:g} mm f/5",
        telescope=Telescope(aperture_mm=aperture_mm, focal_length_mm=5 * aperture_mm),
        camera=Camera(pixel_size_um=3.8, width_px=3000, height_px=2000),
    )


def reference_dew_point_c(temperature_c: float, relative_humidity_percent: float) -> float:
    """Dew point from the IAPWS-IF97 saturation line (IAPWS R7-97(2012), region 4): the temperature at
    which the air's vapour pressure RH·ps(T) is the saturation pressure."""
    vapour_pressure_mpa = relative_humidity_percent / 100 * iapws97._PSat_T(temperature_c + ZERO_CELSIUS_K)
    return iapws97._TSat_P(vapour_pressure_mpa) - ZERO_CELSIUS_K


# IAPWS-IF97 region 4 starts at the triple point (611.657 Pa, 0.01 °C): only air whose dew point lies
# above it can be checked against it.
TRIPLE_POINT_MPA = 611.657e-6
SATURATION_CASES = [
    (t, rh)
    for t in (1.0, 5.0, 10.0, 15.0, 20.0, 25.0, 30.0, 40.0, 50.0)
    for rh in (10.0, 30.0, 50.0, 70.0, 85.0, 95.0, 100.0)
    if rh / 100 * iapws97._PSat_T(t + ZERO_CELSIUS_K) > TRIPLE_POINT_MPA
]


@pytest.mark.parametrize(("temperature_c", "humidity"), SATURATION_CASES)
def test_dew_point_matches_the_iapws_saturation_line(temperature_c, humidity):
    expected = reference_dew_point_c(temperature_c, humidity)
    # IAPWS-IF97 (IAPWS R7-97(2012)) as implemented by the iapws package. Alduchov & Eskridge (1996)
    # give the Magnus form's error in saturation pressure as below 0.4 % over −40…50 °C (from memory),
    # about 0.06 K of dew point at 0 °C; 0.1 K allows that.
    assert dew_point_c(temperature_c, humidity) == pytest.approx(expected, abs=0.1)


def test_stefan_boltzmann_constant_is_codata():
    # CODATA 2018 as shipped by astropy.constants; exact in the 2019 SI, so compare to float precision
    assert STEFAN_BOLTZMANN == pytest.approx(constants.sigma_sb.si.value, rel=1e-12)


@given(
    temperature=st.floats(-20, 40), humidity=st.floats(40, 100), cooling=st.floats(0.5, 8),
    margin=st.floats(0, 5), emissivity=st.floats(0.5, 1), convection=st.floats(1, 25), aperture=apertures,
)
@settings(max_examples=60, deadline=None)
def test_heating_power_closes_the_energy_balance_at_the_target_temperature(
    temperature, humidity, cooling, margin, emissivity, convection, aperture
):
    params = DewParams(
        ambient_temperature_c=temperature, relative_humidity_percent=humidity, radiative_cooling_c=cooling,
        safety_margin_c=margin, emissivity=emissivity, convection_w_m2k=convection,
    )
    out = Dew().compute(RigBatch.from_rigs([rig(aperture)]), params)
    area = math.pi / 4 * (aperture / 1000) ** 2
    sigma = constants.sigma_sb.si.value
    air, optics = temperature + ZERO_CELSIUS_K, out["optics_temperature_c"] + ZERO_CELSIUS_K
    # The sky temperature that leaves the unheated optic at `optics` (radiation = convection) ...
    sky4 = optics**4 - convection * (air - optics) / (emissivity * sigma)
    assume(sky4 > 0)  # else no physical sky cools the optic that much with this little convection

    def net_gain(surface_k: float) -> float:  # W: heater + convection − radiation to the sky
        return float(out["heating_power_w"][0]) + area * (
            convection * (air - surface_k) - emissivity * sigma * (surface_k**4 - sky4)
        )

    # ... and the surface temperature the heater's power then holds (Stefan-Boltzmann and Newton's law
    # solved numerically, independently of the closed form in the plugin).
    held = optimize.brentq(net_gain, 150.0, 400.0, xtol=1e-10) - ZERO_CELSIUS_K
    target = max(float(out["dew_point_c"]) + margin, float(out["optics_temperature_c"]))
    # the closed form is exact, so only the root finder's tolerance and rounding remain
    assert held == pytest.approx(target, abs=1e-6)


@given(temperature=temperatures, humidity=humidities)
def test_dew_point_never_exceeds_the_air_temperature_and_equals_it_at_saturation(temperature, humidity):
    assert dew_point_c(temperature, humidity) <= temperature + 1e-9
    assert dew_point_c(temperature, 100.0) == pytest.approx(temperature, abs=1e-9)


@given(temperature=temperatures, low=humidities, high=humidities)
def test_dew_point_rises_with_humidity(temperature, low, high):
    low, high = sorted((low, high))
    assert dew_point_c(temperature, low) <= dew_point_c(temperature, high) + 1e-12


@given(aperture=apertures, factor=st.floats(1.1, 4))
def test_heating_power_scales_with_the_aperture_area(aperture, factor):
    out = Dew().compute(RigBatch.from_rigs([rig(aperture), rig(aperture * factor)]), DewParams())
    power = out["heating_power_w"]
    assert power[1] == pytest.approx(power[0] * factor**2, rel=1e-9)


@given(aperture=apertures, temperature=temperatures)
def test_no_heat_is_needed_in_dry_air(aperture, temperature):
    params = DewParams(ambient_temperature_c=temperature, relative_humidity_percent=20, radiative_cooling_c=1)
    out = Dew().compute(RigBatch.from_rigs([rig(aperture)]), params)
    assert not out["dew_risk"]
    assert out["heating_power_w"][0] == 0.0


def test_heating_power_is_zero_when_already_warm_enough():
    assert heating_power_w(1.0, 12.0, 10.0, 0.9, 5.0) == 0.0


@pytest.mark.parametrize("check", conformance_checks(Dew), ids=str)
def test_meets_the_rigbench_calculator_contract(check):
    # rigbench's conformance kit: loads through the registry, computes with default params for any
    # rigs and sweeps, a batch equals its rows, a sweep equals its rows, unit strings equal numbers.
    check()


def test_a_sweep_over_telescopes_gives_exactly_the_comparison_values():
    # The same elementwise formula on the same inputs, one aperture per telescope row.
    rigs = [rig(80), rig(200), rig(406)]
    flat = Dew().compute(RigBatch.from_rigs(rigs), DewParams())["heating_power_w"]
    sweep = Dew().compute(RigBatch.from_components([r.telescope for r in rigs], [rigs[0].camera]), DewParams())
    np.testing.assert_array_equal(np.broadcast_to(sweep["heating_power_w"], (3, 1, 1, 1))[:, 0, 0, 0], flat)
