"""Why an output is null for a rig: one short sentence per null value, next to the values.

A comparison answer carries, beside each output's ``values``, ``null_reasons``: null when every value
is defined, else a list as long as ``values`` holding a sentence where the value is null and null
where it is not. The sentence comes from the first of these that has one:

1. the calculator's own :meth:`~calculators.base.Calculator.null_reasons` (a line outside the
   filter's passband, a design the formula does not model, a visual rig for an imaging output…);
2. the inputs the output declares it ``needs`` (:class:`~calculators.base.Output`) that the rig
   does not state ("not stated for this rig: telescope.mass_kg");
3. the batch columns the calculator reads that are missing for that rig (found once per calculator
   by watching which columns its compute reads), which is exact for a calculator whose outputs all
   need the same inputs and a list of candidates otherwise;
4. a generic sentence, when no input is missing (the formula is undefined for these inputs).

Reasons are worked out only for outputs that have a null, so a comparison without nulls pays one
``None in values`` test per output.
"""

from __future__ import annotations

import copy
import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from calculators.base import Calculator
from calculators.batch import RigBatch

#: Batch columns as the rig fields a person fills in (prefixes: the component slot).
COLUMN_FIELDS = {
    "aperture_mm": "telescope.aperture_mm", "focal_length_mm": "telescope.focal_length_mm",
    "obstruction_mm": "telescope.obstruction_mm", "telescope_mass_kg": "telescope.mass_kg",
    "tube_length_mm": "telescope.length_mm", "tube_diameter_mm": "telescope.tube_diameter_mm",
    "spider_vanes": "telescope.spider_vanes", "mirror_thickness_mm": "telescope.mirror_thickness_mm",
    "telescope_price": "telescope.price", "modifier_mass_kg": "modifier.mass_kg",
    "corrected_field_mm": "modifier.corrected_field_mm", "modifier_price": "modifier.price",
    "pixel_size_um": "camera.pixel_size_um", "width_px": "camera.width_px",
    "height_px": "camera.height_px", "quantum_efficiency": "camera.quantum_efficiency",
    "read_noise_e": "camera.read_noise_e", "dark_current_e_per_s": "camera.dark_current_e_per_s",
    "camera_mass_kg": "camera.mass_kg", "camera_price": "camera.price",
    "capacity_kg": "mount.capacity_kg", "mount_mass_kg": "mount.mass_kg", "mount_price": "mount.price",
    "accessories_price": "accessories.price", "payload_arm_mm": "geometry.payload_arm_mm",
    "counterweight_kg": "geometry.counterweight_kg", "train_mass_kg": "train.<element>.mass_kg",
    "train_price": "train.<element>.price", "flange_to_sensor_mm": "camera.flange_to_sensor_mm",
    "eyepiece_focal_length_mm": "train.<eyepiece>.focal_length_mm",
    "eyepiece_apparent_field_deg": "train.<eyepiece>.apparent_field_deg",
    "eyepiece_field_stop_mm": "train.<eyepiece>.field_stop_mm",
}

#: A camera always states its pixel pitch, so a missing pitch means the rig has no camera.
CAMERA_MARK = "pixel_size_um"
NO_CAMERA = "the rig has no camera (a visual rig): this figure is for imaging"
NO_EYEPIECE = "the rig has no eyepiece: this figure is for visual use"
UNDEFINED = "undefined for this rig's inputs (the formula gives no finite value)"

# calculator name -> the batch columns its compute reads (found once per process).
_READS: dict[str, frozenset[str]] = {}


class _Recording(Mapping[str, Any]):
    __slots__ = ("_columns", "seen")

    def __init__(self, columns: Mapping[str, Any]):
        self._columns = columns
        self.seen: set[str] = set()

    def __getitem__(self, name: str) -> Any:
        value = self._columns[name]
        self.seen.add(name)
        return value

    def __iter__(self):
        return iter(self._columns)

    def __len__(self) -> int:
        return len(self._columns)


def columns_read(calculator: Calculator, batch: RigBatch, params: Any) -> frozenset[str]:
    """The batch columns ``calculator.compute`` reads, recorded on one extra run (then cached)."""
    known = _READS.get(calculator.name)
    if known is not None:
        return known
    recording = _Recording(batch.columns)
    watched = copy.copy(batch)
    object.__setattr__(watched, "columns", recording)
    if hasattr(batch, "derived"):  # cached helpers would skip the reads we want to see
        object.__setattr__(watched, "derived", {})
    try:
        with np.errstate(all="ignore"):
            calculator.compute(watched, params)
    except Exception:  # a reason is a courtesy: never fail the answer over it
        return frozenset()
    _READS[calculator.name] = found = frozenset(recording.seen)
    return found


class Missing:
    """Which rigs of a comparison batch lack each column (NaN), worked out once per column and
    shared by every calculator of one comparison."""

    __slots__ = ("_batch", "_flags", "_texts")

    def __init__(self, batch: RigBatch):
        self._batch = batch
        self._flags: dict[str, list[bool]] = {}
        self._texts: dict[tuple[str, ...], list[str | None]] = {}

    def flags(self, column: str) -> list[bool]:
        found = self._flags.get(column)
        if found is None:
            values = self._batch.columns.get(column)
            values = None if values is None else np.asarray(values)
            if values is None or values.dtype.kind != "f":
                found = [False] * self._batch.size
            elif values.shape == self._batch.shape and values.ndim == 1:
                found = np.isnan(values).tolist()
            else:
                found = np.broadcast_to(np.isnan(values), self._batch.shape).reshape(-1).tolist()
            self._flags[column] = found
        return found

    def reasons(self, columns: tuple[str, ...]) -> list[str | None]:
        """Per rig, the sentence for lacking some of ``columns`` (None where it lacks none)."""
        found = self._texts.get(columns)
        if found is None:
            no_camera = self.flags(CAMERA_MARK) if CAMERA_MARK in columns else None
            flags = [(COLUMN_FIELDS.get(c, c), self.flags(c)) for c in columns]
            found = []
            for row in range(self._batch.size):
                if no_camera is not None and no_camera[row]:
                    found.append(NO_CAMERA)
                    continue
                missing = [field for field, lacking in flags if lacking[row]]
                found.append("not stated for this rig: " + ", ".join(dict.fromkeys(missing)) if missing else None)
            self._texts[columns] = found
        return found


def explain(
    calculator: Calculator, batch: RigBatch, params: Any, outputs: Mapping[str, list],
    missing: Missing | None = None,
) -> dict[str, list[str | None]]:
    """``{output: reasons}`` for each output whose JSON values hold a null (comparison batches).

    ``missing`` may be shared by the calculators of one comparison, so each column is looked at once.
    """
    nulls = {name: values for name, values in outputs.items() if None in values}
    if not nulls:
        return {}
    missing = missing or Missing(batch)
    try:
        own = calculator.null_reasons(batch, params) or {}
    except Exception:
        own = {}
    declared = {o.name: o.needs for o in calculator.outputs}
    read: list[str | None] | None = None
    combined: dict[tuple[int, tuple[str, ...]], list[str]] = {}  # outputs often share their reasons
    answer = {}
    for name, values in nulls.items():
        mine = own.get(name)
        needs = tuple(declared.get(name) or ())
        key = (id(mine), needs)
        sentences = combined.get(key)
        if sentences is None:
            if mine is not None:
                mine = np.asarray(mine)
                if mine.shape != batch.shape:
                    mine = np.broadcast_to(mine, batch.shape).reshape(-1)
                mine = mine.tolist()
            by_needs = missing.reasons(needs) if needs else None
            sentences = []
            for row in range(batch.size):
                text = (mine[row] or None) if mine is not None else None
                if text is None and by_needs is not None:
                    text = by_needs[row]
                if text is None:
                    if read is None:
                        read = missing.reasons(tuple(sorted(columns_read(calculator, batch, params))))
                    text = read[row]
                sentences.append(text or UNDEFINED)
            combined[key] = sentences
        answer[name] = [text if value is None else None for value, text in zip(values, sentences)]
    return answer
