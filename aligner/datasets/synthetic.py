"""Generators of test instances whose true alignment is known.

Every generator is a pure function of its arguments: it draws all of its randomness from a
single ``np.random.default_rng(seed)`` created once at the top of the call, so equal seeds
give equal outputs (bit for bit) on the same numpy and numba versions.

Edge lists are returned in canonical form: an ``(E, 2)`` ``int64`` array whose rows satisfy
``i < j``, without self-loops or duplicate rows, sorted by ``(i, j)``.

The growth processes run in the numba kernels of :mod:`aligner.kernels.synthetic` (compiled
once, cached on disk when the package directory is writable). The numpy ``Generator`` is passed
into the kernels, so the kernels advance the same random stream as the surrounding numpy code.

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

import numpy as np

from aligner.checks import bad_parameter, check_choice, check_int, check_real
from aligner.errors import InvalidParameterError
from aligner.kernels.synthetic import (
    decoy_kernel,
    duplication_kernel,
    family_decoy_kernel,
    holme_kim_kernel,
    lineage_kernel,
    sort_rows,
)

__all__ = [
    "SyntheticPair",
    "EvolvedPair",
    "SCORE_FLOOR",
    "powerlaw_graph",
    "duplication_divergence_graph",
    "relabelled_pair",
    "evolved_pair",
    "shuffled_rows",
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


def _check_prob(name: str, value) -> float:
    return check_real(value, name, low=0.0, high=1.0)


def _check_normal(name: str, value) -> tuple[float, float]:
    """``value`` as a finite (mean, sd) pair with sd >= 0."""
    try:
        mean, sd = (float(x) for x in value)
    except (TypeError, ValueError):
        raise bad_parameter(name, "a pair (mean, sd) of numbers", value) from None
    if not (np.isfinite(mean) and np.isfinite(sd)) or sd < 0:
        raise bad_parameter(name, "a finite pair (mean, sd) with sd >= 0", value)
    return mean, sd


def _canonical_edges(edges, n: int, name: str = "edges") -> np.ndarray:
    """Return ``edges`` as a canonical (E, 2) int64 array; drop self-loops and repeats."""
    arr = np.asarray(edges)
    if arr.size == 0:
        return np.empty((0, 2), dtype=np.int64)
    if arr.ndim != 2 or arr.shape[1] != 2:
        raise InvalidParameterError(f"{name} must have shape (E, 2); got shape {arr.shape}", param=name)
    if not np.issubdtype(arr.dtype, np.integer):
        raise InvalidParameterError(f"{name} must hold integers; got dtype {arr.dtype}", param=name)
    arr = arr.astype(np.int64, copy=False)
    if arr.min() < 0 or arr.max() >= n:
        raise InvalidParameterError(f"{name} must name nodes in 0 .. {n - 1}; got nodes "
                                    f"{arr.min()} .. {arr.max()}", param=name)
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
        raise InvalidParameterError(f"noise must move at most the {m} edges of the graph; got {k} edges to "
                                    "move", param="noise")
    if k > n * (n - 1) // 2 - m:
        raise InvalidParameterError(f"noise must move at most the {n * (n - 1) // 2 - m} non-edges of a graph "
                                    f"on {n} nodes with {m} edges; got {k} edges to move", param="noise")
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
    kernel with contiguous adjacency lists and rejection sampling of triangle partners (a step
    costs time independent of the graph's size, so 10^6 nodes are practical), with output that
    does not depend on the networkx version. One
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
    m = check_int(m, "m", low=1)
    n = check_int(n, "n", low=m)
    p = _check_prob("p", p)
    rng = np.random.default_rng(seed)
    edges = holme_kim_kernel(n, m, p, rng)
    keys = np.sort(edges[:, 0] * n + edges[:, 1])
    return _edges_from_keys(keys, n)


def _dd_grow(edges, n_init, n_final, p_retain, p_parent, max_redraws, rng):
    edges, parent = duplication_kernel(n_init, np.ascontiguousarray(edges, dtype=np.int64), n_final,
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
    to the parent's degree, so the whole growth costs about one pass over the final edges.

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
    n = check_int(n, "n", low=2)
    p_retain = _check_prob("p_retain", p_retain)
    p_parent = _check_prob("p_parent", p_parent)
    max_redraws = check_int(max_redraws, "max_redraws", low=0)
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
    n = check_int(n, "n", low=1)
    edges_a = _canonical_edges(edges_a, n, "edges_a")
    noise = _check_prob("noise", noise)
    decoys = check_int(decoys, "decoys", low=0)
    if decoys > n - 1:
        raise bad_parameter("decoys", f"at most n - 1 = {n - 1}", decoys)
    near = check_choice(decoy_mode, "decoy_mode", ("uniform", "near")) == "near"
    scores = _check_normal("true_score", true_score), _check_normal("decoy_score", decoy_score)
    rng = np.random.default_rng(seed)

    perm = rng.permutation(n).astype(np.int64)
    edges_b = _move_edges(_relabel(edges_a, perm, n), n, int(round(noise * len(edges_a))), rng)
    prior_pairs, prior_scores = _decoy_prior(perm, edges_b, decoys, near, *scores, rng)
    truth = np.stack([np.arange(n, dtype=np.int64), perm], axis=1)
    return SyntheticPair(n_a=n, n_b=n, edges_a=edges_a, edges_b=edges_b, prior_pairs=prior_pairs,
                         prior_scores=prior_scores, truth=truth)


def _relabel(edges: np.ndarray, perm: np.ndarray, n: int) -> np.ndarray:
    """Canonical edge list of the graph whose node ``i`` is renamed ``perm[i]``."""
    pe = perm[edges]
    lo = np.minimum(pe[:, 0], pe[:, 1])
    hi = np.maximum(pe[:, 0], pe[:, 1])
    return _edges_from_keys(np.sort(lo * n + hi), n)


def _decoy_prior(partner: np.ndarray, edges_b: np.ndarray, decoys: int, near: bool,
                 true_score: tuple[float, float], decoy_score: tuple[float, float],
                 rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """The prior of :func:`relabelled_pair`: each node's partner and its decoys, sorted by (a, b).

    ``partner[a]`` is the true partner of node ``a``; B has as many nodes as A.
    """
    n = len(partner)
    if near:
        indptr, indices = _csr(edges_b, n)
    else:
        indptr, indices = np.zeros(1, dtype=np.int64), np.zeros(1, dtype=np.int64)
    dec = decoy_kernel(partner, n, decoys, near, indptr, indices, rng)
    true_s = _clipped_normal(rng, *true_score, n)
    dec_s = _clipped_normal(rng, *decoy_score, n * decoys).reshape(n, decoys)

    cols = np.concatenate([partner[:, None], dec], axis=1)
    scores = np.concatenate([true_s[:, None], dec_s], axis=1)
    sort_rows(cols, scores)  # rows of A are in order already; sort B within rows
    pairs = np.empty((n * (decoys + 1), 2), dtype=np.int64)
    pairs[:, 0] = np.repeat(np.arange(n, dtype=np.int64), decoys + 1)
    pairs[:, 1] = cols.ravel()
    return pairs, scores.ravel().astype(np.float64, copy=False)


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
    n_ancestor = check_int(n_ancestor, "n_ancestor", low=2)
    n_fa, n_fb = _final_sizes(n_final, n_ancestor)
    p_retain = _check_prob("p_retain", p_retain)
    p_parent = _check_prob("p_parent", p_parent)
    edge_noise = _check_prob("edge_noise", edge_noise)
    decoys = check_int(decoys, "decoys", low=0)
    grow = (p_retain, p_parent, check_int(max_redraws, "max_redraws", low=0))
    scores = _check_normal("true_score", true_score), _check_normal("decoy_score", decoy_score)
    decay = check_real(decay, "decay", low=0.0, high=1.0, closed="right")
    rng = np.random.default_rng(seed)

    anc_edges, _ = _dd_grow(np.array([[0, 1]], dtype=np.int64), 2, n_ancestor, *grow, rng)
    edges_a, anc_a, dup_a = _evolve_species(anc_edges, n_ancestor, n_fa, grow, edge_noise, rng)
    edges_b, anc_b, dup_b = _evolve_species(anc_edges, n_ancestor, n_fb, grow, edge_noise, rng)
    truth = _family_truth(anc_a, anc_b, n_ancestor)
    pairs, prior_scores = _evolved_prior(truth, (anc_a, dup_a), (anc_b, dup_b), n_ancestor, decoys,
                                         *scores, decay, rng)
    return EvolvedPair(n_a=n_fa, n_b=n_fb, edges_a=edges_a, edges_b=edges_b, prior_pairs=pairs,
                       prior_scores=prior_scores, truth=truth, n_ancestor=n_ancestor,
                       edges_ancestor=anc_edges, ancestor_a=anc_a, ancestor_b=anc_b,
                       duplications_a=dup_a, duplications_b=dup_b)


def _final_sizes(n_final, n_ancestor: int) -> tuple[int, int]:
    """``n_final`` of :func:`evolved_pair` as the final sizes of A and of B."""
    if isinstance(n_final, (tuple, list)):
        if len(n_final) != 2:
            raise bad_parameter("n_final", "a whole number or a pair of whole numbers", n_final)
        n_fa, n_fb = (check_int(x, "n_final", low=n_ancestor) for x in n_final)
        return n_fa, n_fb
    n_f = check_int(n_final, "n_final", low=n_ancestor)
    return n_f, n_f


def _evolve_species(anc_edges: np.ndarray, n_ancestor: int, n_final: int, grow: tuple, edge_noise: float,
                    rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """One species grown from the ancestral network: edges, ancestral node and duplications of each node.

    ``grow`` is ``(p_retain, p_parent, max_redraws)``. The species grows by duplication, a share
    ``edge_noise`` of its edges is moved, and its nodes are relabelled by a uniform permutation.
    """
    edges, parent = _dd_grow(anc_edges, n_ancestor, n_final, *grow, rng)
    root, dups = lineage_kernel(parent, n_ancestor)
    edges = _move_edges(edges, n_final, int(round(edge_noise * len(edges))), rng)
    perm = rng.permutation(n_final).astype(np.int64)  # old label i becomes perm[i]
    new_root = np.empty(n_final, dtype=np.int64)
    new_dups = np.empty(n_final, dtype=np.int64)
    new_root[perm] = root
    new_dups[perm] = dups
    return _relabel(edges, perm, n_final), new_root, new_dups


def _family_truth(anc_a: np.ndarray, anc_b: np.ndarray, n_ancestor: int) -> np.ndarray:
    """Every pair (a, b) with the same ancestral node, sorted by (a, b)."""
    order_b = np.argsort(anc_b, kind="stable")
    size_b = np.bincount(anc_b, minlength=n_ancestor)
    start_b = np.zeros(n_ancestor + 1, dtype=np.int64)
    np.cumsum(size_b, out=start_b[1:])
    per_a = size_b[anc_a]
    t_rows = np.repeat(np.arange(len(anc_a), dtype=np.int64), per_a)
    offs = np.arange(len(t_rows), dtype=np.int64) - np.repeat(np.cumsum(per_a) - per_a, per_a)
    t_cols = order_b[start_b[anc_a[t_rows]] + offs]
    (truth,) = _sort_pairs(np.stack([t_rows, t_cols], axis=1), len(anc_b))
    return truth


def _evolved_prior(truth: np.ndarray, lineage_a: tuple[np.ndarray, np.ndarray],
                   lineage_b: tuple[np.ndarray, np.ndarray], n_ancestor: int, decoys: int,
                   true_score: tuple[float, float], decoy_score: tuple[float, float], decay: float,
                   rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """The prior of :func:`evolved_pair`: true pairs scored by divergence, decoys from other families.

    ``lineage_a`` and ``lineage_b`` are (ancestral node, duplications) of every node.
    """
    (anc_a, dup_a), (anc_b, dup_b) = lineage_a, lineage_b
    t_mean, t_sd = true_score
    mean = t_mean * decay ** (dup_a[truth[:, 0]] + dup_b[truth[:, 1]]).astype(np.float64)
    true_s = np.maximum(mean + t_sd * rng.standard_normal(len(truth)), SCORE_FLOOR)
    size_b = np.bincount(anc_b, minlength=n_ancestor)
    d_rows, d_cols = family_decoy_kernel(anc_a, anc_b, size_b, decoys, rng)
    dec_s = _clipped_normal(rng, *decoy_score, len(d_rows))
    pairs = np.concatenate([truth, np.stack([d_rows, d_cols], axis=1)])
    scores = np.concatenate([true_s, dec_s])
    return _sort_pairs(pairs, len(anc_b), scores)


def shuffled_rows(edges: np.ndarray, rng: np.random.Generator) -> np.ndarray:
    """The rows of an edge list in random order, each in a random orientation (for writing files).

    Draws one uniform number per row (a row is reversed when it is below 0.5), then one
    permutation, from ``rng``.
    """
    rows = np.array(edges, copy=True)
    flip = rng.random(len(rows)) < 0.5
    rows[flip] = rows[flip][:, ::-1]
    return rows[rng.permutation(len(rows))]


# --------------------------------------------------------------------------------------------
# Helpers for benchmarks on real networks
# --------------------------------------------------------------------------------------------

def opaque_names(n: int, *, seed, prefix: str = "n") -> np.ndarray:
    """``n`` distinct opaque identifiers in random order (``prefix`` + a random number).

    Replacing real identifiers with these before aligning makes sure that no tie-breaking by
    identifier order can help an aligner: the order of the opaque names says nothing.
    """
    n = check_int(n, "n", low=0)
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
    n_b = check_int(n_b, "n_b", low=1)
    decoys = check_int(decoys, "decoys", low=0)
    if decoys > n_b - 1:
        raise bad_parameter("decoys", f"at most n_b - 1 = {n_b - 1}", decoys)
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
