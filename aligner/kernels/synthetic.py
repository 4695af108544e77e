"""Compiled loops of the seeded graph and pair generators (:mod:`aligner.datasets.synthetic`).

The numpy ``Generator`` of the caller is passed in, so a kernel advances the same random stream
as the surrounding numpy code and a seed fixes the output bit for bit. Kernels assume valid
input; the generators check their arguments first.
"""

import numba
import numpy as np

from aligner.kernels.options import OUTER, inner

__all__ = ["holme_kim_kernel", "duplication_kernel", "lineage_kernel", "decoy_kernel", "sort_rows",
           "family_decoy_kernel"]

# Growable adjacency lists ("arena"): the neighbours of node u are
# pool[meta[u, 0] : meta[u, 0] + meta[u, 1]], in a block whose capacity is a function of the
# count (0, 4, 8, 16, ...). A full block moves to the end of the pool with twice the capacity;
# when the pool is full it is rebuilt, compacted, at twice the live size. Neighbour lists are
# contiguous, so a uniform random neighbour costs O(1) and a scan is sequential; start and count
# share one 16-byte row, so touching a node costs one cache miss.


@inner
def _block_cap(count):  # pragma: no cover - compiled
    if count == 0:
        return 0
    c = 4
    while c < count:
        c *= 2
    return c


@inner
def _arena_compact(pool, meta, grow_node):  # pragma: no cover - compiled
    n = meta.shape[0]
    live = 0
    for i in range(n):
        live += _block_cap(meta[i, 1] + 1 if i == grow_node else meta[i, 1])
    new = np.empty(max(2 * live, 1024), dtype=pool.dtype)
    pos = 0
    for i in range(n):
        c = meta[i, 1]
        s = meta[i, 0]
        for j in range(c):
            new[pos + j] = pool[s + j]
        meta[i, 0] = pos
        pos += _block_cap(c + 1 if i == grow_node else c)
    return new, pos


@inner
def _arena_append(pool, used, meta, u, v):  # pragma: no cover - compiled
    c = meta[u, 1]
    if c == _block_cap(c):  # block full (or absent)
        new_cap = _block_cap(c + 1)
        if used + new_cap > pool.shape[0]:
            pool, used = _arena_compact(pool, meta, u)
        else:
            old = meta[u, 0]
            for j in range(c):
                pool[used + j] = pool[old + j]
            meta[u, 0] = used
            used += new_cap
    pool[meta[u, 0] + c] = v
    meta[u, 1] = c + 1
    return pool, used


@inner
def _arena_edges(pool, meta, n_edges):  # pragma: no cover - compiled
    """Edge list (u, v), u < v, of an arena holding each edge in both end points' lists."""
    out = np.empty((n_edges, 2), dtype=np.int64)
    e = 0
    for u in range(meta.shape[0]):
        s = meta[u, 0]
        for j in range(meta[u, 1]):
            v = np.int64(pool[s + j])
            if v > u:
                out[e, 0] = u
                out[e, 1] = v
                e += 1
    return out[:e]


@inner
def _linked(pool, meta, u, v):  # pragma: no cover - compiled
    s = meta[u, 0]
    for j in range(meta[u, 1]):
        if pool[s + j] == v:
            return True
    return False


@numba.njit(cache=True, **OUTER)
def holme_kim_kernel(n, m, p, rng):  # pragma: no cover - compiled
    meta = np.zeros((n, 2), dtype=np.int64)
    pool = np.empty(max(1024, 3 * m * n), dtype=np.int32)
    used = np.int64(0)  # not a literal: one compiled signature of _arena_append
    rep = np.empty(m + 2 * m * (n - m), dtype=np.int32)  # each node once per incident edge
    for i in range(m):
        rep[i] = i
    n_rep = m
    buf = np.empty(2 * m + 3, dtype=np.int64)
    targets = np.empty(m, dtype=np.int64)
    n_edges = np.int64(0)
    small = 2 * m + 2  # above this degree a triangle partner surely exists: use rejection
    for source in range(m, n):
        # m distinct targets, each drawn with probability proportional to degree
        k = 0
        while k < m:
            x = np.int64(rep[rng.integers(0, n_rep)])
            fresh = True
            for j in range(k):
                if targets[j] == x:
                    fresh = False
                    break
            if fresh:
                targets[k] = x
                k += 1
        # they are used in the order drawn: the k-th attachment step takes the k-th draw
        ti = 0
        count = 0
        target = -1
        while count < m:
            if count > 0 and rng.random() < p:
                # triangle step: a uniform neighbour of the last target not yet linked to source
                d = meta[target, 1]
                s = meta[target, 0]
                v = -1
                if d <= small:
                    c = 0
                    for j in range(d):
                        w = np.int64(pool[s + j])
                        if w != source and not _linked(pool, meta, source, w):
                            buf[c] = w
                            c += 1
                    if c > 0:
                        v = buf[rng.integers(0, c)]
                else:
                    # at most m of the d > 2m + 2 neighbours are excluded: accept with odds > 1/2
                    while True:
                        w = np.int64(pool[s + rng.integers(0, d)])
                        if w != source and not _linked(pool, meta, source, w):
                            v = w
                            break
                if v >= 0:
                    pool, used = _arena_append(pool, used, meta, source, v)
                    pool, used = _arena_append(pool, used, meta, v, source)
                    n_edges += 1
                    rep[n_rep] = v
                    n_rep += 1
                    count += 1
                    continue
            # preferential attachment step
            target = targets[ti]
            ti += 1
            if not _linked(pool, meta, source, target):
                pool, used = _arena_append(pool, used, meta, source, target)
                pool, used = _arena_append(pool, used, meta, target, source)
                n_edges += 1
            rep[n_rep] = target  # counted even when the edge existed already
            n_rep += 1
            count += 1
        for j in range(m):
            rep[n_rep] = source
            n_rep += 1
    return _arena_edges(pool, meta, n_edges)


@numba.njit(cache=True, **OUTER)
def duplication_kernel(n_init, init_edges, n_final, p_retain, p_parent, max_redraws, rng):  # pragma: no cover
    meta = np.zeros((n_final, 2), dtype=np.int64)
    pool = np.empty(max(1024, 4 * init_edges.shape[0] + 12 * (n_final - n_init)), dtype=np.int32)
    used = np.int64(0)  # not a literal: one compiled signature of _arena_append
    parent = np.full(n_final, -1, dtype=np.int64)
    buf = np.empty(n_final, dtype=np.int64)
    n_edges = np.int64(0)
    for i in range(init_edges.shape[0]):
        u = init_edges[i, 0]
        v = init_edges[i, 1]
        pool, used = _arena_append(pool, used, meta, u, v)
        pool, used = _arena_append(pool, used, meta, v, u)
        n_edges += 1
    node = n_init
    failures = 0
    while node < n_final:
        par = rng.integers(0, node)
        c = 0
        s = meta[par, 0]
        for j in range(meta[par, 1]):
            if rng.random() < p_retain:
                buf[c] = np.int64(pool[s + j])
                c += 1
        link_parent = rng.random() < p_parent
        if c == 0 and not link_parent:
            failures += 1
            if failures <= max_redraws:
                continue
            link_parent = True
        failures = 0
        if link_parent:
            buf[c] = par
            c += 1
        for j in range(c):
            v = buf[j]
            pool, used = _arena_append(pool, used, meta, node, v)
            pool, used = _arena_append(pool, used, meta, v, node)
        n_edges += c
        parent[node] = par
        node += 1
    return _arena_edges(pool, meta, n_edges), parent


@numba.njit(cache=True, **OUTER)
def lineage_kernel(parent, n_root):  # pragma: no cover - compiled
    """Root (node < n_root) and duplication count of every node, replaying the duplications."""
    n = parent.shape[0]
    root = np.empty(n, dtype=np.int64)
    dups = np.zeros(n, dtype=np.int64)
    for i in range(n_root):
        root[i] = i
    for i in range(n_root, n):
        par = parent[i]
        root[i] = root[par]
        dups[par] += 1
        dups[i] = dups[par]
    return root, dups


@numba.njit(cache=True, **OUTER)
def decoy_kernel(partner, n_b, k, near, indptr, indices, rng):  # pragma: no cover - compiled
    """``k`` distinct decoys per row, never the row's partner; near: by 1- or 2-step walks."""
    n = partner.shape[0]
    out = np.empty((n, k), dtype=np.int64)
    max_attempts = 10 * k + 10
    for a in range(n):
        t = partner[a]
        c = 0
        if near and indptr[t + 1] > indptr[t]:
            attempts = 0
            while c < k and attempts < max_attempts:
                attempts += 1
                lo = indptr[t]
                x = indices[lo + rng.integers(0, indptr[t + 1] - lo)]
                if rng.random() < 0.5:
                    lo = indptr[x]
                    x = indices[lo + rng.integers(0, indptr[x + 1] - lo)]
                if x == t:
                    continue
                fresh = True
                for j in range(c):
                    if out[a, j] == x:
                        fresh = False
                        break
                if fresh:
                    out[a, c] = x
                    c += 1
        while c < k:
            x = rng.integers(0, n_b - 1)
            if x >= t:
                x += 1  # uniform over B without t
            fresh = True
            for j in range(c):
                if out[a, j] == x:
                    fresh = False
                    break
            if fresh:
                out[a, c] = x
                c += 1
    return out


@numba.njit(cache=True, **OUTER)
def sort_rows(keys, values):  # pragma: no cover - compiled
    """Sort each row of ``keys`` in place (insertion sort: rows are short), moving ``values``."""
    n, k = keys.shape
    for i in range(n):
        for j in range(1, k):
            x = keys[i, j]
            y = values[i, j]
            h = j - 1
            while h >= 0 and keys[i, h] > x:
                keys[i, h + 1] = keys[i, h]
                values[i, h + 1] = values[i, h]
                h -= 1
            keys[i, h + 1] = x
            values[i, h + 1] = y


@numba.njit(cache=True, **OUTER)
def family_decoy_kernel(anc_a, anc_b, family_size_b, k, rng):  # pragma: no cover - compiled
    """Up to ``k`` distinct nodes of B per node of A, each from a different ancestral family."""
    n_a = anc_a.shape[0]
    n_b = anc_b.shape[0]
    rows = np.empty(n_a * k, dtype=np.int64)
    cols = np.empty(n_a * k, dtype=np.int64)
    chosen = np.empty(k, dtype=np.int64)
    e = 0
    for a in range(n_a):
        fam = anc_a[a]
        eligible = n_b - family_size_b[fam]
        want = min(k, eligible)
        c = 0
        while c < want:
            x = rng.integers(0, n_b)
            if anc_b[x] == fam:
                continue
            fresh = True
            for j in range(c):
                if chosen[j] == x:
                    fresh = False
                    break
            if fresh:
                chosen[c] = x
                c += 1
        for j in range(c):
            rows[e] = a
            cols[e] = chosen[j]
            e += 1
    return rows[:e], cols[:e]
