"""Coma field of a paraboloidal primary: the coma-free field, the sensor against it, collimation tolerance.

Applies to the ``newtonian`` design (a paraboloidal primary and a flat diagonal). Other designs' off-axis
aberrations depend on their prescriptions, so they report "not applicable" (null numbers).

**Coma of a paraboloid** (Schroeder, Astronomical Optics, 2nd ed. 2000, §6.1): at a field angle θ the
angular tangential coma — the length of the comatic flare from the chief ray to its far tip — is

    ATC = 3θ / (16 N²),        sagittal coma = ATC / 3,

with N the primary's focal ratio. At the focal plane, with the image height ``y = θ·f``, the linear
tangential coma is ``TC = 3y / (16 N²)`` (a barlow or non-correcting reducer of factor m scales image
heights and coma alike, so the same holds in the rig's focal plane with y measured there).

**Criteria** (param ``criterion``), each solved for the field radius ``y`` where coma reaches it:

* ``marechal`` (default): the Maréchal condition, RMS wavefront error ≤ λ/14 (Strehl ≈ 0.8; Born &
  Wolf, Principles of Optics, §9.3). Coma's wavefront is ``W = W₁₃₁ ρ³ cos φ``; with the tilt that it
  carries removed, its RMS is ``W₁₃₁/√72`` (the Zernike coma term, Noll 1976, JOSA 66, 207, whose
  normalisation √8·(3ρ³ − 2ρ)cos φ holds W₁₃₁/3 of it). The transverse ray error ε = −(f/h)·∂W/∂y_n
  (h the pupil radius, f/h = 2N) gives at the pupil's edge in the tangential plane TC = 6N·W₁₃₁
  (here N is the effective ratio m·N_p, since a barlow also lengthens f). Setting W₁₃₁/√72 = λ/14
  and TC = 3y/(16 N_p²) gives ``y = 32·(√72/14)·λ·m·N_p³ = 19.396·λ·m·N_p³``; the field's diameter is
  ``2y = 38.79·λ·m·N_p³``, ≈ 0.0213·N³ mm at 550 nm without modifier.
* ``airy``: tangential coma equal to the Airy disc diameter 2.43934·λ·N (Born & Wolf §8.5.2), so
  ``y = (16/3)·2.43934·λ·m·N_p³`` and the diameter ≈ 0.0143·N³ mm at 550 nm.

**Collimation tolerance**: if the primary's axis meets the focal plane a lateral distance δ from the
sensor's centre, the centre sees the coma of field height δ. The criterion's coma sits on axis when δ
equals the coma-free radius, so the tolerance is ``δ = y`` — it grows as N³, which is why fast
reflectors need careful collimation. It applies to every newtonian, with or without a corrector (a
corrector cannot remove the coma of a tilted primary).

**Verdict**: a newtonian without a correcting modifier gets "corrector needed" when the coma-free
field is smaller than the sensor's diagonal. A modifier that states ``corrected_field_mm`` (on any
design) is compared with the sensor's diagonal instead. A modifier of kind ``corrector`` counts as
correcting even without a stated field.

Example: a 200 mm f/5 newtonian at 550 nm has a Maréchal coma-free field of 2.67 mm and a collimation
tolerance of 1.33 mm; a sensor with a 28 mm diagonal needs a corrector.
"""

from __future__ import annotations

import math
from typing import Literal

import numpy as np
from pydantic import Field

from calculators.base import Calculator, Output
from calculators.batch import RigBatch
from calculators.builtin.optics import (
    ARCSEC_PER_RAD,
    RAYLEIGH_FACTOR,
    effective_focal_length_mm,
    primary_focal_ratio,
    sensor_diagonal_mm,
)
from calculators.schemas import Strict

#: Field radius per λ·N³: the Maréchal λ/14 RMS condition for tilt-removed coma (derived above).
MARECHAL_RADIUS_PER_LAMBDA_N3 = 32.0 * math.sqrt(72.0) / 14.0
#: Field radius per λ·N³: tangential coma equal to the Airy disc diameter 2·1.21967·λ·N.
AIRY_RADIUS_PER_LAMBDA_N3 = 16.0 / 3.0 * 2.0 * RAYLEIGH_FACTOR

RADIUS_PER_LAMBDA_N3 = {"marechal": MARECHAL_RADIUS_PER_LAMBDA_N3, "airy": AIRY_RADIUS_PER_LAMBDA_N3}

#: Designs whose primary is a paraboloid without a full-aperture corrector.
PARABOLOIDAL = ("newtonian",)


class ComaFieldParams(Strict):
    wavelength_nm: float = Field(default=550.0, ge=200, le=3000, description="Wavelength of the criterion.")
    criterion: Literal["marechal", "airy"] = Field(
        default="marechal",
        description="'marechal': RMS wavefront error λ/14 (Strehl ≈ 0.8); "
        "'airy': tangential coma equal to the Airy disc diameter.",
    )


def angular_tangential_coma_rad(field_angle_rad, focal_ratio):
    """Schroeder §6.1: a paraboloid's angular tangential coma, 3θ/(16N²), in radians."""
    return 3.0 * np.asarray(field_angle_rad) / (16.0 * np.square(focal_ratio))


def coma_free_radius_mm(wavelength_nm, primary_ratio, modifier_factor, criterion="marechal"):
    """Image height at which a paraboloid's coma reaches the criterion, in the rig's focal plane, mm."""
    wavelength_mm = wavelength_nm * 1e-6
    return RADIUS_PER_LAMBDA_N3[criterion] * wavelength_mm * modifier_factor * np.power(primary_ratio, 3)


class ComaField(Calculator):
    name = "coma_field"
    version = "1.0.0"
    summary = "Coma-free field of a paraboloidal primary against the sensor, and the collimation tolerance."
    Params = ComaFieldParams
    outputs = (
        Output("diffraction_limited_field_mm", "mm",
               "Diameter of the field where coma meets the criterion (newtonian without corrector).",
               nullable=True, label="Coma-free field"),
        Output("diffraction_limited_field_arcmin", "arcmin",
               "The same field as an angle on the sky.", nullable=True, label="Coma-free field on the sky"),
        Output("sensor_diagonal_mm", "mm", "Diagonal of the sensor's active area.", label="Sensor diagonal"),
        Output("field_to_sensor", "",
               "Coma-free (or stated corrected) field diameter over the sensor diagonal; < 1 means "
               "the corners fall outside it.", nullable=True, label="Coma-free field over sensor"),
        Output("collimation_tolerance_mm", "mm",
               "Lateral offset of the primary's axis at the focal plane that puts the criterion's "
               "coma on axis (newtonians).", nullable=True, label="Collimation tolerance"),
        Output("verdict", "", "'corrector needed', 'sensor within coma-free field', 'sensor fits "
               "corrected field', 'sensor exceeds corrected field', 'corrected (field not stated)' or "
               "'not applicable'.", kind="text", label="Coma check"),
    )
    sources = (
        "Schroeder, D. J., Astronomical Optics, 2nd ed., Academic Press 2000, §6.1: paraboloid "
        "angular tangential coma 3θ/(16N²), sagittal one third of it.",
        "Born, M. & Wolf, E., Principles of Optics, 7th ed., 1999, §9.3 (Maréchal: RMS ≤ λ/14) and "
        "§8.5.2 (Airy disc 2.43934·λ·N).",
        "Noll, R. J., Zernike polynomials and atmospheric turbulence, JOSA 66, 207 (1976): coma "
        "term √8(3ρ³ − 2ρ)cos φ, giving RMS W₁₃₁/√72 once tilt is removed.",
    )

    def compute(self, batch: RigBatch, params: ComaFieldParams) -> dict[str, np.ndarray]:
        factor = batch["modifier_factor"]
        diagonal = sensor_diagonal_mm(batch)
        radius = coma_free_radius_mm(
            params.wavelength_nm, primary_focal_ratio(batch), factor, params.criterion
        )
        newtonian = np.isin(batch["design"], PARABOLOIDAL)
        stated = np.isfinite(batch["corrected_field_mm"])
        correcting = stated | (batch["modifier_kind"] == "corrector")
        bare_newtonian = newtonian & ~correcting

        field = np.where(bare_newtonian, 2.0 * radius, np.nan)
        field_arcmin = field / effective_focal_length_mm(batch) * ARCSEC_PER_RAD / 60.0
        compared = np.where(stated, batch["corrected_field_mm"], field)
        with np.errstate(invalid="ignore"):
            ratio = compared / diagonal
            fits = ratio >= 1.0

        verdict = np.where(
            bare_newtonian,
            np.where(fits, "sensor within coma-free field", "corrector needed"),
            np.where(
                stated,
                np.where(fits, "sensor fits corrected field", "sensor exceeds corrected field"),
                np.where(newtonian & correcting, "corrected (field not stated)", "not applicable"),
            ),
        )
        return {
            "diffraction_limited_field_mm": field,
            "diffraction_limited_field_arcmin": field_arcmin,
            "sensor_diagonal_mm": diagonal,
            "field_to_sensor": ratio,
            "collimation_tolerance_mm": np.where(newtonian, radius, np.nan),
            "verdict": verdict,
        }
