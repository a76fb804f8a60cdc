"""The two passes over the chunks: counts and the Pareto front, then the top rows by score."""

from __future__ import annotations

import math

import numpy as np

from calculators.pareto import front_of
from calculators.sweep.feasibility import evaluate_chunk, front_candidates, gather
from calculators.sweep.ranking import Ranked, best, chunk_best, merge, row_scores


def run_passes(batch, plans, bounds, directions, nullable, chunk_rows, limit, progress, *,
               max_front_rows=None, check=None, excluded=None):
    """Pass 1 over the chunks: counts and the front. Pass 2: the top rows by score, whose scale
    comes from the whole front (with a single chunk, its arrays are reused instead).

    ``check()`` runs before each chunk and inside the front's work; the front stops with
    :class:`~calculators.pareto.FrontLimitReached` once it is known to hold more than
    ``max_front_rows`` (known early with one chunk, whose front is the sweep's; with several,
    a chunk's front may still lose rows to the others', so only the merged front is limited)."""
    check = check or (lambda: None)
    n_telescopes, *rest = batch.shape
    per_telescope = math.prod(rest)
    step = max(1, chunk_rows // per_telescope)
    spans = [(s, min(n_telescopes, s + step)) for s in range(0, n_telescopes, step)]
    single = len(spans) == 1
    total = len(spans) * (1 if single or not limit else 2)
    done = 0

    def chunks():
        nonlocal done
        for start, stop in spans:
            check()
            chunk = evaluate_chunk(batch, plans, bounds, directions, nullable, start, stop,
                                   exclude=excluded is not None)
            done += 1
            if progress is not None:
                progress(done, total)
            yield chunk

    k = len(directions)
    feasible = 0
    fronts: list[Ranked] = []
    base_flat = int(np.ravel_multi_index(batch.baseline, batch.shape))
    base_columns = None  # the baseline's oriented objective values when it is feasible
    kept = None
    for chunk in chunks():
        feasible += chunk.feasible
        if excluded is not None:
            for verdict, count in chunk.excluded.items():
                excluded[verdict] = excluded.get(verdict, 0) + count
        kept = chunk if single else None
        if not chunk.feasible:
            continue
        offset = chunk.start * per_telescope
        local = front_candidates(chunk)
        candidates = Ranked(local + offset, gather(chunk.oriented, chunk.shape, local))
        fronts.append(candidates.take(front_of(
            candidates.columns, max_rows=max_front_rows if single else None, check=check)))
        base_at = base_flat - offset
        if 0 <= base_at < math.prod(chunk.shape) and chunk.full[
                np.unravel_index(base_at, chunk.shape)]:
            base_columns = gather(chunk.oriented, chunk.shape, np.array([base_at]))

    front = merge(fronts, k)
    front = front.take(front_of(front.columns, max_rows=max_front_rows, check=check)
                       if front.positions.size else np.zeros(0, bool))
    front = front.take(np.lexsort([front.positions] + front.columns[::-1]))
    # Scale of the score: the ideal point (best value of each objective) and the nadir point
    # (worst value of each objective on the front).
    low = [float(c.min()) if c.size else 0.0 for c in front.columns]
    high = [float(c.max()) if c.size else 0.0 for c in front.columns]
    front.scores = row_scores(front.columns, low, high)

    tops: list[Ranked] = []
    if limit and feasible:
        for chunk in ([kept] if single else chunks()):
            if chunk.feasible:
                tops.append(chunk_best(chunk, low, high, limit, per_telescope))
    top = best(merge(tops, k), limit)
    if progress is not None and done < total:  # nothing feasible: no second pass to report
        progress(total, total)
    base_score = None if base_columns is None else float(row_scores(base_columns, low, high)[0])
    return feasible, front, top, base_score
