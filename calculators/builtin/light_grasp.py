"""Light grasp: clear collecting area, ratios between rigs, gain over the eye, limiting magnitude.

Formulas (units in the names):

* clear area  ``A = π/4 · (D² − d²)``  [mm²], D the aperture, d the central obstruction;
* ``area_ratio = A / A_baseline``;
* gain over the dark-adapted eye ``G = A / (π/4 · p²)`` with a pupil ``p`` of 7 mm (param);
* visual limiting magnitude ``m = 2.7 + 5·log10(D[mm])`` — the common rule of thumb for a dark site
  and an experienced observer (Sinnott, Sky & Telescope 1973, as commonly quoted; the constant varies
  by author from 2.1 to 2.7 — common practice, no single authoritative value).

Example: a 304.8 mm (12 in) unobstructed aperture has A = 72 966 mm², 1.19× an 11-inch.
"""

from __future__ import annotations

import numpy as np
from pydantic import Field

from calculators.base import Calculator, Output
from calculators.batch import RigBatch, per_batch
from calculators.builtin.cautions import SUN_CAUTION
from calculators.schemas import Strict


class LightGraspParams(Strict):
    eye_pupil_mm: float = Field(default=7.0, gt=0, le=10, description="Dark-adapted pupil diameter.")
    limiting_magnitude_constant: float = Field(
        default=2.7, ge=0, le=5, description="C in m = C + 5 log10(D[mm]) (common practice)."
    )


def clear_area_mm2(aperture_mm, obstruction_mm):
    """Collecting area net of the central obstruction, π/4·(D² − d²), in mm²."""
    return np.pi / 4 * (np.square(aperture_mm) - np.square(obstruction_mm))


@per_batch
def batch_clear_area_mm2(batch: RigBatch) -> np.ndarray:
    """:func:`clear_area_mm2` of the batch's telescopes, computed once per batch."""
    return clear_area_mm2(batch["aperture_mm"], batch["obstruction_mm"])


class LightGrasp(Calculator):
    name = "light_grasp"
    version = "1.1.0"
    summary = "Clear collecting area, its ratio to the baseline, gain over the eye, limiting magnitude."
    Params = LightGraspParams
    outputs = (
        Output("clear_area_mm2", "mm^2", "Aperture area net of the central obstruction.", label="Clear area"),
        Output("area_ratio", "", "Clear area relative to the baseline rig.", relative=True,
               label="Light grasp"),
        Output("light_gain_over_eye", "", "Light gathered relative to a dark-adapted eye's pupil.",
               label="Light gain over the eye"),
        Output("visual_limiting_magnitude", "mag", "Faintest star visible by eye (rule of thumb).",
               label="Visual limiting magnitude"),
    )
    # Renamed in 1.1.0; the old names are still accepted in evaluations for one release.
    renamed_outputs = {
        "limiting_magnitude": "visual_limiting_magnitude",
        "eye_gain": "light_gain_over_eye",
    }
    sources = (
        "Area of an annulus π/4·(D² − d²) (plane geometry).",
        "Limiting magnitude 2.7 + 5·log10(D[mm]): common practice (Sinnott 1973 as commonly quoted).",
    )
    cautions = (SUN_CAUTION,)

    def compute(self, batch: RigBatch, params: LightGraspParams) -> dict[str, np.ndarray]:
        area = batch_clear_area_mm2(batch)
        return {
            "clear_area_mm2": area,
            "area_ratio": batch.relative(area),
            "light_gain_over_eye": area / (np.pi / 4 * params.eye_pupil_mm**2),
            "visual_limiting_magnitude": params.limiting_magnitude_constant
            + 5 * np.log10(batch["aperture_mm"]),
        }
