import itertools
import math

import numpy as np
import pytest

from aligner.core.candidates import build_candidates
from aligner.core.significance import (candidate_permutation_test, moments_from_degrees, random_bijection_moments,
                                  significance)
from aligner.core.scoring import conserved_mask

from conftest import random_edges


def _count(edges_a, adj_b, perm, nodes_a, nodes_b, n2):
    f = np.full(max(nodes_a.max() + 1, 1), -1, dtype=np.int64)
    f[nodes_a] = nodes_b[perm]
    ea = edges_a[(np.isin(edges_a[:, 0], nodes_a)) & (np.isin(edges_a[:, 1], nodes_a))]
    return int(adj_b[f[ea[:, 0]], f[ea[:, 1]]].sum())


def _instance(rng, n, k, p):
    ea = random_edges(n, p, rng)
    eb = random_edges(n, p * 1.3, rng)
    va = np.sort(rng.choice(n, k, replace=False))
    vb = rng.choice(n, k, replace=False)
    adj = np.zeros((n, n), dtype=bool)
    adj[eb[:, 0], eb[:, 1]] = adj[eb[:, 1], eb[:, 0]] = True
    return ea, eb, va, vb, adj


@pytest.mark.parametrize("k", [2, 3, 4, 6])
def test_closed_form_equals_exact_enumeration(rng, k):
    # reference: the published definition (mean and variance over all k! bijections), by enumeration
    for _ in range(5):
        ea, eb, va, vb, adj = _instance(rng, 9, k, 0.5)
        counts = np.array([_count(ea, adj, np.array(p), va, vb, 9) for p in itertools.permutations(range(k))])
        got = random_bijection_moments(ea, eb, np.stack([va, vb], 1), 9, 9)
        assert got["mean"] == pytest.approx(counts.mean(), abs=1e-9)
        assert got["variance"] == pytest.approx(counts.var(), abs=1e-9)


def test_closed_form_matches_monte_carlo_over_numpy_permutations():
    # reference: sample mean and variance over uniform random bijections (numpy permutations);
    # tolerance from the standard errors of the two sample estimates
    rng = np.random.default_rng(7)
    for n, k, p in ((60, 40, 0.15), (80, 70, 0.06)):
        ea, eb, va, vb, adj = _instance(rng, n, k, p)
        got = random_bijection_moments(ea, eb, np.stack([va, vb], 1), n, n)
        S = 40000
        inside = np.isin(ea[:, 0], va) & np.isin(ea[:, 1], va)
        sub = ea[inside]
        pos = np.full(n, -1)
        pos[va] = np.arange(k)
        su, sv = pos[sub[:, 0]], pos[sub[:, 1]]
        perms = np.argsort(rng.random((S, k)), axis=1)  # rows: uniform random permutations
        c = adj[vb[perms[:, su]], vb[perms[:, sv]]].sum(axis=1).astype(float)
        se_mean = c.std() / math.sqrt(S)
        m4 = ((c - c.mean()) ** 4).mean()
        se_var = math.sqrt(max(m4 - c.var() ** 2, 0) / S)
        assert abs(c.mean() - got["mean"]) < 5 * se_mean
        assert abs(c.var() - got["variance"]) < 5 * se_var + 1e-9


def test_degenerate_sizes():
    # common practice: no edges or fewer than two nodes -> no conserved edge possible, zero variance
    assert moments_from_degrees(1, 0, [0], 0, [0]) == (0.0, 0.0)
    assert moments_from_degrees(5, 0, [0] * 5, 3, [1, 1, 2, 1, 1]) == (0.0, 0.0)
    r = random_bijection_moments(np.array([[0, 1]]), np.array([[0, 1]]), np.array([[0, 0], [1, 1]]), 2, 2, 1)
    assert r["mean"] == 1.0 and r["variance"] == 0.0 and r["z"] is None


def test_permutation_p_value_estimate(rng):
    # reference: Phipson & Smyth (2010) estimate (1 + #{null >= observed}) / (N + 1)
    n = 30
    ea = random_edges(n, 0.2, rng)
    pairs = np.array([(i, j) for i in range(n) for j in range(n) if abs(i - j) <= 2])
    cand = build_candidates(pairs, np.ones(len(pairs)), n, n, top_k=None)
    seen = []
    res = candidate_permutation_test(ea, ea, cand, observed=len(ea), permutations=30, seed=3,
                                     progress=lambda d, t: seen.append((d, t)))
    assert seen[-1] == (30, 30)
    # recompute the null by hand with the same generator
    g = np.random.default_rng(3)
    from aligner.core.rounding import round_matching

    null = []
    for _ in range(30):
        m = round_matching(cand, 1.0 + g.random(cand.m), method="sparse")
        p = cand.pairs[m.index].astype(np.int64)
        f = np.full(n, -1)
        f[p[:, 0]] = p[:, 1]
        null.append(conserved_mask(ea, ea, f, n).sum())
    null = np.array(null)
    assert res["p_value"] == pytest.approx((1 + (null >= len(ea)).sum()) / 31)
    assert res["null_mean"] == pytest.approx(null.mean())
    both = significance(ea, ea, cand, np.stack([np.arange(n), np.arange(n)], 1), len(ea), permutations=0)
    assert both["candidate_maps"] is None and both["random_bijection"]["observed"] == len(ea)


def _null_by_hand(ea, eb, cand, n_maps, seed):
    """The null of candidate_permutation_test recomputed from its documented definition: maximum
    weight matchings under weights 1 + U(0, 1) from numpy's default generator (reference for the
    optimum: scipy.optimize.linear_sum_assignment), scored by a set lookup (common practice)."""
    from scipy.optimize import linear_sum_assignment

    g = np.random.default_rng(seed)
    eset = {frozenset(e) for e in eb.tolist()}
    null, sizes = [], []
    for _ in range(n_maps):
        w = 1.0 + g.random(cand.m)
        W = np.zeros((cand.n1, cand.n2))
        W[cand.pairs[:, 0], cand.pairs[:, 1]] = w
        r, c = linear_sum_assignment(W, maximize=True)
        f = {int(i): int(j) for i, j in zip(r, c) if W[i, j] > 0}
        null.append(sum(u in f and v in f and frozenset((f[u], f[v])) in eset for u, v in ea.tolist()))
        sizes.append(len(f))
    return np.array(null), np.array(sizes)


def test_permutation_report_in_full():
    # B's nodes 0..3 have no candidate and A's nodes 20..24 none either, so null maps leave
    # nodes unmatched; continuous weights make each optimum unique with probability 1. With all
    # weights in [1, 2) every maximum-weight matching has the largest cardinality.
    rng = np.random.default_rng(21)
    n = 25
    ea = random_edges(n, 0.3, rng)
    eb = random_edges(n, 0.3, rng)
    pairs = np.array([(i, j) for i in range(20) for j in range(4, n) if abs(i + 4 - j) <= 2])
    cand = build_candidates(pairs, np.ones(len(pairs)), n, n, top_k=None)
    null, sizes = _null_by_hand(ea, eb, cand, 100, 0)
    observed = int(np.median(null))  # ties with the null: ">=" counts them
    got = candidate_permutation_test(ea, eb, cand, observed)  # defaults: 100 maps, seed 0
    ge = int((null >= observed).sum())
    assert ge > int((null > observed).sum())  # the instance has ties at the observed value
    assert got == {"permutations": 100, "seed": 0, "observed": observed, "null_mean": pytest.approx(null.mean()),
                   "null_sd": pytest.approx(null.std(ddof=1)), "null_max": int(null.max()),
                   "null_matched_mean": pytest.approx(sizes.mean()), "at_least_observed": ge,
                   "p_value": pytest.approx((1 + ge) / 101)}
    assert sizes.max() == 20 < n  # A's nodes 20..24 stay unmatched in every null map
    one = candidate_permutation_test(ea, eb, cand, observed, permutations=1, seed=4)
    null1, _ = _null_by_hand(ea, eb, cand, 1, 4)
    assert (one["null_sd"], one["null_max"], one["seed"]) == (None, int(null1[0]), 4)
    none = candidate_permutation_test(ea, eb, cand, observed, permutations=0)
    assert (none["null_mean"], none["null_sd"], none["null_max"], none["null_matched_mean"], none["p_value"]) == \
        (None, None, None, None, 1.0)


def test_significance_runs_the_permutation_test_only_when_asked():
    rng = np.random.default_rng(3)
    n = 12
    ea = random_edges(n, 0.4, rng)
    pairs = np.array([(i, j) for i in range(n) for j in range(n) if abs(i - j) <= 1])
    cand = build_candidates(pairs, np.ones(len(pairs)), n, n, top_k=None)
    matched = np.stack([np.arange(n), np.arange(n)], 1)
    seen = []
    out = significance(ea, ea, cand, matched, len(ea), permutations=7, seed=5, progress=lambda d, t: seen.append(t))
    assert out["candidate_maps"] == candidate_permutation_test(ea, ea, cand, len(ea), permutations=7, seed=5)
    assert seen == [7] * 7
    assert out["random_bijection"] == random_bijection_moments(ea, ea, matched, n, n, len(ea))
    assert significance(ea, ea, cand, matched, len(ea))["candidate_maps"] is None  # default: no maps
    one = significance(ea, ea, cand, matched, len(ea), permutations=1)
    assert one["candidate_maps"]["permutations"] == 1 and one["candidate_maps"]["seed"] == 0


def test_z_score_and_report_keys():
    # reference: mean and variance by enumeration of all 4! bijections (the published definition)
    ea = np.array([[0, 1], [1, 2], [2, 3]])
    eb = np.array([[0, 1], [0, 2], [0, 3]])
    matched = np.stack([np.arange(4), np.arange(4)], 1)
    adj = np.zeros((4, 4), bool)
    adj[eb[:, 0], eb[:, 1]] = adj[eb[:, 1], eb[:, 0]] = True
    counts = np.array([sum(adj[p[u], p[v]] for u, v in ea.tolist()) for p in itertools.permutations(range(4))])
    got = random_bijection_moments(ea, eb, matched, 4, 4, observed=3)
    assert set(got) == {"k", "edges_a_induced", "edges_b_induced", "mean", "variance", "sd", "observed", "z"}
    assert (got["k"], got["edges_a_induced"], got["edges_b_induced"], got["observed"]) == (4, 3, 3, 3)
    assert got["mean"] == pytest.approx(counts.mean()) and got["sd"] == pytest.approx(counts.std())
    assert got["z"] == pytest.approx((3 - counts.mean()) / counts.std())
    assert "z" not in random_bijection_moments(ea, eb, matched, 4, 4)
    # a variance below 1 still gives a z-score: one edge each side, k = 3: C is 1 with probability 1/3
    small = random_bijection_moments(np.array([[0, 1]]), np.array([[0, 1]]), matched[:3], 3, 3, observed=1)
    assert small["sd"] == pytest.approx(math.sqrt(2) / 3) and small["z"] == pytest.approx((1 - 1 / 3) / small["sd"])


def test_moments_are_zero_when_either_side_has_no_edge():
    # common practice: with no edge on one side nothing can be conserved
    assert moments_from_degrees(4, 3, [1, 2, 2, 1], 0, [0, 0, 0, 0]) == (0.0, 0.0)
    assert moments_from_degrees(4, 0, [0, 0, 0, 0], 3, [1, 2, 2, 1]) == (0.0, 0.0)
    assert moments_from_degrees(1, 1, [1], 1, [1]) == (0.0, 0.0)


def test_two_maps_have_a_standard_deviation():
    rng = np.random.default_rng(8)
    n = 10
    ea = random_edges(n, 0.5, rng)
    pairs = np.array([(i, j) for i in range(n) for j in range(n) if abs(i - j) <= 2])
    cand = build_candidates(pairs, np.ones(len(pairs)), n, n, top_k=None)
    got = candidate_permutation_test(ea, ea, cand, 3, permutations=2, seed=1)
    null, _ = _null_by_hand(ea, ea, cand, 2, 1)
    assert got["null_sd"] == pytest.approx(np.std(null, ddof=1))  # defined from two maps (numpy.std)


def test_induced_counts_and_degrees_against_networkx(rng):
    # Reference: networkx subgraph on the matched nodes, its edge count and degrees.
    import networkx as nx

    from aligner.core.significance import _induced

    g = nx.gnm_random_graph(40, 120, seed=11)
    edges = np.array(g.edges())
    nodes = rng.choice(40, 25, replace=False)
    sub = g.subgraph(nodes.tolist())
    m, deg = _induced(edges, nodes, 40)
    assert m == sub.number_of_edges()
    assert deg.tolist() == [float(sub.degree(v)) for v in nodes.tolist()]
    assert _induced(np.empty((0, 2), np.int64), nodes, 40)[0] == 0


@pytest.mark.parametrize("threads", [1, 3])
def test_null_maps_on_several_threads_are_those_of_one(rng, threads, monkeypatch):
    # Reference: the by-hand null (_null_by_hand, scipy's linear_sum_assignment) map by map; the
    # maps are solved on `threads` threads, and progress still counts them off in order.
    import aligner.core.significance as sig
    monkeypatch.setattr(sig, "thread_count", lambda: threads)
    n = 30
    ea, eb = random_edges(n, 0.2, rng), random_edges(n, 0.2, rng)
    pairs = np.array([(i, j) for i in range(n) for j in range(n) if abs(i - j) <= 3])
    cand = build_candidates(pairs, np.ones(len(pairs)), n, n, top_k=None)
    null, sizes = _null_by_hand(ea, eb, cand, 9, 2)
    seen = []
    got = candidate_permutation_test(ea, eb, cand, int(null[0]), permutations=9, seed=2,
                                     progress=lambda done, total: seen.append((done, total)))
    assert seen == [(t, 9) for t in range(1, 10)]
    assert got["null_max"] == int(null.max()) and got["null_mean"] == pytest.approx(null.mean())
    assert got["null_matched_mean"] == pytest.approx(sizes.mean())
