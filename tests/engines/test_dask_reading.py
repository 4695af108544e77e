"""Reading and the candidates on the cluster (``aligner.engines.dask.reading``).

References:

- the numbering of nodes: Python's ``sorted`` of the identifiers (code point order; the
  single-machine reader documents the same order);
- the candidate rule: pandas, straight from the files (``read_csv``, the best row of each
  repeated pair, ``groupby(...).head(k)`` after sorting by score, ties to the smaller index of
  the other node: the rule documented in ``aligner.core.candidates.build_candidates``);
- edges and weights: a networkx ``Graph``/``DiGraph`` built from the same rows (repeated edges
  summing their weights);
- and the single-machine path (``read_inputs`` + ``find_candidates``): the same arrays, counts,
  warnings and error messages.
"""

import math
import os
import warnings

import networkx as nx
import numpy as np
import pandas as pd
import pytest

pytest.importorskip("distributed")

from aligner.config import AlignConfig  # noqa: E402
from aligner.datasets.instances import noisy_relabelled, write_instance  # noqa: E402
from aligner.engines.dask import reading  # noqa: E402
from aligner.errors import InputFormatError, NoCandidatesError  # noqa: E402
from aligner.pipeline import find_candidates, read_inputs  # noqa: E402


def _on_cluster(client, a, b, p, cfg, parts):
    got = reading.read_on_cluster(client, str(a), str(b), str(p), cfg, parts=parts)
    table, best, cand = reading.select_on_cluster(client, got, cfg, parts=parts)
    return got, table, best, cand


def _single(a, b, p, cfg):
    inputs = read_inputs(str(a), str(b), str(p), config=cfg)
    return inputs, find_candidates(inputs, cfg).candidates


def _write_parts(frame: pd.DataFrame, folder, stem: str, parts: int, header: bool) -> str:
    """``frame`` as ``parts`` files and one empty file, each with the header line when asked."""
    folder.mkdir(parents=True, exist_ok=True)
    cuts = np.linspace(0, len(frame), parts, dtype=int)
    pieces = [frame.iloc[lo:hi] for lo, hi in zip(cuts[:-1], cuts[1:])] + [frame.iloc[:0]]
    for i, piece in enumerate(pieces):
        piece.to_csv(folder / f"{stem}-{i:02d}.tsv", sep="\t", index=False, header=header and len(piece) > 0)
    return str(folder / f"{stem}-*.tsv")


def _expected_candidates(prior: pd.DataFrame, names_a, names_b, k, min_score, evalue=False):
    """The candidate rule by pandas, from the raw prior rows (see the module docstring)."""
    pa_ = {n: i for i, n in enumerate(names_a)}
    pb_ = {n: i for i, n in enumerate(names_b)}
    df = pd.DataFrame({"ia": prior.iloc[:, 0].map(pa_), "ib": prior.iloc[:, 1].map(pb_),
                       "v": prior.iloc[:, 2].astype(float)}).dropna()
    if evalue:  # -log10(E), E <= 1 kept (the score kind's documented transform); no zero E-values here
        df = df[df["v"] <= 1.0]
        df["s"] = -np.log10(df["v"])
    else:
        df["s"] = df["v"]
    df = df.astype({"ia": int, "ib": int})
    df = df.sort_values("s", ascending=False).drop_duplicates(["ia", "ib"])
    df = df[df["s"] >= min_score]
    top_a = df.sort_values(["ia", "s", "ib"], ascending=[True, False, True]).groupby("ia").head(k)
    top_b = df.sort_values(["ib", "s", "ia"], ascending=[True, False, True]).groupby("ib").head(k)
    both = pd.concat([top_a, top_b]).drop_duplicates(["ia", "ib"]).sort_values(["ia", "ib"])
    return both[["ia", "ib"]].to_numpy(), both["s"].to_numpy()


@pytest.mark.parametrize("parts, broadcast", [(1, True), (3, True), (3, False)])
def test_generated_pair_as_on_one_machine(client, tmp_path, monkeypatch, parts, broadcast):
    """A generated pair read from single files: networks, candidates and counts of one machine,
    with the numbering sent whole to every partition or shuffled (both kinds of merge)."""
    monkeypatch.setattr(reading, "BROADCAST_NAMES", 10**9 if broadcast else 0)
    folder = write_instance(noisy_relabelled(1500, seed=5, decoy_mode="near"), tmp_path)
    a, b, p = folder / "network_a.tsv", folder / "network_b.tsv", folder / "prior.tsv"
    cfg = AlignConfig(top_k=4)
    got, table, best, cand = _on_cluster(client, a, b, p, cfg, parts)
    inputs, ref = _single(a, b, p, cfg)
    for mine, theirs in ((got.network_a, inputs.network_a), (got.network_b, inputs.network_b)):
        assert mine.names.tolist() == theirs.names.tolist()
        assert np.array_equal(mine.edges, theirs.edges) and np.array_equal(mine.indptr, theirs.indptr)
        assert np.array_equal(mine.indices, theirs.indices)
    assert np.array_equal(cand.pairs, ref.pairs) and np.array_equal(cand.prior, ref.prior)
    assert np.array_equal(cand.a_indptr, ref.a_indptr)
    assert (table.n_rows, table.n_pairs, table.n_unknown, table.n_duplicates) == \
        (inputs.prior.n_rows, inputs.prior.n_pairs, inputs.prior.n_unknown, inputs.prior.n_duplicates)
    assert best == inputs.prior.scores.max()
    # outside reference: pandas' top-k from the file itself, and sorted() for the numbering
    raw = pd.read_csv(p, sep="\t", dtype={0: str, 1: str})  # write_instance gives each file a header line
    ea = pd.read_csv(a, sep="\t", dtype=str)
    assert got.network_a.names.tolist() == sorted(set(ea.iloc[:, 0]) | set(ea.iloc[:, 1]))
    pairs, scores = _expected_candidates(raw, got.network_a.names, got.network_b.names, 4, 0.0)
    assert np.array_equal(cand.pairs, pairs) and np.allclose(cand.prior, scores)


def test_one_numbering_on_the_client_and_one_on_the_cluster(client, tmp_path, monkeypatch):
    """Network A numbered by the distributed sort, B on the client: the prior's rows then take
    their ids by shuffle joins with both numberings."""
    folder = write_instance(noisy_relabelled(700, seed=6, decoy_mode="near"), tmp_path)
    a, b, p = folder / "network_a.tsv", folder / "network_b.tsv", folder / "prior.tsv"
    real, calls = reading._names_of, []

    def names_of(client, parts):
        calls.append(len(calls))
        if len(calls) == 1:
            return None  # network A: too many identifiers, say
        monkeypatch.setattr(reading, "BROADCAST_NAMES", 10**9)
        try:
            return real(client, parts)
        finally:
            monkeypatch.setattr(reading, "BROADCAST_NAMES", 0)

    monkeypatch.setattr(reading, "_names_of", names_of)
    monkeypatch.setattr(reading, "BROADCAST_NAMES", 0)
    got, table, best, cand = _on_cluster(client, a, b, p, AlignConfig(top_k=3), parts=2)
    assert got.ids_a is not None and got.ids_b is None
    inputs, ref = _single(a, b, p, AlignConfig(top_k=3))
    assert got.network_b.names.tolist() == inputs.network_b.names.tolist()
    assert np.array_equal(got.network_a.edges, inputs.network_a.edges)
    assert np.array_equal(cand.pairs, ref.pairs) and np.array_equal(cand.prior, ref.prior)


def _tricky(tmp_path, rng):
    """Edge cases in part files: unicode names, repeated and weighted edges, arcs both ways,
    prior rows naming unknown nodes, repeated pairs, E-values above 1 and tied scores."""
    names_a = ["ärger", "Zebra", "zebra", "α-1", "node 10", "node2", "ñu", "b", "B", "日本"] + \
        [f"a{i:03d}" for i in range(60)]
    names_b = ["x", "X", "ÿ", "β"] + [f"b{i:03d}" for i in range(66)]
    ea = pd.DataFrame({"u": rng.choice(names_a, 400), "v": rng.choice(names_a, 400),
                       "w": rng.integers(1, 5, 400) / 4})
    ea = ea[ea["u"] != ea["v"]]
    eb = pd.DataFrame({"u": rng.choice(names_b, 400), "v": rng.choice(names_b, 400),
                       "w": rng.integers(1, 5, 400) / 4})
    eb = eb[eb["u"] != eb["v"]]
    pr = pd.DataFrame({"a": rng.choice(names_a + ["ghost-a"], 1500), "b": rng.choice(names_b + ["ghost-b"], 1500),
                       "e": 10.0 ** -rng.integers(-1, 6, 1500)})  # E-values 10 .. 1e-5: many ties, some > 1
    a = _write_parts(ea, tmp_path / "a", "edges", 4, header=True)
    b = _write_parts(eb, tmp_path / "b", "edges", 3, header=False)
    p = _write_parts(pr, tmp_path / "p", "prior", 5, header=True)
    return a, b, p, ea, eb, pr


@pytest.mark.parametrize("directed", [False, True])
def test_part_files_with_every_kind_of_row(client, tmp_path, directed):
    a, b, p, ea, eb, pr = _tricky(tmp_path, np.random.default_rng(7))
    cfg = AlignConfig(top_k=3, score_kind="evalue", min_score=1.5, weighted=True, directed=directed)
    with warnings.catch_warnings(record=True) as mine_w:
        warnings.simplefilter("always")
        got, table, best, cand = _on_cluster(client, a, b, p, cfg, parts=3)
        from aligner.pipeline import finish_inputs

        finish_inputs(got.network_a, got.network_b, table, config=cfg)
    with warnings.catch_warnings(record=True) as ref_w:
        warnings.simplefilter("always")
        inputs, ref = _single(a, b, p, cfg)
    assert sorted(str(w.message) for w in mine_w) == sorted(str(w.message) for w in ref_w)
    assert any("E-value above 1" in str(w.message) for w in ref_w)
    assert any("name a node missing" in str(w.message) for w in ref_w)
    assert np.array_equal(cand.pairs, ref.pairs) and np.array_equal(cand.prior, ref.prior)
    assert table.unknown_examples == inputs.prior.unknown_examples and table.n_dropped_kind > 0
    # outside references: sorted() numbering, pandas' candidates, networkx's summed weights
    assert got.network_a.names.tolist() == sorted(set(ea["u"]) | set(ea["v"]))
    assert got.network_b.names.tolist() == sorted(set(eb["u"]) | set(eb["v"]))
    pairs, scores = _expected_candidates(pr, got.network_a.names, got.network_b.names, 3, 1.5, evalue=True)
    assert np.array_equal(cand.pairs, pairs) and np.allclose(cand.prior, scores)
    net = got.network_a
    g = nx.DiGraph() if directed else nx.Graph()
    for u, v, w in ea.itertuples(index=False):
        if g.has_edge(u, v):
            g[u][v]["weight"] += w
        else:
            g.add_edge(u, v, weight=w)
    if directed:
        mine = {(net.names[u], net.names[v]): w for (u, v), w in zip(net.arcs, net.arc_weights)}
    else:
        mine = {frozenset((net.names[u], net.names[v])): w for (u, v), w in zip(net.edges, net.weights)}
    theirs = {((u, v) if directed else frozenset((u, v))): d["weight"] for u, v, d in g.edges(data=True)}
    assert mine.keys() == theirs.keys()
    assert all(math.isclose(mine[key], theirs[key]) for key in mine)
    assert np.array_equal(net.weights, inputs.network_a.weights)  # bit for bit: rows summed in file order


def _spoil(path, row: int, value: str) -> None:
    """Replace the last field of line ``row`` (0-based) of the file ``path`` with ``value``."""
    lines = path.read_text().splitlines()
    lines[row] = lines[row].rsplit("\t", 1)[0] + "\t" + value
    path.write_text("\n".join(lines) + "\n")


def _same_refusal(client, a, b, p, cfg, match=None) -> str:
    """The error the cluster's reading gives, which must be the single machine's, as text."""
    with pytest.raises(InputFormatError, match=match) as mine:
        _on_cluster(client, a, b, p, cfg, parts=2)
    with pytest.raises(InputFormatError) as theirs:
        _single(a, b, p, cfg)
    assert str(mine.value) == str(theirs.value)
    return str(mine.value)


def test_a_bad_row_is_named_as_on_one_machine(client, tmp_path):
    a, b, p, *_ = _tricky(tmp_path, np.random.default_rng(8))
    _spoil(tmp_path / "p" / "prior-02.tsv", 5, "lots")
    got = _same_refusal(client, a, b, p, AlignConfig(score_kind="evalue"))
    assert "prior-02.tsv" in got and "line 6" in got


def test_parts_with_other_columns_and_empty_patterns_are_refused(client, tmp_path):
    a, b, p, *_ = _tricky(tmp_path, np.random.default_rng(9))
    (tmp_path / "a" / "edges-09.tsv").write_text("u\tv\nn1\tn2\n")  # two columns where the others have three
    cfg = AlignConfig()
    _same_refusal(client, a, b, p, cfg, match="columns where")
    empty = tmp_path / "e"
    empty.mkdir()
    for i in range(2):
        (empty / f"x-{i}.tsv").write_text("# nothing yet\n")
    with pytest.raises(InputFormatError, match="every one of the 2 files"):
        _on_cluster(client, str(empty / "x-*.tsv"), b, p, cfg, parts=2)


def test_errors_of_several_parts_and_summed_weights_are_refused_as_on_one_machine(client, tmp_path):
    # Common practice (the engine's promise, docs/engine.md: bad inputs get the same exit status
    # and message): one machine reads every file's table, then checks that the files' columns
    # agree, then reads the values. Found by differential testing of the engines: a bad weight
    # in one part and a part of other columns after it gave two different messages; a repeated
    # edge whose weights sum past the largest float was refused on one machine only.
    a, b, p, *_ = _tricky(tmp_path, np.random.default_rng(10))
    bad = tmp_path / "a" / "edges-01.tsv"
    _spoil(bad, 3, "heavy")
    (tmp_path / "a" / "edges-02.tsv").write_text("u\tv\nn1\tn2\n")  # two columns where the others have three
    cfg = AlignConfig(weighted=True)
    assert "edges-02.tsv: has 2 columns" in _same_refusal(client, a, b, p, cfg)
    (tmp_path / "a" / "edges-02.tsv").write_text("u\tv\tw\nn1\tn2\t1\n")  # the columns put right:
    assert "'heavy'" in _same_refusal(client, a, b, p, cfg)  # the bad weight is the first error
    bad.write_text("u\tv\tw\nn1\tn2\t1e308\nn2\tn1\t1e308\n")
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)  # and no numpy warning on the way
        _same_refusal(client, a, b, p, cfg, match="several rows whose weights sum")


def test_errors_name_relative_paths_as_given(client, tmp_path, monkeypatch):
    """Files given by relative paths (a pattern, a single file): the message names them as the
    single-machine reader does (the reference), not by the absolute paths the workers are sent
    (found by differential testing)."""
    a, b, p, *_ = _tricky(tmp_path, np.random.default_rng(8))
    monkeypatch.chdir(tmp_path)
    a, b, p = (str(os.path.relpath(x, tmp_path)) for x in (a, b, p))
    bad = tmp_path / "a" / "edges-02.tsv"  # the third part of A: a row of one field
    bad.write_text(bad.read_text() + "lonely\n")
    (tmp_path / "one.tsv").write_text("")
    cfg = AlignConfig()
    for args in ((a, b, p), ("a/edges-00.tsv", b, "one.tsv")):
        with pytest.raises(InputFormatError) as mine:
            _on_cluster(client, *args, cfg, parts=2)
        with pytest.raises(InputFormatError) as theirs:
            _single(*args, cfg)
        assert str(mine.value) == str(theirs.value)
        assert mine.value.path == theirs.value.path and not os.path.isabs(mine.value.path)
    (tmp_path / "a" / "edges-09.tsv").write_text("u\tv\nn1\tn2\n")  # two columns where the others have three
    bad.write_text("\n".join(bad.read_text().splitlines()[:-1]) + "\n")
    with pytest.raises(InputFormatError, match="columns where") as mine:
        _on_cluster(client, a, b, p, cfg, parts=2)
    with pytest.raises(InputFormatError) as theirs:
        _single(a, b, p, cfg)
    assert str(mine.value) == str(theirs.value)


def test_reader_warnings_reach_the_caller_as_on_one_machine(client, tmp_path, monkeypatch):
    """A reader's warning issued on a worker (a first row that looks like a header, in a part of A
    and in B): the caller gets the single-machine path's warnings (the reference), in the same
    order, naming the files as given (found by differential testing: they stayed on the workers)."""
    monkeypatch.chdir(tmp_path)
    (tmp_path / "a").mkdir()
    (tmp_path / "a" / "e-0.tsv").write_text("x1\tx2\nx2\tx3\nx3\tx1\n")
    (tmp_path / "a" / "e-1.tsv").write_text("colA\tcolB\nx1\tx4\nx4\tx2\nx3\tx4\n")
    (tmp_path / "b.tsv").write_text("ua\tub\ny1\ty2\ny2\ty3\ny3\ty1\n")
    (tmp_path / "p.tsv").write_text("".join(f"x{i}\ty{i}\t0.5\n" for i in range(1, 4)))
    cfg = AlignConfig()

    def caught(fn):
        with warnings.catch_warnings(record=True) as seen:
            warnings.simplefilter("always")
            fn("a/e-*.tsv", "b.tsv", "p.tsv", cfg)
        return [str(w.message) for w in seen]

    theirs = caught(_single)
    mine = caught(lambda *args: _on_cluster(client, *args, parts=2))
    assert len(theirs) == 2 and theirs[0].startswith("a/e-1.tsv, line 1") and theirs[1].startswith("b.tsv, line 1")
    assert mine == theirs


def test_no_pair_above_the_minimum_score(client, tmp_path):
    folder = write_instance(noisy_relabelled(200, seed=2), tmp_path)
    cfg = AlignConfig(min_score=1e9)
    from aligner.engines.dask.engine import align

    with pytest.raises(NoCandidatesError, match="no prior pair scores at least the minimum score") as mine:
        align(str(folder / "network_a.tsv"), str(folder / "network_b.tsv"), str(folder / "prior.tsv"),
              client=client, config=cfg)
    with pytest.raises(NoCandidatesError) as theirs:
        _single(folder / "network_a.tsv", folder / "network_b.tsv", folder / "prior.tsv", cfg)
    assert str(mine.value) == str(theirs.value)


def test_engine_reads_on_the_cluster_and_aligns_as_from_the_client(client, tmp_path):
    from aligner.engines.dask.engine import align

    folder = write_instance(noisy_relabelled(800, seed=4), tmp_path)
    args = [str(folder / f) for f in ("network_a.tsv", "network_b.tsv", "prior.tsv")]
    here = align(*args, truth=str(folder / "truth.tsv"), client=client, partitions=2)
    there = align(*args, truth=str(folder / "truth.tsv"), client=client, partitions=2, reading="client")
    assert here.summary["engine"]["reading"]["where"] == "cluster"
    assert there.summary["engine"]["reading"] == {"where": "client"}
    assert np.array_equal(here.improvement.matching.index, there.improvement.matching.index)
    assert here.summary["scores"] == there.summary["scores"]
    assert here.summary["inputs"] == there.summary["inputs"]


def test_a_file_the_workers_cannot_see_says_so(client, tmp_path, monkeypatch):
    """A worker that finds no file at a path the client sees (no shared file system), simulated by
    the workers' reader reporting the file missing: the message says what to do."""
    folder = write_instance(noisy_relabelled(100, seed=1), tmp_path)

    def missing(path, **kw):
        raise InputFormatError("no such file; check the path", path=path)

    monkeypatch.setattr(reading, "read_table", missing)  # the workers are threads of this process
    with pytest.raises(InputFormatError, match="the dask workers cannot open this file, which exists where aligner "
                       "runs.*--reading client") as err:
        _on_cluster(client, folder / "network_a.tsv", folder / "network_b.tsv", folder / "prior.tsv",
                    AlignConfig(), parts=2)
    assert err.value.path == str(folder / "network_a.tsv")
    # a file missing everywhere keeps the reader's own message
    with pytest.raises(InputFormatError, match="no such file; check the path"):
        _on_cluster(client, tmp_path / "nowhere.tsv", folder / "network_b.tsv", folder / "prior.tsv",
                    AlignConfig(), parts=2)
