"""The sweep's camera axis: every camera at every binning factor, then every eyepiece.

An evaluation's ``binning`` factors and its ``eyepieces`` do not add axes to the sweep: they widen
the camera axis into *entries* — camera 0 at each factor, camera 1 at each factor, …, then each
eyepiece, a camera-free (visual) entry whose eyepiece ends every train. So a sweep of T telescopes,
C cameras, B factors, E eyepieces, R trains and M mounts has ``T × (C·B + E) × R × M`` combinations:
the imaging ones (telescope × train × camera × binning × mount) beside the visual ones (telescope ×
train × eyepiece × mount). The answer splits an entry back into ``camera`` and ``binning`` or
``eyepiece`` (see :class:`Entries`).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from calculators.binning import MAX_BINNING
from calculators.sweep.errors import EvaluationError


@dataclass(frozen=True)
class Entries:
    """The camera axis's entries: ``cameras[k]``/``binning[k]``/``eyepieces[k]`` of entry k, and
    which request item it stands for (``camera_index[k]`` or ``eyepiece_index[k]``, the other None)."""

    factors: tuple[int, ...]
    cameras: list[Any]
    binning: list[int]
    eyepieces: list[Any]
    camera_index: list[int | None]
    eyepiece_index: list[int | None]

    @property
    def size(self) -> int:
        return len(self.cameras)

    @property
    def camera_count(self) -> int:
        """How many cameras the request lists (each is ``len(factors)`` entries)."""
        return sum(1 for c in self.camera_index if c is not None) // len(self.factors)

    @property
    def eyepiece_count(self) -> int:
        return sum(1 for e in self.eyepiece_index if e is not None)

    def entry(self, camera: int | None, factor: int | None, eyepiece: int | None) -> int:
        """The entry of one combination's camera and binning, or of its eyepiece."""
        if eyepiece is not None:
            return self.size - self.eyepiece_count + eyepiece
        return camera * len(self.factors) + self.factors.index(factor)

    def split(self, k: int) -> dict[str, int | None]:
        """Entry k as a row's ``camera``, ``binning`` and ``eyepiece`` (None where it has none)."""
        camera = self.camera_index[k]
        return {"camera": camera, "binning": None if camera is None else self.binning[k],
                "eyepiece": self.eyepiece_index[k]}


def check_factors(binning: Sequence[int]) -> tuple[int, ...]:
    """The binning factors, each a whole number 1..MAX_BINNING given once."""
    factors = tuple(binning)
    if not factors:
        raise EvaluationError("binning: give at least one factor (1 is no binning)", loc=("binning",))
    for i, b in enumerate(factors):
        if isinstance(b, bool) or not isinstance(b, int) or not 1 <= b <= MAX_BINNING:
            raise EvaluationError(
                f"binning.{i}: {b!r} is not a binning factor (a whole number 1..{MAX_BINNING})",
                loc=("binning", i))
        if b in factors[:i]:
            raise EvaluationError(f"binning.{i}: {b} is listed twice", loc=("binning", i))
    return factors


def ends_in_eyepiece(train: Sequence[Any]) -> bool:
    return bool(train) and getattr(train[-1], "kind", None) == "eyepiece"


def check_visual_trains(trains: Sequence[Sequence[Any]], cameras: bool, eyepieces: bool) -> bool:
    """Whether the trains end in eyepieces (a visual sweep of explicit trains, with no camera
    entry); refuses a train ending in an eyepiece beside cameras, ``eyepieces`` or imaging trains."""
    visual = [i for i, t in enumerate(trains) if ends_in_eyepiece(t)]
    if not visual:
        return False
    i = visual[0]
    if cameras or eyepieces:
        raise EvaluationError(
            f"trains.{i}: a train that ends in an eyepiece takes no camera and no further eyepiece; "
            "give it with `cameras: []` and no `eyepieces`, or list the eyepiece in `eyepieces` "
            "and leave it out of the train", loc=("trains", i, len(trains[i]) - 1))
    if len(visual) < len(trains):
        j = next(j for j in range(len(trains)) if j not in visual)
        raise EvaluationError(
            f"trains.{j}: with no cameras every train must end in an eyepiece (trains.{i} does); "
            "list cameras, or the eyepieces in `eyepieces`", loc=("trains", j))
    return True


def product_text(sizes: Sequence[int], factors: int, eyepieces: int) -> str:
    """The product in words: ``3 × (2 × 2 + 1) × 4 × 1`` (the camera axis's cameras × factors
    + eyepieces, only as far as there are more than cameras)."""
    cameras = str(sizes[1]) if factors == 1 else f"{sizes[1]} × {factors}"
    if eyepieces:
        cameras = f"({cameras} + {eyepieces})"
    elif factors > 1:
        cameras = f"({cameras})"
    return " × ".join([str(sizes[0]), cameras, *map(str, sizes[2:])])


def entries(cameras: Sequence[Any], binning: Sequence[int], eyepieces: Sequence[Any],
            visual_trains: bool = False) -> Entries:
    """Every camera at every factor, then every eyepiece (without a camera); with
    ``visual_trains`` (trains that end in their eyepiece) one entry without camera or eyepiece."""
    factors = check_factors(binning)
    if visual_trains:
        return Entries(factors, [None], [1], [None], [None], [None])
    pairs = [(i, c, b) for i, c in enumerate(cameras) for b in factors]
    n = len(eyepieces)
    return Entries(
        factors=factors,
        cameras=[c for _, c, _ in pairs] + [None] * n,
        binning=[b for _, _, b in pairs] + [1] * n,
        eyepieces=[None] * len(pairs) + list(eyepieces),
        camera_index=[i for i, _, _ in pairs] + [None] * n,
        eyepiece_index=[None] * len(pairs) + list(range(n)),
    )
