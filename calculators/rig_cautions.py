"""Cautions about one rig in particular: a payload over the mount's rating, a heavy single lift.

The calculators' own cautions are the same for every rig; these name the rig's figures, so whoever
reads a comparison row, an evaluation row or the club page sees *this* rig's hazard in words:

* **over the rating**: the payload (telescope + modifier + camera + accessories, as the payload
  calculator adds them) above the mount's ``capacity_kg``. Where some masses are not stated, the
  stated ones alone may already exceed the rating: that is said too ("at least …"). The maker's rating is the limit; rigbench
  does not second-guess it in either direction.
* **heavy single lift**: the heaviest item a person lifts onto or off the mount on its own — the
  telescope, the mount (as stated: head and tripod together when they are given as one mass), the
  counterweight, the camera, the modifier — above :data:`LIFT_GUIDELINE_KG`, 23 kg: the load constant
  of the revised NIOSH lifting equation, the weight nearly all healthy workers can lift under *ideal*
  conditions (load close to the body at waist height, no twisting, a good grip, occasional lifts;
  Waters, Putz-Anderson, Garg & Fine, "Revised NIOSH equation for the design and evaluation of manual
  lifting tasks", Ergonomics 36 (1993); NIOSH, *Applications Manual for the Revised NIOSH Lifting
  Equation*, DHHS (NIOSH) Publication No. 94-110, 1994, revised 2021). Raising a tube onto a mount's
  saddle, at arm's length and in the dark, is far from ideal, so the equation's multipliers would
  allow much less: the caution is a floor, not a licence below it.

Otherwise unknown masses (NaN) give no caution rather than a guess. Pure computation on a
:class:`~calculators.batch.RigBatch` of rows (shape ``(n,)``), as comparisons and evaluation rows have.
"""

from __future__ import annotations

import math

import numpy as np

from calculators.batch import RigBatch

#: Load constant of the revised NIOSH lifting equation (Waters et al. 1993; NIOSH Publication 94-110).
LIFT_GUIDELINE_KG = 23.0
LIFT_SOURCE = "the revised NIOSH lifting equation's 23 kg for ideal conditions (NIOSH Publication 94-110)"

#: What the mount carries (the payload calculator's sum), by batch column.
PAYLOAD_PARTS = ("telescope_mass_kg", "modifier_mass_kg", "camera_mass_kg", "accessories_mass_kg")

#: What a person may lift on its own, by batch column, in the words a caution uses.
LIFTED_ITEMS = (
    ("telescope_mass_kg", "telescope"),
    ("mount_mass_kg", "mount"),
    ("counterweight_kg", "counterweight"),
    ("camera_mass_kg", "camera"),
    ("modifier_mass_kg", "modifier"),
)


def _column(batch: RigBatch, name: str) -> np.ndarray:
    if name not in batch.columns:
        return np.full(batch.shape, np.nan)
    return np.broadcast_to(np.asarray(batch[name], dtype=float), batch.shape)


def over_rating(payload: float, capacity: float, complete: bool = True) -> str:
    amount = f"{payload:.1f} kg" if complete else f"at least {payload:.1f} kg (the masses stated)"
    return (
        f"Over the mount's rating: this rig puts {amount} on a mount rated for {capacity:g} kg "
        f"({payload / capacity:.2f} times its rating). An overloaded mount can slip, tip over or drop "
        "the telescope, and its counterweight can swing: use a mount rated for the payload, within its "
        "maker's rating."
    )


def heavy_lift(item: str, mass: float) -> str:
    return (
        f"Heavy lift: the {item} weighs {mass:.1f} kg, more than {LIFT_SOURCE}. Lifting it into place, "
        "at arm's length or in the dark, allows much less: lift it with two people, take it apart (the "
        "counterweights off, the mount's head off its tripod) or use a lifting aid, and keep feet clear."
    )


#: Up to this many rows the cautions are worked out on Python floats: for the few rigs of a
#: comparison, a dozen numpy calls cost more than the arithmetic (the figures are the same, see
#: :func:`cautions_by_rows`).
SMALL_BATCH_ROWS = 16


def rig_cautions(batch: RigBatch) -> list[list[str]]:
    """The cautions of each row of ``batch`` (a list per row; empty when nothing applies).

    The tests are array operations over all rows; text is written only for the rows they flag.
    """
    if math.prod(batch.shape) <= SMALL_BATCH_ROWS:
        return cautions_by_rows(batch)
    return cautions_by_arrays(batch)


def cautions_by_arrays(batch: RigBatch) -> list[list[str]]:
    """:func:`rig_cautions` for any number of rows, with numpy arrays."""
    n = math.prod(batch.shape)
    parts = np.stack([_column(batch, column).reshape(n) for column in PAYLOAD_PARTS])
    complete = ~np.isnan(parts).any(axis=0)
    payload = np.nansum(parts, axis=0)  # the stated masses: a lower bound where some are not
    capacity = _column(batch, "capacity_kg").reshape(n)
    with np.errstate(invalid="ignore"):
        overloaded = payload > capacity  # False where there is no mount (NaN)
    masses = np.stack([_column(batch, column).reshape(n) for column, _item in LIFTED_ITEMS])
    heaviest = np.where(np.isnan(masses), -np.inf, masses)
    which = heaviest.argmax(axis=0)
    heavy = heaviest.max(axis=0) > LIFT_GUIDELINE_KG
    out: list[list[str]] = [[] for _ in range(n)]
    for i in np.flatnonzero(overloaded).tolist():
        out[i].append(over_rating(float(payload[i]), float(capacity[i]), bool(complete[i])))
    for i in np.flatnonzero(heavy).tolist():
        out[i].append(heavy_lift(LIFTED_ITEMS[which[i]][1], float(heaviest[which[i], i])))
    return out


def _floats(batch: RigBatch, name: str, n: int) -> list[float]:
    values = batch.columns.get(name)
    if values is None:
        return [math.nan] * n
    if type(values) is np.ndarray and values.dtype == np.float64 and values.shape == (n,):
        return values.tolist()  # a comparison's column as it is: no copy, no broadcasting
    return _column(batch, name).reshape(n).tolist()


def cautions_by_rows(batch: RigBatch) -> list[list[str]]:
    """:func:`rig_cautions` row by row on Python floats, with the same arithmetic in the same order.

    The payload is added part after part from the first, a missing part counting 0, as
    ``np.nansum`` over the stacked parts does along its first axis, so every sum is the very same
    double; the heaviest item is the first of the largest, as ``argmax`` picks it.
    """
    n = math.prod(batch.shape)
    parts = [_floats(batch, column, n) for column in PAYLOAD_PARTS]
    capacities = _floats(batch, "capacity_kg", n)
    masses = [_floats(batch, column, n) for column, _item in LIFTED_ITEMS]
    out: list[list[str]] = []
    for i in range(n):
        row: list[str] = []
        stated = [part[i] for part in parts]
        payload = stated[0] if not math.isnan(stated[0]) else 0.0
        for value in stated[1:]:
            payload += value if not math.isnan(value) else 0.0
        if payload > capacities[i]:  # False where there is no mount (NaN)
            row.append(over_rating(payload, capacities[i], not any(map(math.isnan, stated))))
        heaviest, which = -math.inf, 0
        for k, item in enumerate(masses):
            if item[i] > heaviest:  # NaN never is: an unknown mass is no caution
                heaviest, which = item[i], k
        if heaviest > LIFT_GUIDELINE_KG:
            row.append(heavy_lift(LIFTED_ITEMS[which][1], heaviest))
        out.append(row)
    return out
