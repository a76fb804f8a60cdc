"""Étendue: how much of the sky's light a rig can take in at once, over its field and per pixel.

Formulas (units in the names):

* field solid angle ``Ω = 4·arcsin(sin α · sin β)`` with ``α = atan(w / 2f)``, ``β = atan(h / 2f)``,
  w × h the sensor in mm and f the effective focal length (through the train), in mm — the exact
  solid angle of the rectangular pyramid the sensor subtends, given in deg²;
* ``etendue_m2_deg2 = A_clear · Ω``, with ``A_clear = π/4·(D² − d²)`` in m²;
* ``pixel_etendue_m2_arcsec2 = A_clear · (p/f)²``, the same product for one pixel, with the pixel's
  solid angle in the small-angle form (exact to about one part in 10¹¹, as pixels are tiny beside f);
* ``etendue_ratio`` = étendue ÷ the baseline rig's.

Étendue (area × solid angle) is conserved through a lossless optical system: the aperture area times
the sky's solid angle equals the detector area times the solid angle of the converging beam, so for a
given sensor size a faster beam (lower focal ratio) covers more sky with the same aperture.

Sources: Welford & Winston, *High Collection Nonimaging Optics* (1989), ch. 2 (étendue and its
conservation); the solid angle of a right rectangular pyramid, 4·arcsin(sin α sin β) (solid geometry).

Example: a 100 mm unobstructed aperture (A = 0.007 854 m²) at f = 500 mm with a 36 × 24 mm sensor
sees a 4.12° × 2.75° field of Ω ≈ 11.33 deg², so the étendue is about 0.0890 m²·deg².
"""

from __future__ import annotations

import numpy as np

from calculators.base import Calculator, NoParams, Output
from calculators.batch import RigBatch, per_batch
from calculators.builtin.light_grasp import batch_clear_area_mm2
from calculators.builtin.sampling import pixel_scale_arcsec, sensor_size_mm
from calculators.builtin.speed import effective_focal_length_mm

#: Square degrees in one steradian, (180/π)².
DEG2_PER_SR = (180 / np.pi) ** 2


def rectangle_solid_angle_sr(width, height, distance) -> np.ndarray:
    """Solid angle of a centred width × height rectangle seen from ``distance`` along its normal, in sr.

    ``Ω = 4·arcsin(sin α · sin β)`` with α = atan(w/2L) and β = atan(h/2L) the half-angles (a right
    rectangular pyramid with its apex on the rectangle's axis), written with
    ``sin(atan x) = x/√(1+x²)`` so that only one inverse trigonometric function is evaluated.
    Any one length unit for all three arguments.
    """
    a = width / (2 * distance)
    b = height / (2 * distance)
    return 4 * np.arcsin(a * b / np.sqrt((1 + a * a) * (1 + b * b)))


@per_batch
def field_solid_angle_deg2(batch: RigBatch) -> np.ndarray:
    """Solid angle of the sky that the whole sensor covers, in deg²."""
    width_mm, height_mm = sensor_size_mm(batch)
    return DEG2_PER_SR * rectangle_solid_angle_sr(width_mm, height_mm, effective_focal_length_mm(batch))


def etendue_m2_deg2(batch: RigBatch) -> np.ndarray:
    """Clear area (m²) × field solid angle (deg²)."""
    area_m2 = batch_clear_area_mm2(batch) * 1e-6
    return area_m2 * field_solid_angle_deg2(batch)


class Etendue(Calculator):
    """Étendue of the whole field and of one pixel, and its ratio to the baseline rig.

    See the module docstring for the formulas, units and sources.

    >>> from calculators.batch import RigBatch
    >>> from calculators.schemas import Rig
    >>> rig = Rig(name="100 mm f/5", telescope={"aperture_mm": 100, "focal_length_mm": 500},
    ...           camera={"pixel_size_um": 6, "width_px": 6000, "height_px": 4000})
    >>> out = Etendue().compute(RigBatch.from_rigs([rig]), NoParams())
    >>> round(float(out["etendue_m2_deg2"][0]), 4)
    0.089
    """

    name = "etendue"
    version = "1.0.0"
    summary = "Clear area times the solid angle of the sensor's field, and of one pixel."
    Params = NoParams
    outputs = (
        Output("etendue_m2_deg2", "m^2*deg^2", "Clear aperture area times the field's solid angle.",
               label="Étendue", nullable=True),
        Output("pixel_etendue_m2_arcsec2", "m^2*arcsec^2",
               "Clear aperture area times one pixel's solid angle on the sky.", label="Étendue per pixel", nullable=True),
        Output("field_solid_angle_deg2", "deg^2", "Solid angle of sky covered by the sensor.",
               label="Field solid angle", nullable=True),
        Output("etendue_ratio", "", "Étendue relative to the baseline rig.", relative=True,
               label="Étendue ratio", nullable=True),
    )
    sources = (
        "Welford & Winston, High Collection Nonimaging Optics, 1989, ch. 2 (étendue, conservation).",
        "Solid angle of a right rectangular pyramid, 4·arcsin(sin α·sin β) (solid geometry).",
    )

    def compute(self, batch: RigBatch, params: NoParams) -> dict[str, np.ndarray]:
        area_m2 = batch_clear_area_mm2(batch) * 1e-6
        focal_mm = effective_focal_length_mm(batch)
        field = field_solid_angle_deg2(batch)  # once per batch: the cost calculator needs it too
        etendue = area_m2 * field
        return {
            "etendue_m2_deg2": etendue,
            "pixel_etendue_m2_arcsec2": area_m2 * np.square(
                pixel_scale_arcsec(batch["pixel_size_um"], focal_mm)
            ),
            "field_solid_angle_deg2": field,
            "etendue_ratio": batch.relative(etendue),
        }
