"""Candidate pairs and a prior from the wiring alone, for networks without a similarity table.

Every node gets a short vector of local structural features (:func:`node_features`); the two
networks' vectors are z-scored with one pooled transform (:func:`standardise`); and every
node is paired with its nearest nodes of the other network in that space
(:func:`structural_candidates`). The resulting pairs and scores are a prior for
:func:`aligner.align`, alone or added to a weak prior (:func:`combine_priors`).

**Why these features.** Degree, triangles and the size of the two-step neighbourhood
describe how much wiring surrounds a node at radii one and two; clustering is the share of
that wiring closed into triangles; the neighbours' degree statistics tell a hub among
leaves from a leaf hanging off a hub. Counts go through ``log1p`` because they are
heavy-tailed in real networks, and a difference of one edge matters far more at degree 3
than at 300: on a log scale a few moved edges (noise) move a feature a little whatever the
degree. Nodes that are alike on their own features are told apart by their neighbours'
features, hence one round of neighbour aggregation (recursive features [1]_). It also
spreads each moved edge over the neighbours' features, and a second round lowered the
share of true pairs among the candidates at high noise
(``scripts/bench/bench_structural.py``), so there is one.

**Why this score.** The Gaussian kernel with the nearest-neighbour scale gives a pair as
close as a typical best match the score ``exp(-1/2) = 0.61`` and pairs three times farther
``0.011``: the prior mass concentrates on each node's few best matches, and the wiring
(diffusion) decides among them: what limits the result is whether the true partner is among
the candidates, not its score.

**Cost.** Triangles and the distance-two counts come from one pass over all two-step walks,
``sum_v deg(v)^2`` steps, with two ``n``-long stamp arrays (no ``A @ A``, whose fill is
quadratic in the hub degrees); the rest of the features is linear in the edges. The
candidates then need two k-d tree searches in 16 dimensions, where k-d trees prune poorly:
the search, not the features, bounds the size this is practical for.
``scripts/bench/bench_structural.py --timing`` measures both.

References
----------
.. [1] K. Henderson et al., "It's who you know: graph mining using recursive structural
   features", KDD 2011, doi:10.1145/2020408.2020512.
"""
from __future__ import annotations

import numpy as np
import numpy.typing as npt

from aligner.kernels.structural import _neighbour_mean, _neighbour_stats, _triangles_and_distance_two
from aligner.checks import bad_parameter, check_int, check_real, warn
from aligner.config import AlignConfig, specs
from aligner.core.network import Network, merge_duplicate_pairs
from aligner.errors import InvalidParameterError

__all__ = [
    "FEATURE_NAMES",
    "AGGREGATE_WEIGHT",
    "node_features",
    "standardise",
    "structural_candidates",
    "combine_priors",
]

BASE_FEATURES = (
    "log_degree",
    "log_triangles",
    "clustering",
    "log_distance_two",
    "nbr_log_degree_mean",
    "nbr_log_degree_min",
    "nbr_log_degree_max",
    "nbr_log_degree_std",
)
FEATURE_NAMES = BASE_FEATURES + tuple(f"nbr_mean_{f}" for f in BASE_FEATURES)
"""Names of the columns of :func:`node_features`, in order."""
AGGREGATE_WEIGHT = 0.5
"""Factor on the z-scored neighbour-mean columns in the distance of :func:`structural_candidates`."""
ZERO_DISTANCE = 1e-9
"""A feature distance at or below this is rounding, not a difference: two nodes whose features are
equal in exact arithmetic (a relabelled copy) come out about 1e-15 apart when their neighbours are
summed in another order. A median nearest-node distance this small is taken as 0 (scale 1), not as
the scale of the kernel, which would turn those rounding differences into scores anywhere in (0, 1]."""
DEFAULT_K: int = specs(AlignConfig)["top_k"][0]
"""Default neighbours per node of :func:`structural_candidates` (the ``top_k`` of :class:`aligner.config.AlignConfig`)."""
DEFAULT_WEIGHT: float = specs(AlignConfig)["structural_weight"][0]
"""Default ``weight`` of :func:`combine_priors` (the ``structural_weight`` of :class:`aligner.config.AlignConfig`)."""


def node_features(net: Network) -> npt.NDArray[np.float64]:
    """Local structural features of every node, invariant under relabelling.

    Parameters
    ----------
    net : Network
        An undirected simple network.

    Returns
    -------
    ndarray of float64, shape (n, 16)
        Columns named by :data:`FEATURE_NAMES`. The first eight, for node ``v`` of degree
        ``d``:

        0. ``log1p(d)``;
        1. ``log1p(t)``, ``t`` the number of triangles through ``v``;
        2. local clustering ``2 t / (d (d - 1))`` (0 when ``d < 2``);
        3. ``log1p`` of the number of nodes at distance exactly two;
        4. to 7. mean, minimum, maximum and population standard deviation of
           ``log1p(degree)`` over the neighbours of ``v``.

        Columns 8 to 15 are the means of columns 0 to 7 over the neighbours of ``v``: one
        round of neighbour aggregation (recursive features). A node without neighbours has
        all sixteen features 0.

    Notes
    -----
    The choice of features and their cost are discussed in :mod:`aligner.priors.structural`.

    Examples
    --------
    >>> from aligner.core.network import network_from_edges
    >>> import numpy as np
    >>> net = network_from_edges(np.array(["a", "b", "c"], dtype=object), [0, 1], [1, 2])
    >>> node_features(net)[:, 3].round(3).tolist()  # a and c are at distance two
    [0.693, 0.0, 0.693]
    """
    indptr = np.ascontiguousarray(net.indptr, dtype=np.int64)
    indices = np.ascontiguousarray(net.indices, dtype=np.int32)
    deg = np.diff(indptr).astype(np.float64)
    tri, two = _triangles_and_distance_two(indptr, indices)
    pairs = deg * (deg - 1.0) / 2.0
    clustering = np.divide(tri, pairs, out=np.zeros(len(deg)), where=pairs > 0)
    log_deg = np.log1p(deg)
    base = np.empty((len(deg), len(BASE_FEATURES)), dtype=np.float64)
    base[:, 0] = log_deg
    base[:, 1] = np.log1p(tri)
    base[:, 2] = clustering
    base[:, 3] = np.log1p(two)
    base[:, 4:8] = _neighbour_stats(indptr, indices, log_deg)
    return np.hstack([base, _neighbour_mean(indptr, indices, base)])


def standardise(
    fa: npt.ArrayLike, fb: npt.ArrayLike
) -> tuple[npt.NDArray[np.float64], npt.NDArray[np.float64]]:
    """Z-score two feature tables with one transform: mean and deviation pooled over both.

    One shared transform keeps distances between a node of A and a node of B meaningful (two
    separate z-scorings would hide a real difference in, say, mean degree). A column that is
    constant over both tables (deviation below ``1e-12`` times its scale) carries no
    information and becomes 0 in both.

    Parameters
    ----------
    fa, fb : array_like, shape (n1, F) and (n2, F)

    Returns
    -------
    za, zb : ndarray of float64, shapes (n1, F) and (n2, F)
    """
    fa = np.asarray(fa, dtype=np.float64)
    fb = np.asarray(fb, dtype=np.float64)
    if fa.ndim != 2 or fb.ndim != 2 or fa.shape[1] != fb.shape[1]:
        raise InvalidParameterError("fa and fb must be 2-d feature tables with equal column counts; "
                                    f"got shapes {fa.shape} and {fb.shape}")
    both = np.vstack([fa, fb])
    if len(both) == 0:
        return fa.copy(), fb.copy()
    mean = both.mean(axis=0)
    sd = both.std(axis=0)
    scale = np.maximum(np.abs(both).max(axis=0), 1.0)
    live = sd > 1e-12 * scale
    inv = np.where(live, 1.0 / np.where(live, sd, 1.0), 0.0)
    return (fa - mean) * inv, (fb - mean) * inv


def _knn(tree_pts: np.ndarray, query_pts: np.ndarray, k: int) -> tuple[np.ndarray, np.ndarray]:
    """The ``k`` nearest rows of ``tree_pts`` to every row of ``query_pts``: distances, indices."""
    k = min(k, len(tree_pts))
    from scipy.spatial import cKDTree  # here, not at import: only structural candidates need it

    d, j = cKDTree(tree_pts).query(query_pts, k=k, workers=-1)
    return d.reshape(len(query_pts), k), j.reshape(len(query_pts), k)


#: Above this share of a network's nodes with more than k others of identical features, the
#: structural candidates are reported as unable to tell the nodes apart.
TIED_SHARE = 0.1
_MIX = 2654435761  # odd, about 2**32 / golden ratio: spreads a node's start among equals


def _nearest(tree_pts: np.ndarray, query_pts: np.ndarray, k: int) -> tuple[np.ndarray, np.ndarray, float]:
    """:func:`_knn`, with points of identical features (a regular graph's nodes, say) shared out
    among the queries instead of the same few going to every query: each query takes its
    nearest groups of identical points in order, and within a group its members from a start
    set by the query's own index (a fixed rule, so runs repeat). Also returns the share of
    ``tree_pts`` in a group of more than ``k``."""
    uniq, inv, counts = np.unique(tree_pts, axis=0, return_inverse=True, return_counts=True)
    inv = inv.reshape(-1)
    tied = float(counts[inv].__gt__(k).mean()) if len(inv) else 0.0
    if len(uniq) == len(tree_pts):
        return (*_knn(tree_pts, query_pts, k), tied)
    k = min(k, len(tree_pts))
    d, g = _knn(uniq, query_pts, k)  # each group holds a point at least: k groups give k points
    members = np.argsort(inv, kind="stable")  # the points of each group, in index order
    first = np.concatenate([[0], np.cumsum(counts)[:-1]])
    size = counts[g]
    before = np.cumsum(size, axis=1) - size  # points taken by the query's nearer groups
    take = np.clip(k - before, 0, size)
    q, t = np.nonzero(take)
    n = take[q, t]
    q, t, g_at, size_at = np.repeat(q, n), np.repeat(t, n), np.repeat(g[q, t], n), np.repeat(size[q, t], n)
    r = np.arange(len(q)) - np.repeat(np.cumsum(n) - n, n)  # 0, 1, ... within each (query, group)
    start = (q.astype(np.uint64) * np.uint64(_MIX) % size_at.astype(np.uint64)).astype(np.int64)
    j = members[first[g_at] + (start + r) % size_at]
    return d[q, t].reshape(len(query_pts), k), j.reshape(len(query_pts), k), tied


def _search_space(net_a: Network, net_b: Network) -> tuple[np.ndarray, np.ndarray]:
    """Both networks' features, z-scored together, neighbour-mean columns times :data:`AGGREGATE_WEIGHT`."""
    za, zb = standardise(node_features(net_a), node_features(net_b))
    za[:, len(BASE_FEATURES):] *= AGGREGATE_WEIGHT
    zb[:, len(BASE_FEATURES):] *= AGGREGATE_WEIGHT
    return za, zb


def _kernel_scores(d: np.ndarray, nearest: np.ndarray) -> np.ndarray:
    """Gaussian scores ``exp(-d^2 / (2 s^2))`` of distances ``d``, floored at the smallest normal float.

    ``s`` is the median of ``nearest`` (1 if that is 0, or no more than :data:`ZERO_DISTANCE`).
    """
    s = float(np.median(nearest))
    if not s > ZERO_DISTANCE:
        s = 1.0
    return np.maximum(np.exp(-(d * d) / (2.0 * s * s)), np.finfo(np.float64).tiny)


def structural_candidates(
    net_a: Network, net_b: Network, *, k: int = DEFAULT_K
) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.float64]]:
    """Candidate pairs and prior scores from structural features alone.

    Every node of A is paired with its ``k`` nearest nodes of B, and every node of B with its
    ``k`` nearest nodes of A, in the space of :func:`node_features` z-scored by
    :func:`standardise` (Euclidean distance, exact search with a k-d tree); the union is
    returned, each pair once. The eight neighbour-mean columns are multiplied by
    :data:`AGGREGATE_WEIGHT` (1/2) before the search: they pool the noise of many neighbours,
    and at full weight their block counts as much as the node's own features
    (``scripts/bench/bench_structural.py`` compares the two).

    Parameters
    ----------
    net_a, net_b : Network
    k : int >= 1
        Neighbours per node on each side (fewer when the other network has fewer nodes).

    Returns
    -------
    pairs : ndarray of int64, shape (K, 2)
        ``(node of A, node of B)``, unique, sorted.
    scores : ndarray of float64, shape (K,)
        ``exp(-d^2 / (2 s^2))`` for feature distance ``d``, in (0, 1] (floored at the
        smallest normal float); ``s`` is the median distance of a node to its nearest node
        of the other network over both directions (1 if that is 0, up to the rounding
        :data:`ZERO_DISTANCE`).

    Notes
    -----
    Nodes of identical features (every node of a regular graph without triangles, say) are
    shared out among the nodes asking for them (:func:`_nearest`) rather than the same ``k``
    going to everyone, and a network with more than :data:`TIED_SHARE` of its nodes in such
    groups of more than ``k`` is warned about.

    Nodes without edges get no candidate: all their features are 0, so structure cannot
    tell them apart, and pairing every isolated node of A with ``k`` arbitrary isolated
    nodes of B would only add guesses. They are left out of both searches.

    The choice of score and the cost are discussed in :mod:`aligner.priors.structural`.

    Examples
    --------
    >>> import numpy as np
    >>> from aligner.core.network import network_from_edges
    >>> names = np.array(["a", "b", "c"], dtype=object)
    >>> net = network_from_edges(names, [0, 1], [1, 2])
    >>> pairs, scores = structural_candidates(net, net, k=2)
    >>> pairs[scores == 1.0].tolist()  # the two end nodes are alike; the middle one is unique
    [[0, 0], [0, 2], [1, 1], [2, 0], [2, 2]]
    """
    k = check_int(k, "k", low=1)
    live_a = np.flatnonzero(net_a.degree > 0)
    live_b = np.flatnonzero(net_b.degree > 0)
    if len(live_a) == 0 or len(live_b) == 0:
        return np.empty((0, 2), dtype=np.int64), np.empty(0, dtype=np.float64)
    za, zb = _search_space(net_a, net_b)
    za, zb = za[live_a], zb[live_b]
    d_ab, j_ab, tied_b = _nearest(zb, za, k)  # for each node of A, its nearest of B
    d_ba, j_ba, tied_a = _nearest(za, zb, k)  # for each node of B, its nearest of A
    if max(tied_a, tied_b) > TIED_SHARE:
        warn(f"{tied_a:.0%} of the nodes of A and {tied_b:.0%} of B have the same structural features as more than "
             f"{k} others: structure alone cannot tell them apart (a regular or lattice-like network), so their "
             "candidates among equals are drawn by a fixed rule and the alignment there is a guess; give a prior or "
             "seed pairs")
    pa = np.concatenate([np.repeat(live_a, d_ab.shape[1]), live_a[j_ba.ravel()]])
    pb = np.concatenate([live_b[j_ab.ravel()], np.repeat(live_b, d_ba.shape[1])])
    d = np.concatenate([d_ab.ravel(), d_ba.ravel()])
    scores = _kernel_scores(d, np.concatenate([d_ab[:, 0], d_ba[:, 0]]))
    pairs, scores, _ = merge_duplicate_pairs(np.stack([pa, pb], axis=1), scores, net_b.n)
    return pairs, scores


def combine_priors(
    prior_pairs: npt.ArrayLike,
    prior_scores: npt.ArrayLike,
    struct_pairs: npt.ArrayLike,
    struct_scores: npt.ArrayLike,
    n2: int,
    *,
    weight: float = DEFAULT_WEIGHT,
) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.float64]]:
    """A weak prior plus structural candidates: the union of the pairs, scores added.

    Each score table is first divided by its own maximum (so both top out at 1); a pair then
    scores ``p + weight * s``, with ``p`` its rescaled prior score and ``s`` its rescaled
    structural score, each 0 where the pair is missing from that table.

    Parameters
    ----------
    prior_pairs, prior_scores : array_like, shapes (K1, 2) and (K1,)
        The prior (similarities, >= 0); duplicate pairs keep their highest score.
    struct_pairs, struct_scores : array_like, shapes (K2, 2) and (K2,)
        Structural candidates, as returned by :func:`structural_candidates`.
    n2 : int
        Number of nodes of network B.
    weight : float >= 0
        Weight of the structural score against the prior's.

    Returns
    -------
    pairs : ndarray of int64, shape (K, 2)
        Unique pairs, sorted.
    scores : ndarray of float64, shape (K,)

    Examples
    --------
    >>> p, s = combine_priors([[0, 0], [1, 1]], [2.0, 1.0], [[1, 1], [1, 0]], [1.0, 0.5], 2, weight=0.5)
    >>> p.tolist(), s.tolist()
    ([[0, 0], [1, 0], [1, 1]], [1.0, 0.25, 1.0])
    """
    n2 = check_int(n2, "n2", low=1)
    weight = check_real(weight, "weight", low=0.0)
    tables = []
    for name, pairs, scores, w in (("prior_scores", prior_pairs, prior_scores, 1.0),
                                   ("struct_scores", struct_pairs, struct_scores, weight)):
        pairs, scores, _ = merge_duplicate_pairs(pairs, scores, n2)
        bad = scores[~(np.isfinite(scores) & (scores >= 0))]
        if len(bad):
            raise bad_parameter(name, "finite numbers >= 0", float(bad[0]))
        top = scores.max() if len(scores) else 0.0
        tables.append((pairs, scores * (w / top) if top > 0 else scores * 0.0))
    pairs = np.concatenate([tables[0][0], tables[1][0]])
    scores = np.concatenate([tables[0][1], tables[1][1]])
    if len(pairs) == 0:
        return pairs, scores
    key = pairs[:, 0] * n2 + pairs[:, 1]
    uniq, inv = np.unique(key, return_inverse=True)
    total = np.bincount(inv, weights=scores, minlength=len(uniq))
    return np.stack([uniq // n2, uniq % n2], axis=1), total
