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
    "counterweight_kg": "geometry.counterweight_kg",
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
    try:
        with np.errstate(all="ignore"):
            calculator.compute(watched, params)
    except Exception:  # a reason is a courtesy: never fail the answer over it
        return frozenset()
    _READS[calculator.name] = found = frozenset(recording.seen)
    return found


def _missing_flags(batch: RigBatch, column: str) -> list[bool] | None:
    """Which rigs lack ``column`` (NaN in a float column), worked out once per batch and column."""
    store = getattr(batch, "derived", None)
    key = f"{__name__}.missing.{column}"
    if store is not None and key in store:
        return store[key]
    values = batch.columns.get(column)
    if values is None:
        flags = None
    else:
        flat = np.asarray(values).reshape(-1)
        flags = np.isnan(flat).tolist() if flat.dtype.kind == "f" else [False] * flat.size
    if store is not None:
        store[key] = flags
    return flags


def _missing(batch: RigBatch, column: str, row: int) -> bool:
    flags = _missing_flags(batch, column)
    if not flags:
        return False
    return flags[row] if len(flags) > 1 else flags[0]


def _from_columns(batch: RigBatch, columns: Sequence[str], row: int) -> str | None:
    # Outputs of one calculator mostly share their columns: each (columns, row) is worked out once.
    store = getattr(batch, "derived", None)
    if store is None:
        return _sentence(batch, columns, row)
    memo = store.setdefault(f"{__name__}.from_columns", {})
    key = (tuple(columns), row)
    if key not in memo:
        memo[key] = _sentence(batch, columns, row)
    return memo[key]


def _sentence(batch: RigBatch, columns: Sequence[str], row: int) -> str | None:
    if CAMERA_MARK in columns and _missing(batch, CAMERA_MARK, row):
        return NO_CAMERA
    missing = [COLUMN_FIELDS.get(c, c) for c in columns if _missing(batch, c, row)]
    if not missing:
        return None
    return "not stated for this rig: " + ", ".join(dict.fromkeys(missing))


def explain(
    calculator: Calculator, batch: RigBatch, params: Any, outputs: Mapping[str, list]
) -> dict[str, list[str | None]]:
    """``{output: reasons}`` for each output whose JSON values hold a null (comparison batches)."""
    nulls = {name: values for name, values in outputs.items() if None in values}
    if not nulls:
        return {}
    try:
        own = calculator.null_reasons(batch, params) or {}
    except Exception:
        own = {}
    declared = {o.name: o.needs for o in calculator.outputs}
    read: Sequence[str] | None = None
    answer = {}
    for name, values in nulls.items():
        mine = own.get(name)
        mine = None if mine is None else np.broadcast_to(np.asarray(mine), batch.shape).reshape(-1)
        reasons: list[str | None] = []
        for row, value in enumerate(values):
            if value is not None:
                reasons.append(None)
                continue
            text = str(mine[row]) if mine is not None and mine[row] else None
            if text is None and declared.get(name):
                text = _from_columns(batch, declared[name], row)
            if text is None:
                if read is None:
                    read = sorted(columns_read(calculator, batch, params))
                text = _from_columns(batch, read, row)
            reasons.append(text or UNDEFINED)
        answer[name] = reasons
    return answer
