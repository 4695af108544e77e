"""Directed and weighted networks: diffusion, product graph and scores against outside references."""

import networkx as nx
import numpy as np
import pandas as pd
import pytest
import scipy.sparse as sp
from scipy.sparse.linalg import spsolve
from typer.testing import CliRunner

from aligner.pipeline import align, score
from aligner.core.candidates import build_candidates
from aligner.cli.app import app
from aligner.core.diffusion import column_scale, diffuse, prior_vector
from aligner.errors import InvalidParameterError
from aligner.core.network import network_from_edges
from aligner.core.product import build_product
from aligner.core.refine import refine_objective
from aligner.core.scoring import score_matching


def _digraph(n, p, seed, weighted=False):
    rng = np.random.default_rng(seed)
    a = (rng.random((n, n)) < p) & ~np.eye(n, dtype=bool)
    u, v = np.nonzero(a)
    w = rng.uniform(0.5, 3.0, len(u)) if weighted else None
    return u, v, w


def _net(n, u, v, w=None, directed=True):
    return network_from_edges(np.array([f"x{i}" for i in range(n)], dtype=object), u, v, w, directed=directed)


def _dense(n, u, v, w=None, directed=True):
    m = np.zeros((n, n))
    m[u, v] = 1.0 if w is None else w
    if not directed:
        m = m + m.T
    return m


def _system(net_a, net_b, cand, *, directed, weighted, normalization="restricted"):
    """The pipeline's product graph and column scale for the candidate set."""
    a = net_a.walk_adjacency(directed, weighted)
    b = net_b.walk_adjacency(directed, weighted)
    prod = build_product(a[0], a[1], b[0], b[1], cand, a_weights=a[2] if weighted else None,
                         b_weights=b[2] if weighted else None, directed=directed)
    scale = column_scale(prod, normalization, deg_a=net_a.strength(directed, weighted),
                         deg_b=net_b.strength(directed, weighted), pairs=cand.pairs)
    return prod, scale


def _explicit(WA, WB, keep, h, alpha, normalization, sa=None, sb=None):
    """Solve the Kronecker system directly: W = kron(WA, WB), W[k, l] = weight of the arc k -> l.

    The walk moves mass from l to its successors k: P[k, l] = W[l, k] / d_l, with d_l the
    out-strength of l inside the candidate set (restricted) or s_A(j) s_B(j') (product).
    """
    W = np.kron(WA, WB)[np.ix_(keep, keep)]
    if normalization == "restricted":
        d = W.sum(axis=1)
    else:
        d = np.kron(sa, sb)[keep]
    scale = np.divide(1.0, d, out=np.zeros_like(d), where=d > 0)
    P = W.T * scale[None, :]
    M = sp.csc_matrix(np.eye(len(keep)) - alpha * P)
    return spsolve(M, (1 - alpha) * h)


@pytest.mark.parametrize("directed,weighted,normalization", [
    (True, False, "restricted"), (True, True, "restricted"), (False, True, "restricted"),
    (True, True, "product"), (False, True, "product"), (True, False, "product")])
def test_diffusion_equals_spsolve_on_the_kronecker_system(directed, weighted, normalization):
    # reference: scipy.sparse.linalg.spsolve on the explicit Kronecker-product system
    # x = alpha P x + (1 - alpha) h (Singh, Xu & Berger 2008, with direction and weights added)
    n1, n2, alpha = 6, 7, 0.85
    ua, va, wa = _digraph(n1, 0.35, 1, weighted)
    ub, vb, wb = _digraph(n2, 0.3, 2, weighted)
    net_a, net_b = _net(n1, ua, va, wa, directed), _net(n2, ub, vb, wb, directed)
    rng = np.random.default_rng(3)
    allp = np.array([(i, j) for i in range(n1) for j in range(n2)])
    keep = np.sort(rng.choice(len(allp), size=30, replace=False))  # a restricted candidate set
    prior = rng.uniform(0.1, 1.0, len(keep))
    cand = build_candidates(allp[keep], prior, n1, n2, top_k=None)
    assert (cand.pairs[:, 0] * n2 + cand.pairs[:, 1] == keep).all()  # same (i, i') order as kron
    prod, scale = _system(net_a, net_b, cand, directed=directed, weighted=weighted, normalization=normalization)
    h = prior_vector(cand.prior)
    x = diffuse(prod, h, scale, alpha=alpha, tol=1e-13).x
    if directed:
        WA, WB = _dense(n1, net_a.arcs[:, 0], net_a.arcs[:, 1], net_a.arc_weights if weighted else None), \
            _dense(n2, net_b.arcs[:, 0], net_b.arcs[:, 1], net_b.arc_weights if weighted else None)
    else:
        WA = _dense(n1, net_a.edges[:, 0], net_a.edges[:, 1], net_a.weights if weighted else None, False)
        WB = _dense(n2, net_b.edges[:, 0], net_b.edges[:, 1], net_b.weights if weighted else None, False)
    ref = _explicit(WA, WB, keep, h, alpha, normalization, WA.sum(axis=1), WB.sum(axis=1))
    np.testing.assert_allclose(x, ref, atol=1e-10)
    x_pow = diffuse(prod, h, scale, alpha=alpha, tol=1e-13, solver="power").x
    np.testing.assert_allclose(x_pow, ref, atol=1e-10)


def test_directed_product_graph_matches_networkx_tensor_product():
    # reference: networkx.tensor_product of two DiGraphs: ((i, i'), (j, j')) is an arc when i -> j and i' -> j'
    n1, n2 = 7, 6
    ua, va, _ = _digraph(n1, 0.3, 11)
    ub, vb, _ = _digraph(n2, 0.35, 12)
    ga, gb = nx.DiGraph(), nx.DiGraph()
    ga.add_nodes_from(range(n1))
    gb.add_nodes_from(range(n2))
    ga.add_edges_from(zip(ua.tolist(), va.tolist()))
    gb.add_edges_from(zip(ub.tolist(), vb.tolist()))
    ref = {(a * n2 + b, c * n2 + d) for (a, b), (c, d) in nx.tensor_product(ga, gb).edges()}
    allp = np.array([(i, j) for i in range(n1) for j in range(n2)])
    cand = build_candidates(allp, np.ones(len(allp)), n1, n2, top_k=None)
    na, nb = _net(n1, ua, va), _net(n2, ub, vb)
    prod = build_product(na.out_indptr, na.out_indices, nb.out_indptr, nb.out_indices, cand, directed=True)
    got = {(k, int(l)) for k in range(prod.m) for l in prod.indices[prod.indptr[k]:prod.indptr[k + 1]]}
    assert got == ref
    assert prod.n_edges == len(ref)


def test_directed_scores_hand_worked():
    # hand-worked (common practice definition of EC, counted over arcs): A: 0->1, 1->2;
    # B: 0->1, 2->1. Under the identity map 0->1 is conserved, 1->2 lands on 1->2, which B
    # has only the other way round: 1 conserved arc, EC 1/2. Undirected both edges are conserved.
    ea = np.array([[0, 1], [1, 2]])
    eb = np.array([[0, 1], [2, 1]])
    ident = np.array([[0, 0], [1, 1], [2, 2]])
    d, cons = score_matching(ea, eb, ident, 3, 3, directed=True)
    assert (d.conserved_edges, d.ec) == (1, 0.5)
    assert cons.tolist() == [True, False]
    u, _ = score_matching(ea, eb, ident, 3, 3)
    assert (u.conserved_edges, u.ec) == (2, 1.0)


def test_weighted_scores_hand_worked():
    # hand-worked: conserved weight = sum over conserved edges of min(w_A(e), w_B(f(e)));
    # A: 0-1 (2.0), 1-2 (1.0); B: 0-1 (0.5), 1-2 (4.0), 0-2 (1.0); identity map:
    # min(2, 0.5) + min(1, 4) = 1.5; weighted EC = 1.5 / min(3.0, 5.5) = 0.5
    ea, wa = np.array([[0, 1], [1, 2]]), np.array([2.0, 1.0])
    eb, wb = np.array([[0, 1], [1, 2], [0, 2]]), np.array([0.5, 4.0, 1.0])
    s, _ = score_matching(ea, eb, np.array([[0, 0], [1, 1], [2, 2]]), 3, 3, weights_a=wa, weights_b=wb)
    assert s.conserved_weight == pytest.approx(1.5)
    assert s.weighted_ec == pytest.approx(0.5)
    # unit weights: conserved weight and weighted EC are the conserved edges and EC
    s1, _ = score_matching(ea, eb, np.array([[0, 0], [1, 1], [2, 2]]), 3, 3, weights_a=np.ones(2),
                           weights_b=np.ones(3))
    assert s1.conserved_weight == s1.conserved_edges and s1.weighted_ec == s1.ec


def _frames(n, u, v, prefix):
    return pd.DataFrame({"s": [f"{prefix}{i}" for i in u], "t": [f"{prefix}{i}" for i in v]})


def _relabelled_digraph(n=300, seed=5):
    rng = np.random.default_rng(seed)
    u, v, _ = _digraph(n, 0.02, seed)
    perm = rng.permutation(n)
    a = _frames(n, u, v, "a")
    b = _frames(n, perm[u], perm[v], "b")
    rows = [(f"a{i}", f"b{perm[i]}", rng.uniform(0.6, 1.0)) for i in range(n)]
    for i in range(n):
        for j in rng.choice(n, 5, replace=False):
            if j != perm[i]:
                rows.append((f"a{i}", f"b{j}", rng.uniform(0.3, 0.9)))
    prior = pd.DataFrame(rows, columns=["a", "b", "s"])
    truth = [(f"a{i}", f"b{perm[i]}") for i in range(n)]
    return a, b, prior, truth


def test_directed_alignment_recovers_a_relabelled_copy_and_counts_arcs():
    # common practice: a noise-free relabelled copy must be recovered (NC = 1) and every arc conserved
    a, b, prior, truth = _relabelled_digraph()
    res = align(a, b, prior, truth=truth, directed=True)
    assert res.scores.nc == 1.0
    assert res.scores.directed and res.scores.conserved_edges == res.network_a.arcs.shape[0]
    assert res.summary["parameters"]["directed"] is True
    # the refinement's objective on the symmetrised product graph counts conserved arcs
    _, c = refine_objective(res.product.symmetrised(), np.zeros(res.candidates.m), res.matching.index)
    assert c == res.scores.conserved_edges


def test_reversing_every_edge_keeps_undirected_scores_and_mirrors_directed_ones():
    # common practice: an undirected alignment cannot depend on how edges are written; the
    # directed product graph of the reversed pair is the transpose of the original's, and the
    # conserved arcs of one map are the same arcs reversed
    a, b, prior, truth = _relabelled_digraph(200, seed=8)
    ra, rb = a[["t", "s"]], b[["t", "s"]]
    u1 = align(a, b, prior, truth=truth)
    u2 = align(ra, rb, prior, truth=truth)
    assert u1.scores.as_dict() == u2.scores.as_dict()
    pd.testing.assert_frame_equal(u1.pairs, u2.pairs)
    d1 = align(a, b, prior, truth=truth, directed=True, refine=False)
    d2 = align(ra, rb, prior, truth=truth, directed=True, refine=False)
    assert (d1.candidates.pairs == d2.candidates.pairs).all()
    s1, s2 = d1.product.to_csr(), d2.product.to_csr()
    assert (s1 != s2.T).nnz == 0
    # the same map scored on both orientations: the same count, the arcs mirrored
    sc1, c1 = score(a, b, d1.pairs[["node_a", "node_b"]], directed=True)
    sc2, c2 = score(ra, rb, d1.pairs[["node_a", "node_b"]], directed=True)
    assert sc1.conserved_edges == sc2.conserved_edges > 0
    key1 = set(zip(c1.node_a1, c1.node_a2, c1.node_b1, c1.node_b2))
    key2 = set(zip(c2.node_a2, c2.node_a1, c2.node_b2, c2.node_b1))
    assert key1 == key2


def test_weighted_needs_weights_and_directed_needs_a_digraph():
    a, b, prior, _ = _relabelled_digraph(50, seed=2)
    with pytest.raises(InvalidParameterError, match="network A .* no third column"):
        align(a, b, prior, weighted=True)
    g = nx.path_graph(3)
    with pytest.raises(InvalidParameterError, match="directed graph"):
        align(g, g, pd.DataFrame({"a": ["0"], "b": ["0"], "s": [1.0]}), directed=True)


def test_weighted_alignment_reports_conserved_weight():
    # weights equal on both sides of a relabelled copy: the whole weight is conserved
    rng = np.random.default_rng(4)
    a, b, prior, truth = _relabelled_digraph(200, seed=4)
    w = rng.uniform(1, 5, len(a))
    a = a.assign(w=w)
    b = b.assign(w=w)
    res = align(a, b, prior, truth=truth, weighted=True)
    assert res.scores.nc == 1.0
    assert res.scores.weighted_ec == pytest.approx(1.0)
    assert res.summary["scores"]["conserved_weight"] == pytest.approx(res.network_a.weights.sum())


def test_cli_directed_and_weighted(tmp_path):
    a, b, prior, truth = _relabelled_digraph(120, seed=6)
    a.to_csv(tmp_path / "a.tsv", sep="\t", header=False, index=False)
    b.to_csv(tmp_path / "b.tsv", sep="\t", header=False, index=False)
    prior.to_csv(tmp_path / "p.tsv", sep="\t", header=False, index=False)
    runner = CliRunner()
    r = runner.invoke(app, ["align", str(tmp_path / "a.tsv"), str(tmp_path / "b.tsv"), "-p", str(tmp_path / "p.tsv"),
                            "-o", str(tmp_path / "out"), "--directed", "-q"])
    assert r.exit_code == 0, r.output
    import json

    summ = json.loads((tmp_path / "out" / "summary.json").read_text())
    assert summ["parameters"]["directed"] and summ["scores"]["directed"]
    r = runner.invoke(app, ["align", str(tmp_path / "a.tsv"), str(tmp_path / "b.tsv"), "-p", str(tmp_path / "p.tsv"),
                            "-o", str(tmp_path / "out2"), "--weighted"])
    assert r.exit_code == 2
    assert "no third column" in r.output and "--weighted" in r.output
    assert not (tmp_path / "out2").exists()
