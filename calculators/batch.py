"""A batch of rigs as numpy columns, one element (or one axis position) per rig.

Calculators read columns by name, always with elementwise numpy operations that broadcast. Two
shapes of batch exist and calculators must not care which they get:

* a **comparison batch** (:meth:`RigBatch.from_rigs`): every column has shape ``(n,)``, one row per rig;
* a **sweep batch** (:meth:`RigBatch.from_components`): each component kind lies along its own axis
  (telescope, camera, train, mount) so telescope columns have shape ``(T, 1, 1, 1)``, camera columns
  ``(1, C, 1, 1)`` and so on. An output is then computed only over the axes it depends on, and
  broadcasting builds the cartesian product only where it is really needed.

Columns (canonical units in the names; a missing optional value is NaN, a missing text is ""):

==========================  =====================================================================
telescope                   ``aperture_mm``, ``focal_length_mm``, ``obstruction_mm``,
                            ``telescope_throughput`` (given or the design default), ``design``,
                            ``telescope_mass_kg``, ``tube_length_mm``, ``tube_diameter_mm``,
                            ``spider_vanes``, ``mirror_thickness_mm``, ``telescope_price``,
                            ``telescope_currency``, ``telescope_image_circle_mm``,
                            ``outward_focus_travel_mm``
train (empty: neutral)      ``train_factor`` (product of the factors, 1), ``train_throughput``
                            (product over the powered elements, 1; filters are not in it),
                            ``train_mass_kg`` (0; NaN when an element but a filter has no mass),
                            ``train_price``, ``train_currency``, ``train_image_circle_mm``
                            (smallest stated circle, scaled by the factors behind it),
                            ``train_corrected_field_mm`` (the same over powered elements),
                            ``train_focal_ratio_min`` / ``_max`` (the tightest stated range),
                            ``train_design_mask`` (int: bit i set when the train suits design
                            ``DESIGN_ORDER[i]``), ``train_backfocus_mm``,
                            ``train_backfocus_tolerance_mm``, ``train_length_behind_mm``,
                            ``train_length_mm``, ``train_focus_shift_mm``, ``train_elements``
                            (count), ``train_kinds`` ("reducer,filter"), ``train_has_corrector``,
                            ``train_powered``, ``train_has_eyepiece`` (booleans); the train's first
                            filter: ``filter_centre_nm``, ``filter_bandwidth_nm``,
                            ``filter_peak_transmission``, ``filter_thickness_mm``; its eyepiece:
                            ``eyepiece_focal_length_mm``, ``eyepiece_apparent_field_deg``,
                            ``eyepiece_field_stop_mm``, ``eyepiece_eye_relief_mm``
                            (see :mod:`calculators.train_columns`). Old names, kept for one
                            release: ``modifier_factor``, ``modifier_throughput``,
                            ``modifier_mass_kg``, ``modifier_price``, ``modifier_currency``,
                            ``corrected_field_mm``, ``modifier_kind`` (the first powered element's)
camera (none: NaN, "")      ``pixel_size_um``, ``width_px``, ``height_px``, ``quantum_efficiency``,
                            ``read_noise_e``, ``dark_current_e_per_s``, ``camera_mass_kg``,
                            ``camera_price``, ``camera_currency``, ``flange_to_sensor_mm``,
                            ``sensor`` ("mono", "colour" or "" when not stated), ``binning``
                            (the factor the camera is read at, 1; the pixel columns stay the
                            sensor's own, see :mod:`calculators.binning`)
mount (none: NaN)           ``mount_type``, ``capacity_kg``, ``mount_mass_kg``, ``mount_price``,
                            ``mount_currency``
accessories (summed)        ``accessories_mass_kg`` (0), ``accessories_price``, ``accessories_currency``
geometry                    ``payload_arm_mm``, ``counterweight_kg``
==========================  =====================================================================

Price columns come in threes: ``<slot>_price`` (NaN when unpriced), ``<slot>_currency`` and
``<slot>_purchase_price``, the price of the slot's parts not marked owned (NaN when none of those is
priced; see :mod:`calculators.ownership`): equal to ``<slot>_price`` when nothing is owned.

Quantities that several calculators derive from the same columns (clear area, effective focal length,
sensor size, field solid angle) are computed once per batch: a helper decorated with :func:`per_batch`
keeps its result on the batch, read-only, so the calculators that ask later get the very same array.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, TypeVar

import numpy as np

from calculators.ownership import is_owned, purchase_sum
from calculators.schemas import Accessory, Camera, Geometry, Modifier, Mount, Price, Rig, Telescope
from calculators.train_columns import train_columns, with_eyepiece_axis
from calculators.train_elements import train_element

NAN = float("nan")

#: Slots that carry a price column pair, in the order they are added up.
PRICE_SLOTS = ("telescope", "train", "camera", "mount", "accessories")

#: Sweep axes, in order.
AXES = ("telescope", "camera", "train", "mount")


def _amount(price: Price | None) -> float:
    return NAN if price is None else price.amount


def _currency(price: Price | None) -> str:
    return "" if price is None else price.currency


def _purchase(item) -> float:
    """The price still to pay for a part: NaN when it is owned or unpriced."""
    return NAN if is_owned(item) else _amount(item.price)


def _opt(value: float | None) -> float:
    return NAN if value is None else float(value)


def telescope_columns(telescopes: Sequence[Telescope]) -> dict[str, np.ndarray]:
    rows = [
        (
            t.aperture_mm, t.focal_length_mm, t.obstruction_mm, t.effective_throughput,
            _opt(t.mass_kg), _opt(t.length_mm), _opt(t.tube_diameter_mm), _opt(t.spider_vanes),
            _opt(t.mirror_thickness_mm), _amount(t.price), _opt(t.image_circle_mm),
            _opt(t.outward_focus_travel_mm), _purchase(t),
        )
        for t in telescopes
    ]
    names = (
        "aperture_mm", "focal_length_mm", "obstruction_mm", "telescope_throughput",
        "telescope_mass_kg", "tube_length_mm", "tube_diameter_mm", "spider_vanes",
        "mirror_thickness_mm", "telescope_price", "telescope_image_circle_mm",
        "outward_focus_travel_mm", "telescope_purchase_price",
    )
    columns = _float_columns(names, rows, len(telescopes))
    columns["design"] = np.array([t.design.value for t in telescopes], dtype=str)
    columns["telescope_currency"] = np.array([_currency(t.price) for t in telescopes], dtype="U3")
    return columns


def as_train(entry: Any) -> list:
    """A sweep's train entry as a list of elements: a list (``[]`` is nothing between telescope and
    camera), None (the same), one element, or an old :class:`Modifier` (one element)."""
    if entry is None:
        return []
    if isinstance(entry, Modifier):
        return [train_element(entry.to_element())]
    items = list(entry) if isinstance(entry, (list, tuple)) else [entry]
    return [train_element(e) if isinstance(e, dict) else e for e in items]


def camera_columns(
    cameras: Sequence[Camera | None], binning: Sequence[int] | None = None
) -> dict[str, np.ndarray]:
    """Camera columns; a rig without a camera (visual, through an eyepiece) has NaN and "".
    ``binning`` gives each camera's factor (default 1; see :mod:`calculators.binning`)."""
    absent = (NAN,) * 10
    rows = [
        absent if c is None else
        (c.pixel_size_um, c.width_px, c.height_px, _opt(c.quantum_efficiency), _opt(c.read_noise_e),
         _opt(c.dark_current_e_per_s), _opt(c.mass_kg), _amount(c.price),
         _opt(c.flange_to_sensor_mm), _purchase(c))
        for c in cameras
    ]
    names = ("pixel_size_um", "width_px", "height_px", "quantum_efficiency", "read_noise_e",
             "dark_current_e_per_s", "camera_mass_kg", "camera_price", "flange_to_sensor_mm",
             "camera_purchase_price")
    columns = _float_columns(names, rows, len(cameras))
    columns["camera_currency"] = np.array(
        ["" if c is None else _currency(c.price) for c in cameras], dtype="U3")
    columns["sensor"] = np.array(
        ["" if c is None or c.sensor is None else c.sensor.value for c in cameras], dtype=str)
    columns["binning"] = (np.ones(len(cameras)) if binning is None
                          else np.asarray(binning, dtype=np.float64).reshape(len(cameras)))
    return columns


def mount_columns(mounts: Sequence[Mount | None]) -> dict[str, np.ndarray]:
    rows = [
        (NAN, NAN, NAN, NAN) if m is None else
        (m.capacity_kg, _opt(m.mass_kg), _amount(m.price), _purchase(m))
        for m in mounts
    ]
    columns = _float_columns(("capacity_kg", "mount_mass_kg", "mount_price", "mount_purchase_price"),
                             rows, len(mounts))
    columns["mount_type"] = np.array(["" if m is None else m.type.value for m in mounts], dtype=str)
    columns["mount_currency"] = np.array(
        ["" if m is None else _currency(m.price) for m in mounts], dtype="U3"
    )
    return columns


def rig_extra_columns(rigs: Sequence[Rig]) -> dict[str, np.ndarray]:
    """Accessories (summed per rig) and german-equatorial geometry."""
    return extra_columns([(rig.accessories, rig.geometry) for rig in rigs])


def extra_columns(rows_in: Sequence[tuple[Sequence[Accessory], Geometry | None]]) -> dict[str, np.ndarray]:
    """Accessories (summed) and geometry columns, one entry per ``(accessories, geometry)`` pair."""
    rows = []
    currencies = []
    for accessories, g in rows_in:
        priced = [a.price for a in accessories if a.price is not None]
        price = sum(p.amount for p in priced) if priced else NAN
        currencies.append(priced[0].currency if priced else "")
        rows.append((
            sum(a.mass_kg for a in accessories), price,
            NAN if g is None else g.payload_arm_mm, NAN if g is None else g.counterweight_kg,
            purchase_sum(accessories),
        ))
    names = ("accessories_mass_kg", "accessories_price", "payload_arm_mm", "counterweight_kg",
             "accessories_purchase_price")
    columns = _float_columns(names, rows, len(rows_in))
    columns["accessories_currency"] = np.array(currencies, dtype="U3")
    return columns


def _float_columns(names: Sequence[str], rows: list[tuple], n: int) -> dict[str, np.ndarray]:
    # One transposed copy: each column is then a contiguous row of it, with no copy per column.
    table = np.array(rows, dtype=np.float64).reshape(n, len(names)).T.copy()
    return dict(zip(names, table))


def _along(columns: dict[str, np.ndarray], axis: int, ndim: int) -> dict[str, np.ndarray]:
    shape = [1] * ndim
    out = {}
    for name, values in columns.items():
        shape[axis] = values.shape[0]
        out[name] = values.reshape(shape)
    return out


Derived = TypeVar("Derived")


def _read_only(value: Any) -> Any:
    if isinstance(value, np.ndarray):
        value.flags.writeable = False
    elif isinstance(value, tuple):
        for item in value:
            _read_only(item)
    return value


def per_batch(helper: Callable[[RigBatch], Derived]) -> Callable[[RigBatch], Derived]:
    """Compute ``helper(batch)`` once per batch; later calls with the same batch return that result.

    For quantities several calculators derive from the same columns: on a flat batch of a million
    rigs each one is a full array (8 MB) and arithmetic that would otherwise be repeated by every
    calculator that needs it. The result is made read-only, so that no calculator can change it for
    the others (an in-place operation on it raises). A mapping that is not a :class:`RigBatch`
    (a plain dict of columns) gets the helper's result computed afresh.
    """
    key = f"{helper.__module__}.{helper.__qualname__}"

    @functools.wraps(helper)
    def shared(batch: RigBatch) -> Derived:
        store = getattr(batch, "derived", None)
        if store is None:
            return helper(batch)
        try:
            return store[key]
        except KeyError:
            value = store[key] = _read_only(helper(batch))
            return value

    return shared


@dataclass(frozen=True)
class RigBatch(Mapping[str, np.ndarray]):
    """Named numpy columns that broadcast to ``shape``, plus the baseline rig's index.

    ``baseline`` has one index per axis of ``shape`` (a single int for a comparison batch).
    ``derived`` holds the results of :func:`per_batch` helpers computed on this batch so far.
    """

    columns: Mapping[str, np.ndarray]
    baseline: tuple[int, ...]
    shape: tuple[int, ...] = field(init=False)
    derived: dict[str, Any] = field(init=False, default_factory=dict, repr=False, compare=False)

    def __post_init__(self) -> None:
        shapes = {v.shape if type(v) is np.ndarray else np.shape(v) for v in self.columns.values()}
        # A comparison batch has one shape throughout; broadcast_shapes costs more than a small
        # comparison's arithmetic, so it runs only when the shapes differ (a sweep).
        shape = next(iter(shapes)) if len(shapes) == 1 else np.broadcast_shapes(*shapes)
        if len(self.baseline) != len(shape):
            raise ValueError(f"baseline {self.baseline} does not index a batch of shape {shape}")
        for index, size in zip(self.baseline, shape):
            if not 0 <= index < size:
                raise IndexError(f"baseline index {index} is outside 0..{size - 1}")
        object.__setattr__(self, "shape", shape)

    # Mapping protocol: batch["aperture_mm"]
    def __getitem__(self, name: str) -> np.ndarray:
        try:
            return self.columns[name]
        except KeyError:
            raise KeyError(f"the batch has no column {name!r}") from None

    def __iter__(self) -> Iterator[str]:
        return iter(self.columns)

    def __len__(self) -> int:
        return len(self.columns)

    @property
    def size(self) -> int:
        """Number of rigs (combinations) in the batch."""
        return math.prod(self.shape)  # the same int as np.prod, without numpy's call overhead

    def at_baseline(self, values: np.ndarray) -> np.ndarray:
        """The baseline rig's element of an output computed from this batch's columns."""
        values = np.asarray(values)
        if values.ndim == 0:
            return values
        # Broadcasting aligns trailing axes, so an output with fewer axes than the batch lines up
        # with the batch's last axes.
        baseline = self.baseline[len(self.baseline) - values.ndim:]
        index = tuple(i if n > 1 else 0 for i, n in zip(baseline, values.shape))
        return values[index]

    def relative(self, values: np.ndarray) -> np.ndarray:
        """``values`` divided by the baseline rig's value (1 for the baseline itself)."""
        with np.errstate(divide="ignore", invalid="ignore"):
            return values / self.at_baseline(values)

    @classmethod
    def from_rigs(cls, rigs: Sequence[Rig], baseline: int = 0) -> RigBatch:
        """One row per rig: every column has shape ``(len(rigs),)``."""
        if not rigs:
            raise ValueError("a batch needs at least one rig")
        columns = {
            **telescope_columns([r.telescope for r in rigs]),
            **train_columns([r.train for r in rigs]),
            **camera_columns([r.camera for r in rigs], [r.binning for r in rigs]),
            **mount_columns([r.mount for r in rigs]),
            **rig_extra_columns(rigs),
        }
        return cls(columns=columns, baseline=(baseline,))

    @classmethod
    def from_components(
        cls,
        telescopes: Sequence[Telescope],
        cameras: Sequence[Camera | None],
        trains: Sequence[Any] = ((),),
        mounts: Sequence[Mount | None] = (None,),
        baseline: tuple[int, int, int, int] = (0, 0, 0, 0),
        accessories: Sequence[Accessory] = (),
        geometry: Geometry | None = None,
        *,
        binning: Sequence[int] | None = None,
        eyepieces: Sequence[Any] | None = None,
    ) -> RigBatch:
        """A sweep batch: the cartesian product telescope × camera × train × mount, never built.

        Each kind's columns lie along their own axis (see :data:`AXES`); a train entry is a list of
        elements (see :func:`as_train`). ``accessories`` and ``geometry`` belong to every
        combination alike (their columns have one element, shape ``(1, 1, 1, 1)``), so a rig in a
        sweep carries the same payload, price and moments as the same rig compared on its own.

        The camera axis may hold more than cameras (an evaluation's camera × binning pairs and its
        eyepieces, see :mod:`calculators.sweep.detectors`): ``binning`` gives each entry's factor,
        ``eyepieces`` each entry's eyepiece element (None for a camera; the camera is then None),
        read as the last element of every train.
        """
        ndim = len(AXES)
        train_cols = _along(train_columns([as_train(t) for t in trains]), 2, ndim)
        if eyepieces is not None and any(e is not None for e in eyepieces):
            ends = _along(train_columns([[] if e is None else [e] for e in eyepieces]), 1, ndim)
            train_cols = with_eyepiece_axis(train_cols, ends)
        columns = {
            **_along(telescope_columns(telescopes), 0, ndim),
            **_along(camera_columns(cameras, binning), 1, ndim),
            **train_cols,
            **_along(mount_columns(mounts), 3, ndim),
        }
        shared = extra_columns([(list(accessories), geometry)])
        columns.update({name: values.reshape((1,) * ndim) for name, values in shared.items()})
        return cls(columns=columns, baseline=tuple(baseline))
