"""calculators/train_columns.py: rigs without a train get the columns the fold gives them, in fresh
arrays, whether they come from the copies made once per size or are folded one by one."""

from __future__ import annotations

import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from calculators.train_columns import (
    OLD_ALIASES,
    SMALL_BATCH_ROWS,
    _columns,
    _nothing_folded,
    fold,
    train_columns,
)


def folded_one_by_one(n: int) -> dict[str, np.ndarray]:
    columns = _columns([fold([]) for _ in range(n)])
    columns.update({old: columns[new] for old, new in OLD_ALIASES.items()})
    columns["modifier_kind"] = columns.pop("modifier_kind")
    return columns


@given(st.integers(1, SMALL_BATCH_ROWS + 3))
def test_rigs_without_a_train_get_the_folded_columns_in_the_same_order_and_types(n):
    got, expected = train_columns([[] for _ in range(n)]), folded_one_by_one(n)
    assert list(got) == list(expected)
    for name, values in expected.items():
        assert got[name].dtype == values.dtype and got[name].shape == (n,)
        assert np.array_equal(got[name], values, equal_nan=values.dtype.kind == "f"), name
    assert got["modifier_factor"] is got["train_factor"]  # an old name is the same array


def test_each_batch_owns_its_columns_and_the_fold_of_nothing_is_the_folds():
    first = train_columns([[], []])
    first["train_factor"][:] = 5.0  # a caller writing into its own batch
    assert train_columns([[], []])["train_factor"].tolist() == [1.0, 1.0]
    assert _nothing_folded() == fold([])
