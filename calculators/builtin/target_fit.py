"""Target fit: how a named deep-sky object sits in each rig's field, and how many mosaic panels it needs.

The object (param ``target``, a catalogue designation such as "NGC 891", "M 33" or "IC 434", or an
OpenNGC common name; **default "M 33"**, the Triangulum Galaxy, 62′ × 37′) is looked up in OpenNGC
(CC BY-SA 4.0, through ``pyongc``; see :mod:`calculators.builtin.catalogue`). An unknown name is a params
validation error that lists close matches.

Formulas (a, b the object's major and minor axes in arcmin; W, H the sensor's sides in mm; f the
effective focal length):

* field ``F_w = 2·atan(W / 2f)``, ``F_h = 2·atan(H / 2f)`` in arcmin (exact for a flat sensor);
* ``major_axis_px = a / s`` with the pixel scale ``s = 206 264.806″ · b·p / f`` of the rig's binned
  pixel (binning b, 1 by default: see :mod:`calculators.binning`); the field does not depend on b;
* ``fill_fraction = (π/4 · a · b) / (F_w · F_h)`` — the object's ellipse over the field's rectangle,
  both as flat areas on the sky (fine for fields of a few degrees);
* ``fits_in_field`` when ``a ≤ max(F_w, F_h)`` and ``b ≤ min(F_w, F_h)``, i.e. the ellipse fits with its
  major axis along the long side (the camera can be rotated to match the object's position angle);
* ``panels``: tiles of the field, each overlapping its neighbour by the fraction ``o`` (param
  ``overlap``), that cover the object's bounding box ``a × b``: along a side of length F the count to
  cover L is ``1 + ⌈max(L − F, 0) / (F·(1 − o))⌉``; the better of the two orientations (major axis
  along the width or along the height) is reported. Plane geometry; the overlap of 10-20 % that
  leaves room to register and blend panels is common practice.

Example: M 33 (62.1′ × 36.7′) with a 200 mm f/5 newtonian and a 22.8 × 15.2 mm sensor (78.4′ × 52.3′):
it fits, fills 44 % of the field and spans 4 750 pixels of 3.8 µm.
"""

from __future__ import annotations

import numpy as np
from pydantic import Field, field_validator

from calculators.base import Calculator, Output
from calculators.batch import RigBatch
from calculators.binning import binned_pixel_um
from calculators.builtin.catalogue import CREDIT, lookup
from calculators.builtin.integration_time import SUN_CAUTION
from calculators.builtin.optics import (
    effective_focal_length_mm,
    field_angle_arcmin,
    pixel_scale_arcsec,
    sensor_sides_mm,
)
from calculators.schemas import Strict

DEFAULT_TARGET = "M 33"


class TargetFitParams(Strict):
    target: str = Field(
        default=DEFAULT_TARGET, min_length=1, max_length=40,
        description="Catalogue designation ('NGC 891', 'M 33', 'IC 434') or OpenNGC common name.",
        examples=["NGC 891", "M 33"],
    )
    overlap: float = Field(
        default=0.15, ge=0, le=0.9, description="Fraction by which neighbouring mosaic panels overlap "
        "(common practice: 0.1-0.2)."
    )

    @field_validator("target")
    @classmethod
    def _in_catalogue(cls, value: str) -> str:
        lookup(value)  # raises a ValueError listing close matches
        return value.strip()


def panels_along(length, frame, overlap):
    """Frames of size ``frame`` overlapping by the fraction ``overlap`` that cover ``length``."""
    step = np.asarray(frame) * (1.0 - overlap)
    return 1.0 + np.ceil(np.maximum(np.asarray(length) - frame, 0.0) / step)


class TargetFit(Calculator):
    name = "target_fit"
    version = "1.1.0"
    summary = "A catalogue object's size against each rig's field: fill, pixels across, mosaic panels."
    Params = TargetFitParams
    outputs = (
        Output("target_name", "", "The object as found in OpenNGC, with its Messier number and common "
               "name.", kind="text", label="Target"),
        Output("target_major_arcmin", "arcmin", "Major axis of the object (OpenNGC).",
               label="Target major axis"),
        Output("target_minor_arcmin", "arcmin", "Minor axis (the major axis when OpenNGC gives only one).",
               label="Target minor axis"),
        Output("field_width_arcmin", "arcmin", "Field along the sensor's width, 2·atan(W/2f).",
               label="Field width"),
        Output("field_height_arcmin", "arcmin", "Field along the sensor's height, 2·atan(H/2f).",
               label="Field height"),
        Output("major_axis_px", "pixel", "Pixels (binned ones, at the rig's binning) across the "
               "object's major axis.",
               label="Target major axis in pixels"),
        Output("fill_fraction", "", "Area of the object's ellipse over the area of the field.",
               label="Field filled"),
        Output("fits_in_field", "", "Whether the ellipse fits with its major axis along the long side.",
               kind="boolean", label="Fits in field"),
        Output("panels", "", "Mosaic panels to cover the object's bounding box with the overlap param, "
               "in the better orientation.", label="Mosaic panels", integer=True),
    )
    sources = (
        f"Object sizes: {CREDIT}",
        "Field 2·atan(s/2f), ellipse area π/4·a·b, panel count: plane geometry.",
        "Mosaic overlap of 10-20 %: common practice.",
    )
    cautions = (SUN_CAUTION,)

    def compute(self, batch: RigBatch, params: TargetFitParams) -> dict[str, np.ndarray]:
        target = lookup(params.target)
        a, b = target.major_arcmin, target.minor_arcmin
        focal = effective_focal_length_mm(batch)
        width_mm, height_mm = sensor_sides_mm(batch)
        field_w = field_angle_arcmin(width_mm, focal)
        field_h = field_angle_arcmin(height_mm, focal)
        long_side, short_side = np.maximum(field_w, field_h), np.minimum(field_w, field_h)
        scale = pixel_scale_arcsec(binned_pixel_um(batch), focal)
        o = params.overlap
        along_width = panels_along(a, field_w, o) * panels_along(b, field_h, o)
        along_height = panels_along(a, field_h, o) * panels_along(b, field_w, o)
        return {
            "target_name": np.array(target.label),
            "target_major_arcmin": np.float64(a),
            "target_minor_arcmin": np.float64(b),
            "field_width_arcmin": field_w,
            "field_height_arcmin": field_h,
            "major_axis_px": a * 60.0 / scale,
            "fill_fraction": (np.pi / 4 * a * b) / (field_w * field_h),
            "fits_in_field": (a <= long_side) & (b <= short_side),
            "panels": np.minimum(along_width, along_height),
        }
