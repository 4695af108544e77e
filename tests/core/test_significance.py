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
