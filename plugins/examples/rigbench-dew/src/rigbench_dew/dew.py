"""Dew on the optics: dew point, how far the front optic stays above it, and the heat that keeps it dry.

Formulas (units in the names; temperatures in °C unless marked K):

* **Dew point** by the Magnus form with the coefficients of Alduchov & Eskridge (1996) over water,
  ``a = 17.625``, ``b = 243.04 °C``::

      γ  = ln(RH/100) + a·T/(b + T)
      Td = b·γ / (a − γ)

  valid for −40 °C ≤ T ≤ 50 °C.
* **Optics temperature** ``To = T − ΔTrad``: a surface that sees a clear night sky radiates more than
  it receives and settles below the air temperature. ``ΔTrad`` is a param (default 3 °C, common
  practice: a few degrees under a clear sky, less under cloud or behind a long dew shield).
* **Dew margin** ``To − Td`` in kelvin (a temperature difference, ``dew_margin_k``); dew is a risk when it is below the safety margin (param, default
  2 °C, common practice).
* **Heating power**: the net heat the front optic (area ``A = π/4·D²``, D the aperture) must receive
  to hold it at the target ``Tt = Td + margin`` instead of ``To``. With ``Ts`` the sky's radiant
  temperature, the unheated surface balances radiation against convection from the air,
  ``εσ(To⁴ − Ts⁴) = h(T − To)``; heated by ``q`` per unit area it balances
  ``q + h(T − Tt) = εσ(Tt⁴ − Ts⁴)``. Subtracting removes the unknown sky::

      P = A·[εσ(Tt⁴ − To⁴) + h(Tt − To)]      (temperatures in K; P = 0 when To ≥ Tt)

  Stefan–Boltzmann law with σ = 5.670374419e-8 W m⁻² K⁻⁴ (CODATA 2018); Newton's law of cooling
  with ``h`` a param (default 5 W m⁻² K⁻¹, common practice for still to light air: free convection in
  gases spans about 2–25 W m⁻² K⁻¹, Incropera et al., *Fundamentals of Heat and Mass Transfer*,
  table 1.1 — from memory); emissivity ε of glass in the thermal infrared 0.9 (common practice).

Example: at 10 °C and 85 % relative humidity the dew point is 7.59 °C. With the default 3 °C of
radiative cooling the optics sit at 7.0 °C, 0.59 °C *below* the dew point: dew forms. Holding a
200 mm aperture 2 °C above the dew point (9.59 °C) takes about 0.78 W of net heat at the optic.
"""

from __future__ import annotations

import numpy as np
from pydantic import Field

from calculators.base import Calculator, Output
from calculators.batch import RigBatch
from calculators.schemas import Strict

#: Magnus coefficients over water, Alduchov & Eskridge (1996).
MAGNUS_A = 17.625
MAGNUS_B_C = 243.04
#: Stefan–Boltzmann constant, W m⁻² K⁻⁴ (CODATA 2018, exact in the 2019 SI).
STEFAN_BOLTZMANN = 5.670374419e-8
ZERO_CELSIUS_K = 273.15


class DewParams(Strict):
    ambient_temperature_c: float = Field(
        default=10.0, ge=-40, le=50, description="Air temperature at the site (Magnus form valid −40…50 °C)."
    )
    relative_humidity_percent: float = Field(default=85.0, gt=0, le=100, description="Relative humidity of the air.")
    radiative_cooling_c: float = Field(
        default=3.0, ge=0, le=15,
        description="How far the front optic falls below the air temperature under the sky (common practice: "
        "a few °C under a clear sky).",
    )
    safety_margin_c: float = Field(
        default=2.0, ge=0, le=10, description="Margin above the dew point to keep the optics at (common practice)."
    )
    emissivity: float = Field(default=0.9, gt=0, le=1, description="Thermal-infrared emissivity of the optic's face.")
    convection_w_m2k: float = Field(
        default=5.0, gt=0, le=100, description="Convective heat-transfer coefficient between the air and the optic."
    )


def dew_point_c(temperature_c, relative_humidity_percent):
    """Dew point in °C by the Magnus form (Alduchov & Eskridge 1996), over water."""
    gamma = np.log(np.asarray(relative_humidity_percent) / 100.0) + MAGNUS_A * temperature_c / (
        MAGNUS_B_C + temperature_c
    )
    return MAGNUS_B_C * gamma / (MAGNUS_A - gamma)


def heating_power_w(area_m2, from_c, to_c, emissivity, convection_w_m2k):
    """Net heat in W that holds a surface of ``area_m2`` at ``to_c`` rather than ``from_c`` (0 if not above)."""
    t_from = np.asarray(from_c, dtype=float) + ZERO_CELSIUS_K
    t_to = np.maximum(np.asarray(to_c, dtype=float) + ZERO_CELSIUS_K, t_from)
    per_m2 = emissivity * STEFAN_BOLTZMANN * (t_to**4 - t_from**4) + convection_w_m2k * (t_to - t_from)
    return area_m2 * per_m2


class Dew(Calculator):
    """Dew point at the site, dew margin of the front optic and the net heat that keeps it dry.

    See the module docstring for the formulas, their sources and a worked example.
    """

    name = "dew"
    version = "1.1.0"
    summary = "Dew point, dew margin of the front optic and the net heating power that keeps it dry."
    Params = DewParams
    outputs = (
        Output("dew_point_c", "degC", "Dew point of the air (Magnus form).", label="Dew point"),
        Output("optics_temperature_c", "degC", "Temperature of the unheated front optic under the sky.",
               label="Optics temperature"),
        Output("dew_margin_k", "K", "Optics temperature minus dew point, a difference in kelvin; dew forms "
               "below zero.", label="Dew margin"),
        Output("dew_risk", "", "True when the dew margin is below the safety margin.", kind="boolean",
               label="Dew risk"),
        Output("heating_power_w", "W", "Net heat the front optic needs to stay the safety margin above the "
               "dew point (0 when it already does).", label="Heating power"),
    )
    # Renamed in 1.1.0; the old name is still accepted in evaluations for one release.
    renamed_outputs = {"dew_margin_c": "dew_margin_k"}
    sources = (
        "Alduchov, O. A. & Eskridge, R. E., Improved Magnus form approximation of saturation vapor pressure, "
        "J. Appl. Meteor. 35 (1996) 601-609: a = 17.625, b = 243.04 °C.",
        "Stefan-Boltzmann law, sigma = 5.670374419e-8 W m^-2 K^-4 (CODATA 2018); Newton's law of cooling.",
        "Convective coefficient 5 W m^-2 K^-1, emissivity 0.9, radiative cooling 3 °C and safety margin 2 °C: "
        "common practice (free convection in gases 2-25 W m^-2 K^-1: Incropera et al., Fundamentals of Heat "
        "and Mass Transfer, table 1.1, from memory).",
    )
    cautions = (
        "The heating power is the net heat that must reach the optic; a heater strip also warms the cell, "
        "the tube and the air, so choose one rated several times higher (common practice).",
        "Below 0 °C moisture deposits as frost slightly above the dew point computed over water: keep a "
        "larger margin.",
        "Use heaters and power supplies rated for outdoor, damp use, within their makers' ratings; size the "
        "supply and its fuse for every heater together.",
        "Mains power at a pier or in an observatory needs residual-current (RCD/GFCI) protection, "
        "outdoor-rated equipment and an installation to the local electrical code by a licensed electrician.",
        "A battery feeding heaters for hours runs warm: charge it only with its own charger, away from "
        "anything that burns and never unattended, fuse it close to its terminals, and stop using a swollen "
        "or damaged one (fire risk).",
        "Heater and power cables trip people in the dark: route them off walkways and clear of the mount's swing.",
    )

    def compute(self, batch: RigBatch, params: DewParams) -> dict[str, np.ndarray]:
        dew_point = dew_point_c(params.ambient_temperature_c, params.relative_humidity_percent)
        optics = np.float64(params.ambient_temperature_c - params.radiative_cooling_c)
        margin = optics - dew_point
        area_m2 = np.pi / 4 * np.square(batch["aperture_mm"] / 1000.0)
        return {
            "dew_point_c": dew_point,
            "optics_temperature_c": optics,
            "dew_margin_k": margin,
            "dew_risk": margin < params.safety_margin_c,
            "heating_power_w": heating_power_w(
                area_m2, optics, dew_point + params.safety_margin_c, params.emissivity, params.convection_w_m2k
            ),
        }
