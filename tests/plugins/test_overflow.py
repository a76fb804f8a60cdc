"""plugins/runner.py: an overflow on one rig's inputs nulls that rig's values, with a reason, and
leaves the others; no numpy warning escapes to stderr."""

from __future__ import annotations

import math
import warnings

import numpy as np

from calculators.base import Calculator, NoParams, Output
from calculators.batch import RigBatch
from calculators.schemas import Rig
from plugin_fakes import LIGHT_GRASP, builtin
from plugins.compare import compare
from plugins.registry import load_registry
from plugins.runner import run


class TenToTheAperture(Calculator):
    """10^(1.6·D/mm): overflows a float (above about 1.8e308) for apertures above 192.6 mm."""

    name = "ten_to_the_aperture"
    version = "1.0.0"
    summary = "Grows too fast on purpose."
    Params = NoParams
    outputs = (Output("value", "", "10 to the power 1.6 D.", label="Ten to the aperture"),)
    sources = ("Arithmetic.",)

    def compute(self, batch, params):
        return {"value": np.power(10.0, 1.6 * batch["aperture_mm"])}


def rig(aperture_mm: float) -> Rig:
    return Rig.model_validate({"name": f"{aperture_mm} mm", "camera": {"pixel_size_um": 3.8, "width_px": 100, "height_px": 100},
                               "telescope": {"aperture_mm": aperture_mm, "focal_length_mm": aperture_mm * 5}})


def test_an_overflow_nulls_only_the_rows_it_happens_in_and_warns_nobody():
    batch = RigBatch.from_rigs([rig(100), rig(250), rig(150)])
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # a numpy RuntimeWarning would raise here
        outcome = run(TenToTheAperture(), batch, NoParams())
    assert outcome.error is None
    assert outcome.row_errors == {1: ["value"]}
    values = outcome.values["value"].tolist()
    # 10^160 and 10^240 are finite doubles; 10^400 is not
    assert math.isclose(values[0], 1e160, rel_tol=1e-12) and math.isclose(values[2], 1e240, rel_tol=1e-12)


def test_a_comparison_reports_the_overflowing_rig_and_keeps_the_others():
    registry = load_registry([builtin(*LIGHT_GRASP), builtin("ten_to_the_aperture", "test_overflow:TenToTheAperture")])
    result = compare([rig(100), rig(250)], ["ten_to_the_aperture", "light_grasp"], registry=registry)
    overflowing = result.results["ten_to_the_aperture"]
    assert overflowing.error is None
    assert overflowing.outputs["value"].values[0] > 0 and overflowing.outputs["value"].values[1] is None
    [row_error] = overflowing.row_errors
    assert row_error.rig == 1 and "value" in row_error.reason
    assert result.results["light_grasp"].row_errors == []


def test_every_row_non_finite_is_still_a_broken_calculator():
    class AlwaysInfinite(TenToTheAperture):
        def compute(self, batch, params):
            return {"value": np.full(batch.shape, np.inf)}

    outcome = run(AlwaysInfinite(), RigBatch.from_rigs([rig(100), rig(150)]), NoParams())
    assert "declared finite" in outcome.error
