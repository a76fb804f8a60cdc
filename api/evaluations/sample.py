"""The combinations a report draws besides the front: a deterministic sample of the sweep.

A sweep's answer holds the front and the top rows, not the feasible combinations around them; the
trade-off chart draws those from a sample. Up to :data:`SAMPLE_SIZE` combinations are picked
uniformly without replacement by a generator with a fixed seed (all of them when there are fewer),
so the same request always draws the same points; their constrained and objective outputs are
computed on a one-row-per-combination batch (with the baseline, so relative outputs keep their
meaning), and the feasible ones are kept with the same rule the sweep uses (every constrained and
objective value finite, every bound met, the effective focal ratio physical).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from calculators.batch import RigBatch
from calculators.evaluation_schemas import EvaluationSpec
from calculators.schemas import MIN_FOCAL_RATIO
from calculators.sweep import EvaluationError, resolve_key
from calculators.sweep.detectors import check_visual_trains, entries
from calculators.sweep.plan import baseline_indices
from plugins.runner import parse_params, run

#: Most combinations computed for the chart's cloud of feasible points.
SAMPLE_SIZE = 2000
SEED = 20261202


@dataclass(frozen=True)
class Sample:
    """Sampled combinations: ``indices`` (n, 5: telescope, camera, train, mount, binning factor),
    ``eyepieces`` (n,), -1 where a combination has none (a visual one has no camera or factor),
    ``values`` per key (n,), ``feasible`` (n,)."""

    evaluated: int
    indices: np.ndarray
    eyepieces: np.ndarray
    values: dict[str, np.ndarray]
    feasible: np.ndarray

    @property
    def size(self) -> int:
        return int(self.indices.shape[0])

    def key(self, j: int) -> tuple:
        """Combination j as the report names it (see :func:`combination_key`)."""
        t, c, r, m, b = (None if v < 0 else int(v) for v in self.indices[j])
        e = int(self.eyepieces[j])
        return combination_key(t, c, r, m, b, None if e < 0 else e)


def combination_key(telescope, camera, train, mount, binning, eyepiece) -> tuple:
    """A combination as the report names it: telescope, camera, train, mount and binning factor (1
    for a result saved before binning); a visual one with an eyepiece has no camera or factor and
    its eyepiece last."""
    if eyepiece is not None:
        return (telescope, None, train, mount, None, eyepiece)
    return (telescope, camera, train, mount, binning or 1)


def canonical(key: str, calculators: Mapping) -> str:
    """The current name of an output key (a renamed output is still accepted by its old name)."""
    try:
        return resolve_key(key, "objectives", calculators).key
    except EvaluationError:
        return key  # not loaded any more: left as saved


def pick(evaluated: int, size: int = SAMPLE_SIZE, seed: int = SEED) -> np.ndarray:
    """Sorted flat positions of the sampled combinations (all of them when ``evaluated <= size``)."""
    if evaluated <= size:
        return np.arange(evaluated, dtype=np.int64)
    return np.sort(np.random.default_rng(seed).choice(evaluated, size=size, replace=False))


def sample(components: Sequence[Sequence], spec: EvaluationSpec, calculators: Mapping,
           size: int = SAMPLE_SIZE) -> Sample:
    # The camera axis holds each camera at each binning factor, then each eyepiece, as the sweep
    # lays it out.
    eyepieces = components[4] if len(components) > 4 else ()
    visual_trains = check_visual_trains(components[2], bool(components[1]), bool(eyepieces))
    axis = entries(components[1], spec.binning, eyepieces, visual_trains)
    sizes = (len(components[0]), axis.size, len(components[2]), len(components[3]))
    evaluated = math.prod(sizes)
    flat = pick(evaluated, size)
    base = int(np.ravel_multi_index(baseline_indices(spec.baseline, sizes, axis), sizes))
    rows = np.union1d(flat, [base])
    index = np.unravel_index(rows, sizes)
    sweep = RigBatch.from_components(components[0], axis.cameras, components[2], components[3],
                                     binning=axis.binning, eyepieces=axis.eyepieces,
                                     accessories=spec.accessories,
                                     geometry=spec.geometry)
    columns = {}
    for name, column in sweep.columns.items():
        column = np.asarray(column)
        picked = column[tuple(ix if n > 1 else 0 for ix, n in zip(index, column.shape))]
        columns[name] = np.broadcast_to(picked, rows.shape)
    batch = RigBatch(columns=columns, baseline=(int(np.searchsorted(rows, base)),))

    constraints = {canonical(k, calculators): b for k, b in spec.constraints.items()}
    keys = list(dict.fromkeys([*constraints, *(canonical(k, calculators) for k in spec.objectives)]))
    wanted: dict[str, list[str]] = {}
    for key in keys:
        name, _, output = key.partition(".")
        wanted.setdefault(name, []).append(output)
    values: dict[str, np.ndarray] = {}
    for name, outputs in wanted.items():
        calculator = calculators.get(name)  # unloaded since the answer was saved: nothing to draw
        outcome = None if calculator is None else run(calculator, batch, parse_params(calculator, spec.params.get(name)))
        for output in outputs:
            got = None if outcome is None or outcome.error else outcome.values.get(output)
            values[f"{name}.{output}"] = (np.full(rows.shape, np.nan) if got is None
                                          else np.broadcast_to(np.asarray(got, dtype=np.float64), rows.shape))
    factor = columns.get("train_factor", columns.get("modifier_factor"))  # what sits between scope and camera
    ratio = columns["focal_length_mm"] * factor / columns["aperture_mm"]
    feasible = ratio >= MIN_FOCAL_RATIO
    for key in keys:
        feasible &= np.isfinite(values[key])
    for key, bounds in constraints.items():
        v = values[key]
        if bounds.min is not None:
            feasible &= v >= bounds.min
        if bounds.max is not None:
            feasible &= v <= bounds.max
    keep = np.isin(rows, flat)  # the baseline only served as the reference row
    # Indices as the answer's rows name them: telescope, camera, train, mount, binning factor (-1
    # for none), and the eyepiece apart.
    def column(values) -> np.ndarray:
        return np.array([-1 if v is None else v for v in values], dtype=np.int64)[index[1]]

    cameras, eyepieces = column(axis.camera_index), column(axis.eyepiece_index)
    factors = np.where(cameras < 0, -1, np.array(axis.binning)[index[1]])
    if visual_trains:  # one entry with neither: rows name it with binning 1, as before binning existed
        factors = np.ones_like(factors)
    named = np.stack((index[0], cameras, index[2], index[3], factors), axis=1)
    return Sample(evaluated, named[keep], eyepieces[keep], {k: v[keep] for k, v in values.items()},
                  feasible[keep])
