"""Compiled passes of the scores: edge lookup through a map, the largest conserved component,
the best two candidates per node (for the confidence), induced degrees.

Every kernel takes int64 node arrays and float64 scores (one compiled signature each).
"""

import numba
import numpy as np

from aligner.kernels.options import OUTER, inner


@numba.njit(cache=True, nogil=True, **OUTER)
def mapped_edge_rows(u, v, f, indptr, col, directed):
    """For every edge (u[e], v[e]) of A, the first position p with ``col[p]`` = f(v) among
    ``col[indptr[a]:indptr[a + 1]]`` (ascending), a = f(u), or -1: the edges of B as keys
    (first end, second end) grouped by first end. Undirected, (f(u), f(v)) is looked up as
    (min, max); ``f`` = -1 marks an unmapped node."""
    m = len(u)
    out = np.empty(m, dtype=np.int64)
    for _t in range(out.shape[0]):
        out[_t] = -1
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
            out[e] = lo
    return out


@inner
def _root(parent, a):
    while parent[a] != a:
        parent[a] = parent[parent[a]]  # path halving
        a = parent[a]
    return a


@numba.njit(cache=True, nogil=True, **OUTER)
def largest_component(u, v, keep, n):
    """Nodes and edges of the largest connected component of the edges (u[e], v[e]) with
    ``keep[e]``, on ``n`` nodes, by union-find. Of components of as many nodes, the one with the
    most edges; ties of both go to the component whose smallest node is smallest. (0, 0) when no
    edge is kept."""
    parent, size, touched = np.empty(n, dtype=np.int64), np.empty(n, dtype=np.int64), np.empty(n, dtype=np.bool_)
    for _t in range(n):  # filled here, not by np.arange / np.ones / np.zeros (aligner.kernels.options)
        parent[_t], size[_t], touched[_t] = _t, 1, False
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
    count = np.empty(n, dtype=np.int64)  # kept edges per component, at its root
    for _t in range(n):
        count[_t] = 0
    for e in range(len(u)):
        if keep[e]:
            count[_root(parent, u[e])] += 1
    best_size, best_edges = 0, 0
    for a in range(n):  # in node order: the first component reached is the one with the smallest node
        if touched[a]:
            r = _root(parent, a)
            if size[r] > best_size or (size[r] == best_size and count[r] > best_edges):
                best_size, best_edges = size[r], count[r]
    return best_size, best_edges


@numba.njit(cache=True, nogil=True, **OUTER)
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


@numba.njit(cache=True, nogil=True, **OUTER)
def induced_degrees(u, v, inside, n):
    """Edges (u[e], v[e]) with both ends ``inside``, and every node's degree among them (n)."""
    deg = np.empty(n, dtype=np.int64)
    for _t in range(deg.shape[0]):
        deg[_t] = 0
    m = 0
    for e in range(len(u)):
        if inside[u[e]] and inside[v[e]]:
            deg[u[e]] += 1
            deg[v[e]] += 1
            m += 1
    return m, deg
