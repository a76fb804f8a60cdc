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
* three or more: equal points are merged first (one sort), so ties cost nothing however many
  there are; then the distinct points are taken in order of the sum of their min-max normalised
  values (ties by the values themselves), a block at a time. A point can be dominated only by a
  point before it in that order, so the survivors of a block's dominance checks among themselves
  are front points for certain; each new front point then removes every later point it dominates.
  Cost: one sort, plus about n·h·k comparisons for a front of h distinct points, and the front
  only grows, so a ``max_rows`` limit stops the work as soon as the front passes it. (Kung, Luccio
  & Preparata, "On finding the maxima of a set of vectors", J. ACM 22(4), 1975, give an
  O(n log n) sweep for three objectives; it is sequential and slow in pure Python.)

Every function takes ``max_rows`` (raise :class:`FrontLimitReached` as soon as more points than
that are known to be on the front, duplicates counted) and ``check`` (called between blocks of
work, e.g. to raise when a request's deadline has passed).

Example::

    >>> non_dominated([[1, 4], [2, 2], [3, 3], [2, 2], [4, 1]]).tolist()
    [True, True, False, True, True]
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import numpy as np
from numpy.typing import ArrayLike

#: Below this many points the two-objective staircase prefilter is not worth its passes.
PREFILTER_ABOVE = 4096

#: Largest number of booleans one block of dominance checks may hold (k of them at a time).
_BLOCK_ELEMENTS = 1 << 22

#: Distinct points taken at a time in the n-dimensional sweep (their checks among themselves).
_BLOCK = 256

#: A block that adds at most this many front points prunes the points after it with them.
_PRUNE_WITH = 32


class FrontLimitReached(ValueError):
    """More than ``limit`` points are on the front; found before the front was computed whole."""

    def __init__(self, at_least: int, limit: int):
        super().__init__(f"at least {at_least:,} points are on the front, more than {limit:,}")
        self.at_least = at_least
        self.limit = limit


Check = Callable[[], None]


def non_dominated(
    points: ArrayLike, *, prefilter_above: int = PREFILTER_ABOVE, max_rows: int | None = None,
    check: Check | None = None,
) -> np.ndarray:
    """Boolean mask of the points on the front of ``points`` (shape ``(n, k)``, all minimised).

    Values must be finite; ``prefilter_above`` only tunes speed (the answer never depends on it).
    """
    array = np.asarray(points, dtype=np.float64)
    if array.ndim != 2:
        raise ValueError(f"points must have shape (n, k), got {array.shape}")
    return non_dominated_columns([array[:, i] for i in range(array.shape[1])],
                                 prefilter_above=prefilter_above, max_rows=max_rows, check=check)


def non_dominated_columns(
    columns: Sequence[np.ndarray], *, prefilter_above: int = PREFILTER_ABOVE,
    max_rows: int | None = None, check: Check | None = None,
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
    return front_of(cols, prefilter_above, max_rows=max_rows, check=check)


def front_of(
    cols: list[np.ndarray], prefilter_above: int = PREFILTER_ABOVE, *, max_rows: int | None = None,
    check: Check | None = None,
) -> np.ndarray:
    """:func:`non_dominated_columns` without input checks: float64 1-D finite columns."""
    n = cols[0].shape[0]
    if n == 0:
        return np.zeros(0, dtype=bool)
    if len(cols) > 2:
        return _front_nd(cols, max_rows, check or _no_check)
    mask = cols[0] == cols[0].min() if len(cols) == 1 else _front_2d(cols[0], cols[1], prefilter_above)
    if max_rows is not None and (count := int(np.count_nonzero(mask))) > max_rows:
        raise FrontLimitReached(count, max_rows)
    return mask


def _no_check() -> None:
    pass


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


def _front_nd(cols: list[np.ndarray], max_rows: int | None, check: Check) -> np.ndarray:
    points = np.stack(cols)  # (k, n): one contiguous row per objective
    n = points.shape[1]
    score = _score(points)
    # Prefilter: the strongest points (smallest scores, a partial selection) remove most of the
    # others at once; only the points no strong front point dominates go on.
    alive = np.arange(n)
    if n > 4 * _BLOCK:
        strong = np.argpartition(score, _BLOCK)[:_BLOCK]
        local = _front_nd(list(points[:, strong]), None, check)
        alive = np.flatnonzero(~_dominated(points[:, strong[local]], points, check))
    check()
    # Equal points share their fate: merge them (one lexicographic sort), count each group.
    kept = points[:, alive]
    order = np.lexsort(kept[::-1])
    ordered = kept[:, order]
    starts = np.concatenate(([True], (ordered[:, 1:] != ordered[:, :-1]).any(axis=0)))
    group = np.cumsum(starts) - 1  # group of each sorted point
    distinct = ordered[:, starts]
    counts = np.bincount(group)
    del ordered, kept
    on_front = _distinct_front(distinct, counts, max_rows, check)
    mask = np.zeros(n, dtype=bool)
    mask[alive[order]] = on_front[group]
    return mask


def _score(points: np.ndarray) -> np.ndarray:
    """Sum of min-max normalised values, added in objective order (the same operations for every
    point, so a point no worse everywhere never gets a larger score)."""
    score = np.zeros(points.shape[1])
    for row in points:
        lo, hi = row.min(), row.max()
        if hi > lo and np.isfinite(hi - lo):
            score += (row - lo) / (hi - lo)
    return score


def _distinct_front(points: np.ndarray, counts: np.ndarray, max_rows: int | None, check: Check) -> np.ndarray:
    """Front of distinct points ``(k, u)``; ``counts`` says how many input points each stands for."""
    u = points.shape[1]
    # A dominator is no worse everywhere, so its score is no larger, and when the scores tie it
    # comes first lexicographically: it always comes before what it dominates.
    order = np.lexsort((*points[::-1], _score(points)))
    remaining = order  # indices into points, in that order
    front = np.zeros(0, dtype=np.intp)
    on_front = np.zeros(u, dtype=bool)
    found = 0
    while remaining.size:
        check()
        block, remaining = remaining[:_BLOCK], remaining[_BLOCK:]
        inside = points[:, block]
        # Every possible dominator of a block point is on the front found so far or in the block.
        keep = ~_dominated(points[:, front], inside, check)
        block, inside = block[keep], inside[:, keep]
        new = block[~_dominated(inside, inside)]
        on_front[new] = True
        front = np.concatenate((front, new))
        found += int(counts[new].sum())
        if max_rows is not None and found > max_rows:
            raise FrontLimitReached(found, max_rows)
        if remaining.size and new.size <= _PRUNE_WITH:
            # A few new front points: let them remove what they dominate further on at once.
            remaining = remaining[~_dominated(points[:, new], points[:, remaining], check)]
    return on_front


def _dominated(a: np.ndarray, b: np.ndarray, check: Check = _no_check) -> np.ndarray:
    """For each point of ``b`` (k, m): does some point of ``a`` (k, p) dominate it?"""
    out = np.zeros(b.shape[1], dtype=bool)
    if a.shape[1] == 0 or b.shape[1] == 0:
        return out
    step = max(1, _BLOCK_ELEMENTS // a.shape[1])
    for start in range(0, b.shape[1], step):
        if start:
            check()
        q = b[:, start:start + step]
        no_worse = np.ones((a.shape[1], q.shape[1]), dtype=bool)
        better = np.zeros_like(no_worse)
        for ra, rq in zip(a, q):
            x, y = ra[:, None], rq[None, :]
            no_worse &= x <= y
            better |= x < y
        out[start:start + step] = (no_worse & better).any(axis=0)
    return out
