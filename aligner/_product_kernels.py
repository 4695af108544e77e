"""Compiled kernels that build the restricted product graph (CSR arrays in, arrays out)."""

import numba
import numpy as np


@numba.njit(cache=True, nogil=True)
def _contains(indices, lo, hi, value):
    """Binary search for ``value`` in the sorted slice ``indices[lo:hi]``."""
    while lo < hi:
        mid = (lo + hi) >> 1
        v = indices[mid]
        if v < value:
            lo = mid + 1
        elif v > value:
            hi = mid
        else:
            return True
    return False


@numba.njit(cache=True, nogil=True)
def _product_pass(a_indptr, a_indices, b_indptr, b_indices, c_indptr, c_b, pair_a, pair_b, out_indptr,
                  out_indices, fill):
    """Count (``fill`` False) or write (``fill`` True) the product-graph neighbours of every pair.

    Pair k = (i, i') and pair l = (j, j') are adjacent when j is a neighbour of i in A and j'
    a neighbour of i' in B. For each neighbour j of i, the candidates of j are scanned and
    j' is looked up in the sorted neighbour list of i' by binary search.
    """
    m = pair_a.shape[0]
    total = 0
    for k in range(m):
        i = pair_a[k]
        ip = pair_b[k]
        blo = b_indptr[ip]
        bhi = b_indptr[ip + 1]
        pos = out_indptr[k] if fill else 0
        cnt = 0
        if bhi > blo:
            for s in range(a_indptr[i], a_indptr[i + 1]):
                j = a_indices[s]
                for u in range(c_indptr[j], c_indptr[j + 1]):
                    if _contains(b_indices, blo, bhi, c_b[u]):
                        if fill:
                            out_indices[pos + cnt] = u
                        cnt += 1
        if not fill:
            out_indptr[k + 1] = cnt
        total += cnt
    return total


@numba.njit(cache=True, nogil=True)
def _conserved_at_matching(s_indptr, s_indices, matched):
    """For every pair, the number of its product-graph neighbours that are matched pairs."""
    m = s_indptr.shape[0] - 1
    out = np.zeros(m, dtype=np.float64)
    for k in range(m):
        c = 0
        for t in range(s_indptr[k], s_indptr[k + 1]):
            if matched[s_indices[t]]:
                c += 1
        out[k] = c
    return out
