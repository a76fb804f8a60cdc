"""plugins/null_reasons.py: every null in a comparison says why, next to the values."""

from __future__ import annotations

import numpy as np

from calculators.base import Calculator, Output
from plugins.compare import compare
from plugins.null_reasons import NO_CAMERA, UNDEFINED, explain
from plugins.registry import CalculatorEntry, Registry

FULL = {"name": "full", "telescope": {"aperture_mm": 200, "focal_length_mm": 1000, "obstruction_mm": 70,
                                      "mass_kg": 9, "tube_diameter_mm": 235, "length_mm": 950},
        "camera": {"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000, "quantum_efficiency": 0.8,
                   "read_noise_e": 1.5, "dark_current_e_per_s": 0.003, "mass_kg": 0.7}}
BARE = {"name": "bare", "telescope": {"aperture_mm": 100, "focal_length_mm": 500},
        "camera": {"pixel_size_um": 3.0, "width_px": 2000, "height_px": 1000}}


def test_a_missing_camera_figure_is_named_for_that_rig_only():
    out = compare([FULL, BARE], ["integration_time"]).results["integration_time"].outputs
    total = out["total_time_s"]
    assert total.values[0] is not None and total.values[1] is None
    assert total.null_reasons[0] is None
    assert "camera.quantum_efficiency" in total.null_reasons[1]


def test_no_null_means_no_reasons():
    out = compare([FULL], ["light_grasp"]).results["light_grasp"].outputs
    assert all(data.null_reasons is None for data in out.values())


def test_reasons_are_as_long_as_values_and_point_at_each_null():
    result = compare([FULL, BARE], ["payload"]).results["payload"]
    for name, data in result.outputs.items():
        if data.null_reasons is None:
            assert None not in data.values
            continue
        assert len(data.null_reasons) == len(data.values)
        for value, reason in zip(data.values, data.null_reasons):
            assert (value is None) == (reason is not None), name
    # The bare rig states no telescope mass, so its payload is null for that reason.
    assert "telescope.mass_kg" in result.outputs["payload_kg"].null_reasons[1]


class Picky(Calculator):
    name = "picky"
    version = "1.0.0"
    summary = "A test calculator with its own reasons and declared needs."
    outputs = (
        Output("own", "", "Null with the calculator's reason.", nullable=True),
        Output("needs", "", "Null when read noise is missing.", nullable=True, needs=("read_noise_e",)),
        Output("undefined", "", "Always NaN.", nullable=True),
    )
    sources = ("test",)

    def compute(self, batch, params):
        nan = np.full(batch.shape, np.nan)
        return {"own": nan, "needs": batch["read_noise_e"] * 1.0, "undefined": np.full(batch.shape, np.nan)}

    def null_reasons(self, batch, params):
        return {"own": np.full(batch.shape, "picky says no")}


def test_own_reasons_then_declared_needs_then_the_generic_sentence():
    registry = Registry(entries=[CalculatorEntry("picky", "rigbench", "0", "loaded", calculator=Picky())])
    out = compare([FULL, BARE], ["picky"], registry=registry).results["picky"].outputs
    assert out["own"].null_reasons == ["picky says no", "picky says no"]
    assert out["needs"].null_reasons == [None, "not stated for this rig: camera.read_noise_e"]
    # No declared needs: the inputs the calculator reads that the rig lacks are the candidates, and
    # with none missing the generic sentence stands.
    assert out["undefined"].null_reasons == [UNDEFINED, "not stated for this rig: camera.read_noise_e"]


class Broken(Picky):
    name = "broken"

    def null_reasons(self, batch, params):
        raise RuntimeError("boom")


def test_a_failing_reason_hook_never_fails_the_answer():
    from calculators.batch import RigBatch
    from calculators.schemas import Rig

    batch = RigBatch.from_rigs([Rig.model_validate(BARE)])
    reasons = explain(Broken(), batch, None, {"own": [None], "needs": [None]})
    assert reasons["own"] == ["not stated for this rig: camera.read_noise_e"]  # from the columns read
    assert reasons["needs"] == ["not stated for this rig: camera.read_noise_e"]
    assert NO_CAMERA  # the visual-rig sentence exists for rigs without a camera
