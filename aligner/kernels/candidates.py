"""Compiled kernels that select the candidate pairs (integer keys in, arrays out)."""

import numba
import numpy as np

from aligner.kernels.options import OUTER, inner


@numba.njit(cache=True, nogil=True, **OUTER)
def pairs_order(pairs, n1, n2):
    """How the rows of ``pairs`` (shape (K, 2)) stand: 0 sorted by (i, i') with no repeat,
    1 in another order or with repeats, -1 an index outside [0, n1) x [0, n2)."""
    state = 0
    for t in range(pairs.shape[0]):
        i = pairs[t, 0]
        ip = pairs[t, 1]
        if i < 0 or i >= n1 or ip < 0 or ip >= n2:
            return -1
        if t > 0 and state == 0:
            i0 = pairs[t - 1, 0]
            if i < i0 or (i == i0 and ip <= pairs[t - 1, 1]):
                state = 1
    return state


@numba.njit(cache=True, nogil=True, **OUTER)
def sort_merge_pairs(pairs, scores, n1, n2):
    """The unique rows of ``pairs`` sorted by (i, i'), each with its highest score.

    Two stable counting sorts (on i', then on i: O(K + n1 + n2), no comparison sort), then
    repeats merged. Returns the pairs as an (n, 2) int32 array and their scores (float64).
    """
    K = pairs.shape[0]
    by_b = _counting_order(pairs, 1, n2, np.arange(K))
    order = _counting_order(pairs, 0, n1, by_b)
    out = np.empty((K, 2), dtype=np.int32)
    out_s = np.empty(K, dtype=np.float64)
    n = 0
    for x in range(K):
        t = order[x]
        i = pairs[t, 0]
        ip = pairs[t, 1]
        if n > 0 and out[n - 1, 0] == i and out[n - 1, 1] == ip:
            if scores[t] > out_s[n - 1]:
                out_s[n - 1] = scores[t]
            continue
        out[n, 0] = i
        out[n, 1] = ip
        out_s[n] = scores[t]
        n += 1
    return out[:n].copy(), out_s[:n].copy()


@inner
def _counting_order(pairs, side, n_keys, order):
    """``order`` (row numbers) stably sorted on the rows' node on ``side``."""
    ptr = np.empty(n_keys + 1, dtype=np.int64)
    for _t in range(ptr.shape[0]):
        ptr[_t] = 0
    for t in range(pairs.shape[0]):
        ptr[pairs[t, side] + 1] += 1
    for g in range(n_keys):
        ptr[g + 1] += ptr[g]
    out = np.empty(order.shape[0], dtype=np.int64)
    for x in range(order.shape[0]):
        t = order[x]
        g = pairs[t, side]
        out[ptr[g]] = t
        ptr[g] += 1
    return out


@numba.njit(cache=True, nogil=True, **OUTER)
def _kth_highest(vals, k):
    """The ``k``-th highest value of ``vals`` (1 <= k <= len), by quickselect; reorders ``vals``."""
    lo = 0
    hi = vals.shape[0] - 1
    want = k - 1  # its position when sorted from high to low
    while lo < hi:
        pivot = vals[(lo + hi) // 2]
        a = lo
        b = hi
        while a <= b:
            while vals[a] > pivot:
                a += 1
            while vals[b] < pivot:
                b -= 1
            if a <= b:
                vals[a], vals[b] = vals[b], vals[a]
                a += 1
                b -= 1
        if want <= b:
            hi = b
        elif want >= a:
            lo = a
        else:
            return vals[want]
    return vals[want]


@inner
def _drop_below_top_k(scores, members, g0, g1, k, drop):
    """Mark in ``drop`` the group ``members[g0:g1]`` (ascending; positions g0..g1-1 themselves
    when ``members`` is empty) outside the group's ``k`` best scores, ties at the cut going to
    the members listed first."""
    size = g1 - g0
    identity = members.shape[0] == 0
    vals = np.empty(size, dtype=np.float64)
    for x in range(size):
        vals[x] = scores[g0 + x] if identity else scores[members[g0 + x]]
    cut = _kth_highest(vals.copy(), k)
    above = 0
    for x in range(size):
        if vals[x] > cut:
            above += 1
    ties = k - above  # members scoring exactly ``cut`` that still make it, first come first
    for x in range(size):
        v = vals[x]
        if v > cut:
            continue
        if v == cut and ties > 0:
            ties -= 1
            continue
        drop[g0 + x if identity else members[g0 + x]] = True


@numba.njit(cache=True, nogil=True, **OUTER)
def drop_below_top_k(scores, ptr, members, k, drop):
    """For every group g, set ``drop`` True on its members outside its ``k`` highest scores,
    ties going to the member listed first.

    The members of group g are ``members[ptr[g]:ptr[g+1]]`` (ascending), or the positions
    ``ptr[g]..ptr[g+1]-1`` themselves when ``members`` is empty (the rows of a CSR index).
    Serial: only the nodes holding more than ``k`` pairs are worked on, few in practice, and
    a parallel kernel costs more to load than it would save.
    """
    for g in range(ptr.shape[0] - 1):
        g0 = ptr[g]
        g1 = ptr[g + 1]
        if g1 - g0 > k:
            _drop_below_top_k(scores, members, g0, g1, k, drop)


@numba.njit(cache=True, nogil=True, **OUTER)
def large_groups(pairs, side, n_groups, k):
    """The rows of ``pairs`` grouped by their node on ``side`` (column 0 or 1, values in
    [0, n_groups)), for the groups of more than ``k`` rows only, ascending within each group:
    (ptr, members) as for :func:`drop_below_top_k`. Two passes over the rows."""
    counts = np.zeros(n_groups, dtype=np.int64)
    for t in range(pairs.shape[0]):
        counts[pairs[t, side]] += 1
    slot = np.full(n_groups, -1, dtype=np.int64)
    n_big = 0
    for g in range(n_groups):
        if counts[g] > k:
            slot[g] = n_big
            n_big += 1
    ptr = np.zeros(n_big + 1, dtype=np.int64)
    for g in range(n_groups):
        if slot[g] >= 0:
            ptr[slot[g] + 1] = ptr[slot[g]] + counts[g]
    fill = ptr[:-1].copy()
    members = np.empty(ptr[n_big], dtype=np.int64)
    for t in range(pairs.shape[0]):
        s = slot[pairs[t, side]]
        if s >= 0:
            members[fill[s]] = t
            fill[s] += 1
    return ptr, members


@numba.njit(cache=True, nogil=True, **OUTER)
def row_pointer(pairs, n1):
    """The CSR row pointer (int64, length n1 + 1) of pairs sorted by their node of A."""
    ptr = np.empty(n1 + 1, dtype=np.int64)
    for _t in range(ptr.shape[0]):
        ptr[_t] = 0
    for t in range(pairs.shape[0]):
        ptr[pairs[t, 0] + 1] += 1
    for i in range(n1):
        ptr[i + 1] += ptr[i]
    return ptr
