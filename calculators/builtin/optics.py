"""Small optical relations shared by several calculators, written over plain numpy values.

Every function takes batch columns (or scalars) in the units named by its arguments and broadcasts,
so a sweep's ``(T, 1, 1, 1)`` telescope column and ``(1, C, 1, 1)`` camera column combine without a
loop. These are textbook relations, kept here once so that calculators do not each restate them.
"""

from __future__ import annotations

import math

import numpy as np

from calculators.batch import RigBatch

#: Arcseconds in one radian, 180·3600/π = 206 264.806… (exact by the definition of the arcsecond).
ARCSEC_PER_RAD = 180.0 * 3600.0 / math.pi

#: First zero of the Bessel function J₁ (j₁,₁), which sets the first dark ring of the Airy pattern
#: (Born & Wolf, Principles of Optics, §8.5.2). Divided by π it gives the familiar 1.21967.
BESSEL_J1_FIRST_ZERO = 3.8317059702075125

#: Rayleigh's factor: the Airy pattern's first dark ring lies at sin θ = 1.21967·λ/D.
RAYLEIGH_FACTOR = BESSEL_J1_FIRST_ZERO / math.pi


def effective_focal_length_mm(batch: RigBatch) -> np.ndarray:
    """Telescope focal length times every train element's factor (1 for an empty train), in mm."""
    return batch["focal_length_mm"] * batch["train_factor"]


def primary_focal_ratio(batch: RigBatch) -> np.ndarray:
    """Focal ratio of the bare telescope, f/D."""
    return batch["focal_length_mm"] / batch["aperture_mm"]


def effective_focal_ratio(batch: RigBatch) -> np.ndarray:
    """Focal ratio through the train, f·factor/D."""
    return effective_focal_length_mm(batch) / batch["aperture_mm"]


def pixel_scale_arcsec(pixel_size_um, focal_length_mm) -> np.ndarray:
    """Angle on the sky subtended by one pixel at the centre of the field, in arcsec.

    ``206 264.806 · p[mm] / f[mm]`` (small-angle relation, exact to better than 1e-9 for any pixel).
    """
    return ARCSEC_PER_RAD * (np.asarray(pixel_size_um) * 1e-3) / focal_length_mm


def sensor_sides_mm(batch: RigBatch) -> tuple[np.ndarray, np.ndarray]:
    """Width and height of the sensor's active area, in mm."""
    pitch_mm = batch["pixel_size_um"] * 1e-3
    return batch["width_px"] * pitch_mm, batch["height_px"] * pitch_mm


def sensor_diagonal_mm(batch: RigBatch) -> np.ndarray:
    """Diagonal of the sensor's active area, in mm."""
    width, height = sensor_sides_mm(batch)
    return np.hypot(width, height)


def field_angle_arcmin(size_mm, focal_length_mm) -> np.ndarray:
    """Full angle on the sky spanned by a length ``size_mm`` centred on the axis: 2·atan(s/2f), arcmin."""
    return np.degrees(2.0 * np.arctan(np.asarray(size_mm) / (2.0 * focal_length_mm))) * 60.0

