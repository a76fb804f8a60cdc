"""Diffraction spikes from the spider holding the secondary mirror: how many, which way, how bright.

In Fraunhofer diffraction the far-field pattern is the Fourier transform of the pupil (Hecht, Optics,
5th ed. 2017, ch. 10). A straight vane is a long thin strip across the pupil; by Babinet's principle it
diffracts like a slit of the same size, whose pattern is a line perpendicular to it through the star.
Each vane therefore throws a spike pair on both sides of the star, perpendicular to the vane:

* ``n`` straight vanes equally spaced around the pupil: when ``n`` is even, opposite vanes are
  parallel and their spike pairs coincide, giving ``n`` spikes; when ``n`` is odd no two vanes are
  parallel, giving ``2n`` spikes. The spikes are ``360°/count`` apart, and the first lies
  ``90° mod spacing`` from the first vane (perpendicular to it, folded into one spacing).
* curved vanes (param ``vane_shape="curved"``) change direction along their length, so their light
  spreads into faint fans rather than spikes: no distinct spikes.

Light in the spikes: the vanes block the area ``A_v = n · w · (D − d)/2`` (n vanes of width ``w``
spanning the annulus between the obstruction ``d`` and the aperture ``D``). By Babinet's principle and
Parseval's theorem their own diffraction pattern carries the same energy as the light they intercept,
so the fraction of the star's light diffracted by the vanes is ``A_v / A_clear`` with
``A_clear = π/4·(D² − d²)`` (small-fraction estimate). Part of that pattern falls on the star's core
and interferes with it, so the visible spikes hold somewhat less: read the figure as an upper
estimate. The same light goes into fans for curved vanes.

When a telescope does not state ``spider_vanes``, designs whose secondary is carried by a corrector
plate or meniscus (refractor: no secondary; schmidt-cassegrain, maksutov-cassegrain,
schmidt-newtonian, maksutov-newtonian) are taken to have none (common practice); otherwise the count
is unknown and the numbers are null.

Example: a four-vane spider of 1 mm vanes in a 200 mm newtonian with a 70 mm obstruction gives
4 spikes, 90° apart along the vanes, with 260 mm² of vanes: 0.94 % of the clear area.
"""

from __future__ import annotations

from typing import Literal

import numpy as np
from pydantic import Field

from calculators.base import Calculator, Output
from calculators.batch import RigBatch
from calculators.builtin.light_grasp import clear_area_mm2
from calculators.schemas import Strict

#: Designs whose secondary (if any) is held without a spider (common practice).
NO_SPIDER_DESIGNS = (
    "refractor", "schmidt-cassegrain", "maksutov-cassegrain", "schmidt-newtonian", "maksutov-newtonian",
)


class DiffractionSpikesParams(Strict):
    vane_shape: Literal["straight", "curved"] = Field(
        default="straight", description="Straight radial vanes, or curved vanes that spread spikes into fans."
    )
    vane_width_mm: float = Field(
        default=1.0, gt=0, le=20, description="Thickness of each vane as seen along the optical axis "
        "(about 0.5-2 mm is usual: common practice)."
    )


def spike_count(vanes, shape: str = "straight"):
    """Spikes from ``vanes`` straight, equally spaced radial vanes: n if n is even, 2n if odd (Hecht ch. 10)."""
    vanes = np.asarray(vanes, dtype=float)
    if shape == "curved":
        return np.where(np.isnan(vanes), np.nan, 0.0)
    return np.where(np.mod(vanes, 2) == 0, vanes, 2 * vanes)


class DiffractionSpikes(Calculator):
    name = "diffraction_spikes"
    version = "1.0.0"
    summary = "Number and orientation of diffraction spikes from the spider, and the light they take."
    Params = DiffractionSpikesParams
    outputs = (
        Output("spike_count", "", "Number of spikes: n straight vanes give n (n even) or 2n (n odd); "
               "curved vanes give none (fans).", nullable=True, label="Spikes", integer=True),
        Output("spike_spacing_deg", "deg", "Angle between neighbouring spikes, 360°/count.", nullable=True,
               label="Spike spacing"),
        Output("first_spike_from_vane_deg", "deg",
               "Angle of the nearest spike from the first vane (spikes are perpendicular to vanes).",
               nullable=True, label="First spike from vane"),
        Output("vane_area_mm2", "mm^2", "Pupil area blocked by the vanes, n·w·(D − d)/2.", nullable=True,
               label="Vane area"),
        Output("spike_energy_fraction", "", "Fraction of the star's light diffracted by the vanes "
               "into spikes (or fans), vane area ÷ clear area (upper estimate).", nullable=True,
               label="Light in spikes"),
        Output("pattern", "", "'spikes', 'fans', 'none' or 'unknown' (vane count not stated).", kind="text",
               label="Spike pattern"),
    )
    sources = (
        "Hecht, E., Optics, 5th ed., Pearson 2017, ch. 10: Fraunhofer diffraction as the Fourier "
        "transform of the aperture; slit patterns; Babinet's principle.",
        "Spike energy ≈ vane area ÷ clear area: Babinet's principle with Parseval's theorem "
        "(small-fraction approximation).",
        "Designs with a corrector-mounted secondary carry no spider: common practice.",
    )

    def compute(self, batch: RigBatch, params: DiffractionSpikesParams) -> dict[str, np.ndarray]:
        stated = batch["spider_vanes"]
        vanes = np.where(np.isnan(stated) & np.isin(batch["design"], NO_SPIDER_DESIGNS), 0.0, stated)
        count = spike_count(vanes, params.vane_shape)
        with np.errstate(divide="ignore", invalid="ignore"):
            spacing = np.where(count > 0, 360.0 / count, np.nan)
            first = np.mod(90.0, spacing)
        aperture, obstruction = batch["aperture_mm"], batch["obstruction_mm"]
        area = vanes * params.vane_width_mm * (aperture - obstruction) / 2.0
        unknown = np.isnan(vanes)
        pattern = np.where(
            unknown, "unknown",
            np.where(vanes == 0, "none", "fans" if params.vane_shape == "curved" else "spikes"),
        )
        return {
            "spike_count": count,
            "spike_spacing_deg": spacing,
            "first_spike_from_vane_deg": first,
            "vane_area_mm2": area,
            "spike_energy_fraction": area / clear_area_mm2(aperture, obstruction),
            "pattern": pattern,
        }
