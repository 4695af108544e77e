"""Compiled kernels of the label prior (see :mod:`aligner.priors.labels`); no argument checking.

The label vectors are CSR arrays (``indptr``, ``indices``, ``data``) with sorted indices and
positive data; ``bt_*`` is the transpose of the second matrix (its n-gram postings lists).
"""

import numba
import numpy as np

from aligner.kernels.options import OUTER

#: the tail's norm is kept below this share of tau: a longer tail skips more postings, a shorter
#: one leaves fewer touched columns whose bound ``head + norm of tail`` reaches tau
TAIL_SHARE = 0.5
#: scores are ranked as round(score * TIE_GRID): closer than 1e-12 counts as a tie, broken by column
TIE_GRID = 1e12


@numba.njit(cache=True, nogil=True, **OUTER)
def _lower_bound(arr, lo, hi, value):
    """First position in the sorted slice ``arr[lo:hi]`` holding a value >= ``value``."""
    while lo < hi:
        mid = (lo + hi) >> 1
        if arr[mid] < value:
            lo = mid + 1
        else:
            hi = mid
    return lo


@numba.njit(cache=True, nogil=True, **OUTER)
def _merge_dot(a_indices, a_data, p, pe, b_indices, b_data, q, qe):
    """Dot product of a_data[p:pe] and b_data[q:qe] over their common (sorted) indices."""
    s = 0.0
    while p < pe and q < qe:
        u, x = a_indices[p], b_indices[q]
        if u == x:
            s += a_data[p] * b_data[q]
            p += 1
            q += 1
        elif u < x:
            p += 1
        else:
            q += 1
    return s


@numba.njit(cache=True, nogil=True, parallel=True, **OUTER)
def top_k_rows(a_indptr, a_indices, a_data, b_indptr, b_indices, b_data, b_cum2, bt_indptr, bt_indices, bt_data,
               k, threshold, row0, row1, n_chunks, out_cols):
    """Rows row0..row1-1 of A in ``n_chunks`` chunks run in parallel; see :func:`_top_k_chunk`."""
    for c in numba.prange(n_chunks):
        lo = row0 + (row1 - row0) * c // n_chunks
        hi = row0 + (row1 - row0) * (c + 1) // n_chunks
        _top_k_chunk(a_indptr, a_indices, a_data, b_indptr, b_indices, b_data, b_cum2, bt_indptr, bt_indices,
                     bt_data, k, threshold, lo, hi, row0, out_cols)


@numba.njit(cache=True, nogil=True, **OUTER)
def _top_k_chunk(a_indptr, a_indices, a_data, b_indptr, b_indices, b_data, b_cum2, bt_indptr, bt_indices,
                 bt_data, k, threshold, row0, row1, base, out_cols):
    """For rows row0..row1-1 of A: the k best columns of A @ B.T at or above ``threshold``.

    The n-grams are numbered from the rarest to the most common, so each row's most common
    n-grams are at its end; rows of B have norm at most 1. For row i:

    1. Bootstrap: the rarest n-grams of the row are followed through their postings lists
       until k columns are touched; their exact scores give tau, the k-th best of them (or
       ``threshold`` when fewer, and never less): the row's k-th best score is at least tau.
    2. Prefix filter: the row is split into a head and the longest tail of norm below tau.
       A column scoring at least tau must share an n-gram with the head (its score is the
       head's product plus at most the tail's norm). The head's products are summed
       (Gustavson) into a dense accumulator through the postings lists, in n-gram order; a
       touched column whose bound ``head + norm of tail`` reaches tau gets the tail's product
       by merging the two sorted rows, unless the tighter bound ``head + norm of tail * norm of
    column j's part in the tail n-grams`` (``b_cum2``: running sums of squares along the rows of
    B) is below tau.

    So the common n-grams, which touch most columns, are skipped. Ties (scores within 1e-12,
    :data:`TIE_GRID`) are broken by the smaller column. Row i's columns go to
    ``out_cols[(i - base) * k:]``, best first; unused slots are left as they are (-1).
    """
    nb = b_indptr.shape[0] - 1
    acc = np.zeros(nb)
    touched = np.empty(nb, dtype=np.int64)
    cand_j = np.empty(nb, dtype=np.int64)
    cand_v = np.empty(nb, dtype=np.float64)
    for i in range(row0, row1):
        lo, hi = a_indptr[i], a_indptr[i + 1]
        if lo == hi:
            continue
        # 1. bootstrap a lower bound tau of the k-th best score
        n_touched = 0
        p = lo
        while p < hi and n_touched < k:
            g = a_indices[p]
            for q in range(bt_indptr[g], bt_indptr[g + 1]):
                j = bt_indices[q]
                if acc[j] == 0.0:
                    acc[j] = 1.0
                    touched[n_touched] = j
                    n_touched += 1
            p += 1
        tau = threshold
        if n_touched >= k:
            for t in range(n_touched):
                j = touched[t]
                cand_v[t] = _merge_dot(a_indices, a_data, lo, hi, b_indices, b_data, b_indptr[j], b_indptr[j + 1])
            kth = np.sort(cand_v[:n_touched])[n_touched - k]
            # slack: the exact scores below are summed in another order
            tau = max(threshold, kth - 1e-9)
        for t in range(n_touched):
            acc[touched[t]] = 0.0
        # 2. the tail: the longest end of the row with norm < TAIL_SHARE * tau
        t2 = (TAIL_SHARE * tau) ** 2
        tail = hi
        s2 = 0.0
        while tail > lo and s2 + a_data[tail - 1] * a_data[tail - 1] < t2:
            tail -= 1
            s2 += a_data[tail] * a_data[tail]
        tail_norm = np.sqrt(s2)
        n_touched = 0
        for p in range(lo, tail):
            g = a_indices[p]
            w = a_data[p]
            for q in range(bt_indptr[g], bt_indptr[g + 1]):
                j = bt_indices[q]
                if acc[j] == 0.0:
                    touched[n_touched] = j
                    n_touched += 1
                acc[j] += w * bt_data[q]
        n_cand = 0
        for t in range(n_touched):
            j = touched[t]
            v = acc[j]
            acc[j] = 0.0
            if v + tail_norm < tau:
                continue
            if tail < hi:
                q0, q1 = b_indptr[j], b_indptr[j + 1]
                q = _lower_bound(b_indices, q0, q1, a_indices[tail])
                if q == q1:
                    continue_merge = False
                else:
                    y2 = b_cum2[q1 - 1] - (b_cum2[q - 1] if q > q0 else 0.0)
                    continue_merge = v + tail_norm * np.sqrt(max(y2, 0.0)) + 1e-9 >= tau
                if continue_merge:
                    v += _merge_dot(a_indices, a_data, tail, hi, b_indices, b_data, q, q1)
                elif v < tau:
                    continue
            if v >= tau:
                cand_j[n_cand] = j
                cand_v[n_cand] = v
                n_cand += 1
        if n_cand == 0:
            continue
        cj = cand_j[:n_cand].copy()
        cv = cand_v[:n_cand].copy()
        if n_cand > k:
            o1 = np.argsort(cj)
            cj = cj[o1]
            cv = cv[o1]
            # stable: equal scores stay in column order. Scores are ranked on a grid of 1e-12 (TIE_GRID):
            # equal cosines summed in floating point differ in their last bits ("tolvenk" and
            # "tolvenk tolvenk" have the same unit vector), and the tie must go to the smaller column, not to rounding
            o2 = np.argsort(-np.floor(cv * TIE_GRID + 0.5), kind="mergesort")
            cj = cj[o2[:k]]
        for t in range(cj.shape[0]):
            out_cols[(i - base) * k + t] = cj[t]


@numba.njit(cache=True, nogil=True, **OUTER)
def pair_dots(a_indptr, a_indices, a_data, b_indptr, b_indices, b_data, ia, ib, out):
    """out[t] = A[ia[t]] . B[ib[t]], by merging the two sorted index lists (a fixed order)."""
    for t in range(ia.shape[0]):
        p, pe = a_indptr[ia[t]], a_indptr[ia[t] + 1]
        q, qe = b_indptr[ib[t]], b_indptr[ib[t] + 1]
        out[t] = _merge_dot(a_indices, a_data, p, pe, b_indices, b_data, q, qe)
