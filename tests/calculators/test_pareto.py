"""Tests of calculators/pareto.py against a brute-force front written straight from the definition.

Definition used as the reference (Pareto dominance for minimisation, as in Kung, Luccio & Preparata,
"On finding the maxima of a set of vectors", J. ACM 22(4), 1975, with signs flipped): p dominates q
when p ≤ q in every objective and p < q in at least one; the front is every point nothing dominates.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from calculators.pareto import non_dominated, non_dominated_columns


def dominates(p, q) -> bool:
    return all(a <= b for a, b in zip(p, q)) and any(a < b for a, b in zip(p, q))


def brute_force_front(points) -> list[bool]:
    """O(n²) front, one pair at a time."""
    return [not any(dominates(p, q) for p in points) for q in points]


# Few distinct values per objective, so ties and exact duplicates are common.
def point_sets(max_points=60):
    return st.integers(1, 4).flatmap(
        lambda k: st.lists(
            st.tuples(*[st.sampled_from([-2.5, 0.0, 1.0, 1.5, 3.0, 7.0])] * k),
            min_size=0, max_size=max_points,
        ).map(lambda rows: np.array(rows, dtype=float).reshape(len(rows), k))
    )


@given(point_sets(), st.sampled_from([0, 4, 10_000]))
def test_front_equals_brute_force_front_with_ties_and_duplicates(points, prefilter_above):
    mask = non_dominated(points, prefilter_above=prefilter_above)
    assert mask.tolist() == brute_force_front(points.tolist())


@given(point_sets())
def test_front_is_non_dominated_and_dominates_or_equals_every_point(points):
    mask = non_dominated(points)
    front = points[mask].tolist()
    for q in front:
        assert not any(dominates(p, q) for p in points.tolist())
    for q in points.tolist():
        assert any(p == q or dominates(p, q) for p in front)


@given(point_sets(), st.randoms(use_true_random=False))
def test_front_does_not_depend_on_point_order(points, rnd):
    order = list(range(len(points)))
    rnd.shuffle(order)
    assert non_dominated(points)[order].tolist() == non_dominated(points[order]).tolist()


@settings(max_examples=8, deadline=None)
@given(st.integers(0, 2**32 - 1), st.sampled_from([2, 3]), st.sampled_from(["uniform", "traded"]))
def test_front_of_thousands_of_points_equals_vectorised_brute_force(seed, k, shape):
    # Thousands of points exercise the staircase prefilter and multi-point blocks; a few hundred
    # distinct values per objective keep ties in play.
    rng = np.random.default_rng(seed)
    n = 1500
    points = rng.integers(0, 300, size=(n, k)).astype(float)
    if shape == "traded":  # a long front: the second objective falls as the first rises
        points[:, 1] = 300 - points[:, 0] + rng.integers(0, 30, size=n)
    no_worse = (points[:, None, :] <= points[None, :, :]).all(axis=2)
    better = (points[:, None, :] < points[None, :, :]).any(axis=2)
    reference = ~(no_worse & better).any(axis=0)
    assert np.array_equal(non_dominated(points, prefilter_above=0), reference)
    assert np.array_equal(non_dominated(points), reference)


def test_worked_example_by_hand():
    # By the definition above: (3, 3) is dominated by (2, 2); the two equal (2, 2) points do not
    # dominate each other, so both stay.
    points = [[1, 4], [2, 2], [3, 3], [2, 2], [4, 1]]
    assert non_dominated(points).tolist() == [True, True, False, True, True]


def test_one_objective_keeps_every_minimum():
    assert non_dominated_columns([np.array([3.0, 1.0, 2.0, 1.0])]).tolist() == [
        False, True, False, True,
    ]


def test_empty_input_gives_empty_front():
    assert non_dominated(np.zeros((0, 2))).shape == (0,)


@pytest.mark.parametrize("bad", [[[1.0, np.nan]], [[np.inf, 1.0]]])
def test_non_finite_values_are_refused(bad):
    with pytest.raises(ValueError, match="finite"):
        non_dominated(bad)


def test_wrong_shapes_are_refused():
    with pytest.raises(ValueError, match=r"\(n, k\)"):
        non_dominated([1.0, 2.0])
    with pytest.raises(ValueError, match="same length"):
        non_dominated_columns([np.zeros(3), np.zeros(4)])
    with pytest.raises(ValueError, match="at least one"):
        non_dominated_columns([])
