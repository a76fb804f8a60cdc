"""Ranking: scores scaled between the ideal and nadir points, each chunk's best rows, and the
merge of per-chunk picks into the overall best."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from calculators.sweep.feasibility import Chunk, gather


@dataclass
class Ranked:
    """Rows picked out of the sweep: flat positions, oriented objective values, scores."""

    positions: np.ndarray
    columns: list[np.ndarray]
    scores: np.ndarray | None = None

    def take(self, pick: np.ndarray) -> Ranked:
        return Ranked(self.positions[pick], [c[pick] for c in self.columns],
                       None if self.scores is None else self.scores[pick])


def _term(values: np.ndarray, low: float, high: float) -> np.ndarray | None:
    """One objective scaled to 0 at ``low`` and 1 at ``high``; None when they are equal."""
    if not high > low:
        return None
    span = high - low
    if not np.isfinite(span):  # the range overflows a float: scale in two steps
        return (values / 2 - low / 2) / (high / 2 - low / 2)
    term = values - low
    term /= span
    return term


def _score(columns, low, high) -> np.ndarray | None:
    """Sum of the scaled objectives, added in objective order: the same float operations whether
    ``columns`` are broadcast arrays or gathered rows, so both give the same scores."""
    score = None
    for c, lo, hi in zip(columns, low, high):
        term = _term(c, lo, hi)
        if term is None:
            continue
        if score is None:
            score = term
        elif np.broadcast_shapes(score.shape, term.shape) == score.shape:
            score += term
        else:
            score = score + term
    return score


def row_scores(columns, low, high) -> np.ndarray:
    """Scores of gathered rows (zeros when no objective counts)."""
    n = columns[0].shape[0]
    score = _score(columns, low, high)
    return np.zeros(n) if score is None else np.broadcast_to(score, (n,)).astype(np.float64)


def chunk_best(chunk: Chunk, low, high, limit: int, per_telescope: int) -> Ranked:
    """The chunk's ``limit`` best rows (the whole sweep's best are among the chunks' best)."""
    # Scaling a +inf-masked full-size objective carries the infeasible rows' +inf into the score,
    # which then needs no masking of its own.
    columns = list(chunk.oriented)
    for j, o in enumerate(chunk.oriented):
        if j in chunk.masked and o.shape == chunk.shape and high[j] > low[j]:
            columns[j] = chunk.masked[j]
            break
    else:
        j = None
    score = _score(columns, low, high)
    if score is None:
        score = np.zeros((1,) * len(chunk.shape))
    if j is None:
        score = np.where(chunk.full, score, np.inf)
    flat = np.ascontiguousarray(np.broadcast_to(score, chunk.shape)).reshape(-1)
    if chunk.feasible > limit:
        kth = np.partition(flat, limit - 1)[limit - 1]
        local = np.flatnonzero(flat <= kth)
    else:
        local = np.flatnonzero(flat < np.inf)
    ranked = Ranked(local + chunk.start * per_telescope,
                     gather(chunk.oriented, chunk.shape, local), flat[local])
    return best(ranked, limit)


def merge(parts: list[Ranked], k: int) -> Ranked:
    """The rows of several picks together (an empty pick of ``k`` objectives when none)."""
    if not parts:
        return Ranked(np.zeros(0, np.int64), [np.zeros(0)] * k, np.zeros(0))
    scores = None if parts[0].scores is None else np.concatenate([p.scores for p in parts])
    return Ranked(np.concatenate([p.positions for p in parts]).astype(np.int64, copy=False),
                   [np.concatenate([p.columns[j] for p in parts]) for j in range(k)], scores)


def best(ranked: Ranked, limit: int) -> Ranked:
    """The ``limit`` best rows, in order: by score, then objective values in order, then position."""
    keys = [ranked.scores, *ranked.columns, ranked.positions]
    pick = _smallest(keys, np.arange(ranked.positions.shape[0]), limit)
    pick = pick[np.lexsort([key[pick] for key in keys[::-1]])]
    return ranked.take(pick)


def _smallest(keys: list[np.ndarray], rows: np.ndarray, limit: int) -> np.ndarray:
    """The ``limit`` lexicographically smallest ``rows`` by ``keys`` (unordered), without sorting
    them all: rows below the first key's cut-off are in; ties at it compete on the next keys."""
    if rows.shape[0] <= limit or not keys:
        return rows[:limit]
    if limit == 0:
        return rows[:0]
    values = keys[0][rows]
    kth = np.partition(values, limit - 1)[limit - 1]
    below = rows[values < kth]
    return np.concatenate((below, _smallest(keys[1:], rows[values == kth], limit - below.size)))
