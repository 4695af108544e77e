"""Compiled passes of the scores: edge lookup through a map, the largest conserved component,
and the best two candidates per node (for the confidence).

Every kernel takes int64 node arrays and float64 scores (one compiled signature each).
"""

import numba
import numpy as np


@numba.njit(cache=True, nogil=True)
def edge_table(u, v, n, directed):
    """The edges (u[e], v[e]) of a network on ``n`` nodes as rows for lookup.

    Undirected edges are keyed (min, max), arcs (u, v). Returns ``indptr`` (n + 1), ``col``
    and ``eid`` (E each): the keys with first end ``a`` are ``col[indptr[a]:indptr[a + 1]]``,
    ascending, ties in edge order, and ``eid`` holds the edge each entry came from. Edges
    already in key order are only counted; others take two stable counting sorts (by the
    second end, then by the first): O(E + n) either way.
    """
    m = len(u)
    lo = np.empty(m, dtype=np.int64)
    hi = np.empty(m, dtype=np.int64)
    ordered = True
    for e in range(m):
        a, b = u[e], v[e]
        if not directed and b < a:
            a, b = b, a
        lo[e] = a
        hi[e] = b
        if e > 0 and (a < lo[e - 1] or (a == lo[e - 1] and b < hi[e - 1])):
            ordered = False
    if ordered:  # already sorted by key (canonical edge lists are): count the rows only
        indptr = np.zeros(n + 1, dtype=np.int64)
        for e in range(m):
            indptr[lo[e] + 1] += 1
        for a in range(n):
            indptr[a + 1] += indptr[a]
        return indptr, hi, np.arange(m)
    # stable counting sort by hi
    count = np.zeros(n + 1, dtype=np.int64)
    for e in range(m):
        count[hi[e] + 1] += 1
    for a in range(n):
        count[a + 1] += count[a]
    by_hi = np.empty(m, dtype=np.int64)
    for e in range(m):
        by_hi[count[hi[e]]] = e
        count[hi[e]] += 1
    # stable counting sort of that order by lo
    indptr = np.zeros(n + 1, dtype=np.int64)
    for e in range(m):
        indptr[lo[e] + 1] += 1
    for a in range(n):
        indptr[a + 1] += indptr[a]
    fill = indptr[:-1].copy()
    col = np.empty(m, dtype=np.int64)
    eid = np.empty(m, dtype=np.int64)
    for t in range(m):
        e = by_hi[t]
        p = fill[lo[e]]
        col[p] = hi[e]
        eid[p] = e
        fill[lo[e]] = p + 1
    return indptr, col, eid


@numba.njit(cache=True, nogil=True)
def mapped_edge_rows(u, v, f, indptr, col, eid, directed):
    """For every edge (u[e], v[e]) of A, the first edge of B's :func:`edge_table` keyed
    (f(u), f(v)) (undirected: as (min, max)), or -1; ``f`` = -1 marks an unmapped node."""
    m = len(u)
    out = np.full(m, -1, dtype=np.int64)
    for e in range(m):
        a = f[u[e]]
        b = f[v[e]]
        if a < 0 or b < 0:
            continue
        if not directed and b < a:
            a, b = b, a
        lo = indptr[a]
        hi = indptr[a + 1]
        while lo < hi:  # first position with col >= b
            mid = (lo + hi) >> 1
            if col[mid] < b:
                lo = mid + 1
            else:
                hi = mid
        if lo < indptr[a + 1] and col[lo] == b:
            out[e] = eid[lo]
    return out


@numba.njit(cache=True, nogil=True)
def _root(parent, a):
    while parent[a] != a:
        parent[a] = parent[parent[a]]  # path halving
        a = parent[a]
    return a


@numba.njit(cache=True, nogil=True)
def largest_component(u, v, keep, n):
    """Nodes and edges of the largest connected component of the edges (u[e], v[e]) with
    ``keep[e]``, on ``n`` nodes, by union-find. Ties go to the component whose smallest node is
    smallest. (0, 0) when no edge is kept."""
    parent = np.arange(n)
    size = np.ones(n, dtype=np.int64)
    touched = np.zeros(n, dtype=np.bool_)
    for e in range(len(u)):
        if not keep[e]:
            continue
        touched[u[e]] = True
        touched[v[e]] = True
        a = _root(parent, u[e])
        b = _root(parent, v[e])
        if a == b:
            continue
        if size[a] < size[b]:
            a, b = b, a
        parent[b] = a
        size[a] += size[b]
    best, best_size = -1, 0
    for a in range(n):  # in node order: the first component reached is the one with the smallest node
        if touched[a]:
            r = _root(parent, a)
            if size[r] > best_size:
                best, best_size = r, size[r]
    edges = 0
    for e in range(len(u)):
        if keep[e] and _root(parent, u[e]) == best:
            edges += 1
    return best_size, edges


@numba.njit(cache=True, nogil=True)
def best_two(group, x, n):
    """Per group id in 0..n-1: the largest ``x``, the first entry holding it, and the second
    largest (equal to the largest when two entries tie for it); -inf (and -1) where missing."""
    best = np.full(n, -np.inf)
    second = np.full(n, -np.inf)
    arg = np.full(n, -1, dtype=np.int64)
    for k in range(len(x)):
        g = group[k]
        if x[k] > best[g]:
            second[g] = best[g]
            best[g] = x[k]
            arg[g] = k
        elif x[k] > second[g]:
            second[g] = x[k]
    return best, arg, second


@numba.njit(cache=True, nogil=True)
def induced_degrees(u, v, inside, n):
    """Edges (u[e], v[e]) with both ends ``inside``, and every node's degree among them (n)."""
    deg = np.zeros(n, dtype=np.int64)
    m = 0
    for e in range(len(u)):
        if inside[u[e]] and inside[v[e]]:
            deg[u[e]] += 1
            deg[v[e]] += 1
            m += 1
    return m, deg
