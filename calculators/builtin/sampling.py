"""Sampling: pixel scale, field of view, and how the pixels sample the seeing.

Formulas (units in the names; f is the effective focal length through the train, in mm):

* ``pixel_scale_arcsec = 206.265 · p[µm] / f[mm]`` (p/f in radians as arcseconds, 648 000/π per rad);
* ``field_width_arcmin = 2·atan(w / 2f)``, likewise height and diagonal (exact, not small-angle),
  w = width_px · p the sensor width in mm;
* ``pixels_per_fwhm = seeing FWHM / pixel scale``, for the ``seeing_fwhm_arcsec`` param;
* ``sampling_verdict``: "under-sampled" below ``min_pixels_per_fwhm`` (default 2), "over-sampled" above
  ``max_pixels_per_fwhm`` (default 3), "well-sampled" between (bounds included). The lower bound is the sampling
  theorem's two samples per resolution element (Nyquist 1928; Shannon 1949) applied to the seeing
  FWHM; the 2–3 band is common practice;
* ``suggested_binning``: the coarsest binning b (1 … ``max_binning``) that still keeps the sensor's
  own pixels per FWHM over b at least ``min_pixels_per_fwhm`` — 1 when the sensor is not over-sampled
  enough to bin; null for a rig without a camera (a visual rig), with that reason.

**Binning** (the rig's ``binning`` b, 1 by default; see :mod:`calculators.binning`): the pixel is
then the binned one, b times the pitch, so ``pixel_scale_arcsec``, ``pixels_per_fwhm``, the verdict
and the colour figures are the binned pixel's, and ``image_width_px`` / ``image_height_px`` (the
image's size in binned pixels) are ⌊width_px / b⌋ and ⌊height_px / b⌋. The field (an angle) is the
sensor's whatever the binning; ``suggested_binning`` is always counted on the sensor's own pixels.

* ``colour_pixel_scale_arcsec``: a colour (Bayer) sensor samples each colour on a grid of 2 × 2 cells,
  so its colour sampling is twice the pixel scale (convention, common practice: the green pixels'
  diagonal grid is finer, the red and blue ones are every other pixel each way); a mono sensor
  samples every colour at its pixel scale. ``colour_pixels_per_fwhm`` is the seeing FWHM over it.

Example: 3.8 µm pixels at 1200 mm give 206.265 · 3.8 / 1200 ≈ 0.653″ per pixel, so 2″ seeing spans
about 3.1 pixels: "over-sampled", and 1 × 1 binning is suggested (2 × 2 would give 1.5 pixels).
"""

from __future__ import annotations

import numpy as np
from pydantic import Field, model_validator

from calculators.base import Calculator, Output
from calculators.batch import RigBatch, per_batch
from calculators.binning import binned_pixel_um, binned_pixels, binning
from calculators.builtin.speed import effective_focal_length_mm
from calculators.schemas import Strict

#: Seconds of arc in one radian, 180·3600/π = 206 264.806… (by the definitions of degree and arcsecond).
ARCSEC_PER_RAD = 648_000 / np.pi
#: Minutes of arc in one radian, 180·60/π.
ARCMIN_PER_RAD = 10_800 / np.pi

#: The verdicts, indexed by how many of the two bounds the sampling exceeds.
VERDICTS = np.array(["under-sampled", "well-sampled", "over-sampled"])


def pixel_scale_arcsec(pixel_size_um, focal_length_mm) -> np.ndarray:
    """Angle on the sky covered by one pixel, p/f in radians as arcseconds (206.265·p[µm]/f[mm]).

    Small-angle form: a pixel is thousands of times smaller than the focal length, so p/f differs
    from the exact 2·atan(p/2f) by less than one part in 10¹¹.
    """
    return (ARCSEC_PER_RAD * 1e-3) * pixel_size_um / focal_length_mm


@per_batch
def sensor_size_mm(batch: RigBatch) -> tuple[np.ndarray, np.ndarray]:
    """Sensor width and height in mm: pixel count × pixel pitch."""
    pitch_mm = batch["pixel_size_um"] * 1e-3
    return batch["width_px"] * pitch_mm, batch["height_px"] * pitch_mm


def full_angle_arcmin(size_mm, twice_focal_mm) -> np.ndarray:
    """Full angle 2·atan(s / 2f) subtended by a length s at focal length f, in arcmin."""
    angle = np.arctan(size_mm / twice_focal_mm)
    angle *= 2 * ARCMIN_PER_RAD  # in place: one array per output, not two
    return angle


class SamplingParams(Strict):
    seeing_fwhm_arcsec: float = Field(
        default=2.0, gt=0, le=30,
        description="Full width at half maximum of a star image through the air (2″: a typical "
        "amateur site, common practice).",
    )
    min_pixels_per_fwhm: float = Field(
        default=2.0, gt=0, le=20,
        description="Fewer pixels per FWHM than this is under-sampled (sampling theorem: 2).",
    )
    max_pixels_per_fwhm: float = Field(
        default=3.0, gt=0, le=20,
        description="More pixels per FWHM than this is over-sampled (common practice: 3).",
    )
    max_binning: int = Field(default=4, ge=1, le=16, description="Largest binning to suggest.")

    @model_validator(mode="after")
    def _band_in_order(self):
        if self.min_pixels_per_fwhm > self.max_pixels_per_fwhm:
            raise ValueError(
                f"min_pixels_per_fwhm ({self.min_pixels_per_fwhm:g}) must not exceed "
                f"max_pixels_per_fwhm ({self.max_pixels_per_fwhm:g})"
            )
        return self


class Sampling(Calculator):
    """Pixel scale, field of view, pixels per seeing FWHM, a sampling verdict and a binning.

    See the module docstring for the formulas, the criterion and sources.

    >>> from calculators.batch import RigBatch
    >>> from calculators.schemas import Rig
    >>> rig = Rig(name="1200 mm", telescope={"aperture_mm": 200, "focal_length_mm": 1200},
    ...           camera={"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000})
    >>> out = Sampling().compute(RigBatch.from_rigs([rig]), SamplingParams())
    >>> round(float(out["pixel_scale_arcsec"][0]), 3), str(out["sampling_verdict"][0])
    (0.653, 'over-sampled')
    """

    name = "sampling"
    version = "1.2.0"
    summary = "Pixel scale, field of view, and how the pixels sample the seeing."
    Params = SamplingParams
    outputs = (
        Output("pixel_scale_arcsec", "arcsec", "Angle on the sky covered by one pixel.", label="Pixel scale"),
        Output("field_width_arcmin", "arcmin", "Field of view along the sensor's width.",
               label="Field width"),
        Output("field_height_arcmin", "arcmin", "Field of view along the sensor's height.",
               label="Field height"),
        Output("field_diagonal_arcmin", "arcmin", "Field of view along the sensor's diagonal.",
               label="Field diagonal"),
        Output("pixels_per_fwhm", "", "Pixels across the seeing FWHM.", label="Pixels per seeing FWHM"),
        Output("sampling_verdict", "", "under-sampled, well-sampled or over-sampled, by the "
               "min/max pixels per FWHM criterion.", kind="text", label="Sampling"),
        Output("suggested_binning", "", "Coarsest binning of the sensor's own pixels that keeps at "
               "least min_pixels_per_fwhm (null without a camera).", nullable=True,
               needs=("pixel_size_um",), label="Suggested binning", integer=True),
        Output("image_width_px", "pixel", "Pixels across the image's width at the rig's binning, "
               "⌊width_px / b⌋.", nullable=True, needs=("pixel_size_um",),
               label="Image width in pixels", integer=True),
        Output("image_height_px", "pixel", "Pixels across the image's height at the rig's binning, "
               "⌊height_px / b⌋.", nullable=True, needs=("pixel_size_um",),
               label="Image height in pixels", integer=True),
        Output("colour_pixel_scale_arcsec", "arcsec", "Sampling of each colour: twice the pixel scale "
               "for a colour (Bayer) sensor, the pixel scale for a mono one.", nullable=True,
               label="Colour pixel scale"),
        Output("colour_pixels_per_fwhm", "", "Seeing FWHM over the colour sampling.", nullable=True,
               label="Colour pixels per seeing FWHM"),
    )
    # Renamed in 1.1.0; the old names are still accepted in evaluations for one release.
    renamed_outputs = {
        "fov_width_arcmin": "field_width_arcmin",
        "fov_height_arcmin": "field_height_arcmin",
        "fov_diagonal_arcmin": "field_diagonal_arcmin",
    }
    sources = (
        "Pixel scale p/f and field 2·atan(w/2f): plane geometry; 648 000/π arcsec per radian.",
        "Two samples per resolution element: Nyquist 1928, Shannon 1949 (sampling theorem); "
        "the 2–3 pixels per FWHM band: common practice.",
        "Colour sampling of a Bayer mosaic at twice the pixel pitch: common practice.",
        "Binning b × b pixels into one: a pixel b times the pitch, ⌊n / b⌋ of them per side.",
    )

    def compute(self, batch: RigBatch, params: SamplingParams) -> dict[str, np.ndarray]:
        focal_mm = effective_focal_length_mm(batch)
        factor = binning(batch)
        scale = pixel_scale_arcsec(binned_pixel_um(batch), focal_mm)
        width_mm, height_mm = sensor_size_mm(batch)
        diagonal_mm = np.sqrt(width_mm * width_mm + height_mm * height_mm)
        twice_f = 2 * focal_mm
        ppf = params.seeing_fwhm_arcsec / scale
        # Verdict and binning from numbers; only the final lookup makes strings (one per rig).
        code = (ppf >= params.min_pixels_per_fwhm).astype(np.int8)
        code += ppf > params.max_pixels_per_fwhm
        sensor = batch.columns.get("sensor")
        colour = scale if sensor is None else np.where(np.asarray(sensor) == "colour", 2.0 * scale, scale)
        # Counted on the sensor's own pixels (ppf · b), so it does not depend on the chosen binning.
        suggested = np.clip(np.floor(ppf * factor / params.min_pixels_per_fwhm), 1, params.max_binning)
        return {
            "pixel_scale_arcsec": scale,
            "field_width_arcmin": full_angle_arcmin(width_mm, twice_f),
            "field_height_arcmin": full_angle_arcmin(height_mm, twice_f),
            "field_diagonal_arcmin": full_angle_arcmin(diagonal_mm, twice_f),
            "pixels_per_fwhm": ppf,
            # No camera (a visual rig): no verdict ("" and the figures above null, with the reason).
            "sampling_verdict": np.where(np.isnan(ppf), "", VERDICTS[code]),
            # NaN (null, "the rig has no camera") where there is no pixel: clip keeps NaN.
            "suggested_binning": suggested,
            "image_width_px": binned_pixels(batch["width_px"], factor),
            "image_height_px": binned_pixels(batch["height_px"], factor),
            "colour_pixel_scale_arcsec": colour,
            "colour_pixels_per_fwhm": params.seeing_fwhm_arcsec / colour,
        }
