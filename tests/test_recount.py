"""The written output files recounted by an independent reference (networkx).

An alignment is run from input files, its three output files are written, and every figure in
them is recounted from the input files alone, read with the csv module and counted with networkx:
the map in alignment.tsv, the per-pair conserved counts, the edge list in conserved_edges.tsv and
the scores in summary.json. ``score`` on the written alignment is recounted the same way. (Comparing
``score`` with ``align`` cannot catch a wrong count: both call the same scoring function.)

Definitions: edge correctness EC = conserved / min(|E_A|, |E_B|) (Kuchaiev et al. 2010,
doi:10.1098/rsif.2010.0063); ICS = conserved / |E(B[f(V_A)])| (Patro & Kingsford 2012,
doi:10.1093/bioinformatics/bts592); S3 = conserved / (|E_A| + |E(B[f(V_A)])| - conserved)
(Saraph & Milenkovic 2014, doi:10.1093/bioinformatics/btu409); the largest connected (weakly, for
arcs) conserved subgraph; node correctness over the nodes of the truth table.
"""

import csv
import json

import networkx as nx
import numpy as np
import pytest

import aligner
from aligner.io.outputs import write_outputs

# nodes left without edges after the edge moves: their prior and truth rows are skipped, with a warning
pytestmark = pytest.mark.filterwarnings("ignore::aligner.errors.AlignerWarning")


def _write(path, rows):
    with open(path, "w", newline="") as fh:
        csv.writer(fh, delimiter="\t", lineterminator="\n").writerows(rows)
    return path


def _rows(path):
    with open(path, newline="") as fh:
        return list(csv.DictReader(fh, delimiter="\t"))


def _instance(tmp_path, *, directed, a_larger, seed=0, n=70):
    """A relabelled copy with edges moved, so that |E_A| > |E_B| (a_larger) or the other way round;
    a prior naming the true partner and decoys; a truth table for part of the nodes."""
    rng = np.random.default_rng(seed)
    g = nx.gnp_random_graph(n, 0.08, seed=seed, directed=directed)
    perm = rng.permutation(n)
    ea = [(f"a{u}", f"a{v}") for u, v in g.edges()]
    eb = [(f"b{perm[u]}", f"b{perm[v]}") for u, v in g.edges()]
    drop = set(rng.choice(len(eb), len(eb) // 5, replace=False).tolist())
    if a_larger:
        eb = [e for k, e in enumerate(eb) if k not in drop]  # B lost a fifth of the edges
    else:
        ea = [e for k, e in enumerate(ea) if k not in drop]
    prior = []
    for i in range(n):
        prior.append((f"a{i}", f"b{perm[i]}", f"{rng.uniform(0.4, 1.0):.6f}"))
        for j in rng.choice(n, 4, replace=False):
            if j != perm[i]:
                prior.append((f"a{i}", f"b{j}", f"{rng.uniform(0.2, 0.9):.6f}"))
    truth = [(f"a{i}", f"b{perm[i]}") for i in range(0, n, 2)]
    files = {name: _write(tmp_path / f"{name}.tsv", rows)
             for name, rows in (("a", ea), ("b", eb), ("prior", prior), ("truth", truth))}
    return files


def _graph(path, directed):
    g = nx.DiGraph() if directed else nx.Graph()
    with open(path, newline="") as fh:
        g.add_edges_from((r[0], r[1]) for r in csv.reader(fh, delimiter="\t"))
    return g


def _reference(files, f, directed):
    """Every score of the map f (dict node of A -> node of B), from the input files, with networkx."""
    ga, gb = _graph(files["a"], directed), _graph(files["b"], directed)
    conserved = [(u, v) for u, v in ga.edges() if u in f and v in f and gb.has_edge(f[u], f[v])]
    c = len(conserved)
    induced = gb.subgraph([v for v in f.values() if v in gb]).number_of_edges()
    sub = (nx.DiGraph if directed else nx.Graph)(conserved)
    comps = list(nx.weakly_connected_components(sub) if directed else nx.connected_components(sub))
    top = max((len(cc) for cc in comps), default=0)
    lccs = {(len(cc), sub.subgraph(cc).number_of_edges()) for cc in comps if len(cc) == top} or {(0, 0)}
    with open(files["truth"], newline="") as fh:
        # rows naming a node that is in no edge are skipped (with a warning), as documented
        truth = [tuple(r) for r in csv.reader(fh, delimiter="\t") if r[0] in ga and r[1] in gb]
    ea, eb = ga.number_of_edges(), gb.number_of_edges()
    return dict(conserved=conserved, c=c, ec=c / min(ea, eb), ics=c / induced if induced else 0.0,
                s3=c / (ea + induced - c), lccs=lccs, edges_a=ea, edges_b=eb, induced=induced,
                nc=sum(f.get(a) == b for a, b in truth) / len(truth), ga=ga, gb=gb)


def _check_scores(got: dict, ref: dict):
    assert got["conserved_edges"] == ref["c"]
    assert (got["edges_a"], got["edges_b"]) == (ref["edges_a"], ref["edges_b"])
    assert got["induced_edges_b"] == ref["induced"]
    for key in ("ec", "ics", "s3", "nc"):
        assert got[key] == pytest.approx(ref[key], rel=1e-12, abs=0), key
    assert (got["lccs_nodes"], got["lccs_edges"]) in ref["lccs"]


def _edge_key(u, v, directed):
    return (u, v) if directed else frozenset((u, v))


@pytest.mark.parametrize("directed", [False, True])
@pytest.mark.parametrize("a_larger", [True, False])
def test_written_outputs_recounted_with_networkx(tmp_path, directed, a_larger):
    files = _instance(tmp_path, directed=directed, a_larger=a_larger, seed=3 + 2 * directed + a_larger)
    res = aligner.align(files["a"], files["b"], files["prior"], truth=files["truth"], directed=directed)
    out = tmp_path / "out"
    write_outputs(out, res)
    table = _rows(out / "alignment.tsv")
    f = {r["node_a"]: r["node_b"] for r in table}
    assert len(f) == len(table) == len(set(f.values()))  # one-to-one
    with open(files["prior"], newline="") as fh:
        prior = {(r[0], r[1]) for r in csv.reader(fh, delimiter="\t")}
    assert set(f.items()) <= prior  # only candidate pairs, which come from the prior
    ref = _reference(files, f, directed)
    assert (ref["edges_a"] > ref["edges_b"]) == a_larger  # the size order this case is about
    _check_scores(json.loads((out / "summary.json").read_text())["scores"], ref)
    # conserved_edges.tsv: the same edges, each carried onto the edge of B it names
    listed = _rows(out / "conserved_edges.tsv")
    assert len(listed) == ref["c"]
    assert {_edge_key(r["node_a1"], r["node_a2"], directed) for r in listed} == \
        {_edge_key(u, v, directed) for u, v in ref["conserved"]}
    for r in listed:
        assert (f[r["node_a1"]], f[r["node_a2"]]) == (r["node_b1"], r["node_b2"])
    # the per-pair conserved count: conserved edges at that node of A (in and out for arcs)
    at = {}
    for u, v in ref["conserved"]:
        at[u] = at.get(u, 0) + 1
        at[v] = at.get(v, 0) + 1
    assert {r["node_a"]: int(r["conserved"]) for r in table} == {a: at.get(a, 0) for a in f}


@pytest.mark.parametrize("directed", [False, True])
def test_score_of_a_written_alignment_recounted_with_networkx(tmp_path, directed):
    files = _instance(tmp_path, directed=directed, a_larger=True, seed=11)
    res = aligner.align(files["a"], files["b"], files["prior"], directed=directed, refine=False)
    out = tmp_path / "out"
    write_outputs(out, res)
    # a different map than align's: drop a third of the pairs and swap two partners
    table = _rows(out / "alignment.tsv")
    pairs = [(r["node_a"], r["node_b"]) for k, r in enumerate(table) if k % 3]
    pairs[0], pairs[1] = (pairs[0][0], pairs[1][1]), (pairs[1][0], pairs[0][1])
    path = _write(tmp_path / "mine.tsv", [("node_a", "node_b"), *pairs])
    sc, cons = aligner.score(files["a"], files["b"], path, truth=files["truth"], directed=directed)
    ref = _reference(files, dict(pairs), directed)
    _check_scores(sc.as_dict(), ref)
    assert {_edge_key(a1, a2, directed) for a1, a2 in zip(cons.node_a1, cons.node_a2)} == \
        {_edge_key(u, v, directed) for u, v in ref["conserved"]}


def _undirected(g):
    return g.to_undirected() if g.is_directed() else g


@pytest.mark.parametrize("directed", [False, True])
def test_transferred_edges_recounted_with_networkx(tmp_path, directed):
    # Reference: networkx on the input files and the written alignment.tsv: the edges of A mapped
    # through the matching that are not edges of B (A->B), and the reverse (B->A); arcs keep their
    # direction. Triangles and common neighbours on the undirected views, the support from the
    # confidences written in alignment.tsv (definition in docs/method.md).
    files = _instance(tmp_path, directed=directed, a_larger=True, seed=21 + directed)
    b_rows = _rows_plain(files["b"])  # B lost a fifth of A's edges; give it some A lacks too
    rng = np.random.default_rng(5)
    extra = [(f"b{u}", f"b{v}") for u, v in rng.integers(0, 70, (12, 2)) if u != v]
    _write(files["b"], b_rows + extra)
    res = aligner.align(files["a"], files["b"], files["prior"], directed=directed)
    out = tmp_path / "out"
    write_outputs(out, res)
    table = _rows(out / "alignment.tsv")
    f = {r["node_a"]: r["node_b"] for r in table}
    g = {b: a for a, b in f.items()}
    conf = {r["node_a"]: float(r["confidence"]) for r in table}
    ga, gb = _graph(files["a"], directed), _graph(files["b"], directed)
    want_ab = {(u, v) for u, v in ga.edges() if u in f and v in f and not gb.has_edge(f[u], f[v])}
    want_ba = {(u, v) for u, v in gb.edges() if u in g and v in g and not ga.has_edge(g[u], g[v])}
    assert want_ab and want_ba  # the case is about something
    rows = _rows(out / "transferred_edges.tsv")
    ab = [r for r in rows if r["direction"] == "A->B"]
    ba = [r for r in rows if r["direction"] == "B->A"]
    assert len(ab) + len(ba) == len(rows)
    assert {_edge_key(r["node_a1"], r["node_a2"], directed) for r in ab} == \
        {_edge_key(u, v, directed) for u, v in want_ab}
    assert {_edge_key(r["node_b1"], r["node_b2"], directed) for r in ba} == \
        {_edge_key(u, v, directed) for u, v in want_ba}
    assert len(ab) == len(want_ab) and len(ba) == len(want_ba)  # each edge once
    summary = json.loads((out / "summary.json").read_text())
    assert summary["transferred_edges"] == {"a_to_b": len(want_ab), "b_to_a": len(want_ba)}
    ua, ub = _undirected(ga), _undirected(gb)
    for r in rows:
        a1, a2, b1, b2 = r["node_a1"], r["node_a2"], r["node_b1"], r["node_b2"]
        assert (f[a1], f[a2]) == (b1, b2)
        tri = sum(1 for w in nx.common_neighbors(ua, a1, a2) if w in f and ub.has_edge(b1, f[w])
                  and ub.has_edge(b2, f[w]))
        assert int(r["triangles"]) == tri
        side, u, v, other = (ub, b1, b2, g) if r["direction"] == "A->B" else (ua, a1, a2, f)
        assert int(r["common_neighbours"]) == sum(1 for w in nx.common_neighbors(side, u, v) if w in other)
        assert (float(r["confidence_1"]), float(r["confidence_2"])) == (conf[a1], conf[a2])
        assert float(r["support"]) == pytest.approx(conf[a1] * conf[a2] * (1 + tri), rel=1e-9)
    # best first, ties by more conserved triangles, then the smaller diffusion score, then direction
    # and names (code-point order); checked on the exact values of the Python table, which the file
    # holds row for row
    df = res.transferred_edges()
    assert list(df["node_a1"]) == [r["node_a1"] for r in rows] and list(df["direction"]) == [r["direction"]
                                                                                           for r in rows]
    key = [(-s, -t, -min(x1, x2), d, a1, a2, b1, b2) for s, t, x1, x2, d, a1, a2, b1, b2 in
           zip(df.support, df.triangles, df.score_1, df.score_2, df.direction, df.node_a1, df.node_a2,
               df.node_b1, df.node_b2)]
    assert key == sorted(key)


def test_transferred_edges_carry_their_weight(tmp_path):
    # Reference: the weight column of the input file, edge by edge (common practice: the weight a
    # carried edge has in the network it comes from)
    rng = np.random.default_rng(8)
    files = _instance(tmp_path, directed=False, a_larger=True, seed=31)
    weights = {}
    for side in ("a", "b"):
        lines = []
        for r in _rows_plain(files[side]):
            w = float(rng.integers(1, 9))
            weights[(side, frozenset(r))] = w
            lines.append((*r, w))
        _write(files[side], lines)
    res = aligner.align(files["a"], files["b"], files["prior"], weighted=True)
    df = res.transferred_edges()
    assert len(df) and "weight" in df
    for r in df.itertuples(index=False):
        side, ends = ("a", (r.node_a1, r.node_a2)) if r.direction == "A->B" else ("b", (r.node_b1, r.node_b2))
        assert r.weight == weights[(side, frozenset(ends))]


def _rows_plain(path):
    with open(path, newline="") as fh:
        return [tuple(r) for r in csv.reader(fh, delimiter="\t")]
