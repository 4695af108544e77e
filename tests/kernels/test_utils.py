"""Small shared kernels against numpy's own implementations."""

import numpy as np
import pytest

from aligner.kernels.utils import _find, stable_order


@pytest.mark.parametrize("n,size,seed", [(1, 0, 0), (1, 5, 1), (7, 50, 2), (1000, 20_000, 3), (50_000, 1_000, 4)])
def test_stable_order_equals_numpy_stable_argsort(n, size, seed):
    # reference: numpy.argsort(kind="stable") keeps equal keys in their input order
    keys = np.random.default_rng(seed).integers(0, n, size=size)
    np.testing.assert_array_equal(stable_order(keys, n), np.argsort(keys, kind="stable"))


def test_find_equals_numpy_searchsorted():
    # reference: numpy.searchsorted on a sorted array of distinct values
    arr = np.array([1, 4, 9, 16, 25, 36])
    for v in range(-1, 40):
        pos = int(np.searchsorted(arr, v))
        want = pos if pos < len(arr) and arr[pos] == v else -1
        assert _find(arr, 0, len(arr), v) == want
    assert _find(arr, 2, 4, 4) == -1  # outside the slice
