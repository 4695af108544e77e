"""The weight model (aligner.core.weights): levels, the agreement kernel, robustness to the weights' scale."""

from pathlib import Path

import networkx as nx
import numpy as np
import pandas as pd
import pytest
from scipy.stats import rankdata

import aligner
from aligner.core.candidates import build_candidates
from aligner.core.network import network_from_edges
from aligner.core.product import build_product
from aligner.core.weights import AGREEMENT_FLOOR, walk_weights, weight_levels
from aligner.datasets.instances import WEIGHT_CHANGES, hidden_connectome, perturb_weights, read_connectome

DATA = Path(__file__).resolve().parents[1] / "data"


@pytest.mark.parametrize("seed", range(5))
def test_levels_are_mid_ranks_over_the_count(seed):
    # reference: scipy.stats.rankdata with method="average" (ties share their mean rank); the
    # mid-distribution quantile is (average rank - 1/2) / n (common practice)
    rng = np.random.default_rng(seed)
    w = rng.integers(1, 6, size=200).astype(float) * rng.choice([1.0, 7.5])
    assert np.allclose(weight_levels(w), (rankdata(w, method="average") - 0.5) / len(w))


def test_levels_ignore_scale_and_increasing_transforms():
    rng = np.random.default_rng(3)
    w = rng.pareto(1.5, size=500) + 1.0
    for other in (0.3 * w, 3.0 * w, np.log1p(w), np.sqrt(w)):
        assert np.array_equal(weight_levels(other), weight_levels(w))


def _random_weighted(n, p, seed):
    g = nx.gnp_random_graph(n, p, seed=seed)
    rng = np.random.default_rng(seed)
    for u, v in g.edges:
        g[u][v]["weight"] = float(rng.integers(1, 9))
    return g


@pytest.mark.parametrize("seed", range(4))
def test_agreement_entries_match_the_tensor_product(seed):
    # reference: networkx.tensor_product (the product graph), restricted to the candidates, each
    # product edge weighed floor + (1 - floor) (1 - |q_A - q_B|) by its two edges' levels
    ga, gb = _random_weighted(14, 0.3, seed), _random_weighted(12, 0.35, seed + 50)
    net = {}
    for side, g in (("a", ga), ("b", gb)):
        e = np.array([(u, v) for u, v in g.edges], dtype=np.int64)
        w = np.array([g[u][v]["weight"] for u, v in g.edges])
        names = np.array([str(k) for k in range(g.number_of_nodes())])
        net[side] = network_from_edges(names, e[:, 0], e[:, 1], w)
    lev = {}
    for side, g in (("a", ga), ("b", gb)):
        ws = np.array([g[u][v]["weight"] for u, v in g.edges])
        q = weight_levels(ws)
        lev[side] = {frozenset(e): q[k] for k, e in enumerate(g.edges)}
    rng = np.random.default_rng(seed)
    pairs = sorted({(int(i), int(j)) for i, j in zip(rng.integers(0, 14, 70), rng.integers(0, 12, 70))})
    cand = build_candidates(np.array(pairs), np.ones(len(pairs)), 14, 12)
    a_ip, a_ix, a_w = walk_weights(net["a"], False, "agreement")
    b_ip, b_ix, b_w = walk_weights(net["b"], False, "agreement")
    pg = build_product(a_ip, a_ix, b_ip, b_ix, cand, a_weights=a_w, b_weights=b_w, agreement=AGREEMENT_FLOOR)
    got = {}
    for k in range(cand.m):
        for t in range(pg.indptr[k], pg.indptr[k + 1]):
            got[(tuple(cand.pairs[k]), tuple(cand.pairs[pg.indices[t]]))] = pg.weights[t]
    tp = nx.tensor_product(ga, gb)
    index = set(pairs)
    want = {}
    for (i, ip_), (j, jp) in tp.edges:
        if (i, ip_) in index and (j, jp) in index:
            k = AGREEMENT_FLOOR + (1 - AGREEMENT_FLOOR) * (1 - abs(lev["a"][frozenset((i, j))] - lev["b"][frozenset((ip_, jp))]))
            want[((i, ip_), (j, jp))] = want[((j, jp), (i, ip_))] = k
    assert set(got) == set(want)
    assert all(np.isclose(got[key], want[key]) for key in want)
    assert ((pg.weights >= AGREEMENT_FLOOR) & (pg.weights <= 1.0)).all()


# --------------------------------------------------------------------------- the adult connectome pair

@pytest.fixture(scope="module")
def adult():
    return read_connectome(DATA)


def _run(ea, eb, prior, truth, weighted, **kw):
    cols = ["u", "v", "w"] if weighted else ["u", "v"]
    return aligner.align(ea[cols], eb[cols], prior, truth=truth, top_k=None, weighted=weighted, **kw)


def test_scaling_the_weights_of_one_network_changes_nothing(adult):
    # the agreement model reads only each network's order of weights (scale-free by construction)
    a, b, classes = adult
    base = hidden_connectome(a, b, classes, "class", seed=0, weighted=True)
    ref = _run(*base, True)
    for change in ("scale-0.3", "scale-3"):
        ea, eb, prior, truth = hidden_connectome(a, perturb_weights(b, change), classes, "class", seed=0,
                                                 weighted=True)
        res = _run(ea, eb, prior, truth, True)
        assert np.array_equal(res.matching.index, ref.matching.index)


def _nc_up(res):
    return res.summary["scores"]["nc_up_to_ambiguity"]


@pytest.mark.parametrize("task", ["class", "noisy"])
@pytest.mark.parametrize("change", WEIGHT_CHANGES)
def test_weighted_runs_are_no_worse_than_unweighted_on_the_adult_pair(adult, task, change):
    # the robustness check on real data (Witvliet et al. 2021, adult datasets 7 and 8; the
    # truth is the neurons' names): B's weights rescaled, Poisson-noised (five draws) or its
    # weakest fifth dropped; conserved edges of the weighted run within 1 % of the unweighted
    # run's on every draw, NC within 0.01 on average over the draws. With the class prior
    # (every same-class pair scores 1) left and right neurons are told apart by the wiring
    # alone, and a noisy copy can make the mirror image conserve a few more edges than the
    # true map, so there NC counts a node right when its true partner is among its
    # alternatives (NC up to interchangeable nodes; docs/method.md, "Interchangeable nodes")
    a, b, classes = adult
    draws = range(5) if change == "poisson" else range(1)
    nc_plain, nc_weighted = [], []
    for seed in draws:
        ea, eb, prior, truth = hidden_connectome(a, perturb_weights(b, change, seed=seed), classes, task, seed=0,
                                                 weighted=True)
        plain, weighted = _run(ea, eb, prior, truth, False), _run(ea, eb, prior, truth, True)
        assert weighted.scores.conserved_edges >= (1 - 0.01) * plain.scores.conserved_edges
        nc = _nc_up if task == "class" else (lambda r: r.scores.nc)
        nc_plain.append(nc(plain))
        nc_weighted.append(nc(weighted))
    assert np.mean(nc_weighted) >= np.mean(nc_plain) - 0.01


def test_the_product_model_is_still_available_and_follows_raw_weights(adult):
    # w_A * w_B entries: scaling B's weights by 3 scales every product entry by 3
    a, b, classes = adult
    ea, eb, prior, truth = hidden_connectome(a, b, classes, "class", seed=0, weighted=True)
    eb3 = eb.assign(w=3 * eb["w"])
    p1 = aligner.prepare(ea, eb, prior, top_k=None, weighted=True, weight_model="product")
    p3 = aligner.prepare(ea, eb3, prior, top_k=None, weighted=True, weight_model="product")
    assert np.allclose(p3.product.weights, 3 * p1.product.weights)
    q = aligner.prepare(ea, eb3, prior, top_k=None, weighted=True)
    assert ((q.product.weights >= AGREEMENT_FLOOR) & (q.product.weights <= 1)).all()


def test_perturbations_do_what_they_say(adult):
    _, b, _ = adult
    assert np.allclose(perturb_weights(b, "scale-3")["weight"], 3 * b["weight"])
    dropped = perturb_weights(b, "drop-weakest-20%")
    assert len(dropped) == len(b) - int(0.2 * len(b))
    assert dropped["weight"].min() >= np.sort(b["weight"].to_numpy())[int(0.2 * len(b)) - 1]
    noisy = perturb_weights(b, "poisson", seed=1)
    assert (noisy["weight"] > 0).all() and len(noisy) < len(b)
    assert not noisy["weight"].equals(b["weight"].iloc[: len(noisy)].astype(float))
    with pytest.raises(aligner.InvalidParameterError):
        perturb_weights(b, "shuffle")
    pd.testing.assert_frame_equal(perturb_weights(b, "none"), b)


def test_directed_weights_survive_symmetrising_and_the_refinement_counts_them():
    # reference: the dense matrix of S + S^T (numpy) from the directed product graph's weighted
    # entries; the symmetrised graph the refinement works on must hold exactly that
    rng = np.random.default_rng(4)
    n = 40
    arcs = sorted({(int(u), int(v)) for u, v in rng.integers(0, n, size=(160, 2)) if u != v})
    ea = pd.DataFrame([(f"a{u}", f"a{v}", float(rng.integers(1, 6))) for u, v in arcs])
    eb = pd.DataFrame([(f"b{u}", f"b{v}", float(rng.integers(1, 6))) for u, v in arcs])
    prior = pd.DataFrame([(f"a{i}", f"b{j}", 1.0) for i in range(n) for j in range(n) if abs(i - j) <= 2])
    problem = aligner.prepare(ea, eb, prior, top_k=None, directed=True, weighted=True)
    pg = problem.product
    m = pg.m
    dense = np.zeros((m, m))
    np.add.at(dense, (np.repeat(np.arange(m), np.diff(pg.indptr)), pg.indices), pg.weights)
    sym = pg.symmetrised()
    got = np.zeros((m, m))
    np.add.at(got, (np.repeat(np.arange(m), np.diff(sym.indptr)), sym.indices), sym.weights)
    assert np.allclose(got, dense + dense.T)
    res = aligner.align(ea, eb, prior, top_k=None, directed=True, weighted=True)
    assert res.summary["refine"]["objective_counts"] == "agreement"
    plain = aligner.align(ea, eb, prior, top_k=None, directed=True, weighted=True, weight_model="product")
    assert plain.summary["refine"]["objective_counts"] == "edges"
