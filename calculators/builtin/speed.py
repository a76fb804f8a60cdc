"""Imaging speed: effective focal ratio and the exposure time each rig needs, relative to the baseline.

Formulas (units in the names):

* effective focal length ``f = f_telescope · k`` (k the product of the train elements' factors, 1 for none) [mm];
* ``focal_ratio N = f / D`` (dimensionless), D the aperture;
* throughput ``τ = τ_telescope · τ_train`` (given, or the per-design default, common practice);
* clear area ``A = π/4·(D² − d²)`` [mm²], d the central obstruction;
* signal per unit sky area ∝ ``A·τ``, so ``time_factor_per_arcsec2 = (A·τ)_baseline / (A·τ)``;
* signal per pixel from an extended object ∝ ``A·τ·Ω_pixel`` with ``Ω_pixel = (p/f)²``, so
  ``time_factor_per_pixel = (A·τ·Ω_pixel)_baseline / (A·τ·Ω_pixel)``.

A time factor of 2 means the rig needs twice the baseline's exposure for the same signal.

Why two time factors. "Which rig is faster?" has two honest answers, and they disagree whenever the
focal lengths differ:

* **per pixel** — the classic focal-ratio rule. For an extended object (a nebula, a galaxy) with equal
  pixels and throughput, the time goes as N² (an f/4 beam fills a pixel about 2.5× faster than f/6.3).
  It answers "how long until each pixel of *my* image is well exposed?", but a shorter focal length
  reaches that partly by putting more sky, at a coarser scale, on each pixel.
* **per unit sky area** — depends only on the light collected, A·τ. It answers "how long until the same
  patch of sky, at the same final scale, has the same signal?" A focal reducer shortens the per-pixel
  time but does not change this one at all: it collects no more light from the object.

Showing both lets the reader see whether a rig is "faster" because it gathers more light or because
it samples more coarsely.

Sources: the camera equation — focal-plane irradiance from an extended source of radiance L is
``E = π·L·τ / (4·N²)`` on axis — e.g. Smith, *Modern Optical Engineering*, 4th ed. (2008), chapter on
radiometry and image illumination (chapter from memory); the "1 hour at f/4 ≈ 2.5 hours at f/6.3"
rule that follows from it (common practice).

Example: a 200 mm f/4 newtonian against a 200 mm f/6.3 of equal throughput and the same camera:
``time_factor_per_pixel = (6.3/4)² ≈ 2.48`` for the f/6.3, and ``time_factor_per_arcsec2 = 1``.
"""

from __future__ import annotations

import numpy as np

from calculators.base import Calculator, NoParams, Output
from calculators.batch import RigBatch, per_batch
from calculators.builtin.light_grasp import batch_clear_area_mm2


@per_batch
def effective_focal_length_mm(batch: RigBatch) -> np.ndarray:
    """Focal length through the train (reducers, barlows, ...): f · factor, in mm (f without one)."""
    return batch["focal_length_mm"] * batch["train_factor"]


def throughput(batch: RigBatch) -> np.ndarray:
    """Fraction of the light that reaches the sensor: telescope τ × the train's τ (1 for none)."""
    return batch["telescope_throughput"] * batch["train_throughput"]


class Speed(Calculator):
    """Effective focal ratio and relative exposure times per pixel and per unit sky area.

    See the module docstring for the formulas, the reason both time factors are given, and sources.

    >>> from calculators.batch import RigBatch
    >>> from calculators.schemas import Rig
    >>> cam = {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000}
    >>> fast = Rig(name="f/4", telescope={"aperture_mm": 200, "focal_length_mm": 800,
    ...            "throughput": 0.9}, camera=cam)
    >>> slow = Rig(name="f/6.3", telescope={"aperture_mm": 200, "focal_length_mm": 1260,
    ...            "throughput": 0.9}, camera=cam)
    >>> out = Speed().compute(RigBatch.from_rigs([fast, slow]), NoParams())
    >>> [round(float(t), 4) for t in out["time_factor_per_pixel"]]
    [1.0, 2.4806]
    >>> [float(t) for t in out["time_factor_per_arcsec2"]]
    [1.0, 1.0]
    """

    name = "speed"
    version = "1.0.0"
    summary = "Effective focal ratio and exposure time relative to the baseline, per pixel and per sky area."
    Params = NoParams
    outputs = (
        Output("focal_ratio", "", "Effective focal ratio N = f/D through the train.", label="Focal ratio"),
        Output("effective_focal_length_mm", "mm", "Focal length through the train.", label="Focal length"),
        Output("throughput", "", "Fraction of light reaching the sensor (telescope × train).",
               label="Throughput"),
        Output("time_factor_per_pixel", "",
               "Exposure time for equal signal per pixel from an extended object, relative to the "
               "baseline (∝ 1/(A·τ·Ω_pixel)).", relative=True, label="Time per pixel", nullable=True),  # null without a camera
        Output("time_factor_per_arcsec2", "",
               "Exposure time for equal signal per unit sky area, relative to the baseline "
               "(∝ 1/(A·τ)).", relative=True, label="Time per sky area"),
    )
    sources = (
        "Camera equation E = π·L·τ/(4·N²) for an extended source (e.g. Smith, Modern Optical "
        "Engineering, 4th ed., 2008, radiometry chapter).",
        "Default throughputs per design: common practice.",
    )

    def compute(self, batch: RigBatch, params: NoParams) -> dict[str, np.ndarray]:
        focal_mm = effective_focal_length_mm(batch)
        tau = throughput(batch)
        # Light collected per unit sky area; per pixel it is further scaled by Ω_pixel ∝ (p/f)².
        per_area = batch_clear_area_mm2(batch) * tau
        per_pixel = per_area * np.square(batch["pixel_size_um"] / focal_mm)
        with np.errstate(divide="ignore", invalid="ignore"):
            return {
                "focal_ratio": focal_mm / batch["aperture_mm"],
                "effective_focal_length_mm": focal_mm,
                "throughput": tau,
                "time_factor_per_pixel": batch.at_baseline(per_pixel) / per_pixel,
                "time_factor_per_arcsec2": batch.at_baseline(per_area) / per_area,
            }
