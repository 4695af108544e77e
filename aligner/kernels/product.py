"""Compiled kernels that build the restricted product graph (CSR arrays in, arrays out)."""

import numba
import numpy as np


@numba.njit(cache=True, nogil=True)
def _product_pass(a_indptr, a_indices, b_indptr, b_indices, c_indptr, c_b, n2, out_indptr, out_indices, fill,
                  a_w, b_w, out_w):
    """Count (``fill`` False) or write (``fill`` True) the product-graph neighbours of every pair.

    With non-empty ``a_w`` and ``b_w`` (weights of the adjacency entries) the fill pass also
    writes ``out_w``: the weight w_A(i, j) * w_B(i', j') of every product entry. Given
    out-adjacencies of directed networks, the lists are the out-lists of the product graph.

    Pair k = (i, i') and pair u = (j, j') are adjacent when j is a neighbour of i in A and j'
    a neighbour of i' in B. Node i of A is handled at once for all its candidates: every
    neighbour b of every candidate partner i' is entered in a table keyed by b (``head`` /
    ``nxt`` chains over n2 slots, cleared after each i), then the candidates u = (j, j') of
    the neighbours j of i look up j' in it. Work per i: sum of deg_B(i') over its candidates,
    plus the candidates of its neighbours, plus the output. Since candidates are sorted by
    (i, i'), each pair's neighbour list comes out sorted.
    """
    n1 = c_indptr.shape[0] - 1
    weighted = a_w.shape[0] > 0
    head = np.full(n2, -1, dtype=np.int64)
    cap = 16
    ent_k = np.empty(cap, dtype=np.int64)
    ent_w = np.empty(cap, dtype=np.float64)
    nxt = np.empty(cap, dtype=np.int64)
    cursor = np.zeros(0, dtype=np.int64)
    if fill:
        cursor = out_indptr[:-1].copy()
    total = 0
    for i in range(n1):
        k0 = c_indptr[i]
        k1 = c_indptr[i + 1]
        if k1 == k0 or a_indptr[i + 1] == a_indptr[i]:
            continue
        # table: neighbour b of a candidate partner i' -> the candidate index k of (i, i')
        ne = 0
        for k in range(k0, k1):
            ip = c_b[k]
            for t in range(b_indptr[ip], b_indptr[ip + 1]):
                if ne == cap:
                    cap *= 2
                    ent_k2 = np.empty(cap, dtype=np.int64)
                    ent_w2 = np.empty(cap, dtype=np.float64)
                    nxt2 = np.empty(cap, dtype=np.int64)
                    ent_k2[:ne] = ent_k[:ne]
                    ent_w2[:ne] = ent_w[:ne]
                    nxt2[:ne] = nxt[:ne]
                    ent_k = ent_k2
                    ent_w = ent_w2
                    nxt = nxt2
                b = b_indices[t]
                ent_k[ne] = k
                if weighted:
                    ent_w[ne] = b_w[t]
                nxt[ne] = head[b]
                head[b] = ne
                ne += 1
        if ne == 0:
            continue
        for s in range(a_indptr[i], a_indptr[i + 1]):
            j = a_indices[s]
            for u in range(c_indptr[j], c_indptr[j + 1]):
                e = head[c_b[u]]
                while e != -1:
                    k = ent_k[e]
                    if fill:
                        out_indices[cursor[k]] = u
                        if weighted:
                            out_w[cursor[k]] = a_w[s] * ent_w[e]
                        cursor[k] += 1
                    else:
                        out_indptr[k + 1] += 1
                    total += 1
                    e = nxt[e]
        # clear the table
        for k in range(k0, k1):
            ip = c_b[k]
            for t in range(b_indptr[ip], b_indptr[ip + 1]):
                head[b_indices[t]] = -1
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
