"""A minimal rigbench calculator plugin: the diagonal of each rig's sensor.

Formula: d = p·√(w² + h²) / 1000 [mm], p the pixel pitch in µm, w × h the pixel grid (Pythagoras).
Example: 3.8 µm pixels in a 6000 × 4000 grid give a 27.40 mm diagonal.
"""

import numpy as np
from pydantic import Field

from calculators.base import Calculator, Output
from calculators.schemas import Strict


class SensorDiagonalParams(Strict):
    # Every field needs a default: the calculator must compute for any rig without params.
    margin_mm: float = Field(default=0.0, ge=0, description="Added to the diagonal, e.g. for filter edges.")


class SensorDiagonal(Calculator):
    name = "sensor_diagonal"
    version = "1.0.0"
    summary = "Diagonal of the camera's sensor, to compare with an image circle."
    Params = SensorDiagonalParams
    outputs = (Output("sensor_diagonal_mm", "mm", "Diagonal of the pixel grid plus the margin."),)
    sources = ("Pythagoras: d = p·√(w² + h²).",)

    def compute(self, batch, params):
        # Columns broadcast: (n,) in a comparison, (1, C, 1, 1) for cameras in a sweep.
        diagonal_px = np.hypot(batch["width_px"], batch["height_px"])
        return {"sensor_diagonal_mm": batch["pixel_size_um"] * diagonal_px / 1000 + params.margin_mm}
