"""Tests of the structural features and candidates (aligner.priors.structural) against outside references."""

import networkx as nx
import numpy as np
import pandas as pd
import pytest
from scipy.spatial.distance import cdist

import aligner
from aligner import InvalidParameterError
from aligner.core.network import network_from_edges
from aligner.priors.structural import (
    AGGREGATE_WEIGHT,
    BASE_FEATURES,
    FEATURE_NAMES,
    combine_priors,
    node_features,
    standardise,
    structural_candidates,
)
from aligner.datasets.synthetic import powerlaw_graph, relabelled_pair


def _net(edges, n):
    edges = np.asarray(edges, dtype=np.int64).reshape(-1, 2)
    return network_from_edges(np.array([f"v{i:04d}" for i in range(n)], dtype=object), edges[:, 0], edges[:, 1])


def _graphs():
    """Small random graphs of varied density, with isolated nodes and leaves among them."""
    out = []
    for seed, (n, p) in enumerate([(30, 0.05), (40, 0.15), (25, 0.4), (60, 0.08)]):
        g = nx.gnp_random_graph(n, p, seed=seed)
        out.append((g, _net(np.array(g.edges(), dtype=np.int64), n)))
    return out


def _reference_features(g):
    """The eight base features computed with networkx only."""
    n = g.number_of_nodes()
    tri = nx.triangles(g)
    clus = nx.clustering(g)
    ref = np.zeros((n, len(BASE_FEATURES)))
    for v in range(n):
        dist = nx.single_source_shortest_path_length(g, v, cutoff=2)
        nbr_logdeg = np.log1p([g.degree(u) for u in g[v]])
        ref[v, 0] = np.log1p(g.degree(v))
        ref[v, 1] = np.log1p(tri[v])
        ref[v, 2] = clus[v]
        ref[v, 3] = np.log1p(sum(1 for d in dist.values() if d == 2))
        if len(nbr_logdeg):
            ref[v, 4:8] = nbr_logdeg.mean(), nbr_logdeg.min(), nbr_logdeg.max(), nbr_logdeg.std()
    return ref


# --------------------------------------------------------------------------- features

@pytest.mark.parametrize("k", range(4))
def test_features_match_networkx(k):
    # reference: nx.triangles, nx.clustering, distance-two counts from
    # nx.single_source_shortest_path_length(cutoff=2), neighbour degrees from g.degree
    g, net = _graphs()[k]
    f = node_features(net)
    assert f.shape == (net.n, len(FEATURE_NAMES))
    np.testing.assert_allclose(f[:, :8], _reference_features(g), rtol=1e-12, atol=1e-12)


def test_neighbour_mean_degree_matches_networkx():
    # reference: nx.average_neighbor_degree is the mean raw degree of the neighbours; the
    # neighbour-mean of column 0 (log1p degree) is checked against the same neighbour sets
    g, net = _graphs()[1]
    f = node_features(net)
    and_ = nx.average_neighbor_degree(g)
    mean_deg = np.array([np.mean([g.degree(u) for u in g[v]]) if g.degree(v) else 0.0 for v in range(net.n)])
    np.testing.assert_allclose(mean_deg, [and_[v] for v in range(net.n)])
    ref_log = np.array([np.mean(np.log1p([g.degree(u) for u in g[v]])) if g.degree(v) else 0.0
                        for v in range(net.n)])
    np.testing.assert_allclose(f[:, 4], ref_log)
    # the aggregation round: mean of the neighbours' base features (networkx neighbour sets)
    ref = _reference_features(g)
    agg = np.array([ref[list(g[v])].mean(axis=0) if g.degree(v) else np.zeros(8) for v in range(net.n)])
    np.testing.assert_allclose(f[:, 8:], agg, atol=1e-12)


def test_features_relabelling_invariant():
    # relabelling the nodes permutes the rows of the features and changes nothing else
    g, net = _graphs()[3]
    rng = np.random.default_rng(7)
    perm = rng.permutation(net.n)
    relabelled = _net(perm[net.edges], net.n)
    np.testing.assert_allclose(node_features(relabelled)[perm], node_features(net), atol=1e-12)


def test_features_empty_and_isolated():
    assert node_features(_net(np.empty((0, 2)), 3)).tolist() == [[0.0] * 16] * 3
    assert node_features(_net(np.empty((0, 2)), 0)).shape == (0, 16)


def test_features_input_unchanged():
    _, net = _graphs()[0]
    indptr, indices = net.indptr.copy(), net.indices.copy()
    node_features(net)
    assert (net.indptr == indptr).all() and (net.indices == indices).all()


# --------------------------------------------------------------------------- standardise

def test_standardise_pooled_and_constant_columns():
    rng = np.random.default_rng(0)
    fa = np.c_[rng.normal(size=10), np.full(10, 3.0)]
    fb = np.c_[rng.normal(2.0, 1.0, size=5), np.full(5, 3.0)]
    za, zb = standardise(fa, fb)
    both = np.vstack([za, zb])
    # reference: pooled z-scores computed directly
    col = np.r_[fa[:, 0], fb[:, 0]]
    np.testing.assert_allclose(both[:, 0], (col - col.mean()) / col.std())
    assert (both[:, 1] == 0).all()  # constant column: no information, 0 everywhere
    with pytest.raises(ValueError, match="equal column counts"):
        standardise(fa, fb[:, :1])


# --------------------------------------------------------------------------- candidates

def _weighted(net_a, net_b):
    za, zb = standardise(node_features(net_a), node_features(net_b))
    w = np.r_[np.ones(len(BASE_FEATURES)), np.full(len(FEATURE_NAMES) - len(BASE_FEATURES), AGGREGATE_WEIGHT)]
    return za * w, zb * w


def test_candidates_match_brute_force_knn():
    # reference: scipy.spatial.distance.cdist with a full argsort, k nearest in both directions
    n, k = 300, 5
    rng = np.random.default_rng(3)
    net_a = _net(rng.integers(0, n, size=(900, 2)), n)
    net_b = _net(rng.integers(0, n, size=(1000, 2)), n)
    pairs, scores = structural_candidates(net_a, net_b, k=k)
    za, zb = _weighted(net_a, net_b)
    la, lb = np.flatnonzero(net_a.degree > 0), np.flatnonzero(net_b.degree > 0)
    d = cdist(za[la], zb[lb])
    # ties at the k-th distance may be broken either way; generic features have none here
    assert len(np.unique(np.round(d, 9))) > 0.99 * d.size
    ref = set()
    for r, i in enumerate(la):
        ref |= {(i, lb[c]) for c in np.argsort(d[r], kind="stable")[:k]}
    for c, j in enumerate(lb):
        ref |= {(la[r], j) for r in np.argsort(d[:, c], kind="stable")[:k]}
    assert set(map(tuple, pairs.tolist())) == ref
    # scores: exp(-d^2 / (2 s^2)), s the median nearest-neighbour distance of both directions
    s = np.median(np.r_[d.min(axis=1), d.min(axis=0)])
    pos_a, pos_b = np.searchsorted(la, pairs[:, 0]), np.searchsorted(lb, pairs[:, 1])
    np.testing.assert_allclose(scores, np.exp(-d[pos_a, pos_b] ** 2 / (2 * s * s)), rtol=1e-10)
    assert (scores > 0).all() and (scores <= 1).all()
    assert pairs.dtype == np.int64 and scores.dtype == np.float64
    keys = pairs[:, 0] * n + pairs[:, 1]
    assert (np.diff(keys) > 0).all()  # unique and sorted


def test_nodes_of_identical_features_are_shared_out_and_warned_about():
    # Found by a trial on regular graphs: every node of a 4-regular graph has the same features
    # (reference: networkx.random_regular_graph; its nodes all have degree 4, and where no node
    # has a triangle all features agree), so every node of A took the same few nodes of B as its
    # nearest: 9,886 of 10,000 nodes shared 22 candidates, 138 nodes were matched, and an
    # 8-regular pair took 238 s. The tied nodes are now shared out among the queries, each query
    # taking k of them (by a fixed rule), and the run says structure cannot tell them apart.
    from aligner.errors import AlignerWarning

    n, k = 600, 5
    g = nx.random_regular_graph(3, n, seed=2)
    e = np.array(g.edges())
    net = _net(e, n)
    with pytest.warns(AlignerWarning, match=r"structure alone cannot tell them apart.*give a prior or seed pairs"):
        pairs, scores = structural_candidates(net, net, k=k)
    per_a, per_b = np.bincount(pairs[:, 0], minlength=n), np.bincount(pairs[:, 1], minlength=n)
    assert (per_a > 0).all() and (per_b > 0).all()  # every node has candidates, not the same few
    assert per_b.max() <= 4 * k and per_a.max() <= 4 * k
    # the distances are still the nearest ones: a query's k pairs are at its k-th nearest distance or less
    za, zb = _weighted(net, net)
    d = cdist(za, zb)
    kth = np.sort(d, axis=1)[:, k - 1]
    np.testing.assert_array_less(d[pairs[:, 0], pairs[:, 1]], np.maximum(kth[pairs[:, 0]],
                                                                         np.sort(d, axis=0)[k - 1][pairs[:, 1]]) + 1e-9)
    # a network with few ties is not warned about (common practice: no warning without cause)
    import warnings

    pair = relabelled_pair(powerlaw_graph(500, m=3, seed=4), 500, noise=0.05, seed=5)
    a, b = _net(pair.edges_a, 500), _net(pair.edges_b, 500)
    with warnings.catch_warnings():
        warnings.simplefilter("error", AlignerWarning)
        structural_candidates(a, b, k=k)


def test_relabelled_copy_scores_its_true_pairs_one():
    # docs/method.md: a pair's score is exp(-d^2/(2 s^2)), s the median nearest-neighbour distance
    # (structural_candidates: s = 1 when that is 0). In a relabelled copy every node has a twin with
    # the same features in exact arithmetic (networkx relabelling), so s is 0 and every true pair
    # scores 1. Summing a node's neighbours in another order left the twins about 1e-15 apart, that
    # rounding became s, and true pairs scored anywhere from 1 down to the floor (0.0015 on the first
    # of these graphs; noticed by differential testing).
    for seed in range(5):
        g = nx.gnm_random_graph(30, 60, seed=seed)
        g.remove_nodes_from([v for v in list(g) if g.degree(v) == 0])
        perm = dict(zip(g.nodes, np.random.default_rng(seed).permutation(list(g.nodes))))
        h = nx.relabel_nodes(g, perm)
        nodes_a, nodes_b = sorted(g), sorted(h)
        ia, ib = {v: i for i, v in enumerate(nodes_a)}, {v: i for i, v in enumerate(nodes_b)}
        net_a = network_from_edges(np.array([f"a{v:02d}" for v in nodes_a], dtype=object),
                                   [ia[u] for u, _ in g.edges], [ia[v] for _, v in g.edges])
        net_b = network_from_edges(np.array([f"b{v:02d}" for v in nodes_b], dtype=object),
                                   [ib[u] for u, _ in h.edges], [ib[v] for _, v in h.edges])
        pairs, scores = structural_candidates(net_a, net_b, k=3)
        got = dict(zip(map(tuple, pairs.tolist()), scores.tolist()))
        true = [got.get((ia[v], ib[perm[v]])) for v in g]
        assert all(t is not None and t > 1 - 1e-12 for t in true), (seed, sorted(t or 0 for t in true)[:3])


def test_candidates_skip_isolated_nodes():
    net_a = _net([[0, 1], [1, 2]], 4)  # node 3 isolated
    net_b = _net([[0, 1], [1, 2], [2, 3]], 5)  # node 4 isolated
    pairs, _ = structural_candidates(net_a, net_b, k=10)
    assert 3 not in pairs[:, 0] and 4 not in pairs[:, 1]
    assert len(pairs) == 3 * 4  # every node with an edge against every other one
    empty, sc = structural_candidates(_net(np.empty((0, 2)), 3), net_b)
    assert empty.shape == (0, 2) and sc.shape == (0,)


def test_candidates_reject_bad_k():
    _, net = _graphs()[0]
    with pytest.raises(InvalidParameterError, match=r"^k must be a whole number >= 1; got 0$"):
        structural_candidates(net, net, k=0)


def test_combine_priors_by_hand():
    prior_p = [[0, 0], [1, 1], [1, 1]]
    prior_s = [4.0, 2.0, 1.0]  # duplicate keeps 2; rescaled: (0,0)=1, (1,1)=0.5
    struct_p = [[1, 1], [2, 0]]
    struct_s = [0.5, 0.25]  # rescaled: (1,1)=1, (2,0)=0.5
    pairs, scores = combine_priors(prior_p, prior_s, struct_p, struct_s, 3, weight=0.4)
    assert pairs.tolist() == [[0, 0], [1, 1], [2, 0]]
    np.testing.assert_allclose(scores, [1.0, 0.5 + 0.4, 0.4 * 0.5])
    with pytest.raises(InvalidParameterError, match=r"^weight must be a number in \[0, inf\); got -1"):
        combine_priors(prior_p, prior_s, struct_p, struct_s, 3, weight=-1.0)


# --------------------------------------------------------------------------- pipeline

def test_pipeline_without_prior_powerlaw_one_percent_noise():
    # measured with scripts/bench/bench_structural.py (graph powerlaw, n 2000, noise 0.01, seed 0,
    # k 25, align defaults): NC 0.978; threshold is that minus a margin of 0.05
    n = 2000
    pair = relabelled_pair(powerlaw_graph(n, seed=0), n, noise=0.01, seed=1000)
    names = np.arange(n).astype(str).astype(object)
    net_a = network_from_edges(names, pair.edges_a[:, 0], pair.edges_a[:, 1])
    net_b = network_from_edges(names, pair.edges_b[:, 0], pair.edges_b[:, 1])
    pairs, scores = structural_candidates(net_a, net_b, k=25)
    prior = pd.DataFrame({"node_a": names[pairs[:, 0]], "node_b": names[pairs[:, 1]], "score": scores})
    truth = list(zip(names[pair.truth[:, 0]], names[pair.truth[:, 1]]))
    res = aligner.align(net_a, net_b, prior, truth=truth)
    assert res.scores.nc >= 0.93
