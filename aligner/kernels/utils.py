"""Small compiled helpers shared by the numba kernels."""

import numba


@numba.njit(cache=True, nogil=True)
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
