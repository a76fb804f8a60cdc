"""The non-dominated (Pareto) front of a set of points, vectorised with numpy.

Every objective is **minimised** (negate a column to maximise it). Point ``p`` dominates point ``q``
when ``p`` is no worse in every objective and strictly better in at least one. The front is the set of
points that no other point dominates; equal points do not dominate each other, so duplicates of a
front point are all on the front.

Algorithms (all exact):

* one objective: every point equal to the minimum;
* two objectives: a staircase prefilter in O(n) (bin the first objective; a point whose second
  objective is no better than the best one in a strictly lower bin is dominated), then one sort of
  the survivors by the first objective and a running minimum of the second — O(n log n) at worst;
* three or more: block-wise dominance checks, each block the not-yet-used points with the
  smallest sum of min-max normalised values (a partial selection, no full sort), removing every
  point a block dominates — about O(n·h·k) for a front of h points: a quarter of a second for a
  million random points in three objectives (a front of about a hundred), but tens of seconds
  when tens of thousands of points trade off along the front. (Kung, Luccio & Preparata, "On
  finding the maxima of a set of vectors", J. ACM 22(4), 1975, give an O(n log n) sweep for three
  objectives; it is sequential and slow in pure Python.)

Example::

    >>> non_dominated([[1, 4], [2, 2], [3, 3], [2, 2], [4, 1]]).tolist()
    [True, True, False, True, True]
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import ArrayLike

#: Below this many points the two-objective staircase prefilter is not worth its passes.
PREFILTER_ABOVE = 4096

#: Largest number of booleans one block of dominance checks may hold (k of them at a time).
_BLOCK_ELEMENTS = 1 << 22


def non_dominated(points: ArrayLike, *, prefilter_above: int = PREFILTER_ABOVE) -> np.ndarray:
    """Boolean mask of the points on the front of ``points`` (shape ``(n, k)``, all minimised).

    Values must be finite; ``prefilter_above`` only tunes speed (the answer never depends on it).
    """
    array = np.asarray(points, dtype=np.float64)
    if array.ndim != 2:
        raise ValueError(f"points must have shape (n, k), got {array.shape}")
    return non_dominated_columns([array[:, i] for i in range(array.shape[1])],
                                 prefilter_above=prefilter_above)


def non_dominated_columns(
    columns: Sequence[np.ndarray], *, prefilter_above: int = PREFILTER_ABOVE
) -> np.ndarray:
    """As :func:`non_dominated`, with the objectives given as ``k`` 1-D arrays of equal length."""
    cols = [np.asarray(c, dtype=np.float64) for c in columns]
    if not cols:
        raise ValueError("give at least one objective")
    n = cols[0].shape[0]
    for c in cols:
        if c.ndim != 1 or c.shape[0] != n:
            raise ValueError("every objective column must be 1-D and of the same length")
        if not np.isfinite(c).all():
            raise ValueError("objective values must be finite (drop NaN and infinite rows first)")
    return front_of(cols, prefilter_above)


def front_of(cols: list[np.ndarray], prefilter_above: int = PREFILTER_ABOVE) -> np.ndarray:
    """:func:`non_dominated_columns` without input checks: float64 1-D finite columns."""
    n = cols[0].shape[0]
    if n == 0:
        return np.zeros(0, dtype=bool)
    if len(cols) == 1:
        return cols[0] == cols[0].min()
    if len(cols) == 2:
        return _front_2d(cols[0], cols[1], prefilter_above)
    return _front_nd(cols)


def _front_2d(x: np.ndarray, y: np.ndarray, prefilter_above: int) -> np.ndarray:
    n = x.shape[0]
    candidates = _staircase_survivors(x, y) if n > prefilter_above else np.arange(n)
    xs, ys = x[candidates], y[candidates]
    order = np.argsort(xs)
    sx, sy = xs[order], ys[order]
    # Runs of equal x: inside a run only the smallest y survives (a larger y is dominated by it);
    # across runs a point survives when its y beats every y of every strictly smaller x.
    starts = np.flatnonzero(np.concatenate(([True], sx[1:] != sx[:-1])))
    run_min = np.minimum.reduceat(sy, starts)
    best_before = np.concatenate(([np.inf], np.minimum.accumulate(run_min)[:-1]))
    run_of = np.repeat(np.arange(starts.size), np.diff(np.append(starts, sx.size)))
    on_front = (sy == run_min[run_of]) & (sy < best_before[run_of])
    mask = np.zeros(n, dtype=bool)
    mask[candidates[order[on_front]]] = True
    return mask


def _staircase_survivors(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Indices of the points not dominated by any point in a strictly lower bin of ``x``.

    The bin index is a non-decreasing function of x (each float step is monotone), so a strictly
    lower bin means a strictly smaller x; with y no larger, that point dominates. Only dominated
    points are removed, so the exact pass that follows sees every front point.
    """
    lo, hi = x.min(), x.max()
    span = hi - lo
    if not (np.isfinite(span) and span > 0):
        return np.arange(x.shape[0])
    n_bins = int(min(4096, max(16, x.shape[0] // 64)))
    scaled = np.subtract(x, lo)
    scaled *= n_bins / span
    bins = scaled.astype(np.intp)
    del scaled
    np.minimum(bins, n_bins - 1, out=bins)
    bin_min = np.full(n_bins, np.inf)
    np.minimum.at(bin_min, bins, y)
    best_below = np.concatenate(([np.inf], np.minimum.accumulate(bin_min)[:-1]))
    return np.flatnonzero(y < np.take(best_below, bins))


def _front_nd(cols: list[np.ndarray]) -> np.ndarray:
    n = cols[0].shape[0]
    # Strong points (small sum of min-max normalised values) act first and prune the most; a
    # partial selection of the next block avoids sorting every point.
    score = np.zeros(n)
    for c in cols:
        lo, hi = c.min(), c.max()
        if hi > lo and np.isfinite(hi - lo):
            score += (c - lo) / (hi - lo)
    points = np.stack(cols)  # (k, n): one contiguous row per objective
    index = np.arange(n)
    served = np.zeros(n, dtype=bool)  # has been compared against every remaining point
    while True:
        waiting = np.flatnonzero(~served)
        if waiting.size == 0:
            break
        m = index.size
        size = max(1, min(waiting.size, _BLOCK_ELEMENTS // m))
        if size < waiting.size:
            waiting = waiting[np.argpartition(score[waiting], size - 1)[:size]]
        no_worse = np.ones((waiting.size, m), dtype=bool)
        better = np.zeros((waiting.size, m), dtype=bool)
        for row in points:
            b, q = row[waiting, None], row[None, :]
            no_worse &= b <= q
            better |= b < q
        served[waiting] = True
        keep = ~(no_worse & better).any(axis=0)
        if not keep.all():
            points, score, served, index = points[:, keep], score[keep], served[keep], index[keep]
    mask = np.zeros(n, dtype=bool)
    mask[index] = True
    return mask
