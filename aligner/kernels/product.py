"""Compiled kernels that build the restricted product graph (CSR arrays in, arrays out)."""

import numba
import numpy as np

from aligner.kernels.options import OUTER, inner
from aligner.kernels.utils import _find


_EMPTY = -1
_MIX = 2654435761  # odd, about 2**32 / golden ratio
#: the ``floor`` that asks product_rows for w_A * w_B per entry (any negative number does)
PRODUCT = -1.0


def thread_count() -> int:
    """The number of threads the kernels may use (numba's setting, NUMBA_NUM_THREADS)."""
    return numba.get_num_threads()


@numba.njit(cache=True, nogil=True, **OUTER)
def product_rows(nodes, a_indptr, a_indices, b_indptr, b_indices, c_indptr, c_b, r_indptr, r_b, a_w, b_w, floor,
                 counts):
    """The product-graph neighbours of candidate pairs of ``nodes`` of A (increasing), in one pass.

    Pair k = (i, i') and pair u = (j, j') are adjacent when j is a neighbour of i in A and j'
    a neighbour of i' in B (given out-adjacencies of directed networks: the out-lists of the
    product graph). Node i of A is handled at once for all its candidates: every neighbour b
    of every candidate partner i' goes into a small open-addressing hash table keyed by b
    (sized to the node, so it stays in the fastest cache; the candidates sharing a neighbour
    b are chained under one key), then the candidates u = (j, j') of the neighbours j of i
    look up j' in it. The hits are collected, then written row by row
    (a counting sort on the row): since candidates are sorted by (j, j') and A's neighbour
    lists are sorted, each row comes out sorted. Work per i: sum of deg_B(i') over its
    candidates, plus the candidates of its neighbours, plus the output. A candidate partner i'
    of high degree (a hub of B, :func:`_by_search`) is not put in the table: each looked-up j'
    is searched for in its sorted neighbour list instead, so that a hub that is a candidate of
    many nodes of A costs their few look-ups each, not its whole neighbourhood each time.

    The candidates (the pairs a row may hold) are ``c_indptr`` (by node of A) and ``c_b`` (their
    nodes of B); the rows built are those of the pairs ``r_indptr[i] .. r_indptr[i+1]-1`` of
    each node i, with nodes of B ``r_b``: all of its candidates when ``r_indptr, r_b`` are
    ``c_indptr, c_b``, or some of them (in the candidates' order). Writes the number of
    neighbours of every row, in order (the pairs ``c_indptr[i0] .. c_indptr[i1]-1`` when the
    nodes are ``i0 .. i1-1`` and the rows all candidates), to ``counts`` (zeros on entry, one
    slot per row) and returns ``(indices, weights,
    checksum)``: their neighbour lists one after the other; with non-empty ``a_w`` and
    ``b_w`` (weights of the adjacency entries) the weight of every entry (else an empty
    array): w_A(i, j) * w_B(i', j') when ``floor`` < 0 (:data:`PRODUCT`), else the agreement
    floor + (1 - floor) * (1 - |w_A(i, j) - w_B(i', j')|) of two levels in [0, 1]; a
    checksum of the entries read ahead (returned only so that those reads are kept). The
    rows of a pair do not depend on the other pairs' rows, so ranges of nodes can be built
    apart (on parallel threads, each writing its own part of ``counts``) and joined, and a few
    pairs' rows built again (an update's patch, :func:`aligner.core.product.patch_product`).
    """
    weighted = a_w.shape[0] > 0
    cap = 0
    for i in nodes:
        cap += r_indptr[i + 1] - r_indptr[i]
    cap = max(16, cap)
    out_ix = np.empty(cap, dtype=np.int32)
    out_w = np.empty(cap if weighted else 0, dtype=np.float64)
    total = 0
    touched = 0
    tab_key = np.empty(64, dtype=np.int32)
    for _t in range(tab_key.shape[0]):
        tab_key[_t] = _EMPTY
    tab_head = np.empty(64, dtype=np.int32)
    ent_row = np.empty(64, dtype=np.int32)
    ent_next = np.empty(64, dtype=np.int32)
    ent_w = np.empty(64 if weighted else 0, dtype=np.float64)
    hit_row = np.empty(256, dtype=np.int32)
    hit_u = np.empty(256, dtype=np.int32)
    hit_w = np.empty(256 if weighted else 0, dtype=np.float64)
    big = np.empty(16, dtype=np.int32)  # the rows of the node's candidates looked up by search
    slot = 0  # the slot in ``counts`` of the next node's first pair
    for i in nodes:
        k0 = r_indptr[i]
        k1 = r_indptr[i + 1]
        r0 = slot
        r1 = slot + k1 - k0
        slot = r1
        if k1 == k0 or a_indptr[i + 1] == a_indptr[i]:
            continue
        # read the first entry of every row about to be used, in one simple loop: the loads do
        # not wait for each other, so their cache misses overlap (the loops below, full of
        # unpredictable branches, would otherwise take them one at a time); and count the
        # look-ups to come, the candidates of i's neighbours
        looks = 0
        cmax = 0
        for s in range(a_indptr[i], a_indptr[i + 1]):
            j = a_indices[s]
            c0 = c_indptr[j]
            c1 = c_indptr[j + 1]
            looks += c1 - c0
            cmax = max(cmax, c1 - c0)
            if c1 > c0:
                touched ^= c_b[c0]
        ne = 0
        dmax = 0
        for k in range(k0, k1):
            d = b_indptr[r_b[k] + 1] - b_indptr[r_b[k]]
            ne += d
            dmax = max(dmax, d)
        full = ne
        nbig = 0
        if dmax > 2 * looks or cmax > 2 * ne:  # a hub may be searched (else no list is)
            if k1 - k0 > big.shape[0]:
                big = np.empty(2 * (k1 - k0), dtype=np.int32)
            # which lists are searched rather than tabled or scanned (:func:`_by_search`): the
            # rows whose partner has many neighbours against the look-ups, then the neighbours j
            # with many candidates against the table those rows leave (``full``), then the rows
            # again against the look-ups those neighbours leave
            full = 0
            for k in range(k0, k1):
                d = b_indptr[r_b[k] + 1] - b_indptr[r_b[k]]
                if not _by_search(d, looks):
                    full += d
            if cmax > 2 * full:  # a neighbour searched leaves fewer look-ups
                left = 0
                for s in range(a_indptr[i], a_indptr[i + 1]):
                    d = c_indptr[a_indices[s] + 1] - c_indptr[a_indices[s]]
                    if not _by_search(d, full):
                        left += d
                looks = left
            ne = 0
            for k in range(k0, k1):
                d = b_indptr[r_b[k] + 1] - b_indptr[r_b[k]]
                if _by_search(d, looks):
                    big[nbig] = k - k0
                    nbig += 1
                else:
                    ne += d
        if ne == 0 and nbig == 0:
            continue
        for k in range(k0, k1):  # (the same for B's rows)
            ip = r_b[k]
            if b_indptr[ip + 1] > b_indptr[ip]:
                touched ^= b_indices[b_indptr[ip]]
        bits = 4
        while (1 << bits) < 8 * ne:  # load at most 1/8: most look-ups miss, and miss at once
            bits += 1
        if (1 << bits) > tab_key.shape[0]:
            tab_key = np.empty(1 << bits, dtype=np.int32)
            for _t in range(tab_key.shape[0]):
                tab_key[_t] = _EMPTY
            tab_head = np.empty(1 << bits, dtype=np.int32)
        if ne > ent_row.shape[0]:
            ent_row = np.empty(2 * ne, dtype=np.int32)
            ent_next = np.empty(2 * ne, dtype=np.int32)
            ent_w = np.empty(2 * ne if weighted else 0, dtype=np.float64)
        mask = (1 << bits) - 1
        e = 0
        for k in range(k0, k1):  # the table: key b -> its entries (row k - k0, w_B(i', b)), last first
            ip = r_b[k]
            if nbig > 0 and _by_search(b_indptr[ip + 1] - b_indptr[ip], looks):
                continue
            for t in range(b_indptr[ip], b_indptr[ip + 1]):
                b = b_indices[t]
                h = ((b * _MIX) & 0xFFFFFFFF) >> (32 - bits)  # multiplicative hashing: the top bits
                while tab_key[h] != _EMPTY and tab_key[h] != b:
                    h = (h + 1) & mask
                if tab_key[h] == _EMPTY:
                    tab_key[h] = b
                    ent_next[e] = _EMPTY
                else:
                    ent_next[e] = tab_head[h]
                tab_head[h] = e
                ent_row[e] = k - k0
                if weighted:
                    ent_w[e] = b_w[t]
                e += 1
        nh = _hits(i, a_indptr, a_indices, a_w, c_indptr, c_b, bits, tab_key, tab_head, ent_row, ent_next, ent_w,
                   floor, hit_row, hit_u, hit_w, big[:nbig], k0, k1 - k0, r_b, b_indptr, b_indices, b_w,
                   full, looks)
        while nh < 0:  # out of room: grow and look again
            hit_row = np.empty(2 * hit_row.shape[0], dtype=np.int32)
            hit_u = np.empty(hit_row.shape[0], dtype=np.int32)
            hit_w = np.empty(hit_row.shape[0] if weighted else 0, dtype=np.float64)
            nh = _hits(i, a_indptr, a_indices, a_w, c_indptr, c_b, bits, tab_key, tab_head, ent_row, ent_next, ent_w,
                       floor, hit_row, hit_u, hit_w, big[:nbig], k0, k1 - k0, r_b, b_indptr, b_indices, b_w,
                       full, looks)
        tab_key[: 1 << bits] = _EMPTY
        if nh == 0:
            continue
        if total + nh > out_ix.shape[0]:
            cap = max(2 * out_ix.shape[0], total + nh)
            # copied element by element: a slice copy compiles numba's shape checks (about 1 s cold)
            grown_ix = np.empty(cap, dtype=np.int32)
            for x in range(total):
                grown_ix[x] = out_ix[x]
            out_ix = grown_ix
            if weighted:
                grown_w = np.empty(cap, dtype=np.float64)
                for x in range(total):
                    grown_w[x] = out_w[x]
                out_w = grown_w
        # write the hits row by row, in the order found (a stable counting sort on the row)
        for x in range(nh):
            counts[r0 + hit_row[x]] += 1
        at = total
        for r in range(r0, r1):  # counts -> first slot of each row
            c = counts[r]
            counts[r] = at
            at += c
        for x in range(nh):
            r = r0 + hit_row[x]
            out_ix[counts[r]] = hit_u[x]
            if weighted:
                out_w[counts[r]] = hit_w[x]
            counts[r] += 1
        at = total
        for r in range(r0, r1):  # end slots -> counts
            end = counts[r]
            counts[r] = end - at
            at = end
        total += nh
    return out_ix[:total], out_w[:total] if weighted else out_w, touched


@inner
def _entry_weight(wa, wb, floor):
    """The weight of a product entry from its two edges' weights, as :func:`product_rows` says:
    w_A * w_B when ``floor`` < 0 (:data:`PRODUCT`), else the agreement of two levels in [0, 1]."""
    if floor < 0:
        return wa * wb
    return floor + (1.0 - floor) * (1.0 - abs(wa - wb))


@inner
def _put(hit_row, hit_u, hit_w, nh, row, u, w):
    """Record hit ``nh`` (row, u and, when weighted, its weight ``w``); returns the next slot."""
    hit_row[nh] = row
    hit_u[nh] = u
    if hit_w.shape[0] > 0:
        hit_w[nh] = w
    return nh + 1


@inner
def _by_search(degree, looks):
    """Whether a candidate partner of B with ``degree`` neighbours is looked up by binary search
    in its neighbour list (``looks`` searches of about log2(degree) steps each) rather than put
    in the node's table (``degree`` insertions): when the searches cost less."""
    if degree <= 2 * looks:  # the usual answer, found at once
        return False
    steps = 1
    while (1 << steps) < degree:
        steps += 1
    return degree > 2 * looks * steps


@inner
def _hits(i, a_indptr, a_indices, a_w, c_indptr, c_b, bits, tab_key, tab_head, ent_row, ent_next, ent_w, floor,
          hit_row, hit_u, hit_w, big, k0, ntab, r_b, b_indptr, b_indices, b_w, full, looks):
    """Look up the partner j' of every candidate u = (j, j') of every neighbour j of i: one hit
    (row, u, weight) per table entry of key j', and per row of ``big`` (rows k - ``k0`` left out
    of the table) whose partner r_b[k] has j' as a neighbour (a binary search); the weight as in
    :func:`product_rows`. A neighbour j with many more candidates than ``full`` (the table's
    entries before the last choice of rows) is met the other way round: the neighbours of each
    tabled row (of the ``ntab`` rows from ``k0``, those :func:`_by_search` keeps for the table
    against ``looks``) are searched for among j's candidates. The number of hits, or -1 when
    they do not fit."""
    mask = (1 << bits) - 1
    weighted = hit_w.shape[0] > 0
    room = hit_row.shape[0]
    nh = 0
    for s in range(a_indptr[i], a_indptr[i + 1]):
        j = a_indices[s]
        c0 = c_indptr[j]
        c1 = c_indptr[j + 1]
        searched = _by_search(c1 - c0, full)
        if searched:
            # a neighbour with more candidates than the table has entries (a hub of A that is a
            # candidate of many nodes of B): each table row's neighbours b are searched for among
            # j's candidates (sorted by node of B, so a row's hits still come in order of u)
            for k in range(k0, k0 + ntab):
                if _by_search(b_indptr[r_b[k] + 1] - b_indptr[r_b[k]], looks):
                    continue
                ip = r_b[k]
                for t in range(b_indptr[ip], b_indptr[ip + 1]):
                    u = _find(c_b, c0, c1, b_indices[t])
                    if u < 0:
                        continue
                    if nh == room:
                        return -1
                    nh = _put(hit_row, hit_u, hit_w, nh, k - k0, u, _entry_weight(a_w[s], b_w[t], floor)
                              if weighted else 0.0)
            if big.shape[0] == 0:
                continue
        for u in range(c0, c1):
            b = c_b[u]
            for x in range(big.shape[0]):
                ip = r_b[k0 + big[x]]
                t = _find(b_indices, b_indptr[ip], b_indptr[ip + 1], b)
                if t < 0:
                    continue
                if nh == room:
                    return -1
                nh = _put(hit_row, hit_u, hit_w, nh, big[x], u, _entry_weight(a_w[s], b_w[t], floor)
                          if weighted else 0.0)
            if searched:  # the table's rows were searched for above
                continue
            h = ((b * _MIX) & 0xFFFFFFFF) >> (32 - bits)  # multiplicative hashing: the top bits
            while tab_key[h] != _EMPTY and tab_key[h] != b:
                h = (h + 1) & mask
            if tab_key[h] == _EMPTY:
                continue
            e = tab_head[h]
            while e != _EMPTY:
                if nh == room:
                    return -1
                nh = _put(hit_row, hit_u, hit_w, nh, ent_row[e], u, _entry_weight(a_w[s], ent_w[e], floor)
                          if weighted else 0.0)
                e = ent_next[e]
    return nh


@numba.njit(cache=True, nogil=True, **OUTER)
def product_bound(a_indptr, a_indices, c_indptr, c_b, b_indptr, b_indices):
    """Sum over the candidate pairs (i, i') of min(sum over neighbours j of i of c_j, sum over
    neighbours j' of i' of c'_j', deg_A(i) * deg_B(i')), with c_j and c'_j' the numbers of
    candidates of node j of A and of node j' of B: an upper bound on the product graph's stored
    entries, the same whichever network is A. One pass over each adjacency and one over the pairs."""
    n1 = c_indptr.shape[0] - 1
    n2 = b_indptr.shape[0] - 1
    per_b = np.empty(n2, dtype=np.int64)  # candidates of each node of B
    for t in range(n2):
        per_b[t] = 0
    for k in range(c_b.shape[0]):
        per_b[c_b[k]] += 1
    reach_b = np.empty(n2, dtype=np.int64)
    for t in range(n2):
        r = 0
        for e in range(b_indptr[t], b_indptr[t + 1]):
            r += per_b[b_indices[e]]
        reach_b[t] = r
    total = 0
    for i in range(n1):
        k0 = c_indptr[i]
        k1 = c_indptr[i + 1]
        if k1 == k0:
            continue
        reach = 0
        for s in range(a_indptr[i], a_indptr[i + 1]):
            j = a_indices[s]
            reach += c_indptr[j + 1] - c_indptr[j]
        deg = a_indptr[i + 1] - a_indptr[i]
        for k in range(k0, k1):
            ip = c_b[k]
            total += min(reach, reach_b[ip], deg * (b_indptr[ip + 1] - b_indptr[ip]))
    return total


@inner
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


@numba.njit(cache=True, nogil=True, **OUTER)
def splice_rows(old_indptr, old_indices, redo, counts, rows):
    """CSR arrays with some rows replaced: row k is the old one where ``redo[k]`` is false, else
    the next of the new rows (``counts`` their lengths, ``rows`` their entries one after the
    other). Two passes over the rows, one copy of the entries."""
    m = old_indptr.shape[0] - 1
    indptr = np.empty(m + 1, dtype=np.int64)
    indptr[0] = 0
    t = 0
    for k in range(m):
        if redo[k]:
            indptr[k + 1] = indptr[k] + counts[t]
            t += 1
        else:
            indptr[k + 1] = indptr[k] + old_indptr[k + 1] - old_indptr[k]
    indices = np.empty(indptr[m], dtype=np.int32)
    t = 0
    at = 0
    for k in range(m):
        d = indptr[k]
        if redo[k]:
            for x in range(counts[t]):
                indices[d + x] = rows[at + x]
            at += counts[t]
            t += 1
        else:
            o = old_indptr[k]
            for x in range(old_indptr[k + 1] - o):
                indices[d + x] = old_indices[o + x]
    return indptr, indices
