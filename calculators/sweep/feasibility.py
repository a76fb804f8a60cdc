"""Masks and feasibility: one chunk's constraint masks combined by broadcasting, its oriented
objective values, and the rows that may be on the Pareto front."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from calculators.builtin.compatibility import IMPOSSIBLE, VERDICTS, assessment
from calculators.schemas import MIN_FOCAL_RATIO
from calculators.sweep.chunks import chunk_of, compute
from calculators.sweep.errors import CalculatorFailed


@dataclass
class Chunk:
    """One chunk's computed outputs: telescopes ``start:`` of the sweep, ``shape`` combinations."""

    start: int
    shape: tuple[int, ...]
    full: np.ndarray  # feasibility, broadcast to ``shape`` (a view)
    oriented: list[np.ndarray]  # objective values, smaller is better, each at its own shape
    feasible: int
    masked: dict[int, np.ndarray] = field(default_factory=dict)
    excluded: dict[str, int] = field(default_factory=dict)  # impossible combinations, by verdict

    def masked_values(self, j: int) -> np.ndarray:
        """Objective ``j`` at its own shape, +inf where no feasible combination has it."""
        if j not in self.masked:
            o = self.oriented[j]
            self.masked[j] = np.where(_reduce_mask(self.full, o.shape), o, np.inf)
        return self.masked[j]


def evaluate_chunk(batch, plans, bounds, directions, nullable, start, stop, exclude=False) -> Chunk:
    """Telescopes ``start:stop``: outputs computed, masks combined, objectives oriented."""
    chunk_batch, drop = chunk_of(batch, start, stop)
    values = compute(plans, chunk_batch)
    if drop:
        values = {k: v[drop:] if v.shape[0] > 1 else v for k, v in values.items()}
    shape = (stop - start, *batch.shape[1:])
    # A telescope and train giving an effective focal ratio below the physical minimum do not
    # make a rig (the Rig schema refuses it), so that combination is never feasible.
    focal_ratio = (batch["focal_length_mm"][start:stop] * batch["train_factor"]
                   / batch["aperture_mm"][start:stop])
    masks = [focal_ratio >= MIN_FOCAL_RATIO]
    excluded = {}
    if exclude:
        # What cannot be assembled (calculators.builtin.compatibility) is never considered; each
        # excluded combination is counted once, under its verdict.
        code = assessment(chunk_batch)["code"]
        if drop and code.shape[0] > 1:
            code = code[drop:]
        code = code.reshape((1,) * (len(shape) - code.ndim) + code.shape)
        repeat = math.prod(shape) // code.size
        for i, verdict in enumerate(VERDICTS):
            if verdict in IMPOSSIBLE:
                count = int(np.count_nonzero(code == i)) * repeat
                if count:
                    excluded[verdict] = count
        masks.append(code >= len(IMPOSSIBLE))
    for key, (low, high) in bounds.items():
        v = values[key]
        masks.append((v >= low) & (v <= high))  # also refuses NaN and infinities
    oriented = []
    for key, direction in directions.items():
        v = values[key].astype(np.float64, copy=False)
        if key in nullable:
            if key not in bounds:  # a bound already refuses undefined values
                masks.append(np.isfinite(v))
        elif not np.isfinite(v).all():
            raise CalculatorFailed(
                f"{key} gave undefined or infinite values although it declares its values always "
                "defined", loc=("objectives", key))
        oriented.append(-v if direction == "max" else v)
    masks.sort(key=lambda m: m.size)  # combine the small masks before the big ones
    mask = np.ones((1,) * len(shape), dtype=bool)
    for m in masks:
        mask = mask & m
    feasible = int(np.count_nonzero(mask)) * (math.prod(shape) // mask.size)
    return Chunk(start, shape, np.broadcast_to(mask, shape), oriented, feasible, excluded=excluded)


def _reduce_mask(full: np.ndarray, shape: tuple[int, ...]) -> np.ndarray:
    """Feasibility at an output's own shape: true where any combination it stands for is."""
    axes = tuple(a for a, (n, m) in enumerate(zip(full.shape, shape)) if m == 1 and n > 1)
    return full.any(axis=axes, keepdims=True) if axes else full


def front_candidates(chunk: Chunk) -> np.ndarray:
    """Flat positions in the chunk that may be on the front: feasible and, for an objective that
    varies along axes no other objective does, the best value along those axes. (Feasible rows
    that differ only along such axes share every other objective, so the better one dominates.)
    Drops only dominated rows; it shrinks what the exact front has to look at."""
    candidates = chunk.full
    varies = [{a for a, n in enumerate(o.shape) if n > 1} for o in chunk.oriented]
    for j in range(len(varies)):
        others = set().union(*(v for i, v in enumerate(varies) if i != j))
        own = tuple(sorted(varies[j] - others))
        if own:
            masked = chunk.masked_values(j)
            candidates = candidates & (masked == masked.min(axis=own, keepdims=True))
    return np.flatnonzero(np.broadcast_to(candidates, chunk.shape))


def gather(oriented: list[np.ndarray], shape, local: np.ndarray) -> list[np.ndarray]:
    """Objective values at flat positions of the chunk, without expanding any array."""
    index = np.unravel_index(local, shape)
    out = []
    for o in oriented:
        picked = o[tuple(ix if n > 1 else 0 for ix, n in zip(index, o.shape))]
        out.append(picked if picked.shape == local.shape else np.full(local.shape, picked))
    return out
