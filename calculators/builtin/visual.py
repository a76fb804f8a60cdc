"""Visual use: what an eyepiece at the end of the train shows the eye.

Formulas (units in the names; F the effective focal length, the telescope's times the train's
factors, f_e the eyepiece's focal length, D the aperture, d the central obstruction):

* ``magnification = F / f_e`` and ``exit_pupil_mm = D / magnification = f_e / N`` (N = F/D), the
  image of the aperture the eyepiece forms (e.g. Smith, *Modern Optical Engineering*, 4th ed. 2008,
  ch. on telescopes: magnifying power F_obj/F_eye, exit pupil D/M — from memory);
* ``true_field_arcmin``, by one of two methods, named per rig in ``true_field_method``:
  - **field stop** (when the eyepiece states ``field_stop_mm``): the stop of diameter s sits in the
    telescope's focal plane, so it spans ``2·atan(s / 2F)`` on the sky (plane geometry) — exact;
  - **apparent field ÷ magnification** otherwise: ``AFOV / M`` (common practice), an approximation
    that wide-field eyepieces, with their distortion, miss by a few percent;
* the **useful magnification range** by a common rule of thumb (common practice, no single source):
  the lowest magnification whose exit pupil still fits the eye's pupil, ``D / eye_pupil_mm``, and
  the highest ``2 × D[mm]`` ("twice the aperture in millimetres", i.e. about 50× per inch), above
  which the Airy disc is enlarged past what the eye gains detail from, whatever the seeing;
* **surface brightness** of an extended object relative to the naked eye: no optical system makes
  an extended object brighter than it looks to the unaided eye (conservation of radiance, the
  brightness theorem; e.g. Born & Wolf, *Principles of Optics*, §4.8 — from memory). Through the
  telescope the retina receives the transmitted fraction of the light, less the obstruction's
  share, and only the part of the exit pupil that the eye's pupil takes in::

      ratio = τ · (1 − (d/D)²) · min(1, (exit pupil / eye pupil)²)

  ``surface_brightness_change_mag = −2.5·log10(ratio)`` (≥ 0: never brighter; larger is dimmer);
* ``wasted_aperture_fraction``: when the exit pupil is wider than the eye's pupil, the eye takes in
  only ``(eye pupil / exit pupil)²`` of the beam, so that fraction of the aperture is unused; 0
  otherwise. ``exit_pupil_verdict`` says it in words.

Rigs without an eyepiece (imaging rigs) have null visual figures, with that reason.

Example: a 250 mm f/5 newtonian (1250 mm, 60 mm obstruction, throughput 0.81) with a 25 mm eyepiece
of 52° gives 50×, a 5.0 mm exit pupil and a 62.4′ true field by 52°/50; when it states a 22 mm
field stop, the field is 2·atan(22/2500) = 60.5′ and the stop governs. The useful range is
35.7×–500× for a 7 mm pupil; the object's surface brightness is 0.81·(1 − 0.24²)·(5/7)² = 0.39 of the
naked eye's (1.02 mag dimmer), and no aperture is wasted.
"""

from __future__ import annotations

import numpy as np
from pydantic import Field

from calculators.base import Calculator, Output
from calculators.batch import RigBatch
from calculators.builtin.integration_time import SUN_CAUTION
from calculators.builtin.optics import effective_focal_length_mm
from calculators.schemas import Strict

#: Minutes of arc in one radian, 180·60/π.
ARCMIN_PER_RAD = 10_800 / np.pi

#: The eyepiece's batch columns (the train's eyepiece element; NaN when the rig has none).
EYEPIECE_FOCAL = "eyepiece_focal_length_mm"
EYEPIECE_FIELD = "eyepiece_apparent_field_deg"
EYEPIECE_STOP = "eyepiece_field_stop_mm"

NO_EYEPIECE = "the rig has no eyepiece (an imaging rig): this figure is for visual use"

VISUAL_SUN_CAUTION = (
    SUN_CAUTION + " Through an eyepiece the focused sunlight blinds in a fraction of a second: never "
    "use an eyepiece solar filter, and keep the finder capped."
)


class VisualParams(Strict):
    eye_pupil_mm: float = Field(
        default=7.0, gt=1, le=9, description="Diameter of the observer's dark-adapted pupil (about 7 mm "
        "young, 5-6 mm past fifty: common practice)."
    )
    max_magnification_per_mm: float = Field(
        default=2.0, gt=0, le=10, description="Highest useful magnification per millimetre of aperture "
        "(common practice: 2, i.e. about 50× per inch)."
    )


def _column(batch: RigBatch, name: str) -> np.ndarray:
    values = batch.columns.get(name)
    return np.full((1,) * len(batch.shape), np.nan) if values is None else values


class Visual(Calculator):
    """Magnification, exit pupil, true field, useful range and surface brightness for eyepiece rigs.

    See the module docstring for the formulas, rules of thumb and sources.
    """

    name = "visual"
    version = "1.0.0"
    summary = "Magnification, exit pupil, true field, useful magnification range and surface brightness by eye."
    Params = VisualParams
    outputs = (
        Output("magnification", "", "Effective focal length ÷ eyepiece focal length.", nullable=True,
               needs=(EYEPIECE_FOCAL,), label="Magnification"),
        Output("exit_pupil_mm", "mm", "Diameter of the beam leaving the eyepiece, D ÷ magnification.",
               nullable=True, needs=(EYEPIECE_FOCAL,), label="Exit pupil"),
        Output("true_field_arcmin", "arcmin", "Angle of sky seen: from the field stop when stated, else "
               "apparent field ÷ magnification (see true_field_method).", nullable=True,
               needs=(EYEPIECE_FOCAL, EYEPIECE_FIELD), label="True field"),
        Output("true_field_method", "", "'field stop' or 'apparent field / magnification'.", kind="text", label="True field from"),
        Output("min_useful_magnification", "", "Lowest magnification whose exit pupil fits the eye's pupil.",
               nullable=True, label="Lowest useful magnification"),
        Output("max_useful_magnification", "", "Highest useful magnification by the per-millimetre rule.",
               nullable=True, label="Highest useful magnification"),
        Output("surface_brightness_ratio", "", "Extended object's brightness through the eyepiece ÷ by the "
               "naked eye (≤ 1).", nullable=True, needs=(EYEPIECE_FOCAL,), label="Surface brightness vs eye"),
        Output("surface_brightness_change_mag", "mag", "The same as a magnitude change (≥ 0: dimmer).",
               nullable=True, needs=(EYEPIECE_FOCAL,), label="Surface brightness change"),
        Output("wasted_aperture_fraction", "", "Share of the aperture the eye cannot take in (exit pupil "
               "wider than the eye's pupil); 0 otherwise.", nullable=True, needs=(EYEPIECE_FOCAL,), label="Aperture wasted"),
        Output("exit_pupil_verdict", "", "Whether the exit pupil is wider than the eye's pupil.", kind="text", label="Exit pupil vs eye"),
    )
    sources = (
        "Magnification F/f_e and exit pupil D/M: first-order optics (e.g. Smith, Modern Optical "
        "Engineering, 4th ed. 2008 — from memory).",
        "True field from the field stop, 2·atan(s/2F): plane geometry; apparent field ÷ magnification: "
        "common practice (an approximation).",
        "Useful magnification from D/eye pupil to 2× per mm of aperture (about 50× per inch): common practice.",
        "An extended object is never brighter than to the naked eye (conservation of radiance, the "
        "brightness theorem; Born & Wolf, Principles of Optics, §4.8 — from memory).",
    )
    cautions = (
        VISUAL_SUN_CAUTION,
        "At the eyepiece in the dark: mind the cables, the tripod legs and steps; use a red light and "
        "never climb a ladder at a large telescope without someone steadying it.",
    )

    def compute(self, batch: RigBatch, params: VisualParams) -> dict[str, np.ndarray]:
        if EYEPIECE_FOCAL not in batch.columns or np.isnan(batch[EYEPIECE_FOCAL]).all():
            return self._no_eyepiece(batch)  # an imaging-only batch: every figure is null
        aperture = batch["aperture_mm"]
        focal = effective_focal_length_mm(batch)
        eyepiece = _column(batch, EYEPIECE_FOCAL)
        apparent = _column(batch, EYEPIECE_FIELD)
        stop = _column(batch, EYEPIECE_STOP)
        has_eyepiece = ~np.isnan(eyepiece)
        magnification = focal / eyepiece
        exit_pupil = aperture / magnification
        by_stop = 2.0 * ARCMIN_PER_RAD * np.arctan(stop / (2.0 * focal))
        by_apparent = apparent * 60.0 / magnification
        stated = ~np.isnan(stop)
        true_field = np.where(stated, by_stop, by_apparent)
        method = np.where(has_eyepiece, np.where(stated, "field stop", "apparent field / magnification"), "")
        nan = np.where(has_eyepiece, 1.0, np.nan)
        obstruction = batch["obstruction_mm"] / aperture
        transmission = batch["telescope_throughput"] * _column(batch, "modifier_throughput").copy()
        transmission = np.where(np.isnan(transmission), batch["telescope_throughput"], transmission)
        filled = np.minimum(1.0, np.square(exit_pupil / params.eye_pupil_mm))
        ratio = transmission * (1.0 - np.square(obstruction)) * filled
        with np.errstate(divide="ignore", invalid="ignore"):
            wasted = np.where(exit_pupil > params.eye_pupil_mm,
                              1.0 - np.square(params.eye_pupil_mm / exit_pupil), 0.0) * nan
            change = -2.5 * np.log10(ratio)
        verdict = np.where(
            has_eyepiece,
            np.where(exit_pupil > params.eye_pupil_mm, "wider than the eye's pupil: aperture wasted",
                     "within the eye's pupil"),
            "",
        )
        return {
            "magnification": magnification,
            "exit_pupil_mm": exit_pupil,
            "true_field_arcmin": true_field,
            "true_field_method": method,
            "min_useful_magnification": aperture / params.eye_pupil_mm * nan,
            "max_useful_magnification": aperture * params.max_magnification_per_mm * nan,
            "surface_brightness_ratio": ratio,
            "surface_brightness_change_mag": change,
            "wasted_aperture_fraction": wasted,
            "exit_pupil_verdict": verdict,
        }

    def _no_eyepiece(self, batch: RigBatch) -> dict[str, np.ndarray]:
        one = (1,) * len(batch.shape)
        nan, empty = np.full(one, np.nan), np.full(one, "")
        return {o.name: (empty if o.kind == "text" else nan) for o in self.outputs}

    def null_reasons(self, batch: RigBatch, params: VisualParams) -> dict[str, np.ndarray]:
        if EYEPIECE_FOCAL not in batch.columns or np.isnan(batch[EYEPIECE_FOCAL]).all():
            none = np.asarray(NO_EYEPIECE)  # one reason for every rig, shared by every output
            return {o.name: none for o in self.outputs if o.kind == "number"}
        none = np.where(np.isnan(_column(batch, EYEPIECE_FOCAL)), NO_EYEPIECE, "")
        reasons = {o.name: none for o in self.outputs if o.kind == "number"}
        field_missing = np.isnan(_column(batch, EYEPIECE_FIELD)) & np.isnan(_column(batch, EYEPIECE_STOP))
        reasons["true_field_arcmin"] = np.where(
            none != "", none,
            np.where(field_missing, "not stated for this rig: the eyepiece's apparent_field_deg or field_stop_mm", ""),
        )
        return reasons
