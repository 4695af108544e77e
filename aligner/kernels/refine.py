"""Compiled kernels of the refinement stage (see :mod:`aligner.core.refine`); no argument checking.

All kernels work on the restricted product graph S over the m candidate pairs, stored as a
symmetric CSR pattern (``s_indptr``, ``s_indices``, neighbour lists sorted), and on the
candidate pairs sorted by (node of A, node of B) with the row pointer ``c_indptr`` over the
nodes of A.
"""

import numba
import numpy as np

from aligner.kernels.utils import _find


@numba.njit(cache=True, nogil=True)
def _matched_neighbours(s_indptr, s_indices, sel, out):
    """out = S @ 1_sel: for every pair, how many of its product-graph neighbours are in ``sel``.

    Uses the symmetry of S, so it costs the degrees of the selected pairs only.
    """
    out[:] = 0.0
    for t in range(sel.shape[0]):
        k = sel[t]
        for e in range(s_indptr[k], s_indptr[k + 1]):
            out[s_indices[e]] += 1.0


@numba.njit(cache=True, nogil=True)
def _adjacent(s_indptr, s_indices, k, l):
    """S[k, l]: how many times l is stored among the neighbours of k (0, 1, or 2 in the
    symmetrised product graph of directed networks, where reciprocal arcs give two entries)."""
    lo = s_indptr[k]
    hi = s_indptr[k + 1]
    t = _find(s_indices, lo, hi, l)
    if t < 0:
        return 0.0
    c = 1.0
    u = t - 1
    while u >= lo and s_indices[u] == l:
        c += 1.0
        u -= 1
    u = t + 1
    while u < hi and s_indices[u] == l:
        c += 1.0
        u += 1
    return c


@numba.njit(cache=True, nogil=True)
def _toggle(s_indptr, s_indices, g, k, sign):
    for e in range(s_indptr[k], s_indptr[k + 1]):
        g[s_indices[e]] += sign


@numba.njit(cache=True, nogil=True)
def _apply(s_indptr, s_indices, g, pair_a, pair_b, mate_a, mate_b, removed, added):
    """Take the pairs ``removed`` out of the matching and put ``added`` in (entries -1 skipped)."""
    for t in range(removed.shape[0]):
        k = removed[t]
        if k >= 0:
            _toggle(s_indptr, s_indices, g, k, -1.0)
            mate_a[pair_a[k]] = -1
            mate_b[pair_b[k]] = -1
    for t in range(added.shape[0]):
        k = added[t]
        if k >= 0:
            _toggle(s_indptr, s_indices, g, k, 1.0)
            mate_a[pair_a[k]] = k
            mate_b[pair_b[k]] = k


@numba.njit(cache=True, nogil=True)
def _local_search(s_indptr, s_indices, c_indptr, col_ptr, col_idx, pair_a, pair_b, bw, g, mate_a, mate_b,
                  max_sweeps, rotations, eps):
    """First-improvement search over 2-exchanges (and 3-rotations) of a matching, in place.

    The matching is ``mate_a[i]`` (candidate index matched at node i of A, or -1) and
    ``mate_b[i']`` (same for node i' of B); ``g`` must hold S @ 1_M on entry and holds it for
    the final matching on exit. The objective is F(M) = sum_{k in M} bw[k] + 1/2 sum_{k in M} g[k].

    For a move that removes the pairs R from M and adds the pairs D,

        dC = sum_D g - sum_R g + sum_{pairs in R} S + sum_{pairs in D} S - sum_{r in R, d in D} S_rd

    (expand 1/2 u'^T S u' for u' = u - 1_R + 1_D; S has a zero diagonal), and S_rd = 0 when r
    and d share a node (no self-loops in A or B).

    2-exchange: for every candidate p = (i, j') not in M, with k = (i, i') and l = (j, j') the
    pairs of M at i and at j' (either may be absent), remove k and l, add p, and add
    q = (j, i') when q is a candidate. Each added pair shares a node with each removed one, so
    dC = g_p + g_q - g_k - g_l + S_kl * ([k, l removed] + [p, q added]) (S_pq = S_kl).

    3-rotation (``rotations`` true): with k, l, p as above and both k, l present, for every
    candidate s = (h, i') (read from the column index ``col_ptr``/``col_idx``: the candidates
    of each node of B) with h matched by r = (h, h') and q = (j, h') a candidate, replace
    k, l, r by p, q, s (i -> j', j -> h', h -> i'). Here p/r, q/k and s/l share no node.
    Rotations are pruned, before q is looked up, with the largest bw + g of row j and the
    bound 5 on the positive S terms.

    A move is made when its change of F exceeds ``eps``. A sweep visits every candidate once.
    Sweeps try 2-exchanges only until one makes no move; then a sweep also tries rotations, and
    after one with a move the cheap sweeps resume. The search stops after a sweep with
    rotations (or, without them, a 2-exchange sweep) that makes no move, or after
    ``max_sweeps`` sweeps.

    Returns (moves, sweeps, gain), gain being the sum of the changes of F of the moves made.
    """
    n1 = c_indptr.shape[0] - 1
    gain = 0.0
    moves = 0
    sweeps = 0
    rem = np.empty(3, dtype=np.int64)
    add = np.empty(3, dtype=np.int64)
    rotate = False  # rotation sweeps only once 2-exchange sweeps have stopped moving
    while sweeps < max_sweeps:
        sweeps += 1
        moved = 0
        for i in range(n1):
            for p in range(c_indptr[i], c_indptr[i + 1]):
                k = mate_a[i]
                if k == p:
                    continue
                jb = pair_b[p]
                l = mate_b[jb]
                base = bw[p] + g[p]
                q = -1
                s_kl = 0.0
                if k >= 0:
                    base -= bw[k] + g[k]
                if l >= 0:
                    base -= bw[l] + g[l]
                delta = base
                if k >= 0 and l >= 0:
                    s_kl = _adjacent(s_indptr, s_indices, k, l)
                    delta += s_kl
                    j = pair_a[l]
                    q = _find(pair_b, c_indptr[j], c_indptr[j + 1], pair_b[k])
                    if q >= 0:
                        delta += bw[q] + g[q] + s_kl
                if delta > eps:
                    rem[0] = k
                    rem[1] = l
                    rem[2] = -1
                    add[0] = p
                    add[1] = q
                    add[2] = -1
                    _apply(s_indptr, s_indices, g, pair_a, pair_b, mate_a, mate_b, rem, add)
                    gain += delta
                    moved += 1
                    continue
                if not rotate or k < 0 or l < 0:
                    continue
                j = pair_a[l]
                ib = pair_b[k]
                # base = bw_p + g_p - (bw_k + g_k) - (bw_l + g_l); add S_kl (k, l both removed)
                base += s_kl
                # an upper bound on bw_q + g_q over row j, for pruning before the look-up of q
                urow = 0.0
                for t in range(c_indptr[j], c_indptr[j + 1]):
                    if bw[t] + g[t] > urow:
                        urow = bw[t] + g[t]
                for e in range(col_ptr[ib], col_ptr[ib + 1]):
                    s = col_idx[e]  # s = (h, i')
                    h = pair_a[s]
                    if h == i or h == j:
                        continue
                    r = mate_a[h]
                    if r < 0:
                        continue
                    d = base + bw[s] + g[s] - bw[r] - g[r]
                    if d + urow + 5.0 <= eps:
                        continue  # neither q nor the five positive S terms below can lift it
                    hb = pair_b[r]
                    q = _find(pair_b, c_indptr[j], c_indptr[j + 1], hb)
                    if q < 0:
                        continue
                    d += bw[q] + g[q]
                    if d + 5.0 <= eps:
                        continue
                    d += _adjacent(s_indptr, s_indices, k, r) + _adjacent(s_indptr, s_indices, l, r)
                    d += (_adjacent(s_indptr, s_indices, p, q) + _adjacent(s_indptr, s_indices, p, s)
                          + _adjacent(s_indptr, s_indices, q, s))
                    d -= (_adjacent(s_indptr, s_indices, p, r) + _adjacent(s_indptr, s_indices, q, k)
                          + _adjacent(s_indptr, s_indices, s, l))
                    if d > eps:
                        rem[0] = k
                        rem[1] = l
                        rem[2] = r
                        add[0] = p
                        add[1] = q
                        add[2] = s
                        _apply(s_indptr, s_indices, g, pair_a, pair_b, mate_a, mate_b, rem, add)
                        gain += d
                        moved += 1
                        break
        moves += moved
        if moved == 0:
            if rotate or not rotations:
                break
            rotate = True
        else:
            rotate = False
    return moves, sweeps, gain
