"""Compatibility: can this rig be assembled, and does the train deliver a field the sensor can use?

Per rig (batch-shaped like every calculator; "not stated" is a valid answer, never a failure):

* ``design_match``: every train element that names ``designs`` names the telescope's design (a
  telescope of design ``other``, the default, is taken as not stated and matches);
* ``focal_ratio_in_range``: the telescope's native focal ratio f/D lies within every stated
  ``focal_ratio_min``–``focal_ratio_max``;
* ``image_circle_mm``: the smallest stated circle at the sensor — the telescope's ``image_circle_mm``
  times the train's factor, and each element's circle times the factors behind it;
  ``image_circle_to_diagonal`` = that circle over the sensor diagonal (the eyepiece's field stop
  for a visual rig); below 1 the corners vignette;
* ``spacer_mm`` = backfocus + Σ t·(1 − 1/n) − lengths behind − flange_to_sensor_mm (see
  :mod:`calculators.train_columns`): spacers still needed to put the sensor where the element
  nearest the camera that states ``backfocus_mm`` wants it; negative means the train is too long;
* ``focus_margin_mm`` = outward_focus_travel_mm − (train length + flange − Σ filter shifts), for a
  train without focusing power; negative: the camera cannot reach focus.

``verdict``, first that applies: "wrong design", "focal ratio out of range", "cannot reach focus",
"too long" (spacer_mm below −tolerance), "vignettes", "fits with spacers" (spacer_mm above the
tolerance), "fits" (the image circle and, where needed, the backfocus are known and fine), else
"not stated". The first four say the rig cannot be assembled as given.

Sources: Hecht, E., *Optics*, 5th ed., 2017, §5.2.3 (thin lens); Smith, W. J., *Modern Optical
Engineering*, 4th ed., 2008, §2.6 (plane-parallel plate focus shift) — both from memory; the
rest is arithmetic on the stated distances.
"""

from __future__ import annotations

import numpy as np

from calculators.base import Calculator, NoParams, Output
from calculators.batch import RigBatch
from calculators.builtin.optics import sensor_diagonal_mm
from calculators.train_columns import DESIGN_ORDER

VERDICTS = ("wrong design", "focal ratio out of range", "cannot reach focus", "too long",
            "vignettes", "fits with spacers", "fits", "not stated")
#: Verdicts that say the rig cannot be assembled as given.
IMPOSSIBLE = frozenset(VERDICTS[:4])

_TOLERANCE = 1e-9  # relative slack on stated focal-ratio bounds (floating-point only)


def _design_bits(design: np.ndarray) -> np.ndarray:
    """Bit index of each telescope design; -1 for "other" (not stated) or one the mask lacks."""
    known = {d: i for i, d in enumerate(DESIGN_ORDER) if d != "other"}
    values, inverse = np.unique(np.asarray(design), return_inverse=True)
    bits = np.array([known.get(str(v), -1) for v in values], dtype=np.int64)
    return bits[inverse].reshape(np.shape(design))


def assessment(batch: RigBatch) -> dict[str, np.ndarray]:
    """The numeric and boolean outputs, and ``code``: the index of each rig's verdict in VERDICTS."""
    bits = _design_bits(batch["design"])
    mask = batch["train_design_mask"]
    design_match = (bits < 0) | (((mask >> np.maximum(bits, 0)) & 1) == 1)
    native = batch["focal_length_mm"] / batch["aperture_mm"]
    low, high = batch["train_focal_ratio_min"], batch["train_focal_ratio_max"]
    with np.errstate(invalid="ignore"):
        in_range = ~((native < low * (1 - _TOLERANCE)) | (native > high * (1 + _TOLERANCE)))
        circle = np.fmin(batch["telescope_image_circle_mm"] * batch["train_factor"],
                         batch["train_image_circle_mm"])
        diagonal = sensor_diagonal_mm(batch)
        diagonal = np.where(np.isfinite(diagonal), diagonal, batch["eyepiece_field_stop_mm"])
        ratio = circle / diagonal
        flange = np.where(batch["train_has_eyepiece"], 0.0, batch["flange_to_sensor_mm"])
        spacer = batch["train_backfocus_mm"] - batch["train_length_behind_mm"] - flange
        need = batch["train_length_mm"] + flange - batch["train_focus_shift_mm"]
        margin = np.where(batch["train_powered"], np.nan, batch["outward_focus_travel_mm"] - need)
        tolerance = batch["train_backfocus_tolerance_mm"]
        has_backfocus = np.isfinite(batch["train_backfocus_mm"])
        conditions = [
            ~design_match,
            ~in_range,
            margin < 0,
            spacer < -tolerance,
            ratio < 1,
            spacer > tolerance,
            np.isfinite(ratio) & (~has_backfocus | np.isfinite(spacer)),
        ]
    shape = np.broadcast_shapes(*(np.shape(c) for c in conditions))
    code = np.full(shape, len(VERDICTS) - 1, dtype=np.int64)
    for i in reversed(range(len(conditions))):
        code = np.where(conditions[i], i, code)
    return {
        "design_match": design_match, "focal_ratio_in_range": in_range, "image_circle_mm": circle,
        "image_circle_to_diagonal": ratio, "spacer_mm": spacer, "focus_margin_mm": margin,
        "code": code, "visual": batch["train_has_eyepiece"],
    }


def _reasons(out: dict[str, np.ndarray]) -> np.ndarray:
    code = out["code"]
    text = np.full(code.shape, "", dtype=object)

    def add(condition, words):
        nonlocal text
        text = np.where(np.broadcast_to(condition, code.shape), text + words, text)

    add(~out["design_match"], "an element is not made for this telescope design; ")
    add(~out["focal_ratio_in_range"], "the telescope's focal ratio is outside an element's range; ")
    with np.errstate(invalid="ignore"):
        add(out["focus_margin_mm"] < 0, "the train and camera are longer than the focus travel; ")
        add(code == 3, "the train is longer than the backfocus allows; ")
        small = out["image_circle_to_diagonal"] < 1
        add(small & ~out["visual"], "the image circle is smaller than the sensor diagonal; ")
        add(small & out["visual"], "the image circle is smaller than the eyepiece's field stop; ")
        add(code == 5, "spacers are needed to reach the backfocus; ")
    add(code == 7, "not enough is stated to check the fit; ")
    return np.array([t.rstrip("; ") for t in np.ravel(text)], dtype=str).reshape(code.shape)


#: Why spacer_mm or focus_margin_mm is null, in the order they are tried (see null_reasons).
NO_BACKFOCUS = "no element of the train states backfocus_mm: there is no backfocus to reach"
POWERED = ("the train changes the focal length (a barlow, reducer or another element with focusing "
           "power): where the focus falls behind it is not worked out")
NO_CAMERA_HERE = "the rig has no camera: there is no sensor to place"
NO_FLANGE = "not stated for this rig: camera.flange_to_sensor_mm"
NO_LENGTH = "not stated for this rig: train.<element>.optical_length_mm"
NO_TRAVEL = "not stated for this rig: telescope.outward_focus_travel_mm"


def _first(shape: tuple[int, ...], *cases: tuple[np.ndarray, str]) -> np.ndarray:
    """Per rig, the text of the first case whose condition holds ("" where none does)."""
    text = np.full(shape, "", dtype=object)
    for condition, words in reversed(cases):
        text = np.where(np.broadcast_to(condition, shape), words, text)
    return text


class Compatibility(Calculator):
    """Whether a rig can be assembled, and how its train meets the sensor (see the module docstring).

    >>> from calculators.schemas import Rig
    >>> rig = Rig(name="reduced refractor", telescope={"design": "refractor", "aperture_mm": 80,
    ...           "focal_length_mm": 480}, train=[{"kind": "reducer", "factor": 0.8,
    ...           "designs": ["refractor"], "image_circle_mm": 40, "backfocus_mm": 55}],
    ...           camera={"pixel_size_um": 3.8, "width_px": 6000, "height_px": 4000,
    ...           "flange_to_sensor_mm": 17.5})
    >>> out = Compatibility().compute(RigBatch.from_rigs([rig]), NoParams())
    >>> str(out["verdict"][0]), float(out["spacer_mm"][0])
    ('fits with spacers', 37.5)
    """

    name = "compatibility"
    version = "1.0.0"
    summary = "Whether the rig can be assembled: designs, focal ratios, backfocus and image circle."
    outputs = (
        Output("verdict", "", "fits, fits with spacers, vignettes, wrong design, focal ratio out of "
               "range, cannot reach focus, too long or not stated.", kind="text", label="Fit"),
        Output("reasons", "", "Why, in words ('' when it fits).", kind="text", label="Reasons"),
        Output("design_match", "", "Every element that names designs names this telescope's.",
               kind="boolean", label="Design suits"),
        Output("focal_ratio_in_range", "", "The native focal ratio is within every stated range.",
               kind="boolean", label="Focal ratio suits"),
        Output("image_circle_mm", "mm", "Smallest stated image circle at the sensor.",
               nullable=True, label="Image circle"),
        Output("image_circle_to_diagonal", "", "Image circle over the sensor diagonal (or the "
               "eyepiece's field stop); below 1 the corners vignette.", nullable=True,
               label="Circle / diagonal"),
        Output("spacer_mm", "mm", "Spacers still needed to reach the backfocus; negative: the "
               "train is too long.", nullable=True, label="Spacers needed"),
        Output("focus_margin_mm", "mm", "Outward focus travel left with the train and camera "
               "(trains without focusing power); negative: cannot reach focus.", nullable=True,
               label="Focus margin"),
    )
    sources = (
        "Hecht, E., Optics, 5th ed., Pearson 2017, §5.2.3: thin lens, m = 1 − d/f (positive lens), "
        "m = 1 + d/f (negative lens) — from memory.",
        "Smith, W. J., Modern Optical Engineering, 4th ed., McGraw-Hill 2008, §2.6: a plane-parallel "
        "plate moves the focus by t·(1 − 1/n) — from memory.",
    )

    def null_reasons(self, batch: RigBatch, params: NoParams) -> dict[str, np.ndarray]:
        """Why ``spacer_mm`` or ``focus_margin_mm`` is null, in the rig's own fields (the generic
        fallback would list the train's derived columns, which no one fills in)."""
        visual = np.asarray(batch["train_has_eyepiece"], dtype=bool)
        no_camera = np.isnan(batch["pixel_size_um"]) & ~visual
        no_flange = np.isnan(batch["flange_to_sensor_mm"]) & ~visual
        shape = batch.shape
        spacer = _first(
            shape,
            (np.isnan(batch["train_backfocus_mm"]), NO_BACKFOCUS),
            (no_camera, NO_CAMERA_HERE),
            (no_flange, NO_FLANGE),
            (np.isnan(batch["train_length_behind_mm"]), NO_LENGTH),
        )
        margin = _first(
            shape,
            (np.asarray(batch["train_powered"], dtype=bool), POWERED),
            (np.isnan(batch["outward_focus_travel_mm"]), NO_TRAVEL),
            (no_camera, NO_CAMERA_HERE),
            (no_flange, NO_FLANGE),
            (np.isnan(batch["train_length_mm"]), NO_LENGTH),
        )
        return {"spacer_mm": spacer, "focus_margin_mm": margin}

    def compute(self, batch: RigBatch, params: NoParams) -> dict[str, np.ndarray]:
        out = assessment(batch)
        verdict = np.asarray(VERDICTS)[out["code"]]
        shape = out["code"].shape
        return {
            "verdict": verdict,
            "reasons": _reasons(out),
            "design_match": np.broadcast_to(out["design_match"], shape),
            "focal_ratio_in_range": np.broadcast_to(out["focal_ratio_in_range"], shape),
            "image_circle_mm": out["image_circle_mm"],
            "image_circle_to_diagonal": out["image_circle_to_diagonal"],
            "spacer_mm": out["spacer_mm"],
            "focus_margin_mm": out["focus_margin_mm"],
        }
