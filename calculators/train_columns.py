"""Batch columns of imaging trains: one value per train, folded from its ordered elements.

A train is folded once, in Python, into a handful of numbers (its combined factor, smallest image
circle, the backfocus its corrector needs, ...); calculators then read only numpy columns. A missing
optional value is NaN and a missing text is "" (see :mod:`calculators.batch` for the whole list).

Backfocus (the element nearest the camera that states ``backfocus_mm`` sets it; elements are thin
along the axis unless they state ``optical_length_mm``):

* ``train_backfocus_mm`` = backfocus_mm + Σ t·(1 − 1/n) over the filters behind that element — the
  mechanical distance needed from its rear face to the sensor, each filter pushing the focus back by
  its focus shift (Smith 2008, see :mod:`calculators.train_elements`);
* ``train_length_behind_mm`` = Σ optical_length_mm of the elements behind it (a filter 0 unless it
  states one); NaN when one of them does not state its length (a spacer always does);
* the compatibility calculator adds the camera's flange distance: spacers still needed
  = train_backfocus_mm − train_length_behind_mm − flange_to_sensor_mm.

Worked example (written down for the tests): a reducer needing 55.0 mm, then a filter wheel
20.0 mm long holding a 2.0 mm filter of n = 1.5 (shift 2·(1 − 1/1.5) = 0.667 mm), then a camera
with 17.5 mm flange distance: spacer = 55.0 + 0.667 − 20.0 − 17.5 = 18.17 mm.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from functools import cache

import numpy as np

from calculators.ownership import purchase_sum
from calculators.schemas import Design
from calculators.train_elements import (
    DEFAULT_BACKFOCUS_TOLERANCE_MM,
    POWERED,
    ElementKind,
    train_factor,
)

NAN = float("nan")

#: Bit of each design in ``train_design_mask`` (bit i: ``DESIGN_ORDER[i]``).
DESIGN_ORDER: tuple[str, ...] = tuple(d.value for d in Design)
ANY_DESIGN = (1 << len(DESIGN_ORDER)) - 1

FLOAT_NAMES = (
    "train_factor", "train_throughput", "train_mass_kg", "train_price", "train_purchase_price",
    "train_image_circle_mm", "train_corrected_field_mm",
    "train_focal_ratio_min", "train_focal_ratio_max",
    "train_backfocus_mm", "train_backfocus_tolerance_mm", "train_length_behind_mm",
    "train_length_mm", "train_focus_shift_mm", "train_elements",
    "filter_centre_nm", "filter_bandwidth_nm", "filter_peak_transmission", "filter_thickness_mm",
    "eyepiece_focal_length_mm", "eyepiece_apparent_field_deg", "eyepiece_field_stop_mm",
    "eyepiece_eye_relief_mm",
)


def _first(values):
    for v in values:
        if v is not None:
            return float(v)
    return NAN


def _sum_or_nan(values) -> float:
    total = 0.0
    for v in values:
        if v is None:
            return NAN
        total += v
    return total


def fold(train: Sequence) -> tuple[dict[str, float], dict[str, object]]:
    """One train's numeric values and its text/boolean values."""
    optics = [e for e in train if e.kind in POWERED]
    filters = [e for e in train if e.kind == ElementKind.filter]
    eyepiece = train[-1] if train and train[-1].kind == ElementKind.eyepiece else None

    # Each stated circle is where its element delivers it; later elements scale it by their factors.
    circles, corrected = [], []
    for i, e in enumerate(train):
        circle = getattr(e, "image_circle_mm", None)
        if circle is not None:
            scaled = circle * train_factor(train[i + 1:])
            circles.append(scaled)
            if e.kind in POWERED:
                corrected.append(scaled)

    def length(e):
        if e.kind == ElementKind.eyepiece:
            return 0.0
        value = getattr(e, "optical_length_mm", None)
        if value is None and e.kind == ElementKind.filter:
            return 0.0  # sits in a wheel, a drawer or a thread
        return value

    def shift(e):
        return 0.0 if e.kind != ElementKind.filter else e.focus_shift_mm

    last_bf = max((i for i, e in enumerate(train) if getattr(e, "backfocus_mm", None) is not None),
                  default=None)
    if last_bf is None:
        backfocus = tolerance = behind = NAN
    else:
        e = train[last_bf]
        after = train[last_bf + 1:]
        shifts = _sum_or_nan(shift(x) for x in after)
        backfocus = e.backfocus_mm + shifts
        tolerance = (e.backfocus_tolerance_mm if e.backfocus_tolerance_mm is not None
                     else DEFAULT_BACKFOCUS_TOLERANCE_MM)
        behind = _sum_or_nan(length(x) for x in after)

    masses = [e.mass_kg if e.mass_kg is not None or e.kind != ElementKind.filter else 0.0
              for e in train]
    priced = [e.price for e in train if e.price is not None]
    mins = [e.focal_ratio_min for e in optics if e.focal_ratio_min is not None]
    maxes = [e.focal_ratio_max for e in optics if e.focal_ratio_max is not None]
    mask = ANY_DESIGN
    for e in optics:
        if e.designs:
            mask &= sum(1 << DESIGN_ORDER.index(d.value) for d in e.designs)

    numbers = {
        "train_factor": train_factor(train),
        "train_throughput": math.prod(e.effective_throughput for e in optics),
        "train_mass_kg": _sum_or_nan(masses),
        "train_price": sum(p.amount for p in priced) if priced else NAN,
        "train_purchase_price": purchase_sum(train),
        "train_image_circle_mm": min(circles, default=NAN),
        "train_corrected_field_mm": min(corrected, default=NAN),
        "train_focal_ratio_min": max(mins, default=NAN),
        "train_focal_ratio_max": min(maxes, default=NAN),
        "train_backfocus_mm": backfocus,
        "train_backfocus_tolerance_mm": tolerance,
        "train_length_behind_mm": behind,
        "train_length_mm": _sum_or_nan(length(x) for x in train),
        "train_focus_shift_mm": _sum_or_nan(shift(x) for x in train),
        "train_elements": float(len(train)),
        "filter_centre_nm": _first(f.centre_nm for f in filters),
        "filter_bandwidth_nm": _first(f.bandwidth_nm for f in filters),
        "filter_peak_transmission": _first(f.peak_transmission for f in filters),
        "filter_thickness_mm": _first(f.thickness_mm for f in filters),
        "eyepiece_focal_length_mm": NAN if eyepiece is None else eyepiece.focal_length_mm,
        "eyepiece_apparent_field_deg": _first([eyepiece and eyepiece.apparent_field_deg]),
        "eyepiece_field_stop_mm": _first([eyepiece and eyepiece.field_stop_mm]),
        "eyepiece_eye_relief_mm": _first([eyepiece and eyepiece.eye_relief_mm]),
    }
    texts = {
        "train_kinds": ",".join(e.kind.value for e in train),
        "train_currency": priced[0].currency if priced else "",
        "train_design_mask": mask,
        "train_has_corrector": any(e.kind == ElementKind.corrector for e in train),
        "train_powered": bool(optics),
        "train_has_eyepiece": eyepiece is not None,
        "modifier_kind": optics[0].kind.value if optics else "",
    }
    return numbers, texts


@cache
def _nothing_folded() -> tuple[dict[str, float], dict[str, object]]:
    # Most rigs of a comparison have no train (the camera on the telescope): the same fold every
    # time, worked out once per process (it costs more than the rest of the columns together).
    return fold([])


#: Old names of the single-modifier slot, kept for one release (plugins may read them): the same
#: arrays as the new columns they alias.
OLD_ALIASES = {
    "modifier_factor": "train_factor", "modifier_throughput": "train_throughput",
    "modifier_mass_kg": "train_mass_kg", "modifier_price": "train_price",
    "modifier_currency": "train_currency", "corrected_field_mm": "train_corrected_field_mm",
}

#: Up to this many rigs without a train, the columns are copies of ones made once per size.
SMALL_BATCH_ROWS = 64


def train_columns(trains: Sequence[Sequence]) -> dict[str, np.ndarray]:
    """Columns of shape ``(len(trains),)``; each train is a list of validated elements."""
    if len(trains) <= SMALL_BATCH_ROWS and not any(trains):
        # A comparison of rigs without a train: fresh copies (a calculator may own what it is
        # given) of columns folded once per size, a third of the cost of building them.
        table, others = _no_train_columns(len(trains))
        columns = dict(zip(FLOAT_NAMES, table.copy()))  # one copy; each column a row of it
        columns.update({name: values.copy() for name, values in others.items()})
    else:
        columns = _columns([fold(list(t)) if t else _nothing_folded() for t in trains])
    columns.update({old: columns[new] for old, new in OLD_ALIASES.items()})
    columns["modifier_kind"] = columns.pop("modifier_kind")  # last, where it has always been
    return columns


@cache
def _no_train_columns(n: int) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    columns = _columns([_nothing_folded()] * n)
    table = np.array([columns.pop(name) for name in FLOAT_NAMES])
    return table, columns


def _columns(folded: list[tuple[dict[str, float], dict[str, object]]]) -> dict[str, np.ndarray]:
    n = len(folded)
    table = np.array([[f[0][name] for name in FLOAT_NAMES] for f in folded],
                     dtype=np.float64).reshape(n, len(FLOAT_NAMES)).T.copy()
    columns = dict(zip(FLOAT_NAMES, table))
    columns["train_kinds"] = np.array([f[1]["train_kinds"] for f in folded], dtype=str)
    columns["train_currency"] = np.array([f[1]["train_currency"] for f in folded], dtype="U3")
    columns["train_design_mask"] = np.array([f[1]["train_design_mask"] for f in folded], dtype=np.int64)
    for name in ("train_has_corrector", "train_powered", "train_has_eyepiece"):
        columns[name] = np.array([f[1][name] for f in folded], dtype=bool)
    columns["modifier_kind"] = np.array([f[1]["modifier_kind"] for f in folded], dtype=str)
    return columns


#: Train columns an eyepiece on the sweep's camera axis changes, and how (see
#: :func:`with_eyepiece_axis`).
EYEPIECE_COLUMNS = ("eyepiece_focal_length_mm", "eyepiece_apparent_field_deg",
                    "eyepiece_field_stop_mm", "eyepiece_eye_relief_mm")


def _add_prices(a, b):
    return np.where(np.isnan(a), b, np.where(np.isnan(b), a, a + b))


def with_eyepiece_axis(trains: dict[str, np.ndarray], eyepieces: dict[str, np.ndarray]) -> dict:
    """Train columns of a sweep whose camera axis also holds eyepieces (an evaluation's
    ``eyepieces``): each train is then read as the train followed by the camera-axis entry's
    eyepiece, exactly as :func:`fold` reads a train that ends in it. ``trains`` lie along the train
    axis, ``eyepieces`` (the :func:`train_columns` of one-element or empty trains) along the camera
    axis; the columns an eyepiece changes broadcast to camera × train, the others stay as they are.
    """
    out = dict(trains)
    for name in EYEPIECE_COLUMNS:
        mine, theirs = eyepieces[name], trains[name]
        out[name] = mine if np.isnan(theirs).all() else np.where(np.isnan(mine), theirs, mine)
    out["train_has_eyepiece"] = trains["train_has_eyepiece"] | eyepieces["train_has_eyepiece"]
    out["train_mass_kg"] = trains["train_mass_kg"] + eyepieces["train_mass_kg"]
    out["train_price"] = _add_prices(trains["train_price"], eyepieces["train_price"])
    out["train_purchase_price"] = _add_prices(trains["train_purchase_price"],
                                              eyepieces["train_purchase_price"])
    out["train_currency"] = np.where(trains["train_currency"] == "", eyepieces["train_currency"],
                                     trains["train_currency"])
    out["train_elements"] = trains["train_elements"] + eyepieces["train_elements"]
    added = eyepieces["train_kinds"] != ""
    out["train_kinds"] = np.where(
        added, np.char.add(trains["train_kinds"],
                           np.where(trains["train_kinds"] == "", "eyepiece", ",eyepiece")),
        trains["train_kinds"])
    out.update(modifier_mass_kg=out["train_mass_kg"], modifier_price=out["train_price"],
               modifier_currency=out["train_currency"])
    return out
