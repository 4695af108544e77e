"""Tests of the synthetic instance generators."""

import networkx as nx
import numpy as np
import pytest

from aligner.errors import InvalidParameterError
from aligner.datasets.synthetic import (
    SCORE_FLOOR,
    EvolvedPair,
    SyntheticPair,
    duplication_divergence_graph,
    evolved_pair,
    powerlaw_graph,
    relabelled_pair,
)


def assert_canonical(edges, n):
    assert edges.dtype == np.int64
    assert edges.ndim == 2 and edges.shape[1] == 2
    assert (edges[:, 0] < edges[:, 1]).all(), "rows must have i < j (so no self-loops)"
    assert edges.min() >= 0 and edges.max() < n
    keys = edges[:, 0] * n + edges[:, 1]
    assert (np.diff(keys) > 0).all(), "rows must be sorted and unique"


def edge_keys(edges, n):
    return set((edges[:, 0] * n + edges[:, 1]).tolist())


def as_graph(edges, n):
    g = nx.Graph()
    g.add_nodes_from(range(n))
    g.add_edges_from(edges.tolist())
    return g


def assert_pair_equal(p, q):
    for name in p.__dataclass_fields__:
        x, y = getattr(p, name), getattr(q, name)
        if isinstance(x, np.ndarray):
            assert x.dtype == y.dtype and np.array_equal(x, y), name
        else:
            assert x == y, name


# ------------------------------------------------------------------ powerlaw_graph


def test_powerlaw_deterministic_and_canonical():
    e1 = powerlaw_graph(500, m=3, p=0.5, seed=7)
    e2 = powerlaw_graph(500, m=3, p=0.5, seed=7)
    e3 = powerlaw_graph(500, m=3, p=0.5, seed=8)
    assert np.array_equal(e1, e2)
    assert not np.array_equal(e1, e3)
    assert_canonical(e1, 500)
    assert len(e1) <= (500 - 3) * 3
    assert len(e1) >= 0.98 * (500 - 3) * 3


def test_powerlaw_small_cases():
    assert powerlaw_graph(4, m=4, seed=0).shape == (0, 2)
    star = powerlaw_graph(6, m=1, p=0.0, seed=0)
    assert len(star) == 5 and nx.is_tree(as_graph(star, 6))
    with pytest.raises(InvalidParameterError):
        powerlaw_graph(3, m=4, seed=0)
    with pytest.raises(InvalidParameterError):
        powerlaw_graph(10, m=2, p=1.5, seed=0)


def test_powerlaw_matches_reference_model():
    # Reference: networkx.powerlaw_cluster_graph (Holme & Kim 2002), same n, m, p.
    # networkx takes the m drawn targets in hash-set order, which favours small node labels and
    # so gives the oldest hubs a little more weight; the second moment of the degree and the
    # transitivity are therefore compared with a wider tolerance than edges and mean degree.
    n, m, p = 2000, 4, 0.3

    def stats(edges):
        g = as_graph(edges, n)
        deg = np.array([d for _, d in g.degree()], dtype=float)
        return np.array([len(edges), deg.mean(), (deg ** 2).mean(), nx.average_clustering(g),
                         nx.transitivity(g)])

    ours = np.mean([stats(powerlaw_graph(n, m=m, p=p, seed=s)) for s in range(3)], axis=0)
    ref = np.mean([stats(np.array(nx.powerlaw_cluster_graph(n, m, p, seed=s).edges()))
                   for s in range(3)], axis=0)
    rel = np.abs(ours - ref) / ref
    assert rel[0] < 0.02 and rel[1] < 0.02, (ours, ref)  # edge count, mean degree
    assert rel[2] < 0.2, (ours, ref)  # mean squared degree
    assert rel[3] < 0.1 and rel[4] < 0.25, (ours, ref)  # clustering


# ------------------------------------------------------------------ duplication_divergence_graph


def test_duplication_divergence_basic():
    n = 3000
    e = duplication_divergence_graph(n, p_retain=0.4, seed=3)
    assert np.array_equal(e, duplication_divergence_graph(n, p_retain=0.4, seed=3))
    assert not np.array_equal(e, duplication_divergence_graph(n, p_retain=0.4, seed=4))
    assert_canonical(e, n)
    g = as_graph(e, n)
    assert min(d for _, d in g.degree()) >= 1, "no isolated nodes"
    assert nx.is_connected(g)


def test_duplication_divergence_extremes():
    # p_retain = 0 with no parent links: every copy fails, so copies fall back to parent links
    e = duplication_divergence_graph(50, p_retain=0.0, p_parent=0.0, max_redraws=0, seed=1)
    assert len(e) == 49 and nx.is_tree(as_graph(e, 50))
    # p_retain = 1 keeps everything: starting from one edge the graph stays bipartite-complete-ish
    full = duplication_divergence_graph(30, p_retain=1.0, p_parent=0.0, seed=1)
    assert_canonical(full, 30)
    assert nx.is_connected(as_graph(full, 30))
    with pytest.raises(InvalidParameterError):
        duplication_divergence_graph(1, seed=0)


# ------------------------------------------------------------------ relabelled_pair


@pytest.mark.parametrize("mode", ["uniform", "near"])
def test_relabelled_pair(mode):
    n = 1500
    ea = powerlaw_graph(n, m=3, seed=11)
    pair = relabelled_pair(ea, n, noise=0.1, decoys=6, decoy_mode=mode, seed=5)
    assert isinstance(pair, SyntheticPair)
    assert_pair_equal(pair, relabelled_pair(ea, n, noise=0.1, decoys=6, decoy_mode=mode, seed=5))
    assert pair.n_a == pair.n_b == n
    assert np.array_equal(pair.edges_a, ea)
    assert_canonical(pair.edges_b, n)

    # truth is a permutation
    t = pair.truth
    assert t.dtype == np.int64 and t.shape == (n, 2)
    assert np.array_equal(t[:, 0], np.arange(n))
    assert np.array_equal(np.sort(t[:, 1]), np.arange(n))

    # exactly round(noise * E) edges moved
    perm = t[:, 1]
    pa = np.sort(perm[ea], axis=1)
    moved = round(0.1 * len(ea))
    kept = edge_keys(pa, n) & edge_keys(pair.edges_b, n)
    assert len(pair.edges_b) == len(ea)
    assert len(kept) == len(ea) - moved

    # prior: partner + 6 distinct decoys per node, sorted, positive scores
    pp, ps = pair.prior_pairs, pair.prior_scores
    assert pp.dtype == np.int64 and ps.dtype == np.float64
    assert pp.shape == (n * 7, 2) and ps.shape == (n * 7,)
    assert (ps >= SCORE_FLOOR).all()
    keys = pp[:, 0] * n + pp[:, 1]
    assert (np.diff(keys) > 0).all(), "prior pairs sorted and unique"
    assert (np.bincount(pp[:, 0], minlength=n) == 7).all()
    is_true = pp[:, 1] == perm[pp[:, 0]]
    assert is_true.sum() == n, "decoys never equal the true partner"
    assert ps[is_true].mean() > ps[~is_true].mean() + 0.3

    if mode == "near":
        # decoys lie within distance 2 of the partner wherever that neighbourhood is big enough
        gb = as_graph(pair.edges_b, n)
        ok = total = 0
        for a in range(0, n, 15):
            ball = nx.single_source_shortest_path_length(gb, int(perm[a]), cutoff=2)
            if len(ball) - 1 >= 60:
                dec = pp[(pp[:, 0] == a) & ~is_true, 1]
                ok += sum(int(d) in ball for d in dec)
                total += len(dec)
        assert total > 0 and ok == total


def test_relabelled_no_noise_is_isomorphic_copy():
    n = 200
    ea = duplication_divergence_graph(n, seed=2)
    pair = relabelled_pair(ea, n, noise=0.0, decoys=0, seed=1)
    perm = pair.truth[:, 1]
    assert edge_keys(np.sort(perm[ea], axis=1), n) == edge_keys(pair.edges_b, n)
    assert np.array_equal(pair.prior_pairs, pair.truth)


def test_relabelled_input_cleaning_and_checks():
    edges = np.array([[1, 0], [0, 1], [2, 2], [2, 3]])
    pair = relabelled_pair(edges, 4, noise=0.0, decoys=3, seed=0)
    assert np.array_equal(pair.edges_a, [[0, 1], [2, 3]])
    assert len(pair.prior_pairs) == 16  # all pairs: 3 decoys = n - 1
    with pytest.raises(InvalidParameterError):
        relabelled_pair(edges, 4, decoys=4, seed=0)
    with pytest.raises(InvalidParameterError):
        relabelled_pair(edges, 4, decoy_mode="far", seed=0)
    with pytest.raises(InvalidParameterError):
        relabelled_pair(edges, 3, seed=0)  # node 3 out of range


# ------------------------------------------------------------------ evolved_pair


def test_evolved_pair():
    kw = dict(n_final=(700, 650), p_retain=0.4, edge_noise=0.05, decoys=4, seed=9)
    ev = evolved_pair(500, **kw)
    assert isinstance(ev, EvolvedPair) and isinstance(ev, SyntheticPair)
    assert_pair_equal(ev, evolved_pair(500, **kw))
    assert (ev.n_a, ev.n_b, ev.n_ancestor) == (700, 650, 500)
    assert_canonical(ev.edges_a, 700)
    assert_canonical(ev.edges_b, 650)
    assert_canonical(ev.edges_ancestor, 500)
    for anc, dup, n in ((ev.ancestor_a, ev.duplications_a, 700), (ev.ancestor_b, ev.duplications_b, 650)):
        assert anc.shape == (n,) and anc.dtype == np.int64
        assert anc.min() >= 0 and anc.max() < 500
        assert len(np.unique(anc)) == 500, "every ancestral node survives in each species"
        assert dup.min() >= 0 and dup.sum() > 0

    # truth: exactly the pairs with a common ancestor
    t = ev.truth
    assert (ev.ancestor_a[t[:, 0]] == ev.ancestor_b[t[:, 1]]).all()
    expected = np.bincount(ev.ancestor_a, minlength=500) @ np.bincount(ev.ancestor_b, minlength=500)
    assert len(t) == expected
    assert len(np.unique(t[:, 0])) == 700 and len(np.unique(t[:, 1])) == 650

    # prior: all true pairs, decoys from other families, sorted unique, positive
    pp, ps = ev.prior_pairs, ev.prior_scores
    keys = pp[:, 0] * 650 + pp[:, 1]
    assert (np.diff(keys) > 0).all()
    assert (ps >= SCORE_FLOOR).all()
    is_true = ev.ancestor_a[pp[:, 0]] == ev.ancestor_b[pp[:, 1]]
    assert is_true.sum() == len(t)
    assert (~is_true).sum() == 700 * 4
    assert ps[is_true].mean() > ps[~is_true].mean()
    # scores decay with the number of duplications since the split
    d = ev.duplications_a[pp[is_true, 0]] + ev.duplications_b[pp[is_true, 1]]
    assert ps[is_true][d == 0].mean() > ps[is_true][d >= 2].mean()


def test_evolved_pair_checks():
    with pytest.raises(InvalidParameterError):
        evolved_pair(100, n_final=50, seed=0)
    with pytest.raises(InvalidParameterError):
        evolved_pair(100, n_final=200, decay=0.0, seed=0)
