"""Row tables of integer keys: stable sorting by (first, second) key, merging repeats, CSR filling.

Sorting here is by counting, never by comparing whole rows: one pass counts the rows of each
first key and one pass places them (stable); each first key's rows are then sorted by the
second key by insertion, or, when some first key has many rows, the rows are first placed
by the second key in the same way (a two-pass radix sort). The order equals the stable
``np.lexsort((second, first))``.
"""

import math

import numba
import numpy as np

from aligner.kernels.options import OUTER

#: the longest run of one first key sorted by insertion; beyond it the second key is counted too
_SHORT = 32


@numba.njit(cache=True, nogil=True, **OUTER)
def sort_rows(k1, k2, n1):
    """The stable order of the rows with ``k1 >= 0`` by (k1, k2), as ``np.lexsort((k2, k1))``.

    ``k1`` in [0, n1) or negative (the row is left out); ``k2 >= 0`` on the rows kept.
    Returns int64 row positions.
    """
    m = len(k1)
    start = np.empty(n1 + 1, dtype=np.int64)
    for _t in range(start.shape[0]):
        start[_t] = 0
    for i in range(m):
        if k1[i] >= 0:
            start[k1[i] + 1] += 1
    longest = 0
    for k in range(n1):
        longest = max(longest, start[k + 1])
        start[k + 1] += start[k]
    kept = start[n1]
    order = np.empty(kept, dtype=np.int64)
    fill = start[:n1].copy()
    if longest <= _SHORT:
        for i in range(m):
            if k1[i] >= 0:
                order[fill[k1[i]]] = i
                fill[k1[i]] += 1
        for k in range(n1):
            for j in range(start[k] + 1, start[k + 1]):  # insertion sort of a short run, stable
                p = order[j]
                t = j - 1
                while t >= start[k] and k2[order[t]] > k2[p]:
                    order[t + 1] = order[t]
                    t -= 1
                order[t + 1] = p
        return order
    n2 = 0
    for i in range(m):
        if k1[i] >= 0:
            n2 = max(n2, k2[i] + 1)
    by2 = np.empty(n2 + 1, dtype=np.int64)
    for _t in range(by2.shape[0]):
        by2[_t] = 0
    for i in range(m):
        if k1[i] >= 0:
            by2[k2[i] + 1] += 1
    for k in range(n2):
        by2[k + 1] += by2[k]
    tmp = np.empty(kept, dtype=np.int64)
    for i in range(m):
        if k1[i] >= 0:
            tmp[by2[k2[i]]] = i
            by2[k2[i]] += 1
    for j in range(kept):
        i = tmp[j]
        order[fill[k1[i]]] = i
        fill[k1[i]] += 1
    return order


@numba.njit(cache=True, nogil=True, **OUTER)
def merge_sorted(k1, k2, order, w, mode):
    """Unique rows (k1, k2) of the sorted view ``order`` and their merged values.

    ``mode`` 0: no values (``w`` ignored); 1: values summed in order from 0.0 (as
    ``np.bincount``); 2: the largest value, NaN kept (as ``np.maximum.reduce``), and of 0.0 and
    -0.0 the 0.0, so that the result does not depend on the order of the rows. Returns (rows as int32 (k, 2), values, repeated rows merged).
    """
    m = len(order)
    k = 0
    for j in range(m):
        if j == 0 or k1[order[j]] != k1[order[j - 1]] or k2[order[j]] != k2[order[j - 1]]:
            k += 1
    rows = np.empty((k, 2), dtype=np.int32)
    val = np.empty(k if mode else 0, dtype=np.float64)
    for _t in range(val.shape[0]):
        val[_t] = 0.0
    r = -1
    for j in range(m):
        i = order[j]
        if j == 0 or k1[i] != k1[order[j - 1]] or k2[i] != k2[order[j - 1]]:
            r += 1
            rows[r, 0] = k1[i]
            rows[r, 1] = k2[i]
            if mode == 2:
                val[r] = w[i]
                continue
        if mode == 1:
            val[r] += w[i]
        elif mode == 2:
            cur, x = val[r], w[i]
            if cur == cur and (x > cur or x != x or (x == cur and math.copysign(1.0, x) > math.copysign(1.0, cur))):
                val[r] = x
    return rows, val, m - k


@numba.njit(cache=True, nogil=True, **OUTER)
def fill_symmetric(a, b, n, w, weighted):
    """Symmetric CSR of edges (a, b) sorted by (a, b), unique, ``a < b``: one count, one fill.

    Each edge is stored from both ends. Visiting the edges in order puts, in row u, first the
    neighbours v < u (from edges (v, u), in order of v) and then those v > u (from (u, v)), so
    every list comes out sorted. Returns (indptr int64, indices int32, entry weights).
    """
    m = len(a)
    indptr = np.empty(n + 1, dtype=np.int64)
    for _t in range(indptr.shape[0]):
        indptr[_t] = 0
    for i in range(m):
        indptr[a[i] + 1] += 1
        indptr[b[i] + 1] += 1
    for k in range(n):
        indptr[k + 1] += indptr[k]
    fill = indptr[:n].copy()
    indices = np.empty(2 * m, dtype=np.int32)
    ew = np.empty(2 * m if weighted else 0, dtype=np.float64)
    for i in range(m):
        u, v = a[i], b[i]
        indices[fill[u]] = v
        indices[fill[v]] = u
        if weighted:
            ew[fill[u]] = w[i]
            ew[fill[v]] = w[i]
        fill[u] += 1
        fill[v] += 1
    return indptr, indices, ew


@numba.njit(cache=True, nogil=True, **OUTER)
def carry_rows(old_a, old_b, to_a, to_b, new_a, new_b, old_x, old_prior, new_prior, x0, kept, same_prior):
    """Carry values from old rows to new rows by their renumbered keys, in one merge pass.

    Old row i is (to_a[old_a[i]], to_b[old_b[i]]) in the new numbering (a -1 drops it). Both
    row lists must be sorted by (first, second) key with distinct keys, and the renumbering must
    keep the order of the nodes it keeps (the caller checks). For every new row j that an old
    row i lands on: x0[j] = old_x[i], kept[j] = True, and same_prior[j] = |new_prior[j] -
    old_prior[i]| <= 1e-6 |old_prior[i]|. The outputs are filled by the caller beforehand.
    """
    m = new_a.shape[0]
    j = 0
    for i in range(old_a.shape[0]):
        ra = to_a[old_a[i]]
        rb = to_b[old_b[i]]
        if ra < 0 or rb < 0:
            continue
        while j < m and (new_a[j] < ra or (new_a[j] == ra and new_b[j] < rb)):
            j += 1
        if j == m:
            break
        if new_a[j] == ra and new_b[j] == rb:
            x0[j] = old_x[i]
            kept[j] = True
            was = old_prior[i]
            same_prior[j] = abs(new_prior[j] - was) <= 1e-6 * abs(was)


@numba.njit(cache=True, nogil=True, **OUTER)
def carry_same(old_x, old_prior, new_prior, x0):
    """:func:`carry_rows` where the old and new rows are the same (same nodes, same pairs):
    x0[j] = old_x[j] for every row, and the count of rows whose prior moved by more than
    1e-6 of the old one (the same test), in one pass with no temporary arrays."""
    moved = 0
    for j in range(old_x.shape[0]):
        x0[j] = old_x[j]
        was = old_prior[j]
        if not (abs(new_prior[j] - was) <= 1e-6 * abs(was)):
            moved += 1
    return moved
