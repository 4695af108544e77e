"""Small compiled helpers shared by the numba kernels."""

import numba
import numpy as np

from aligner.kernels.options import OUTER, inner


@inner
def _find(arr, lo, hi, value):
    """Position of ``value`` in the sorted slice ``arr[lo:hi]``, or -1 (binary search)."""
    while lo < hi:
        mid = (lo + hi) >> 1
        v = arr[mid]
        if v < value:
            lo = mid + 1
        elif v > value:
            hi = mid
        else:
            return mid
    return -1


@numba.njit(cache=True, nogil=True, **OUTER)
def stable_order(keys, n):
    """The stable sort order of integer ``keys`` in [0, n) by counting sort: O(len(keys) + n),
    the same permutation as ``np.argsort(keys, kind="stable")``."""
    start = np.empty(n + 1, dtype=np.int64)
    for _t in range(start.shape[0]):
        start[_t] = 0
    for t in range(keys.shape[0]):
        start[keys[t] + 1] += 1
    for v in range(n):
        start[v + 1] += start[v]
    out = np.empty(keys.shape[0], dtype=np.int64)
    for t in range(keys.shape[0]):
        k = keys[t]
        out[start[k]] = t
        start[k] += 1
    return out
