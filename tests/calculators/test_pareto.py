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

from calculators.pareto import FrontLimitReached, non_dominated, non_dominated_columns


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


def brute_force(points: np.ndarray) -> np.ndarray:
    # the definition: a point is on the front when no point is no worse everywhere and better somewhere
    no_worse = (points[:, None, :] <= points[None, :, :]).all(axis=2)
    better = (points[:, None, :] < points[None, :, :]).any(axis=2)
    return ~(no_worse & better).any(axis=0)


@pytest.mark.parametrize("k", [3, 5])
def test_duplicates_share_their_fate_and_the_front_matches_the_definition(k):
    rng = np.random.default_rng(k)
    distinct = rng.integers(0, 6, size=(300, k)).astype(float)  # coarse values: many ties
    points = distinct[rng.integers(0, 300, size=3000)]
    assert np.array_equal(non_dominated(points), brute_force(points))


def test_the_front_stops_as_soon_as_it_passes_the_limit():
    # 100,000 equal points are all on the front: refused without comparing them pairwise
    with pytest.raises(FrontLimitReached) as caught:
        non_dominated(np.ones((100_000, 3)), max_rows=10_000)
    assert caught.value.at_least > 10_000 and caught.value.limit == 10_000
    # points on the plane x + y + z = 1 are all on the front; the limit is met, not passed
    rng = np.random.default_rng(0)
    plane = rng.random((2000, 3))
    plane /= plane.sum(axis=1, keepdims=True)
    assert non_dominated(plane, max_rows=2000).all()
    with pytest.raises(FrontLimitReached):
        non_dominated(plane, max_rows=1999)
    for k in (1, 2):
        with pytest.raises(FrontLimitReached):
            non_dominated(np.ones((50, k)), max_rows=49)


def test_check_is_called_while_the_front_is_computed_and_can_stop_it():
    calls = []

    class Stop(Exception):
        pass

    def check():
        calls.append(1)
        if len(calls) > 3:
            raise Stop

    rng = np.random.default_rng(1)
    plane = rng.random((5000, 3))
    plane /= plane.sum(axis=1, keepdims=True)
    with pytest.raises(Stop):
        non_dominated(plane, check=check)
