"""Every score recounted with networkx on random pairs of networks, both size orders.

References: edge correctness EC = conserved / min(|E_A|, |E_B|) (Kuchaiev et al. 2010,
doi:10.1098/rsif.2010.0063); induced conserved structure ICS = conserved / |E(B[f(V_A)])|
(Patro & Kingsford 2012, doi:10.1093/bioinformatics/bts592); symmetric substructure score
S3 = conserved / (|E_A| + |E(B[f(V_A)])| - conserved) (Saraph & Milenkovic 2014,
doi:10.1093/bioinformatics/btu409); the largest connected common subgraph, weakly connected for
arcs; node correctness, a node counting as correct when mapped to any of its true partners.
The recount uses only networkx graph operations (has_edge, subgraph, connected components).
"""

import networkx as nx
import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from aligner.core.scoring import score_matching


@st.composite
def scored_pairs(draw, directed: bool, a_larger: bool):
    """Two random (di)graphs with |E_A| > |E_B| (a_larger) or |E_A| < |E_B|, a random partial
    one-to-one map, a random truth table and random edge weights."""
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    n1, n2 = draw(st.integers(2, 12)), draw(st.integers(2, 12))
    p1, p2 = draw(st.floats(0.1, 0.9)), draw(st.floats(0.1, 0.9))
    ga = nx.gnp_random_graph(n1, p1, seed=int(rng.integers(2**31)), directed=directed)
    gb = nx.gnp_random_graph(n2, p2, seed=int(rng.integers(2**31)), directed=directed)
    if (ga.number_of_edges() > gb.number_of_edges()) != a_larger:
        ga, gb = gb, ga
    assume(ga.number_of_edges() != gb.number_of_edges() and min(ga.number_of_edges(), gb.number_of_edges()) > 0)
    for g in (ga, gb):
        for u, v in g.edges():
            g[u][v]["w"] = float(rng.uniform(0.1, 3.0))
    k = draw(st.integers(0, min(len(ga), len(gb))))
    f = dict(zip(rng.choice(len(ga), k, replace=False).tolist(), rng.choice(len(gb), k, replace=False).tolist()))
    truth = {u: set(rng.choice(len(gb), int(rng.integers(1, 3)), replace=False).tolist())
             for u in rng.choice(len(ga), int(rng.integers(1, len(ga) + 1)), replace=False).tolist()}
    for u in list(truth)[: len(truth) // 2]:  # some true pairs are the mapped ones
        if u in f:
            truth[u].add(f[u])
    return ga, gb, f, truth


def _recount(ga, gb, f, truth):
    """All scores from their published definitions, with networkx."""
    conserved = [(u, v) for u, v in ga.edges() if u in f and v in f and gb.has_edge(f[u], f[v])]
    c = len(conserved)
    ea, eb = ga.number_of_edges(), gb.number_of_edges()
    induced = gb.subgraph(set(f.values())).number_of_edges()
    sub = (nx.DiGraph if ga.is_directed() else nx.Graph)(conserved)
    comps = list(nx.weakly_connected_components(sub) if ga.is_directed() else nx.connected_components(sub))
    top = max((len(cc) for cc in comps), default=0)
    lccs = {(len(cc), sub.subgraph(cc).number_of_edges()) for cc in comps if len(cc) == top} or {(0, 0)}
    nc = sum(f.get(u, -1) in partners for u, partners in truth.items()) / len(truth)
    cw = sum(min(ga[u][v]["w"], gb[f[u]][f[v]]["w"]) for u, v in conserved)
    wa, wb = ga.size(weight="w"), gb.size(weight="w")
    return dict(c=c, ec=c / min(ea, eb), ics=c / induced if induced else 0.0,
                s3=c / (ea + induced - c) if ea + induced - c else 0.0, lccs=lccs, nc=nc,
                cw=cw, wec=cw / min(wa, wb), conserved=set(conserved))


def _ours(ga, gb, f, truth):
    ea = np.array(list(ga.edges()), dtype=np.int64).reshape(-1, 2)
    eb = np.array(list(gb.edges()), dtype=np.int64).reshape(-1, 2)
    wa = np.array([ga[u][v]["w"] for u, v in ea.tolist()])
    wb = np.array([gb[u][v]["w"] for u, v in eb.tolist()])
    matched = np.array(sorted(f.items()), dtype=np.int64).reshape(-1, 2)
    tt = np.array([(u, v) for u, vs in truth.items() for v in sorted(vs)], dtype=np.int64)
    s, cons = score_matching(ea, eb, matched, len(ga), len(gb), truth=tt, directed=ga.is_directed(),
                             weights_a=wa, weights_b=wb)
    return s, {tuple(e) for e in ea[cons].tolist()}


def _check(ga, gb, f, truth):
    want = _recount(ga, gb, f, truth)
    s, cons = _ours(ga, gb, f, truth)
    assert s.conserved_edges == want["c"] and cons == want["conserved"]
    assert s.ec == pytest.approx(want["ec"], rel=1e-12, abs=0)
    assert s.ics == pytest.approx(want["ics"], rel=1e-12, abs=0)
    assert s.s3 == pytest.approx(want["s3"], rel=1e-12, abs=0)
    assert (s.lccs_nodes, s.lccs_edges) in want["lccs"]
    assert s.nc == pytest.approx(want["nc"], rel=1e-12, abs=0)
    assert s.conserved_weight == pytest.approx(want["cw"], rel=1e-12, abs=1e-12)
    assert s.weighted_ec == pytest.approx(want["wec"], rel=1e-12, abs=1e-12)
    assert (s.n_edges_a, s.n_edges_b) == (ga.number_of_edges(), gb.number_of_edges())


SETTINGS = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                           HealthCheck.filter_too_much])


@SETTINGS
@given(scored_pairs(directed=False, a_larger=True))
def test_undirected_scores_recounted_a_larger(inst):
    _check(*inst)


@SETTINGS
@given(scored_pairs(directed=False, a_larger=False))
def test_undirected_scores_recounted_b_larger(inst):
    _check(*inst)


@SETTINGS
@given(scored_pairs(directed=True, a_larger=True))
def test_directed_scores_recounted_a_larger(inst):
    _check(*inst)


@SETTINGS
@given(scored_pairs(directed=True, a_larger=False))
def test_directed_scores_recounted_b_larger(inst):
    _check(*inst)
