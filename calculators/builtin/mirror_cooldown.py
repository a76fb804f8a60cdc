"""Mirror cool-down: how long the primary mirror takes to follow the night air, with and without fans.

**Model.** The mirror is a glass plate of thickness ``t`` (the telescope's ``mirror_thickness_mm``)
losing heat from both faces to air at ambient temperature, each face with a conductance
``h = h_conv + h_rad`` [W/m²K]; the edge is neglected (it adds a little area, so the estimate is
slightly slow). ``h_rad = 4·ε·σ·T³`` is the linearised radiation exchange with surroundings at
ambient temperature T (Incropera et al., Fundamentals of Heat and Mass Transfer, 6th ed. 2007,
eq. 1.9, with T_s ≈ T_sur). ``h_conv`` is a param for still air and for air moved by fans: roughly
4 W/m²K for natural convection and 15 W/m²K with a fan are **common practice** figures, uncertain by
a factor of about two, and so is every time below. Radiation to a clear sky (colder than the air)
through the tube's opening is neglected.

* Lumped capacitance (Incropera §5.2), valid while the Biot number ``Bi = h·L/k < 0.1``, with
  ``L = t/2`` the half thickness: ``τ = ρ·c·L / h = ρ·c·t / (2h)`` — the time for the mirror's excess
  temperature to fall by a factor e. This is ``time_constant_minutes`` (still air) and
  ``time_constant_fan_minutes``.
* Settling time, for the mirror's mid-plane (its warmest layer) to come from ``ΔT₀`` to within
  ``ΔT_tol`` of the air: the one-term solution of the plane wall with convection (Incropera §5.5.2),
  ``θ/θ₀ = C₁·exp(−ζ₁²·Fo)`` with ``ζ₁·tan ζ₁ = Bi``, ``C₁ = 4 sin ζ₁ / (2ζ₁ + sin 2ζ₁)`` and
  ``Fo = α·t_time / L²``, ``α = k/(ρc)``: ``t = L² / (α ζ₁²) · ln(C₁·ΔT₀/ΔT_tol)``. For small Bi it
  equals ``τ·ln(ΔT₀/ΔT_tol)``; unlike the lumped model it stays right when fans push Bi above 0.1
  (it is accurate once Fo > 0.2, i.e. for any settling worth waiting for).
* Lag behind air that cools steadily at ``r`` K/h: the quasi-steady solution of the heat equation
  in the plate, ``ρc·∂T/∂t = k·∂²T/∂x²`` with every point falling at ``r`` and a convective surface,
  is a parabola whose mid-plane stays ``ΔT_lag = r·ρ·c·L·(1/h + L/(2k)) = r·τ·(1 + Bi/2)`` above the
  air (derived here; the lumped model gives ``r·τ``).

**Glass properties** (ρ kg/m³, c J/kgK, k W/mK), near room temperature, from memory of Incropera
et al., Table A.3 (borosilicate glass; plate glass: soda-lime; fused silica: "quartz, fused");
the glass-ceramic figures are typical of zero-expansion glass-ceramics (from memory). They differ by
less than the uncertainty of ``h``.

Example: a 25 mm borosilicate mirror at 10 °C: h ≈ 4 + 4.6 W/m²K in still air, τ ≈ 45 min; with fans
(h ≈ 19.6) τ ≈ 20 min. From 10 K warmer to within 1 K: about 1.8 h in still air, 0.8 h with fans.
"""

from __future__ import annotations

from typing import Literal

import numpy as np
from pydantic import Field

from calculators.base import Calculator, Output
from calculators.batch import RigBatch
from calculators.schemas import Strict

#: Stefan–Boltzmann constant, W m⁻² K⁻⁴ (CODATA 2018, exact from the SI's fixed constants).
STEFAN_BOLTZMANN = 5.670374419e-8

#: (density kg/m³, specific heat J/(kg·K), conductivity W/(m·K)) — from memory, see module docstring.
GLASSES: dict[str, tuple[float, float, float]] = {
    "borosilicate": (2225.0, 835.0, 1.40),
    "plate-glass": (2500.0, 750.0, 1.40),
    "fused-silica": (2220.0, 745.0, 1.38),
    "glass-ceramic": (2530.0, 810.0, 1.46),
}

#: Biot number under which the lumped-capacitance model holds (Incropera §5.2).
LUMPED_BIOT_LIMIT = 0.1


class MirrorCooldownParams(Strict):
    material: Literal["borosilicate", "plate-glass", "fused-silica", "glass-ceramic"] = Field(
        default="borosilicate", description="Mirror glass."
    )
    ambient_c: float = Field(default=10.0, ge=-60, le=50, description="Night air temperature, °C.")
    initial_difference_k: float = Field(
        default=10.0, gt=0, le=60, description="How much warmer than the air the mirror starts."
    )
    tolerance_k: float = Field(
        default=1.0, gt=0, le=20, description="Mirror-to-air difference considered settled (common "
        "practice: about 1 K)."
    )
    ambient_fall_k_per_h: float = Field(
        default=1.0, ge=0, le=20, description="Rate at which the air cools during the night."
    )
    convection_still_w_m2k: float = Field(
        default=4.0, gt=0, le=200, description="Convective conductance per face in still air "
        "(common practice)."
    )
    convection_fan_w_m2k: float = Field(
        default=15.0, gt=0, le=200, description="Convective conductance per face with fans "
        "(common practice)."
    )
    emissivity: float = Field(default=0.9, ge=0, le=1, description="Thermal emissivity of glass "
                              "(about 0.9, from memory).")


def radiative_conductance_w_m2k(emissivity: float, temperature_k: float) -> float:
    """Linearised radiation conductance 4·ε·σ·T³ (Incropera eq. 1.9 with T_s ≈ T_sur), W/m²K."""
    return 4.0 * emissivity * STEFAN_BOLTZMANN * temperature_k**3


def plane_wall_first_root(biot):
    """ζ₁ in (0, π/2) solving ζ·tan ζ = Bi, elementwise (bisection on ζ·sin ζ − Bi·cos ζ, which is
    increasing there). NaN stays NaN."""
    biot = np.asarray(biot, dtype=float)
    lo = np.zeros_like(biot)
    hi = np.full_like(biot, np.pi / 2)
    for _ in range(60):  # halves the bracket to below 1e-17 rad: float precision
        mid = 0.5 * (lo + hi)
        high = mid * np.sin(mid) - biot * np.cos(mid) > 0
        hi = np.where(high, mid, hi)
        lo = np.where(high, lo, mid)
    return np.where(np.isnan(biot), np.nan, 0.5 * (lo + hi))


def plane_wall_first_coefficient(zeta):
    """C₁ = 4 sin ζ₁ / (2ζ₁ + sin 2ζ₁) of the one-term plane-wall solution (Incropera §5.5.1)."""
    return 4.0 * np.sin(zeta) / (2.0 * zeta + np.sin(2.0 * zeta))


def cooling(thickness_mm, h, rho, c, k, initial_k, tolerance_k, fall_k_per_h) -> dict[str, np.ndarray]:
    """Time constant, Biot number, settling time and lag for one face conductance ``h``."""
    half = np.asarray(thickness_mm) * 1e-3 / 2.0
    tau_s = rho * c * half / h
    biot = h * half / k
    zeta = plane_wall_first_root(biot)
    slowest_mode_s = half**2 * rho * c / (k * zeta**2)
    with np.errstate(invalid="ignore"):
        ratio = plane_wall_first_coefficient(zeta) * initial_k / tolerance_k
        settle_s = np.where(ratio > 1.0, slowest_mode_s * np.log(np.maximum(ratio, 1.0)), 0.0)
    settle_s = np.where(np.isnan(half), np.nan, settle_s)
    lag_k = fall_k_per_h / 3600.0 * tau_s * (1.0 + biot / 2.0)
    return {"tau_minutes": tau_s / 60.0, "biot": biot, "settle_minutes": settle_s / 60.0, "lag_k": lag_k}


class MirrorCooldown(Calculator):
    name = "mirror_cooldown"
    version = "1.1.0"
    summary = "Primary mirror's thermal time constant, settling time and lag behind cooling air, with and without fans."
    Params = MirrorCooldownParams
    outputs = (
        Output("time_constant_minutes", "min", "Lumped time constant ρct/(2h) in still air.", nullable=True,
               label="Cooling time constant"),
        Output("time_constant_fan_minutes", "min", "Lumped time constant with fans.", nullable=True,
               label="Cooling time constant, fans"),
        Output("settle_time_minutes", "min", "Time for the mirror's mid-plane to come within the "
               "tolerance of the air, still air.", nullable=True, label="Settling time"),
        Output("settle_time_fan_minutes", "min", "The same with fans.", nullable=True,
               label="Settling time, fans"),
        Output("lag_k", "K", "Steady lag of the mid-plane behind air cooling at the given rate, still "
               "air.", nullable=True, label="Mirror lag"),
        Output("lag_fan_k", "K", "The same with fans.", nullable=True, label="Mirror lag, fans"),
        Output("biot_number", "", "h·(t/2)/k in still air; the lumped model needs < 0.1.", nullable=True,
               label="Biot number"),
        Output("biot_number_fan", "", "The same with fans.", nullable=True, label="Biot number, fans"),
        Output("model_note", "", "'lumped model holds', 'fans: Bi ≥ 0.1, lumped time constant is "
               "optimistic', 'Bi ≥ 0.1 …' or 'unknown (mirror thickness not stated)'.", kind="text",
               label="Cooling model"),
    )
    # Renamed in 1.1.0; the old names are still accepted in evaluations for one release.
    renamed_outputs = {
        "time_constant_min": "time_constant_minutes",
        "time_constant_fan_min": "time_constant_fan_minutes",
        "settle_time_min": "settle_time_minutes",
        "settle_time_fan_min": "settle_time_fan_minutes",
    }
    sources = (
        "Incropera, F. P., DeWitt, D. P., Bergman, T. L. & Lavine, A. S., Fundamentals of Heat and Mass "
        "Transfer, 6th ed., Wiley 2007: §5.2 lumped capacitance, §5.5 plane wall one-term solution, "
        "eq. 1.9 radiation coefficient, Table A.3 glass properties (values from memory).",
        "Convective conductances of still and fan-driven air (≈ 4 and 15 W/m²K): common practice, "
        "uncertain by about a factor of two.",
    )
    cautions = (
        "Times are estimates good to about a factor of two: the air-to-glass conductance depends on "
        "the tube, the wind and the fan, and is not known better than that.",
    )

    def compute(self, batch: RigBatch, params: MirrorCooldownParams) -> dict[str, np.ndarray]:
        rho, c, k = GLASSES[params.material]
        h_rad = radiative_conductance_w_m2k(params.emissivity, params.ambient_c + 273.15)
        thickness = batch["mirror_thickness_mm"]
        common = (rho, c, k, params.initial_difference_k, params.tolerance_k, params.ambient_fall_k_per_h)
        still = cooling(thickness, params.convection_still_w_m2k + h_rad, *common)
        fan = cooling(thickness, params.convection_fan_w_m2k + h_rad, *common)
        with np.errstate(invalid="ignore"):
            note = np.where(
                np.isnan(thickness), "unknown (mirror thickness not stated)",
                np.where(still["biot"] >= LUMPED_BIOT_LIMIT,
                         "Bi ≥ 0.1 even in still air: lumped time constants are optimistic",
                         np.where(fan["biot"] >= LUMPED_BIOT_LIMIT,
                                  "fans: Bi ≥ 0.1, lumped time constant is optimistic",
                                  "lumped model holds")),
            )
        return {
            "time_constant_minutes": still["tau_minutes"],
            "time_constant_fan_minutes": fan["tau_minutes"],
            "settle_time_minutes": still["settle_minutes"],
            "settle_time_fan_minutes": fan["settle_minutes"],
            "lag_k": still["lag_k"],
            "lag_fan_k": fan["lag_k"],
            "biot_number": still["biot"],
            "biot_number_fan": fan["biot"],
            "model_note": note,
        }
