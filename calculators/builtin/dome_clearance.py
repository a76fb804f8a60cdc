"""Dome clearance: does the tube swing clear of the dome or roof on a german-equatorial mount?

Plain geometry. On a german-equatorial mount the tube's optical axis runs at a distance ``a`` (param
``dec_axis_offset_mm``) from the point where the right-ascension and declination axes cross, and the
declination axis meets the tube a fraction ``b`` of its length ``L`` from the front end (param
``balance_point_fraction``; 0.5 is the middle). Every point of the tube — a cylinder of diameter
``d`` — lies at a distance from the axes' intersection of at most

    R = √( (max(b, 1 − b) · L)² + (a + d/2)² ),

reached at the rim of the tube end farther from the declination axis: along the tube the point is at
most ``max(b, 1−b)·L`` from the foot of the perpendicular, and across it at most ``a + d/2`` from the
intersection. As the mount turns, that rim sweeps the sphere of radius ``R`` about the intersection.

The dome is taken as a sphere of inner radius ``R_d`` (half param ``dome_inner_diameter_mm``) whose
centre lies ``e`` from the axes' intersection (params ``pier_offset_mm`` horizontally and
``height_offset_mm`` vertically, ``e = √(h² + v²)``). The tube stays inside the dome in every
orientation when ``R + e ≤ R_d``; the margin is ``R_d − e − R``. This is the worst case: it assumes any
orientation, including ones the tube may never reach below the horizon, so a negative margin means
"check it", not "it will hit".

For fork, alt-azimuth and dobsonian mounts the tube's axis passes through the axes' intersection, so
the offset ``a`` is taken as 0 for them.

Verdict: ``clear`` when the margin is at least ``min_margin_mm`` (default 50 mm for dew shields and
cables: common practice), ``tight`` when 0 ≤ margin below that, ``collision possible`` below 0,
``unknown`` when the telescope does not state its tube length or diameter.

Example: a 950 mm tube of 235 mm diameter balanced in the middle, 250 mm from the axes'
intersection, sweeps R = 600.6 mm; in a 2.5 m dome centred on the intersection the margin is 649 mm.
"""

from __future__ import annotations

import numpy as np
from pydantic import Field

from calculators.base import Calculator, Output
from calculators.batch import RigBatch
from calculators.schemas import Strict

#: Mount types whose tube axis passes through the axes' intersection (no declination offset).
CENTRED_MOUNTS = ("fork", "alt-azimuth", "dobsonian")


class DomeClearanceParams(Strict):
    dome_inner_diameter_mm: float = Field(
        default=2500.0, gt=0, le=50_000, description="Inner diameter of the dome (or the clear "
        "diameter under a roll-off roof's lowest obstacle)."
    )
    dec_axis_offset_mm: float = Field(
        default=250.0, ge=0, le=5000, description="Distance from the axes' intersection to the tube's "
        "optical axis, along the declination axis (german-equatorial mounts)."
    )
    balance_point_fraction: float = Field(
        default=0.5, ge=0, le=1, description="Where the declination axis crosses the tube, as a "
        "fraction of the tube length from the front end."
    )
    pier_offset_mm: float = Field(
        default=0.0, ge=0, le=50_000, description="Horizontal distance from the dome's centre to the "
        "axes' intersection."
    )
    height_offset_mm: float = Field(
        default=0.0, ge=-50_000, le=50_000, description="Height of the axes' intersection above the "
        "dome's centre."
    )
    min_margin_mm: float = Field(
        default=50.0, ge=0, le=5000, description="Margin wanted for dew shields, cables and "
        "tolerances (common practice)."
    )


def swept_radius_mm(tube_length_mm, tube_diameter_mm, axis_offset_mm, balance_point_fraction):
    """Largest distance of any point of the tube from the axes' intersection, in mm."""
    along = np.maximum(balance_point_fraction, 1.0 - balance_point_fraction) * np.asarray(tube_length_mm)
    across = np.asarray(axis_offset_mm) + np.asarray(tube_diameter_mm) / 2.0
    return np.hypot(along, across)


class DomeClearance(Calculator):
    name = "dome_clearance"
    version = "1.0.0"
    summary = "Whether the tube swings clear of the dome: swept radius of the tube ends against the dome."
    Params = DomeClearanceParams
    outputs = (
        Output("swept_radius_mm", "mm", "Farthest reach of the tube from the axes' intersection.",
               nullable=True, label="Swept radius"),
        Output("clearance_mm", "mm", "Dome radius less the offset of the intersection and the swept "
               "radius (worst case; negative: the tube can touch).", nullable=True, label="Dome clearance"),
        Output("verdict", "", "'clear', 'tight', 'collision possible' or 'unknown'.", kind="text",
               label="Dome check"),
    )
    sources = (
        "Plane and solid geometry (Pythagoras; triangle inequality for the offset dome centre).",
        "A working margin of about 50 mm: common practice.",
    )
    cautions = (
        "Domes, roofs and piers must follow local building codes and their manufacturers' "
        "instructions; have structural work checked by a qualified professional.",
        "This is a worst-case geometric estimate: before slewing under power, swing the tube slowly "
        "by hand through its whole range, with dew shield, cameras and cables fitted.",
    )

    def compute(self, batch: RigBatch, params: DomeClearanceParams) -> dict[str, np.ndarray]:
        centred = np.isin(batch["mount_type"], CENTRED_MOUNTS)
        offset = np.where(centred, 0.0, params.dec_axis_offset_mm)
        radius = swept_radius_mm(
            batch["tube_length_mm"], batch["tube_diameter_mm"], offset, params.balance_point_fraction
        )
        eccentricity = np.hypot(params.pier_offset_mm, params.height_offset_mm)
        margin = params.dome_inner_diameter_mm / 2.0 - eccentricity - radius
        with np.errstate(invalid="ignore"):
            verdict = np.where(
                np.isnan(margin), "unknown",
                np.where(margin >= params.min_margin_mm, "clear",
                         np.where(margin >= 0, "tight", "collision possible")),
            )
        return {"swept_radius_mm": radius, "clearance_mm": margin, "verdict": verdict}
