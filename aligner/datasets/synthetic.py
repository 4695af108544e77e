"""Generators of test instances whose true alignment is known.

Every generator is a pure function of its arguments: it draws all of its randomness from a
single ``np.random.default_rng(seed)`` created once at the top of the call, so equal seeds
give equal outputs (bit for bit) on the same numpy and numba versions.

Edge lists are returned in canonical form: an ``(E, 2)`` ``int64`` array whose rows satisfy
``i < j``, without self-loops or duplicate rows, sorted by ``(i, j)``.

The growth processes run in numba-compiled kernels (compiled once, cached on disk when the
package directory is writable). The numpy ``Generator`` is passed into the kernels, so the
kernels advance the same random stream as the surrounding numpy code.

Functions
---------
powerlaw_graph
    Preferential attachment with triangle formation (Holme & Kim 2002).
duplication_divergence_graph
    Growth by node duplication and edge loss (Vazquez et al. 2003; Ispolatov, Krapivsky &
    Yuryev 2005).
relabelled_pair
    A network, a noisy relabelled copy of it, and a prior with decoys; truth is one-to-one.
evolved_pair
    Two networks evolved from a common ancestral network; truth may be many-to-many.
"""

from __future__ import annotations

from dataclasses import dataclass

import numba
import numpy as np

from aligner.errors import InvalidParameterError

__all__ = [
    "SyntheticPair",
    "EvolvedPair",
    "SCORE_FLOOR",
    "powerlaw_graph",
    "duplication_divergence_graph",
    "relabelled_pair",
    "evolved_pair",
]

#: Prior scores drawn from a normal distribution are clipped from below at this value, so that
#: every score is strictly positive.
SCORE_FLOOR = 1e-3


# --------------------------------------------------------------------------------------------
# Return types
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class SyntheticPair:
    """Two networks, a prior over node pairs and the true alignment.

    Attributes
    ----------
    n_a, n_b : int
        Numbers of nodes of network A and network B; nodes are ``0 .. n - 1``.
    edges_a, edges_b : ndarray of int64, shape (E, 2)
        Canonical undirected edge lists (``i < j``, unique, no self-loops, sorted).
    prior_pairs : ndarray of int64, shape (K, 2)
        Candidate pairs ``(node of A, node of B)``, unique, sorted by ``(a, b)``.
    prior_scores : ndarray of float64, shape (K,)
        Similarity of each candidate pair; positive, higher means more similar.
    truth : ndarray of int64, shape (T, 2)
        The true pairs ``(node of A, node of B)``, sorted by ``(a, b)``.
    """

    n_a: int
    n_b: int
    edges_a: np.ndarray
    edges_b: np.ndarray
    prior_pairs: np.ndarray
    prior_scores: np.ndarray
    truth: np.ndarray


@dataclass(frozen=True)
class EvolvedPair(SyntheticPair):
    """A :class:`SyntheticPair` whose networks descend from a common ancestral network.

    Attributes
    ----------
    n_ancestor : int
        Number of nodes of the ancestral network.
    edges_ancestor : ndarray of int64, shape (E, 2)
        Canonical edge list of the ancestral network.
    ancestor_a, ancestor_b : ndarray of int64, shape (n_a,) and (n_b,)
        The ancestral node each node of A (of B) descends from. Two nodes are true partners
        exactly when their ancestral nodes are equal.
    duplications_a, duplications_b : ndarray of int64, shape (n_a,) and (n_b,)
        Number of duplication events on each node's lineage since the split of the two
        species (each duplication counts for both the copied node and its copy).
    """

    n_ancestor: int
    edges_ancestor: np.ndarray
    ancestor_a: np.ndarray
    ancestor_b: np.ndarray
    duplications_a: np.ndarray
    duplications_b: np.ndarray


# --------------------------------------------------------------------------------------------
# Argument checks and small helpers
# --------------------------------------------------------------------------------------------


def _check_int(name: str, value, minimum: int) -> int:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (int, np.integer)):
        raise InvalidParameterError(f"{name} must be an integer, got {value!r}")
    value = int(value)
    if value < minimum:
        raise InvalidParameterError(f"{name} must be at least {minimum}, got {value}")
    return value


def _check_prob(name: str, value) -> float:
    try:
        value = float(value)
    except (TypeError, ValueError):
        raise InvalidParameterError(f"{name} must be a number in [0, 1], got {value!r}") from None
    if not 0.0 <= value <= 1.0:
        raise InvalidParameterError(f"{name} must be in [0, 1], got {value}")
    return value


def _check_normal(name: str, value) -> tuple[float, float]:
    try:
        mean, sd = (float(x) for x in value)
    except (TypeError, ValueError):
        raise InvalidParameterError(f"{name} must be a pair (mean, sd), got {value!r}") from None
    if not (np.isfinite(mean) and np.isfinite(sd)) or sd < 0:
        raise InvalidParameterError(f"{name} must be a finite (mean, sd) with sd >= 0, got {value!r}")
    return mean, sd


def _canonical_edges(edges, n: int, name: str = "edges") -> np.ndarray:
    """Return ``edges`` as a canonical (E, 2) int64 array; drop self-loops and repeats."""
    arr = np.asarray(edges)
    if arr.size == 0:
        return np.empty((0, 2), dtype=np.int64)
    if arr.ndim != 2 or arr.shape[1] != 2:
        raise InvalidParameterError(f"{name} must have shape (E, 2), got {arr.shape}")
    if not np.issubdtype(arr.dtype, np.integer):
        raise InvalidParameterError(f"{name} must hold integers, got dtype {arr.dtype}")
    arr = arr.astype(np.int64, copy=False)
    if arr.min() < 0 or arr.max() >= n:
        raise InvalidParameterError(f"{name} name nodes outside 0 .. {n - 1}")
    keys = arr[:, 0] * n + arr[:, 1]
    if (arr[:, 0] < arr[:, 1]).all() and (keys[1:] > keys[:-1]).all():
        return arr.copy()  # already canonical
    lo = np.minimum(arr[:, 0], arr[:, 1])
    hi = np.maximum(arr[:, 0], arr[:, 1])
    keep = lo != hi
    return _edges_from_keys(_unique_sorted(lo[keep] * n + hi[keep]), n)


def _unique_sorted(keys: np.ndarray) -> np.ndarray:
    """Sorted distinct values (``np.unique`` without its slow hashing path)."""
    s = np.sort(keys)
    if len(s) < 2:
        return s
    mask = np.empty(len(s), dtype=bool)
    mask[0] = True
    np.not_equal(s[1:], s[:-1], out=mask[1:])
    return s[mask]


def _first_occurrences(values: np.ndarray) -> np.ndarray:
    """``values`` without repeats, each kept at its first position, in the original order."""
    if len(values) < 2:
        return values
    order = np.argsort(values, kind="stable")
    s = values[order]
    first = np.empty(len(s), dtype=bool)
    first[0] = True
    np.not_equal(s[1:], s[:-1], out=first[1:])
    return values[np.sort(order[first])]


def _edges_from_keys(keys: np.ndarray, n: int) -> np.ndarray:
    out = np.empty((len(keys), 2), dtype=np.int64)
    out[:, 0] = keys // n
    out[:, 1] = keys % n
    return out


def _sort_pairs(pairs: np.ndarray, n_b: int, *values: np.ndarray):
    """Sort rows of ``pairs`` by (a, b); apply the same order to each array in ``values``."""
    order = np.argsort(pairs[:, 0] * n_b + pairs[:, 1], kind="stable")
    return (pairs[order],) + tuple(v[order] for v in values)


def _clipped_normal(rng: np.random.Generator, mean: float, sd: float, size: int) -> np.ndarray:
    return np.maximum(rng.normal(mean, sd, size=size), SCORE_FLOOR)


def _csr(edges: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Symmetric compressed-row adjacency (indptr, indices) of a canonical edge list."""
    src = np.concatenate([edges[:, 0], edges[:, 1]])
    dst = np.concatenate([edges[:, 1], edges[:, 0]])
    order = np.argsort(src, kind="stable")
    indptr = np.zeros(n + 1, dtype=np.int64)
    np.cumsum(np.bincount(src, minlength=n), out=indptr[1:])
    return indptr, dst[order].astype(np.int64, copy=False)


def _move_edges(edges: np.ndarray, n: int, k: int, rng: np.random.Generator) -> np.ndarray:
    """Remove ``k`` random edges and add ``k`` random pairs that were not edges before.

    The added pairs are non-edges of the *input* graph, so a removed edge is never put back and
    exactly ``k`` of the input edges are missing from the output. Returns a canonical edge list
    with the same number of edges as the input.
    """
    m = len(edges)
    if k == 0:
        return edges.copy()
    if k > m:
        raise InvalidParameterError(f"cannot move {k} edges of a graph with {m} edges")
    if k > n * (n - 1) // 2 - m:
        raise InvalidParameterError(f"a graph on {n} nodes with {m} edges has fewer than {k} non-edges")
    keys = edges[:, 0] * n + edges[:, 1]  # sorted, since edges are canonical
    drop = rng.choice(m, size=k, replace=False)
    keep = np.ones(m, dtype=bool)
    keep[drop] = False
    have = 0
    taken = np.empty(0, dtype=np.int64)
    while have < k:
        want = k - have
        size = int(want * 1.2) + 16
        u = rng.integers(0, n, size=size)
        v = rng.integers(0, n, size=size)
        ok = u != v
        lo = np.minimum(u, v)[ok]
        hi = np.maximum(u, v)[ok]
        cand = lo * n + hi
        cand = _first_occurrences(cand)  # in the order drawn, so taking a prefix is unbiased
        pos = np.searchsorted(keys, cand)
        pos[pos == m] = 0
        cand = cand[keys[pos] != cand]
        if len(taken):
            cand = cand[~np.isin(cand, taken)]
        cand = cand[:want]
        taken = np.concatenate([taken, cand])
        have += len(cand)
    out = np.sort(np.concatenate([keys[keep], taken]))
    return _edges_from_keys(out, n)


# --------------------------------------------------------------------------------------------
# Numba kernels
# --------------------------------------------------------------------------------------------


# Growable adjacency lists ("arena"): the neighbours of node u are
# pool[meta[u, 0] : meta[u, 0] + meta[u, 1]], in a block whose capacity is a function of the
# count (0, 4, 8, 16, ...). A full block moves to the end of the pool with twice the capacity;
# when the pool is full it is rebuilt, compacted, at twice the live size. Neighbour lists are
# contiguous, so a uniform random neighbour costs O(1) and a scan is sequential; start and count
# share one 16-byte row, so touching a node costs one cache miss.


@numba.njit(cache=True)
def _block_cap(count):  # pragma: no cover - compiled
    if count == 0:
        return 0
    c = 4
    while c < count:
        c *= 2
    return c


@numba.njit(cache=True)
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


@numba.njit(cache=True)
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


@numba.njit(cache=True)
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


@numba.njit(cache=True)
def _linked(pool, meta, u, v):  # pragma: no cover - compiled
    s = meta[u, 0]
    for j in range(meta[u, 1]):
        if pool[s + j] == v:
            return True
    return False


@numba.njit(cache=True)
def _holme_kim_kernel(n, m, p, rng):  # pragma: no cover - compiled
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


@numba.njit(cache=True)
def _dd_kernel(n_init, init_edges, n_final, p_retain, p_parent, max_redraws, rng):  # pragma: no cover
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


@numba.njit(cache=True)
def _lineage_kernel(parent, n_root):  # pragma: no cover - compiled
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


@numba.njit(cache=True)
def _decoy_kernel(partner, n_b, k, near, indptr, indices, rng):  # pragma: no cover - compiled
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


@numba.njit(cache=True)
def _sort_rows(keys, values):  # pragma: no cover - compiled
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


@numba.njit(cache=True)
def _family_decoy_kernel(anc_a, anc_b, family_size_b, k, rng):  # pragma: no cover - compiled
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


# --------------------------------------------------------------------------------------------
# Graph generators
# --------------------------------------------------------------------------------------------


def powerlaw_graph(n: int, *, m: int = 4, p: float = 0.3, seed) -> np.ndarray:
    """Grow a scale-free graph with tunable clustering (Holme & Kim 2002).

    Starts from ``m`` isolated nodes. Each new node draws ``m`` distinct targets one after
    the other, each with probability proportional to degree (the initial nodes count once
    each), and links to the first. Each of its remaining ``m - 1`` links is a triangle step
    with probability ``p`` (to a uniform random neighbour of the last target linked by
    attachment that the new node is not yet linked to, when there is one) and otherwise links
    the next target in draw order. Each new node adds at most ``m`` edges (fewer when a target
    was already reached by a triangle step), so there are at most ``(n - m) * m`` edges.

    This is the process of ``networkx.powerlaw_cluster_graph``, written as an independent numba
    kernel with contiguous adjacency lists and rejection sampling of triangle partners: about
    50 times faster than networkx at 10^5 nodes and a few seconds at 10^6 nodes (networkx needs
    over a minute there), with output that does not depend on the networkx version. One
    difference: networkx uses its drawn targets in hash-set order, which favours small node
    labels, that is the oldest nodes; here they are used in draw order, as in the sequential
    attachment steps of the paper. Edge counts and mean degrees agree; networkx's hubs come out
    slightly larger (mean squared degree about 8 % higher at ``n=2000, m=4, p=0.3``).

    Parameters
    ----------
    n : int
        Number of nodes, at least ``m``.
    m : int, default 4
        Links made by each new node, at least 1.
    p : float, default 0.3
        Probability of a triangle step for each link after the first.
    seed : int or None
        Seed of ``np.random.default_rng``.

    Returns
    -------
    ndarray of int64, shape (E, 2)
        Canonical edge list on nodes ``0 .. n - 1``.

    Examples
    --------
    >>> edges = powerlaw_graph(1000, m=3, p=0.5, seed=1)
    >>> edges.shape[1], bool((edges[:, 0] < edges[:, 1]).all())
    (2, True)
    """
    m = _check_int("m", m, 1)
    n = _check_int("n", n, m)
    p = _check_prob("p", p)
    rng = np.random.default_rng(seed)
    edges = _holme_kim_kernel(n, m, p, rng)
    keys = np.sort(edges[:, 0] * n + edges[:, 1])
    return _edges_from_keys(keys, n)


def _dd_grow(edges, n_init, n_final, p_retain, p_parent, max_redraws, rng):
    edges, parent = _dd_kernel(n_init, np.ascontiguousarray(edges, dtype=np.int64), n_final,
                               p_retain, p_parent, max_redraws, rng)
    keys = np.sort(edges[:, 0] * n_final + edges[:, 1])
    return _edges_from_keys(keys, n_final), parent


def duplication_divergence_graph(n: int, *, p_retain: float = 0.4, p_parent: float = 0.05,
                                 max_redraws: int = 100, seed) -> np.ndarray:
    """Grow a graph by node duplication with divergence.

    Starts from two linked nodes. At each step a node (the parent) is chosen uniformly at
    random and duplicated: the copy keeps each edge of the parent independently with
    probability ``p_retain`` and is linked to the parent itself with probability ``p_parent``
    (Vazquez et al. 2003; Ispolatov, Krapivsky & Yuryev 2005).

    A copy that would end up with no edge at all is discarded and the step is drawn again with
    a fresh parent, so every node has at least one edge and the graph stays connected. After
    ``max_redraws`` failures in a row the last copy is linked to its parent instead of being
    discarded, which bounds the running time when ``p_retain`` and ``p_parent`` are tiny.

    The numba kernel keeps contiguous growable adjacency lists; a step costs time proportional
    to the parent's degree, so 10^5 nodes take well under a second and 10^6 nodes a few seconds
    (at 10^6 the time is dominated by cache misses on the neighbours' lists).

    Parameters
    ----------
    n : int
        Number of nodes, at least 2.
    p_retain : float, default 0.4
        Probability that the copy keeps each edge of its parent.
    p_parent : float, default 0.05
        Probability that the copy is linked to its parent.
    max_redraws : int, default 100
        Consecutive discarded copies allowed before a copy is linked to its parent.
    seed : int or None
        Seed of ``np.random.default_rng``.

    Returns
    -------
    ndarray of int64, shape (E, 2)
        Canonical edge list on nodes ``0 .. n - 1``.
    """
    n = _check_int("n", n, 2)
    p_retain = _check_prob("p_retain", p_retain)
    p_parent = _check_prob("p_parent", p_parent)
    max_redraws = _check_int("max_redraws", max_redraws, 0)
    rng = np.random.default_rng(seed)
    edges, _ = _dd_grow(np.array([[0, 1]], dtype=np.int64), 2, n, p_retain, p_parent, max_redraws, rng)
    return edges


# --------------------------------------------------------------------------------------------
# Pair generators
# --------------------------------------------------------------------------------------------


def relabelled_pair(edges_a, n: int, *, noise: float = 0.05, decoys: int = 10,
                    decoy_mode: str = "uniform", true_score: tuple[float, float] = (1.0, 0.25),
                    decoy_score: tuple[float, float] = (0.5, 0.25), seed) -> SyntheticPair:
    """Network A, a noisy randomly relabelled copy B, and a prior with decoys.

    B is made by relabelling the nodes of A with a uniform random permutation ``pi`` and then
    moving ``round(noise * E)`` of its edges: that many edges are removed and the same number
    of pairs that are not edges of the relabelled A are added, so ``B`` has exactly as many
    edges as ``A`` and shares exactly ``E - round(noise * E)`` of them with ``pi(A)``.

    The prior lists, for every node ``a`` of A, its true partner ``pi(a)`` and ``decoys``
    distinct other nodes of B. With ``decoy_mode="uniform"`` decoys are uniform over B. With
    ``decoy_mode="near"`` they are the end points of random walks in B from ``pi(a)`` of one
    or two steps (equal odds), so they lie at distance 1 or 2 of the partner, biased towards
    well connected nodes; walks that return to the partner or to a decoy already chosen are
    drawn again, and after ``10 * decoys + 10`` walks (or at once, for an isolated partner) the
    missing decoys are drawn uniformly over B. True scores are drawn from
    ``N(*true_score)`` and decoy scores from ``N(*decoy_score)``; both are clipped from below
    at :data:`SCORE_FLOOR`.

    Parameters
    ----------
    edges_a : array_like of int, shape (E, 2)
        Edges of A on nodes ``0 .. n - 1``; self-loops and repeated edges are dropped.
    n : int
        Number of nodes of A (and of B).
    noise : float, default 0.05
        Fraction of edges moved, in [0, 1].
    decoys : int, default 10
        Decoys per node of A, at most ``n - 1``.
    decoy_mode : {"uniform", "near"}, default "uniform"
        Where decoys are drawn from.
    true_score, decoy_score : (float, float)
        Mean and standard deviation of the normal score distributions.
    seed : int or None
        Seed of ``np.random.default_rng``.

    Returns
    -------
    SyntheticPair
        ``truth`` holds ``(a, pi(a))`` for every node ``a``; ``edges_a`` is the canonical form
        of the input.
    """
    n = _check_int("n", n, 1)
    edges_a = _canonical_edges(edges_a, n, "edges_a")
    noise = _check_prob("noise", noise)
    decoys = _check_int("decoys", decoys, 0)
    if decoys > n - 1:
        raise InvalidParameterError(f"decoys must be at most n - 1 = {n - 1}, got {decoys}")
    if decoy_mode not in ("uniform", "near"):
        raise InvalidParameterError(f"decoy_mode must be 'uniform' or 'near', got {decoy_mode!r}")
    t_mean, t_sd = _check_normal("true_score", true_score)
    d_mean, d_sd = _check_normal("decoy_score", decoy_score)
    rng = np.random.default_rng(seed)

    perm = rng.permutation(n).astype(np.int64)
    pb = perm[edges_a]
    lo = np.minimum(pb[:, 0], pb[:, 1])
    hi = np.maximum(pb[:, 0], pb[:, 1])
    edges_pb = _edges_from_keys(np.sort(lo * n + hi), n)
    k = int(round(noise * len(edges_a)))
    edges_b = _move_edges(edges_pb, n, k, rng)

    if decoy_mode == "near":
        indptr, indices = _csr(edges_b, n)
    else:
        indptr, indices = np.zeros(1, dtype=np.int64), np.zeros(1, dtype=np.int64)
    dec = _decoy_kernel(perm, n, decoys, decoy_mode == "near", indptr, indices, rng)
    true_s = _clipped_normal(rng, t_mean, t_sd, n)
    dec_s = _clipped_normal(rng, d_mean, d_sd, n * decoys).reshape(n, decoys)

    cols = np.concatenate([perm[:, None], dec], axis=1)
    scores = np.concatenate([true_s[:, None], dec_s], axis=1)
    _sort_rows(cols, scores)  # rows of A are in order already; sort B within rows
    prior_pairs = np.empty((n * (decoys + 1), 2), dtype=np.int64)
    prior_pairs[:, 0] = np.repeat(np.arange(n, dtype=np.int64), decoys + 1)
    prior_pairs[:, 1] = cols.ravel()
    truth = np.stack([np.arange(n, dtype=np.int64), perm], axis=1)
    return SyntheticPair(n_a=n, n_b=n, edges_a=edges_a, edges_b=edges_b, prior_pairs=prior_pairs,
                         prior_scores=scores.ravel().astype(np.float64, copy=False), truth=truth)


def evolved_pair(n_ancestor: int, *, n_final: int | tuple[int, int], p_retain: float = 0.4,
                 p_parent: float = 0.05, edge_noise: float = 0.0, decoys: int = 5,
                 true_score: tuple[float, float] = (1.0, 0.15), decay: float = 0.8,
                 decoy_score: tuple[float, float] = (0.35, 0.15), max_redraws: int = 100,
                 seed) -> EvolvedPair:
    """Two networks descended from one ancestral network by duplication and divergence.

    1. An ancestral network of ``n_ancestor`` nodes is grown as in
       :func:`duplication_divergence_graph`.
    2. Two species A and B each start from a copy of it and keep growing independently by the
       same duplication process until they have ``n_final`` nodes (each may be given its own
       size). Every node then descends from exactly one ancestral node.
    3. Optionally, a fraction ``edge_noise`` of each species' edges is moved (removed and
       replaced by as many new random non-edges), for changes that are not duplications.
    4. The nodes of each species are relabelled by an independent uniform permutation.

    The truth is every pair ``(a, b)`` whose ancestral nodes are equal, so after duplications
    a node may have several true partners. The prior imitates sequence similarity. It holds
    every true pair, scored

        ``score = max(SCORE_FLOOR, mu * decay ** (d_a + d_b) + sd * Z)``,  ``Z ~ N(0, 1)``,

    where ``(mu, sd) = true_score`` and ``d_a``, ``d_b`` are the numbers of duplications on
    each lineage since the split (a duplication counts for both the copied node and its copy,
    since both copies are then free to diverge). It also holds ``decoys`` distinct random nodes
    of B for every node of A, uniform over the nodes of B of other ancestral families, scored
    ``max(SCORE_FLOOR, N(*decoy_score))``.

    Parameters
    ----------
    n_ancestor : int
        Nodes of the ancestral network, at least 2.
    n_final : int or (int, int)
        Final number of nodes of A and of B, each at least ``n_ancestor``.
    p_retain, p_parent, max_redraws
        Duplication parameters, as in :func:`duplication_divergence_graph`; used for the
        ancestor and for both species.
    edge_noise : float, default 0.0
        Fraction of each species' edges moved after growth.
    decoys : int, default 5
        Random non-homologous candidates per node of A (fewer when B has too few nodes
        outside the node's family).
    true_score, decoy_score : (float, float)
        Mean and standard deviation of the score of true and of decoy pairs.
    decay : float, default 0.8
        Factor by which the mean true score shrinks per duplication, in (0, 1].
    seed : int or None
        Seed of ``np.random.default_rng``.

    Returns
    -------
    EvolvedPair
        A :class:`SyntheticPair` with the ancestral network, the ancestral node and the
        duplication count of every node of A and B.
    """
    n_ancestor = _check_int("n_ancestor", n_ancestor, 2)
    if isinstance(n_final, (tuple, list)):
        if len(n_final) != 2:
            raise InvalidParameterError(f"n_final must be an int or a pair of ints, got {n_final!r}")
        n_fa, n_fb = (_check_int("n_final", x, n_ancestor) for x in n_final)
    else:
        n_fa = n_fb = _check_int("n_final", n_final, n_ancestor)
    p_retain = _check_prob("p_retain", p_retain)
    p_parent = _check_prob("p_parent", p_parent)
    edge_noise = _check_prob("edge_noise", edge_noise)
    decoys = _check_int("decoys", decoys, 0)
    max_redraws = _check_int("max_redraws", max_redraws, 0)
    t_mean, t_sd = _check_normal("true_score", true_score)
    d_mean, d_sd = _check_normal("decoy_score", decoy_score)
    try:
        decay = float(decay)
    except (TypeError, ValueError):
        raise InvalidParameterError(f"decay must be a number in (0, 1], got {decay!r}") from None
    if not 0.0 < decay <= 1.0:
        raise InvalidParameterError(f"decay must be in (0, 1], got {decay}")
    rng = np.random.default_rng(seed)

    anc_edges, _ = _dd_grow(np.array([[0, 1]], dtype=np.int64), 2, n_ancestor, p_retain, p_parent,
                            max_redraws, rng)
    species = []
    for n_f in (n_fa, n_fb):
        edges, parent = _dd_grow(anc_edges, n_ancestor, n_f, p_retain, p_parent, max_redraws, rng)
        root, dups = _lineage_kernel(parent, n_ancestor)
        k = int(round(edge_noise * len(edges)))
        edges = _move_edges(edges, n_f, k, rng)
        perm = rng.permutation(n_f).astype(np.int64)  # old label i becomes perm[i]
        pe = perm[edges]
        lo = np.minimum(pe[:, 0], pe[:, 1])
        hi = np.maximum(pe[:, 0], pe[:, 1])
        edges = _edges_from_keys(np.sort(lo * n_f + hi), n_f)
        new_root = np.empty(n_f, dtype=np.int64)
        new_dups = np.empty(n_f, dtype=np.int64)
        new_root[perm] = root
        new_dups[perm] = dups
        species.append((edges, new_root, new_dups))
    (edges_a, anc_a, dup_a), (edges_b, anc_b, dup_b) = species

    # truth: all pairs within each ancestral family
    order_b = np.argsort(anc_b, kind="stable")
    size_b = np.bincount(anc_b, minlength=n_ancestor)
    start_b = np.zeros(n_ancestor + 1, dtype=np.int64)
    np.cumsum(size_b, out=start_b[1:])
    per_a = size_b[anc_a]
    t_rows = np.repeat(np.arange(n_fa, dtype=np.int64), per_a)
    offs = np.arange(len(t_rows), dtype=np.int64) - np.repeat(np.cumsum(per_a) - per_a, per_a)
    t_cols = order_b[start_b[anc_a[t_rows]] + offs]
    truth = np.stack([t_rows, t_cols], axis=1)
    (truth,) = _sort_pairs(truth, n_fb)

    mean = t_mean * decay ** (dup_a[truth[:, 0]] + dup_b[truth[:, 1]]).astype(np.float64)
    true_s = np.maximum(mean + t_sd * rng.standard_normal(len(truth)), SCORE_FLOOR)
    d_rows, d_cols = _family_decoy_kernel(anc_a, anc_b, size_b, decoys, rng)
    dec_s = _clipped_normal(rng, d_mean, d_sd, len(d_rows))
    pairs = np.concatenate([truth, np.stack([d_rows, d_cols], axis=1)])
    scores = np.concatenate([true_s, dec_s])
    pairs, scores = _sort_pairs(pairs, n_fb, scores)
    return EvolvedPair(n_a=n_fa, n_b=n_fb, edges_a=edges_a, edges_b=edges_b, prior_pairs=pairs,
                       prior_scores=scores, truth=truth, n_ancestor=n_ancestor,
                       edges_ancestor=anc_edges, ancestor_a=anc_a, ancestor_b=anc_b,
                       duplications_a=dup_a, duplications_b=dup_b)


# --------------------------------------------------------------------------------------------
# Helpers for benchmarks on real networks
# --------------------------------------------------------------------------------------------

def opaque_names(n: int, *, seed, prefix: str = "n") -> np.ndarray:
    """``n`` distinct opaque identifiers in random order (``prefix`` + a random number).

    Replacing real identifiers with these before aligning makes sure that no tie-breaking by
    identifier order can help an aligner: the order of the opaque names says nothing.
    """
    n = _check_int("n", n, 0)
    rng = np.random.default_rng(seed)
    width = len(str(max(10 * n, 10)))
    codes = rng.choice(10 ** width, size=n, replace=False)
    return np.array([f"{prefix}{c:0{width}d}" for c in codes], dtype=object)


def noisy_prior(truth: np.ndarray, n_b: int, *, decoys: int = 10, true_score=(1.0, 0.25),
                decoy_score=(0.5, 0.25), seed) -> tuple[np.ndarray, np.ndarray]:
    """A simulated sequence-similarity prior around known true pairs.

    Every true pair (a, b) gets a score drawn from ``N(*true_score)``, and ``decoys`` distinct
    other nodes of B, drawn uniformly, get scores from ``N(*decoy_score)``; both clipped below
    at :data:`SCORE_FLOOR`. The two distributions overlap, so the prior alone is wrong for
    some nodes.

    Returns
    -------
    pairs : ndarray of int64, shape (K, 2)
    scores : ndarray of float64, shape (K,)
    """
    truth = np.asarray(truth, dtype=np.int64).reshape(-1, 2)
    n_b = _check_int("n_b", n_b, 1)
    decoys = _check_int("decoys", decoys, 0)
    if decoys > n_b - 1:
        raise InvalidParameterError(f"decoys must be at most n_b - 1 = {n_b - 1}, got {decoys}")
    tm, ts = _check_normal("true_score", true_score)
    dm, ds = _check_normal("decoy_score", decoy_score)
    rng = np.random.default_rng(seed)
    rows = [truth]
    scores = [_clipped_normal(rng, tm, ts, len(truth))]
    for a, b in truth:
        pick = rng.choice(n_b - 1, size=decoys, replace=False)
        pick = pick + (pick >= b)  # skip the true partner
        rows.append(np.stack([np.full(decoys, a), pick], axis=1))
        scores.append(_clipped_normal(rng, dm, ds, decoys))
    return np.concatenate(rows).astype(np.int64), np.concatenate(scores)
