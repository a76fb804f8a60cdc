"""Small test-only calculators for the evaluation engine's tests and benchmark.

They follow the ``Calculator`` contract like any plugin and exercise what a sweep meets: outputs
over one, two, three or four component axes, a relative output, nullable outputs, text and boolean
outputs, params, and a batch-wide refusal (prices in several currencies). They are stand-ins until
the built-in calculators land; they are not the built-ins' formulas in every detail.
"""

from __future__ import annotations

import numpy as np
from pydantic import Field

from calculators.base import Calculator, Output
from calculators.batch import PRICE_SLOTS, RigBatch
from calculators.builtin.light_grasp import clear_area_mm2
from calculators.errors import CalculationError
from calculators.schemas import Strict

#: Arcseconds per radian, 180·3600/π (definition of the arcsecond).
ARCSEC_PER_RADIAN = 180 * 3600 / np.pi


class Optics(Calculator):
    """Effective focal ratio N = f·k/D, small-angle pixel scale s = p/(f·k) rad (p in µm, f in mm:
    s = 206.265·p/f arcsec), and the exposure time relative to the baseline for equal signal per
    unit sky area, ∝ 1/(A_clear·τ)."""

    name = "optics"
    version = "0.0.1"
    summary = "Test stand-in: effective focal ratio, pixel scale, relative exposure time."
    outputs = (
        Output("focal_ratio", "", "Effective focal ratio."),
        Output("pixel_scale_arcsec", "arcsec", "Sky angle per pixel."),
        Output("time_factor", "", "Exposure time relative to the baseline.", relative=True),
        Output("is_fast", "", "Faster than f/5.", kind="boolean"),
        Output("label", "", "fast or slow.", kind="text"),
    )
    sources = ("Small-angle image scale θ = p/f (plane geometry); 206 265 arcsec per radian.",)

    def compute(self, batch: RigBatch, params) -> dict[str, np.ndarray]:
        focal_mm = batch["focal_length_mm"] * batch["modifier_factor"]
        ratio = focal_mm / batch["aperture_mm"]
        signal = (clear_area_mm2(batch["aperture_mm"], batch["obstruction_mm"])
                  * batch["telescope_throughput"] * batch["modifier_throughput"])
        return {
            "focal_ratio": ratio,
            "pixel_scale_arcsec": ARCSEC_PER_RADIAN * 1e-3 * batch["pixel_size_um"] / focal_mm,
            "time_factor": batch.relative(1 / signal),
            "is_fast": ratio < 5,
            "label": np.where(ratio < 5, "fast", "slow"),
        }


class LoadParams(Strict):
    extra_kg: float = Field(default=0.0, ge=0, le=1000, description="Mass added to every payload.")


class Load(Calculator):
    """Payload m = telescope + modifier + camera (+ extra) in kg, and its fraction of the mount's
    rated capacity (null without a mount)."""

    name = "load"
    version = "0.0.1"
    summary = "Test stand-in: payload mass and fraction of the mount's capacity."
    Params = LoadParams
    outputs = (
        Output("payload_kg", "kg", "Instrument payload.", nullable=True),
        Output("capacity_fraction", "", "Payload ÷ rated capacity.", nullable=True),
    )
    sources = ("Sum of masses (additivity of mass).",)
    cautions = ("Stand-in figures only; defer to the mount maker's rating.",)

    def compute(self, batch: RigBatch, params: LoadParams) -> dict[str, np.ndarray]:
        payload = (batch["telescope_mass_kg"] + batch["modifier_mass_kg"]
                   + batch["camera_mass_kg"] + params.extra_kg)
        return {"payload_kg": payload, "capacity_fraction": payload / batch["capacity_kg"]}


def batch_currency(batch: RigBatch) -> str:
    """The one currency of every priced component in the batch; refuse several."""
    found: set[str] = set()
    for slot in PRICE_SLOTS:
        found.update(str(c) for c in np.unique(batch[f"{slot}_currency"]) if c)
    if len(found) > 1:
        raise CalculationError(f"prices are in several currencies ({', '.join(sorted(found))})")
    return found.pop() if found else ""


class Price(Calculator):
    """Total price: the sum of the priced components (unpriced ones count as 0), one currency."""

    name = "price"
    version = "0.0.1"
    summary = "Test stand-in: total price of the priced components."
    outputs = (Output("total_price", "", "Sum of the component prices."),)
    sources = ("Addition.",)

    def compute(self, batch: RigBatch, params) -> dict[str, np.ndarray]:
        batch_currency(batch)
        total = 0.0
        for slot in ("telescope", "modifier", "camera", "mount"):
            price = batch[f"{slot}_price"]
            total = total + np.where(np.isnan(price), 0.0, price)
        return {"total_price": total}

    def output_units(self, batch: RigBatch, params) -> dict[str, str]:
        return {"total_price": batch_currency(batch)}


class Broken(Calculator):
    """Fails on every batch, as a buggy plugin might."""

    name = "broken"
    version = "0.0.1"
    summary = "Test stand-in that always fails."
    outputs = (Output("value", "", "Never computed."),)
    sources = ("None.",)

    def compute(self, batch: RigBatch, params) -> dict[str, np.ndarray]:
        return {"value": 1 // 0}


class Misshapen(Broken):
    """Returns an array that cannot broadcast against the batch."""

    name = "misshapen"
    summary = "Test stand-in with a wrongly shaped output."
    outputs = (Output("value", "", "Wrong shape."),)

    def compute(self, batch: RigBatch, params) -> dict[str, np.ndarray]:
        return {"value": np.zeros((batch.shape[0] + 1,) + (1,) * (len(batch.shape) - 1))}


STAND_INS = (Optics(), Load(), Price())
