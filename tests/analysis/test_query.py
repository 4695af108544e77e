import json

import networkx as nx
import numpy as np
import pandas as pd
import pytest
import scipy.sparse as sp
from scipy.sparse.linalg import spsolve
from typer.testing import CliRunner

import aligner
from aligner.core.candidates import build_candidates
from aligner.cli.app import app
from aligner.core.diffusion import column_scale, diffuse
from aligner.core.network import network_from_edges
from aligner.core.product import build_product
from aligner.analysis.query import QueryEngine
from aligner.datasets.synthetic import powerlaw_graph, relabelled_pair
from conftest import random_edges

runner = CliRunner()


def _net(edges, n):
    names = np.array([f"{i:04d}" for i in range(n)], dtype=object)  # sorted as strings = as integers
    e = np.asarray(edges, dtype=np.int64).reshape(-1, 2)
    return network_from_edges(names, e[:, 0], e[:, 1])


def _random_instance(seed, n1=40, n2=45, p=0.12, share=0.25):
    rng = np.random.default_rng(seed)
    a = _net(random_edges(n1, p, rng), n1)
    b = _net(random_edges(n2, p, rng), n2)
    pairs = np.array([(i, j) for i in range(n1) for j in range(n2) if rng.random() < share])
    cand = build_candidates(pairs, rng.random(len(pairs)) + 0.05, n1, n2, top_k=None)
    return a, b, cand


def _full_solve(a, b, cand, idx, h, alpha, normalization="restricted"):
    prod = build_product(a.indptr, a.indices, b.indptr, b.indices, cand)
    hf = np.zeros(cand.m)
    hf[idx] = h
    scale = column_scale(prod, normalization, deg_a=a.degree, deg_b=b.degree, pairs=cand.pairs)
    return prod, diffuse(prod, hf, scale, alpha=alpha, tol=1e-13)


@pytest.mark.parametrize("seed", [0, 1, 2])
@pytest.mark.parametrize("normalization", ["restricted", "product"])
def test_query_equals_same_seeded_full_solve_within_certified_bound(seed, normalization):
    # Reference: aligner.core.diffusion.diffuse on the whole restricted product graph with the same h
    # (itself checked against scipy.sparse.linalg.spsolve in test_diffusion.py).
    a, b, cand = _random_instance(seed)
    alpha = 0.85
    eng = QueryEngine(a, b, cand, alpha=alpha, tol=1e-4, normalization=normalization)
    for node in range(0, a.n, 7):
        own = eng.candidates_of(node)
        if len(own) < 2:
            continue
        idx, h = eng.personalization(node)
        assert h.sum() == pytest.approx(1.0)
        assert np.array_equal(idx, own)  # no seeds: h lives on the node's own candidates only
        sol = eng.solve(node)
        prod, ref = _full_solve(a, b, cand, idx, h, alpha, normalization)
        xq = np.zeros(cand.m)
        xq[sol.pairs] = sol.x
        slack = ref.error_bound + 1e-12
        # every pair of L, touched or not: |x* - x| <= min(eps v, ||r||_1) / (1 - alpha)
        v = prod.degree if normalization == "restricted" else a.degree[cand.pairs[:, 0]] * b.degree[cand.pairs[:, 1]]
        bound_all = np.minimum(sol.eps * v, sol.residual_l1) / (1 - alpha)
        assert np.all(np.abs(ref.x - xq) <= bound_all + slack)
        assert np.all(xq <= ref.x + slack)  # h >= 0: the query's scores approach from below
        assert np.abs(ref.x - xq).sum() <= sol.residual_l1 / (1 - alpha) + slack
        # the ranking of the node's counterparts
        tab, work = eng.counterparts(node, top=None)
        full = pd.Series(ref.x[own], index=cand.pairs[own, 1])
        assert np.all(np.abs(full[tab.counterpart].to_numpy() - tab.score.to_numpy())
                      <= tab.error_bound.to_numpy() + slack)
        s, e = full[tab.counterpart].to_numpy(), tab.error_bound.to_numpy()
        for u in range(len(s)):
            for w in range(u + 1, len(s)):  # tab is sorted by the query's score
                if abs(s[u] - s[w]) > 2 * max(e[u], e[w]) + 2 * slack:
                    assert s[u] > s[w]  # clearly separated in the full solve: same order
        assert work["pairs_touched"] <= cand.m


def test_query_equals_spsolve_of_explicit_system():
    # Reference: scipy.sparse.linalg.spsolve on (I - alpha P) x = (1 - alpha) h with P built from
    # networkx.tensor_product restricted to the candidates and the column scale 1/deg_S.
    a, b, cand = _random_instance(5, n1=12, n2=13, p=0.3, share=0.5)
    ga = nx.Graph(); ga.add_nodes_from(range(a.n)); ga.add_edges_from(a.edges.tolist())
    gb = nx.Graph(); gb.add_nodes_from(range(b.n)); gb.add_edges_from(b.edges.tolist())
    prs = [tuple(p) for p in cand.pairs.tolist()]
    sub = nx.tensor_product(ga, gb).subgraph(prs)
    S = nx.to_scipy_sparse_array(sub, nodelist=prs, format="csr")
    deg = np.asarray(S.sum(axis=0), dtype=np.float64).ravel()
    alpha = 0.8
    P = S @ sp.diags(np.divide(1.0, deg, out=np.zeros_like(deg), where=deg > 0))
    eng = QueryEngine(a, b, cand, alpha=alpha, tol=1e-9)
    node = int(np.argmax(np.diff(cand.a_indptr)))
    idx, h = eng.personalization(node)
    hf = np.zeros(cand.m)
    hf[idx] = h
    want = spsolve(sp.eye(cand.m, format="csc") - alpha * P.tocsc(), (1 - alpha) * hf)
    sol = eng.solve(node)
    got = np.zeros(cand.m)
    got[sol.pairs] = sol.x
    assert np.abs(got - want).max() <= sol.error_bound().max() + 1e-12
    # the support of the node's pairs is its number of neighbours in the tensor product
    tab, _ = eng.counterparts(node, top=None)
    nb = {b.names[p[1]]: sub.degree(p) for p in prs if p[0] == node}
    assert all(nb[b.names[c]] == s for c, s in zip(tab.counterpart, tab.support))


def test_far_away_structure_changes_nothing():
    # Common practice (locality): adding a large component far from the asked node, to both
    # networks and the candidates, leaves the query's scores and its work unchanged.
    a, b, cand = _random_instance(3)
    rng = np.random.default_rng(9)
    extra = 400
    ea = np.concatenate([a.edges, random_edges(extra, 0.02, rng) + a.n])
    eb = np.concatenate([b.edges, random_edges(extra, 0.02, rng) + b.n])
    a2, b2 = _net(ea, a.n + extra), _net(eb, b.n + extra)
    more = np.concatenate([np.stack([np.arange(extra) + a.n, rng.permutation(extra) + b.n], 1),
                           np.stack([np.arange(extra) + a.n, rng.permutation(extra) + b.n], 1)])
    pairs = np.concatenate([cand.pairs, more])
    scores = np.concatenate([cand.prior, rng.random(len(more)) + 0.05])
    cand2 = build_candidates(pairs, scores, a2.n, b2.n, top_k=None)
    t1, w1 = QueryEngine(a, b, cand, tol=1e-6).counterparts(4, top=None)
    t2, w2 = QueryEngine(a2, b2, cand2, tol=1e-6).counterparts(4, top=None)
    assert np.array_equal(t1.counterpart, t2.counterpart)
    assert np.allclose(t1.score, t2.score, rtol=0, atol=1e-15)
    for key in ("pairs_touched", "pairs_expanded", "product_edges_scanned", "search_probes", "pushes"):
        assert w1[key] == w2[key], key


def test_side_b_is_side_a_of_the_swapped_problem():
    # Common practice (symmetry): asking about a node of B equals asking about it as a node of A
    # after swapping the two networks and transposing the prior.
    a, b, cand = _random_instance(4)
    swapped = build_candidates(cand.pairs[:, ::-1], cand.prior, b.n, a.n, top_k=None)
    for node in (0, 5, 11):
        t1, _ = QueryEngine(a, b, cand, tol=1e-8).counterparts(node, "b", top=None)
        t2, _ = QueryEngine(b, a, swapped, tol=1e-8).counterparts(node, "a", top=None)
        assert np.array_equal(t1.counterpart, t2.counterpart)
        # the candidates are numbered differently, so the pushes run in another order: equal
        # within the two certified bounds
        assert np.all(np.abs(t1.score - t2.score) <= t1.error_bound + t2.error_bound + 1e-15)
        assert np.array_equal(t1.support, t2.support)


def _relabelled_frames(n=600, seed=1, noise=0.05):
    pair = relabelled_pair(powerlaw_graph(n, seed=seed), n, noise=noise, seed=seed + 1)
    name_a = np.char.add("a", np.arange(n).astype(str))
    name_b = np.char.add("b", np.arange(n).astype(str))
    A = pd.DataFrame({"u": name_a[pair.edges_a[:, 0]], "v": name_a[pair.edges_a[:, 1]]})
    B = pd.DataFrame({"u": name_b[pair.edges_b[:, 0]], "v": name_b[pair.edges_b[:, 1]]})
    P = pd.DataFrame({"a": name_a[pair.prior_pairs[:, 0]], "b": name_b[pair.prior_pairs[:, 1]],
                      "s": pair.prior_scores})
    T = pd.DataFrame({"a": name_a[pair.truth[:, 0]], "b": name_b[pair.truth[:, 1]]})
    return A, B, P, T


def test_python_api_table_and_work():
    # Common practice: the documented columns, ranks 1..top in descending score, JSON-ready.
    A, B, P, T = _relabelled_frames()
    res = aligner.query(A, B, P, nodes=["a3", "a10"], top=4)
    assert list(res.table.columns) == ["query", "side", "rank", "counterpart", "score", "error_bound", "prior",
                                       "support", "fixed"]
    for name, grp in res.table.groupby("query"):
        assert grp["rank"].tolist() == list(range(1, len(grp) + 1)) and len(grp) == 4
        assert grp["score"].is_monotonic_decreasing
        assert (grp["error_bound"] < 1e-3).all()
    assert set(res.work["query"]) == {"a3", "a10"}
    for key in ("pairs_touched", "product_edges_scanned", "pushes", "residual_l1"):
        assert (res.work[key] > 0).all()
    json.dumps(res.as_dict())
    with pytest.raises(aligner.InvalidParameterError, match="not a node of network A"):
        aligner.query(A, B, P, nodes=["b3"])
    with pytest.raises(aligner.InvalidParameterError, match="prior or seeds"):
        aligner.query(A, B, None, nodes=["a3"])


def test_seeds_in_a_query():
    # Common practice: a seeded node answers with its seed partner only; the seeds next to a node
    # are sources of its h; a partner fixed to another node by a seed is left out of the ranking.
    A, B, P, T = _relabelled_frames()
    seeds = T.iloc[::10]
    res = aligner.query(A, B, P, nodes=["a0"], seeds=seeds)
    assert res.table[["counterpart", "fixed"]].values.tolist() == [[T.b[0], True]]
    res = aligner.query(A, B, P, nodes=["a1"], seeds=seeds, top=None)
    nb = set(A.v[A.u == "a1"]) | set(A.u[A.v == "a1"])
    assert res.work.seeds_near.iloc[0] == len(nb & set(seeds.a))
    assert not res.table.fixed.any()
    assert not set(res.table.counterpart) & set(seeds.b)
    plain = aligner.query(A, B, P, nodes=["a1"], top=None)
    assert res.work.excluded_by_seeds.iloc[0] == len(set(plain.table.counterpart) & set(seeds.b))


def _demo():
    from pathlib import Path

    d = Path(__file__).resolve().parents[2] / "demo_pairs" / "firefly"
    return [str(d / "network_a.tsv"), str(d / "network_b.tsv")], str(d / "prior.tsv"), d


def test_cli_query_prints_and_json():
    nets, prior, d = _demo()
    node = pd.read_csv(d / "truth.tsv", sep="\t", comment="#").iloc[0, 0]
    res = runner.invoke(app, ["query", *nets, "--prior", prior, "--node", node, "--top", "3"])
    assert res.exit_code == 0, res.output
    assert f"Counterparts in B of {node}" in res.output and "pairs touched" in res.output
    res = runner.invoke(app, ["query", *nets, "--prior", prior, "--node", node, "--top", "3", "--json"])
    assert res.exit_code == 0, res.output
    got = json.loads(res.output)
    assert got["queries"][0]["query"] == node and len(got["queries"][0]["counterparts"]) == 3
    assert {"pairs_touched", "product_edges_scanned", "seconds"} <= set(got["queries"][0]["work"])


def test_cli_query_errors_exit_2():
    nets, prior, d = _demo()
    res = runner.invoke(app, ["query", *nets, "--prior", prior, "--node", "no-such-protein"])
    assert res.exit_code == 2 and "no-such-protein" in res.output and "--side b" in res.output
    res = runner.invoke(app, ["query", *nets, "--node", "x"])
    assert res.exit_code == 2 and "--seeds" in res.output
    assert "Traceback" not in res.output


def _explicit_solution(a, b, cand, idx, h, alpha, normalization):
    """x of (I - alpha P) x = (1 - alpha) h by scipy.sparse.linalg.spsolve, P from
    networkx.tensor_product restricted to the candidates, with the column scale of the
    normalisation (1/deg_S, or 1/(deg_A deg_B) for "product")."""
    ga = nx.Graph(); ga.add_nodes_from(range(a.n)); ga.add_edges_from(a.edges.tolist())
    gb = nx.Graph(); gb.add_nodes_from(range(b.n)); gb.add_edges_from(b.edges.tolist())
    prs = [tuple(p) for p in cand.pairs.tolist()]
    S = nx.to_scipy_sparse_array(nx.tensor_product(ga, gb).subgraph(prs), nodelist=prs, format="csr")
    if normalization == "restricted":
        deg = np.asarray(S.sum(axis=0), dtype=np.float64).ravel()
    else:
        deg = (a.degree[cand.pairs[:, 0]] * b.degree[cand.pairs[:, 1]]).astype(np.float64)
    P = S @ sp.diags(np.divide(1.0, deg, out=np.zeros_like(deg), where=deg > 0))
    hf = np.zeros(cand.m)
    hf[idx] = h
    return spsolve(sp.eye(cand.m, format="csc") - alpha * P.tocsc(), (1 - alpha) * hf)


def _star(n_leaves, side):
    names = np.array([f"{side}{i:03d}" for i in range(n_leaves + 1)], dtype=object)
    e = np.stack([np.zeros(n_leaves, dtype=np.int64), np.arange(1, n_leaves + 1)], 1)
    return network_from_edges(names, e[:, 0], e[:, 1])


@pytest.mark.parametrize("case", ["star", "k4"])
def test_bound_holds_when_the_threshold_is_never_crossed(case):
    # Reproducers of a wrong certificate (the bound was reported as 0 when the first round
    # queued nothing): two 401-node stars with the identity prior, product normalisation
    # (exact score of the centre pair 0.1002 by spsolve), and K4 against K4 with all 16 pairs,
    # alpha 0.9, tol 0.01 (exact 0.0769 for every pair). Reference: spsolve on the explicit system.
    if case == "star":
        a, b = _star(400, "a"), _star(400, "b")
        pairs = np.stack([np.arange(401), np.arange(401)], 1)
        cand = build_candidates(pairs, np.ones(401), 401, 401, top_k=None)
        alpha, tol, normalization = 0.9, 1e-4, "product"
    else:
        k4 = [(i, j) for i in range(4) for j in range(i + 1, 4)]
        a, b = _net(k4, 4), _net(k4, 4)
        pairs = np.array([(i, j) for i in range(4) for j in range(4)])
        cand = build_candidates(pairs, np.ones(16), 4, 4, top_k=None)
        alpha, tol, normalization = 0.9, 0.01, "restricted"
    eng = QueryEngine(a, b, cand, alpha=alpha, tol=tol, normalization=normalization)
    idx, h = eng.personalization(0)
    want = _explicit_solution(a, b, cand, idx, h, alpha, normalization)
    tab, _ = eng.counterparts(0, top=None)
    exact = want[cand.a_indptr[0] + np.searchsorted(cand.pairs[idx, 1], tab.counterpart.to_numpy())]
    assert exact.max() > 0.07  # the case is not trivial: the exact scores are far from 0
    assert np.all(np.abs(exact - tab.score.to_numpy()) <= tab.error_bound.to_numpy() + 1e-12)
    assert np.all(tab.score.to_numpy() > 0)  # every source of h is pushed at least once


@pytest.mark.parametrize("alpha", [0.5, 0.9, 0.99])
@pytest.mark.parametrize("tol", [0.5, 1e-2, 1e-5])
@pytest.mark.parametrize("normalization", ["restricted", "product"])
def test_certificate_holds_entry_wise_across_alpha_tol_and_normalisation(alpha, tol, normalization):
    # Reference: scipy.sparse.linalg.spsolve on the explicit system; every pair of the candidate
    # set (touched by the query or not) must lie within the certified bound of the query's value.
    a, b, cand = _random_instance(11, n1=14, n2=15, p=0.3, share=0.4)
    eng = QueryEngine(a, b, cand, alpha=alpha, tol=tol, normalization=normalization)
    for node in range(0, a.n, 3):
        if len(eng.candidates_of(node)) == 0:
            continue
        idx, h = eng.personalization(node)
        want = _explicit_solution(a, b, cand, idx, h, alpha, normalization)
        sol = eng.solve(node)
        got = np.zeros(cand.m)
        got[sol.pairs] = sol.x
        bound = np.full(cand.m, sol.residual_l1 / (1 - alpha))  # pairs never touched
        bound[sol.pairs] = sol.error_bound()
        assert np.all(np.abs(got - want) <= bound + 1e-10), (node, np.max(np.abs(got - want) - bound))


def test_a_residual_on_the_threshold_does_not_stop_the_query():
    # Reproducer found by differential fuzzing: K4 against K4, ten prior pairs with scores 1 to 3,
    # alpha 0.5, tol 0.01. The mass of a0's h is 1 - 2^-53 in floating point, and a residual of
    # 0.049999999999999996 gave |r| / eps = 5.0 while eps * 5 < |r|: the end-of-round check queued
    # the pair (|r| > eps * its partial count of 5), the count stopped at once (count >= |r| / eps),
    # and 50 such rounds raised "cap of 100,000,000 pushes" after 3 pushes. Reference:
    # scipy.sparse.linalg.spsolve on the explicit system, which the scores must meet within bounds.
    k4 = [(i, j) for i in range(4) for j in range(i + 1, 4)]
    edges_a = pd.DataFrame([(f"a{i}", f"a{j}") for i, j in k4], columns=["u", "v"])
    edges_b = pd.DataFrame([(f"b{i}", f"b{j}") for i, j in k4], columns=["u", "v"])
    rows = [("a0", "b0", 1.0), ("a0", "b1", 2.0), ("a0", "b2", 3.0), ("a1", "b0", 2.0), ("a1", "b1", 1.0),
            ("a2", "b0", 3.0), ("a2", "b1", 3.0), ("a2", "b2", 1.0), ("a3", "b2", 2.0), ("a3", "b3", 2.0)]
    prior = pd.DataFrame(rows, columns=["node_a", "node_b", "score"])
    alpha = 0.5
    res = aligner.query(edges_a, edges_b, prior, nodes=["a0"], alpha=alpha, tol=0.01, top_k=None, top=None,
                        answer=False)
    a, b = _net(k4, 4), _net(k4, 4)
    pairs = np.array([(int(x[1]), int(y[1])) for x, y, _ in rows])
    cand = build_candidates(pairs, np.array([s for *_, s in rows]), 4, 4, top_k=None)
    own = np.arange(cand.a_indptr[0], cand.a_indptr[1])
    h = cand.prior[own] / cand.prior[own].sum()
    want = _explicit_solution(a, b, cand, own, h, alpha, "restricted")
    exact = dict(zip((f"b{j}" for j in cand.pairs[own, 1]), want[own]))
    tab = res.table
    assert len(tab) == 3
    for cp, score, bound in zip(tab.counterpart, tab.score, tab.error_bound):
        assert score - 1e-12 <= exact[cp] <= score + bound + 1e-12


def test_a_graphs_own_node_objects_come_back_in_the_query_tables():
    # Found by differential testing: with networkx graphs whose nodes are integers, align's tables
    # held the integers (README, formats.md: "a graph's own node objects come back in the result's
    # tables") but a query's held their strings ('103'), and an answer table mixing a node with
    # None turned None into NaN. Reference: the networkx graphs' own node objects.
    g = nx.barabasi_albert_graph(40, 2, seed=1)
    h = nx.relabel_nodes(g, {v: v + 100 for v in g})
    rng = np.random.default_rng(0)
    rows = [(v, v + 100, 1.0) for v in g] + [(v, int(rng.integers(100, 140)), float(rng.random())) for v in g]
    prior = pd.DataFrame(rows, columns=["node_a", "node_b", "score"])
    res = aligner.query(g, h, prior, nodes=[3, 7, 12], top=3)
    assert list(dict.fromkeys(res.table["query"])) == [3, 7, 12]
    assert all(v in h for v in res.table["counterpart"])  # B's integers, not their strings
    for col, graph in (("query", g), ("counterpart", h), ("runner_up", h), ("rival", g)):
        assert all(v is None or v in graph for v in res.answers[col]), col
    assert res.answers["rival"].isna().sum() == sum(v is None for v in res.answers["rival"])
    assert isinstance(aligner.align(g, h, prior).pairs.node_b[0], type(res.table["counterpart"][0]))


def test_push_cap_advice_names_keywords_in_python_and_options_on_the_command_line(tmp_path):
    # docs/errors.md ("In Python"): a ConvergenceError's advice names the keywords from Python
    # and the options from the command line. The query's cap message named "--tol" from Python
    # and left out the cap itself (max_pushes). Common practice: the message says what to change.
    a = tmp_path / "a.tsv"
    b = tmp_path / "b.tsv"
    p = tmp_path / "p.tsv"
    a.write_text("node_a\tnode_b\n" + "\n".join(f"a{u}\ta{v}" for u, v in ((0, 1), (1, 2), (2, 3), (3, 0), (0, 2))))
    b.write_text("node_a\tnode_b\n" + "\n".join(f"b{u}\tb{v}" for u, v in ((0, 1), (1, 2), (2, 3), (3, 0), (0, 2))))
    p.write_text("node_a\tnode_b\tscore\n" + "\n".join(f"a{i}\tb{j}\t{1.0 if i == j else 0.3}"
                                                        for i in range(4) for j in range(4)))
    with pytest.raises(aligner.ConvergenceError) as err:
        aligner.query(a, b, p, nodes=["a0"], max_pushes=1)
    text = str(err.value)
    assert "raise max_pushes, raise tol or lower alpha" in text and "--" not in text
    res = CliRunner().invoke(app, ["query", str(a), str(b), "-p", str(p), "-n", "a0", "--max-pushes", "1"])
    assert res.exit_code != 0
    assert "raise --max-pushes, raise --tol or lower --alpha" in res.output


def test_caps_past_the_largest_int64_are_never_reached_rather_than_a_traceback():
    # Checked against docs/commands.md (--max-pushes "whole number >= 0", --max-region-pairs "whole
    # number >= 1", no upper bound) and the promise of docs/errors.md (no traceback): a cap no push
    # count can reach answers as the default cap does. --max-pushes 10**23 was an OverflowError and
    # --max-region-pairs 10**23 a numba int64 overflow (noticed by differential testing).
    A, B, P, T = _relabelled_frames()
    base = aligner.query(A, B, P, nodes=["a3"], top=4)
    for kw in ("max_pushes", "max_region_pairs"):
        for cap in (10**23, 2**63 - 1):
            res = aligner.query(A, B, P, nodes=["a3"], top=4, **{kw: cap})
            pd.testing.assert_frame_equal(res.table, base.table)
            assert res.answers["counterpart"].tolist() == base.answers["counterpart"].tolist()
    import os
    import tempfile
    with tempfile.TemporaryDirectory() as d:  # the command line takes the same values
        paths = []
        for name, df in (("a", A), ("b", B), ("p", P)):
            paths.append(os.path.join(d, f"{name}.tsv"))
            df.to_csv(paths[-1], sep="\t", index=False)
        for flag in ("--max-pushes", "--max-region-pairs"):
            res = runner.invoke(app, ["query", paths[0], paths[1], "-p", paths[2], "-n", "a3", flag, str(10**23)])
            assert res.exit_code == 0, res.output
            assert "Traceback" not in res.output


def test_a_tolerance_of_one_or_more_is_refused_naming_the_option(tmp_path):
    # Checked against docs/commands.md (--tol of query and align: "number in (0, 1)") and docs/errors.md (one
    # line, exit 2, no numpy warning): the query's h has mass 1 and the alignment's h sums to 1, so the residual
    # starts below 1 and a tol of 1 or more asks for no work; --tol 1e308 printed a numpy overflow
    # RuntimeWarning (query: eps times the degree in the error bound; align: the push thresholds) and went on
    # (noticed by differential testing). Values below 1 still run.
    import warnings

    A, B, P, _ = _relabelled_frames()
    for tol in (1e308, 1.0):
        with pytest.raises(aligner.InvalidParameterError, match=r"^tol must be a number in \(0, 1\); got ") as err:
            aligner.query(A, B, P, nodes=["a3"], tol=tol)
        assert err.value.param == "tol"
        with pytest.raises(aligner.InvalidParameterError, match=r"^tol must be a number in \(0, 1\)"):
            aligner.align(A, B, P, tol=tol)
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        assert len(aligner.query(A, B, P, nodes=["a3"], top=2, tol=0.99).table) == 2
    folder = tmp_path / "in"
    folder.mkdir()
    paths = []
    for name, frame in (("a", A), ("b", B), ("p", P)):
        frame.to_csv(folder / f"{name}.tsv", sep="\t", index=False, header=False)
        paths.append(str(folder / f"{name}.tsv"))
    for cmd in (["query", *paths[:2], "-p", paths[2], "-n", "a3"],
                ["align", *paths[:2], "-p", paths[2], "-o", str(tmp_path / "out")]):
        res = CliRunner().invoke(app, [*cmd, "--tol", "1e308"])
        assert res.exit_code == 2, res.output
        assert "error: --tol must be a number in (0, 1); got 1e+308" in res.output
        assert "Warning" not in res.output and "Traceback" not in res.output
    assert not (tmp_path / "out").exists()


def test_a_weighted_network_file_is_warned_about(tmp_path):
    # Found by a user trial: a query read a weighted (three-column) edge list unweighted without a
    # word. Queries read networks undirected and unweighted (docs/method.md); common practice:
    # say so where input is not used.
    from aligner.errors import AlignerWarning

    a, b, p = tmp_path / "a.tsv", tmp_path / "b.tsv", tmp_path / "p.tsv"
    a.write_text("x0\tx1\t3\nx1\tx2\t1\nx2\tx0\t2\n")
    b.write_text("y0\ty1\ny1\ty2\ny2\ty0\n")
    p.write_text("x0\ty0\t1\nx1\ty1\t1\nx2\ty2\t1\n")
    with pytest.warns(AlignerWarning, match=r"a\.tsv: counterpart queries read networks undirected and unweighted; "
                                            r"its weight column is not used"):
        q = aligner.query(a, b, p, nodes=["x0"])
    assert q.answers.counterpart.tolist() == ["y0"]
