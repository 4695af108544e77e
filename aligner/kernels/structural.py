"""Compiled kernels of the structural features (see :mod:`aligner.priors.structural`); no argument checking.

The network is a symmetric CSR adjacency (``indptr``, ``indices``) with sorted neighbour lists
and no self-loops.
"""

import numba
import numpy as np

from aligner.kernels.options import OUTER


@numba.njit(cache=True, nogil=True, **OUTER)
def _triangles_and_distance_two(indptr, indices):
    """Per node: the number of triangles through it and the number of nodes at distance exactly two.

    One pass over the two-step walks ``v - u - w``: ``w`` is a neighbour of ``v`` (a triangle,
    every triangle at ``v`` is seen twice) or else a node at distance two (counted once, by a
    stamp). Two stamp arrays stamped with ``v`` need no reset between nodes. Cost: the number
    of two-step walks, ``sum_u deg(u)^2``, and ``2 n`` int32 of memory.
    """
    n = len(indptr) - 1
    nbr = np.full(n, -1, dtype=np.int32)
    seen = np.full(n, -1, dtype=np.int32)
    tri = np.zeros(n, dtype=np.int64)
    two = np.zeros(n, dtype=np.int64)
    for v in range(n):
        for p in range(indptr[v], indptr[v + 1]):
            nbr[indices[p]] = v
        t = 0
        d2 = 0
        for p in range(indptr[v], indptr[v + 1]):
            u = indices[p]
            for q in range(indptr[u], indptr[u + 1]):
                w = indices[q]
                if w == v:
                    continue
                if nbr[w] == v:
                    t += 1
                elif seen[w] != v:
                    seen[w] = v
                    d2 += 1
        tri[v] = t // 2
        two[v] = d2
    return tri, two


@numba.njit(cache=True, nogil=True, **OUTER)
def _neighbour_stats(indptr, indices, values):
    """Per node: mean, minimum, maximum and population standard deviation of ``values`` over its
    neighbours (all 0 for a node without neighbours). Returns an (n, 4) float64 array."""
    n = len(indptr) - 1
    out = np.zeros((n, 4), dtype=np.float64)
    for v in range(n):
        lo = indptr[v]
        hi = indptr[v + 1]
        if hi == lo:
            continue
        s = 0.0
        mn = np.inf
        mx = -np.inf
        for p in range(lo, hi):
            x = values[indices[p]]
            s += x
            if x < mn:
                mn = x
            if x > mx:
                mx = x
        mean = s / (hi - lo)
        ss = 0.0
        for p in range(lo, hi):
            d = values[indices[p]] - mean
            ss += d * d
        out[v, 0] = mean
        out[v, 1] = mn
        out[v, 2] = mx
        out[v, 3] = np.sqrt(ss / (hi - lo))
    return out


@numba.njit(cache=True, nogil=True, **OUTER)
def _neighbour_mean(indptr, indices, x):
    """Mean of the rows of ``x`` (n, F) over each node's neighbours (0 for no neighbours)."""
    n = len(indptr) - 1
    f = x.shape[1]
    out = np.zeros((n, f), dtype=np.float64)
    for v in range(n):
        lo = indptr[v]
        hi = indptr[v + 1]
        if hi == lo:
            continue
        for p in range(lo, hi):
            u = indices[p]
            for j in range(f):
                out[v, j] += x[u, j]
        inv = 1.0 / (hi - lo)
        for j in range(f):
            out[v, j] *= inv
    return out
