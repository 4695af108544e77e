"""aligner.core.arrays against numpy's own np.unique and np.searchsorted (the reference)."""

import numpy as np
import pytest

from aligner.core.arrays import TABLE_SPAN, positions, unique


@pytest.mark.parametrize("dtype", [np.int64, np.int32, np.uint16, bool])
@pytest.mark.parametrize("size", [0, 1, 2, 1000])
@pytest.mark.parametrize("span", [50, 60_000])  # a mask over the span, and a sort (span above TABLE_SPAN * size)
def test_unique_is_numpys(rng, dtype, size, span):
    # reference: numpy.unique (plain, and with return_inverse)
    a = (rng.integers(0, span, size=size) - span // 3).astype(dtype)
    assert np.array_equal(unique(a), np.unique(a)) and unique(a).dtype == np.unique(a).dtype
    u, inv = unique(a, return_inverse=True)
    ref_u, ref_inv = np.unique(a, return_inverse=True)
    assert np.array_equal(u, ref_u) and np.array_equal(inv, ref_inv.reshape(-1))


def test_unique_of_other_kinds_is_numpys():
    # reference: numpy.unique, which collapses NaN (equal_nan=True); a sort and compare would not
    a = np.array([2.0, np.nan, 1.0, np.nan, 2.0])
    assert np.array_equal(unique(a), np.unique(a), equal_nan=True)
    assert unique(np.array(["b", "a", "b"], dtype=object)).tolist() == ["a", "b"]


@pytest.mark.parametrize("span", [10, 10**9])  # a table, then binary search (span far above TABLE_SPAN * size)
def test_positions_are_searchsorteds(rng, span):
    # reference: numpy.searchsorted on values in the set; outside it, numpy.isin says which
    s = np.unique(rng.integers(0, span, size=200))
    v = rng.choice(s, size=500)
    assert np.array_equal(positions(s, v), np.searchsorted(s, v))
    w = rng.integers(-5, span + 5, size=500)
    got = positions(s, w, missing=-1)
    inside = np.isin(w, s)
    assert np.array_equal(got[inside], np.searchsorted(s, w[inside])) and np.all(got[~inside] == -1)
    assert (span - 1 <= TABLE_SPAN * 700) == (span == 10)  # both paths are exercised


def test_positions_of_nothing():
    assert positions(np.array([1, 2]), np.empty(0, dtype=np.int64)).tolist() == []
    assert positions(np.empty(0, dtype=np.int64), np.array([3]), missing=-1).tolist() == [-1]
