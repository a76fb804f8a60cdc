"""Guiding tolerance: the total RMS guiding error a rig can live with, and the guide camera pixel scale to see it.

Two criteria, each a common-practice rule (no single published source), and the looser of the two
is what the rig tolerates — a guiding error only shows once it is large against both the pixel and
the star's seeing blur:

* **pixel scale**: total RMS error within a fraction ``k`` of the imaging pixel scale,
  ``σ_px = k · s`` with ``k = 0.5`` by default (common practice) and ``s = 206.265 · p[µm] / f[mm]``;
* **seeing**: the error may widen a star's FWHM by at most a fraction ``g`` (default 10 %). A guiding
  error with RMS ``σ_a`` on each axis blurs like a gaussian of FWHM ``2√(2 ln 2)·σ_a = 2.3548·σ_a``
  (definition of the gaussian's FWHM); independent blurs add in quadrature (convolution of
  gaussians adds variances), so ``√(F² + (2.3548 σ_a)²) ≤ (1 + g)·F`` gives
  ``σ_a ≤ F·√((1 + g)² − 1) / 2.3548``, and the total (both axes) RMS ``σ = √2 · σ_a``.

Tolerated total RMS ``σ_tol = max(σ_px, σ_seeing)``.

**Guide camera**: a guider measures a star's centroid to a fraction ``c`` of its own pixel (default
0.2 px, a conservative common-practice figure; 0.1 px is often quoted for bright, well-sampled guide
stars). To measure errors as small as ``σ_tol`` the guide pixel scale must not exceed ``σ_tol / c``;
with guide pixels of ``p_g`` µm that needs a guide focal length of at least
``206.265 · p_g / (σ_tol / c)`` mm.

Example: 3.8 µm pixels at 1000 mm give 0.784″/px; the pixel rule tolerates 0.39″ RMS, the seeing
rule for 2″ seeing 0.55″, so the rig tolerates 0.55″ and the guide scale may be up to 2.75″/px
(≥ 281 mm of focal length for 3.75 µm guide pixels).
"""

from __future__ import annotations

import math

import numpy as np
from pydantic import Field

from calculators.base import Calculator, Output
from calculators.batch import RigBatch
from calculators.builtin.optics import ARCSEC_PER_RAD, effective_focal_length_mm, pixel_scale_arcsec
from calculators.schemas import Strict

#: FWHM of a gaussian per unit standard deviation, 2·√(2·ln 2).
GAUSSIAN_FWHM_PER_SIGMA = 2.0 * math.sqrt(2.0 * math.log(2.0))


class GuidingParams(Strict):
    seeing_fwhm_arcsec: float = Field(default=2.0, gt=0, le=20, description="Site seeing FWHM.")
    pixel_fraction: float = Field(
        default=0.5, gt=0, le=5, description="Tolerated total RMS error as a fraction of the imaging "
        "pixel scale (common practice: one half)."
    )
    fwhm_growth: float = Field(
        default=0.10, gt=0, le=2, description="Tolerated widening of the seeing FWHM by guiding error "
        "(fraction; common practice)."
    )
    centroid_fraction_px: float = Field(
        default=0.2, gt=0, le=1, description="Centroiding precision of the guider as a fraction of a "
        "guide pixel (common practice)."
    )
    guide_pixel_size_um: float = Field(default=3.75, gt=0, le=100, description="Guide camera pixel pitch.")


def seeing_limited_rms_arcsec(seeing_fwhm_arcsec, growth):
    """Total RMS error (both axes) that widens a seeing FWHM F by the fraction ``growth``."""
    per_axis = np.asarray(seeing_fwhm_arcsec) * math.sqrt((1.0 + growth) ** 2 - 1.0) / GAUSSIAN_FWHM_PER_SIGMA
    return math.sqrt(2.0) * per_axis


class Guiding(Calculator):
    name = "guiding"
    version = "1.1.0"
    summary = "Total RMS guiding error the rig tolerates, and the guide camera pixel scale needed to measure it."
    Params = GuidingParams
    outputs = (
        Output("pixel_scale_arcsec", "arcsec", "Imaging pixel scale 206.265·p/f (per pixel).",
               label="Pixel scale"),
        Output("pixel_rule_rms_arcsec", "arcsec", "Total RMS within the pixel fraction of the scale.",
               label="Guiding RMS by pixel rule"),
        Output("seeing_rule_rms_arcsec", "arcsec",
               "Total RMS that widens the seeing FWHM by the stated fraction.",
               label="Guiding RMS by seeing rule"),
        Output("tolerated_rms_arcsec", "arcsec", "The looser of the two rules.",
               label="Tolerated guiding RMS"),
        Output("max_guide_pixel_scale_arcsec", "arcsec", "Largest guide pixel scale (per guide pixel) that "
               "still resolves the tolerated error.", label="Largest guide pixel scale"),
        Output("min_guide_focal_length_mm", "mm", "Shortest guide focal length for the guide pixel "
               "size param.", label="Shortest guide focal length"),
        Output("limited_by", "", "'pixel scale' or 'seeing': which rule sets the tolerance.", kind="text",
               label="Limited by"),
    )
    # Renamed in 1.1.0; the old names are still accepted in evaluations for one release.
    renamed_outputs = {
        "image_scale_arcsec": "pixel_scale_arcsec",
        "guide_scale_max_arcsec": "max_guide_pixel_scale_arcsec",
        "guide_focal_length_min_mm": "min_guide_focal_length_mm",
        "ruled_by": "limited_by",
    }
    sources = (
        "Total RMS within half the pixel scale: common practice.",
        "Seeing rule: gaussian FWHM = 2√(2 ln 2)·σ, blurs adding in quadrature (convolution of "
        "gaussians); the tolerated 10 % widening is common practice.",
        "Centroiding to a fraction of a guide pixel (0.1-0.2 px): common practice.",
    )
    cautions = (
        "Guiding tolerances are rules of thumb: wind, flexure between guide and imaging optics, and "
        "a mount loaded beyond its rating will dominate any of them.",
    )

    def compute(self, batch: RigBatch, params: GuidingParams) -> dict[str, np.ndarray]:
        scale = pixel_scale_arcsec(batch["pixel_size_um"], effective_focal_length_mm(batch))
        by_pixel = params.pixel_fraction * scale
        by_seeing = seeing_limited_rms_arcsec(params.seeing_fwhm_arcsec, params.fwhm_growth)
        tolerated = np.maximum(by_pixel, by_seeing)
        guide_scale = tolerated / params.centroid_fraction_px
        return {
            "pixel_scale_arcsec": scale,
            "pixel_rule_rms_arcsec": by_pixel,
            "seeing_rule_rms_arcsec": np.broadcast_to(by_seeing, np.shape(by_pixel)),
            "tolerated_rms_arcsec": tolerated,
            "max_guide_pixel_scale_arcsec": guide_scale,
            "min_guide_focal_length_mm": ARCSEC_PER_RAD * params.guide_pixel_size_um * 1e-3 / guide_scale,
            "limited_by": np.where(by_pixel >= by_seeing, "pixel scale", "seeing"),
        }
