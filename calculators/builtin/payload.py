"""Payload: what the mount carries, how near its rating, the wind's push, and moments about the axes.

Formulas (SI inside; units in the names; lengths arrive in mm and are converted to m):

* ``payload_kg = m_telescope + m_train + m_camera + m_accessories`` (null when a mass is unknown);
* ``capacity_fraction = payload / capacity`` (the mount's rated instrument payload);
* ``imaging_margin_kg = f_img · capacity − payload``, with ``f_img = imaging_fraction`` (default 0.5:
  keeping an imaging payload to about half the rated capacity is common practice, not a standard);
  negative means over that limit;
* ``wind_force_n = ½·ρ·v²·C_d·A`` (drag equation) on the tube's side area ``A = tube_diameter × length``,
  with ρ the ISA sea-level air density 1.225 kg/m³ (ISO 2533:1975), v = ``wind_speed_m_s`` (default 5)
  and C_d = ``drag_coefficient`` (default 1.2, a long circular cylinder in cross-flow at subcritical
  Reynolds numbers, 10⁴–10⁵ — Hoerner, *Fluid-Dynamic Drag*, 1965, ch. 3; value from memory);
* ``tube_inertia_kg_m2 = m·(r²/2 + L²/12)``: the telescope as a thin-walled tube (mass m, radius r =
  tube_diameter/2, length L) about a transverse axis through its centre (standard tables of moments of
  inertia; a ring contributes m·r²/2 about a diameter, and the L²/12 term is a uniform rod's);
* with ``geometry`` (german-equatorial mount, declination shaft level):

  - ``payload_moment_nm = g · payload · arm``, g = 9.80665 m/s² (standard gravity, 3rd CGPM 1901) —
    the moment the counterweights must cancel;
  - ``counterweight_arm_mm = payload · arm / counterweight``, where the counterweight balances;
  - ``ra_inertia_kg_m2 = I_tube + payload·arm² + counterweight·counterweight_arm²`` about the
    right-ascension axis (parallel-axis theorem, masses as points; the tube lying across the axis, the
    largest case).

Every output is null (NaN) where an input it needs is missing.

Counterweights (the convention rigbench uses): a mount's ``capacity_kg`` is its rated *instrument*
payload, what sits on the saddle — the counterweights that balance it are not part of it, and
``payload_kg`` never includes them, however heavy (mount makers usually rate the instrument payload
without the counterweights: common practice, from memory; the maker's own statement of its rating
comes first). The counterweights are part of what a person lifts: each rig's cautions name a
counterweight heavier than a safe single lift (:mod:`calculators.rig_cautions`), and the
counterweight mass enters the moments and the inertia about the right-ascension axis below. A rig's
accessories are in the payload wherever the rig is computed — stored, inline, or as a sweep's
``accessories``, which every combination carries.

Example: an 8 kg tube, 1 kg camera, 1 kg of accessories (10 kg) on a mount rated for 20 kg:
capacity_fraction 0.5 and an imaging margin of 0 kg; at a 300 mm arm with a 10 kg counterweight,
payload_moment_nm = 9.80665 · 10 · 0.3 ≈ 29.4 N·m and the counterweight balances at 300 mm.
"""

from __future__ import annotations

import numpy as np
from pydantic import Field

from calculators.base import Calculator, Output
from calculators.batch import RigBatch
from calculators.schemas import Strict

#: Standard acceleration of gravity, m/s² (3rd CGPM, 1901).
STANDARD_GRAVITY = 9.80665
#: Air density of the ICAO/ISO standard atmosphere at sea level, kg/m³ (ISO 2533:1975).
ISA_SEA_LEVEL_DENSITY = 1.225


class PayloadParams(Strict):
    wind_speed_m_s: float = Field(default=5.0, ge=0, le=60, description="Steady wind speed.")
    drag_coefficient: float = Field(
        default=1.2, gt=0, le=3,
        description="C_d of the tube side-on (1.2: long circular cylinder in cross-flow; "
        "Hoerner 1965).",
    )
    air_density_kg_m3: float = Field(
        default=ISA_SEA_LEVEL_DENSITY, gt=0, le=2,
        description="Air density (1.225: ISA sea level, ISO 2533).",
    )
    imaging_fraction: float = Field(
        default=0.5, gt=0, le=1,
        description="Share of the rated capacity to stay under when imaging (0.5: common practice).",
    )


def payload_kg(batch: RigBatch) -> np.ndarray:
    """Mass the mount carries: telescope + train + camera + accessories, in kg."""
    return (batch["telescope_mass_kg"] + batch["train_mass_kg"]) + (
        batch["camera_mass_kg"] + batch["accessories_mass_kg"]
    )


def thin_tube_inertia_kg_m2(mass_kg, diameter_mm, length_mm) -> np.ndarray:
    """Thin-walled tube about a transverse axis through its centre: m·(r²/2 + L²/12), in kg·m²."""
    radius_m = diameter_mm * 0.5e-3
    length_m = length_mm * 1e-3
    return mass_kg * (0.5 * np.square(radius_m) + np.square(length_m) / 12)


class Payload(Calculator):
    """Payload mass against the mount's rating, wind force on the tube, moments and inertia.

    See the module docstring for the formulas, units and sources.

    >>> from calculators.batch import RigBatch
    >>> from calculators.schemas import Rig
    >>> rig = Rig(name="8 kg tube", telescope={"aperture_mm": 150, "focal_length_mm": 750,
    ...           "mass_kg": 8}, camera={"pixel_size_um": 3.8, "width_px": 6000,
    ...           "height_px": 4000, "mass_kg": 1}, accessories=[{"name": "guider", "mass_kg": 1}],
    ...           mount={"capacity_kg": 20}, geometry={"payload_arm_mm": 300, "counterweight_kg": 10})
    >>> out = Payload().compute(RigBatch.from_rigs([rig]), PayloadParams())
    >>> float(out["capacity_fraction"][0]), round(float(out["payload_moment_nm"][0]), 2)
    (0.5, 29.42)
    """

    name = "payload"
    version = "1.0.0"
    summary = "Payload against the mount's rating, wind force on the tube, moments and inertia."
    Params = PayloadParams
    outputs = (
        Output("payload_kg", "kg", "Telescope + train + camera + accessories (counterweights "
               "are not part of the rated payload).", nullable=True,
               label="Payload"),
        Output("capacity_fraction", "", "Payload ÷ the mount's rated capacity.", nullable=True,
               label="Mount load"),
        Output("imaging_margin_kg", "kg",
               "imaging_fraction × capacity − payload (common-practice imaging limit; negative: over).",
               nullable=True, label="Imaging margin"),
        Output("wind_force_n", "N", "Drag of a steady wind on the tube's side.", nullable=True,
               label="Wind force"),
        Output("tube_inertia_kg_m2", "kg*m^2",
               "Telescope as a thin-walled tube about a transverse axis through its centre.",
               nullable=True, label="Tube inertia"),
        Output("payload_moment_nm", "N*m",
               "Moment of the payload about the RA axis with the shaft level.", nullable=True,
               label="Payload moment"),
        Output("counterweight_arm_mm", "mm",
               "Distance from the RA axis at which the counterweight balances.", nullable=True,
               label="Counterweight arm"),
        Output("ra_inertia_kg_m2", "kg*m^2",
               "Moment of inertia about the RA axis (tube across the axis, the largest case).",
               nullable=True, label="RA axis inertia"),
    )
    sources = (
        "Drag equation F = ½ρv²C_dA; C_d ≈ 1.2 for a long cylinder in cross-flow: Hoerner, "
        "Fluid-Dynamic Drag, 1965, ch. 3 (from memory).",
        "ISA sea-level air density 1.225 kg/m³: ISO 2533:1975.",
        "Standard gravity 9.80665 m/s²: 3rd CGPM, 1901.",
        "Thin-walled tube m(r²/2 + L²/12) and the parallel-axis theorem: standard tables of "
        "moments of inertia.",
        "Imaging payload about half the rated capacity: common practice.",
    )
    cautions = (
        "Heavy lifts: a loaded mount, its counterweights and a large tube are heavy. Lift them one at "
        "a time, with a helper where needed, and assemble the mount before loading it.",
        "Counterweights: keep the safety stop (the end cap or screw of the counterweight shaft) in "
        "place; add counterweights before the telescope and take them off after it.",
        "Wind: the wind force here is for a steady wind; gusts push harder. Wind can topple a tripod "
        "or strain the drives — lower or cover the setup in strong wind.",
        "These figures are estimates. The manufacturer's ratings for the mount, tripod or pier come "
        "first; piers, domes and permanent installations follow local building codes and, where "
        "needed, a qualified professional.",
    )

    def compute(self, batch: RigBatch, params: PayloadParams) -> dict[str, np.ndarray]:
        payload = payload_kg(batch)
        capacity = batch["capacity_kg"]
        # ½ρv²C_d is one number; the side area is per telescope (mm² → m²).
        pressure = 0.5 * params.air_density_kg_m3 * params.wind_speed_m_s**2 * params.drag_coefficient
        side_area_m2 = batch["tube_diameter_mm"] * batch["tube_length_mm"] * 1e-6
        tube_inertia = thin_tube_inertia_kg_m2(
            batch["telescope_mass_kg"], batch["tube_diameter_mm"], batch["tube_length_mm"]
        )
        # Moments: the payload sits at the arm, the counterweight at its balance point.
        arm_m = batch["payload_arm_mm"] * 1e-3
        payload_arm = payload * arm_m  # kg·m, what the counterweight must match
        counterweight = batch["counterweight_kg"]
        counterweight_arm_m = payload_arm / counterweight
        # counterweight·arm_cw² = (payload·arm)·arm_cw, since counterweight·arm_cw = payload·arm.
        ra_inertia = tube_inertia + payload_arm * arm_m + payload_arm * counterweight_arm_m
        return {
            "payload_kg": payload,
            "capacity_fraction": payload / capacity,
            "imaging_margin_kg": params.imaging_fraction * capacity - payload,
            "wind_force_n": pressure * side_area_m2,
            "tube_inertia_kg_m2": tube_inertia,
            "payload_moment_nm": STANDARD_GRAVITY * payload_arm,
            "counterweight_arm_mm": counterweight_arm_m * 1e3,
            "ra_inertia_kg_m2": ra_inertia,
        }
