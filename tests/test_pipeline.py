import json

import networkx as nx
import numpy as np
import pandas as pd
import pytest
from scipy.optimize import linear_sum_assignment

import aligner
from aligner import AlignerWarning, InvalidParameterError, NoCandidatesError


def _relabelled(n, seed, decoys=10, noise=0.0):
    """B = a random relabelling of A (optionally with edges moved); prior = truth + random decoys."""
    rng = np.random.default_rng(seed)
    g = nx.powerlaw_cluster_graph(n, 3, 0.3, seed=seed)
    perm = rng.permutation(n)
    edges = np.array(g.edges())
    if noise:
        k = int(noise * len(edges))
        drop = rng.choice(len(edges), k, replace=False)
        edges = np.delete(edges, drop, axis=0)
        extra = rng.integers(0, n, size=(k, 2))
        edges = np.concatenate([edges, extra[extra[:, 0] != extra[:, 1]]])
    a = pd.DataFrame({"u": [f"a{u}" for u, v in g.edges()], "v": [f"a{v}" for u, v in g.edges()]})
    b = pd.DataFrame({"u": [f"b{perm[u]}" for u in edges[:, 0]], "v": [f"b{perm[v]}" for v in edges[:, 1]]})
    rows = []
    for i in range(n):
        rows.append((f"a{i}", f"b{perm[i]}", rng.uniform(0.5, 1.0)))
        for d in rng.choice(np.delete(np.arange(n), perm[i]), decoys, replace=False):
            rows.append((f"a{i}", f"b{d}", rng.uniform(0.2, 0.9)))
    prior = pd.DataFrame(rows, columns=["a", "b", "s"])
    truth = pd.DataFrame({"a": [f"a{i}" for i in range(n)], "b": [f"b{perm[i]}" for i in range(n)]})
    return a, b, prior, truth


def test_noise_free_relabelled_copy_is_recovered_exactly():
    # Common practice check: with no edge noise and the true pair among the candidates, the
    # wiring singles out the identity, so NC = 1.
    a, b, prior, truth = _relabelled(400, seed=1)
    res = aligner.align(a, b, prior, truth=truth)
    assert res.scores.nc == 1.0
    assert res.scores.ec == 1.0
    assert res.diffusion.residual <= 1e-6


def test_alpha_zero_is_maximum_weight_matching_of_prior():
    # Reference: scipy.optimize.linear_sum_assignment on the dense prior matrix.
    a, b, prior, truth = _relabelled(150, seed=2)
    res = aligner.align(a, b, prior, alpha=0.0, top_k=None)
    na, nb = res.network_a, res.network_b
    W = np.zeros((na.n, nb.n))
    ia = pd.Index(na.names).get_indexer(prior["a"])
    ib = pd.Index(nb.names).get_indexer(prior["b"])
    W[ia, ib] = prior["s"]
    r, c = linear_sum_assignment(W, maximize=True)
    assert res.pairs["prior"].sum() == pytest.approx(W[r, c].sum(), rel=1e-12)


def test_relabelling_nodes_permutes_alignment():
    a, b, prior, truth = _relabelled(200, seed=3, noise=0.1)
    res = aligner.align(a, b, prior, alpha=0.7)
    rng = np.random.default_rng(9)
    names_a = sorted(set(a.u) | set(a.v))
    new = dict(zip(names_a, [f"x{k}" for k in rng.permutation(len(names_a))]))
    a2 = a.replace({"u": new, "v": new})
    prior2 = prior.assign(a=prior.a.map(new))
    res2 = aligner.align(a2, b, prior2, alpha=0.7)
    got = dict(zip(res.pairs.node_a.map(new), res.pairs.node_b))
    got2 = dict(zip(res2.pairs.node_a, res2.pairs.node_b))
    assert got == got2
    assert res.scores.conserved_edges == res2.scores.conserved_edges


def test_networkx_and_dataframe_and_file_inputs_agree(tmp_path):
    a, b, prior, truth = _relabelled(120, seed=4, noise=0.05)
    a.to_csv(tmp_path / "a.tsv", sep="\t", index=False, header=False)
    b.to_csv(tmp_path / "b.csv", index=False, header=False)  # a header "u,v" would be read as an edge (with a warning)
    prior.to_csv(tmp_path / "p.tsv", sep="\t", index=False, header=False)
    r1 = aligner.align(a, b, prior)
    r2 = aligner.align(tmp_path / "a.tsv", tmp_path / "b.csv", tmp_path / "p.tsv")
    ga = nx.from_pandas_edgelist(a, "u", "v")
    r3 = aligner.align(ga, b, prior)
    for r in (r2, r3):
        pd.testing.assert_frame_equal(r1.pairs.reset_index(drop=True), r.pairs.reset_index(drop=True))


def test_inputs_unchanged():
    a, b, prior, truth = _relabelled(80, seed=5)
    copies = [x.copy() for x in (a, b, prior)]
    aligner.align(a, b, prior)
    for x, y in zip(copies, (a, b, prior)):
        pd.testing.assert_frame_equal(x, y)


def test_unknown_prior_rows_warn_and_swapped_columns_explained():
    a, b, prior, truth = _relabelled(60, seed=6)
    extra = pd.DataFrame({"a": ["nope"], "b": ["b1"], "s": [1.0]})
    with pytest.warns(AlignerWarning, match="1 of .* prior rows name a node missing"):
        res = aligner.align(a, b, pd.concat([prior, extra]))
    assert res.summary["inputs"]["prior"]["unknown_node_rows"] == 1
    swapped = prior[["b", "a", "s"]]
    with pytest.warns(AlignerWarning), pytest.raises(NoCandidatesError, match="columns swapped"):
        aligner.align(a, b, swapped)


def test_min_score_leaving_nothing():
    a, b, prior, truth = _relabelled(30, seed=7)
    with pytest.raises(NoCandidatesError, match="minimum score"):
        aligner.align(a, b, prior, min_score=5.0)


@pytest.mark.parametrize("kw, pattern", [
    ({"alpha": 1.0}, r"^alpha must be a number in \[0, 1\); got 1\.0$"),
    ({"top_k": 0}, r"^top_k must be a whole number >= 1; got 0$"),
    ({"tol": 0.0}, r"^tol must be a number in \(0, 1\); got 0\.0$"),
    ({"solver": "magic"}, r"^solver must be one of push, power; got 'magic'$"),
    ({"score_kind": "pvalue"}, r"^score_kind must be one of similarity, evalue, distance; got 'pvalue'$"),
    ({"refine": "yes"}, r"^refine must be True or False; got 'yes'$"),
    ({"max_memory": -1}, r"^max_memory must be a number in \(0, inf\); got -1$"),
    ({"no_such_option": 1}, r"^unknown option 'no_such_option'; the options are delimiter, "),
])
def test_parameters_checked(kw, pattern):
    # Common practice: a bad option is refused before any work, naming the keyword and the value.
    a, b, prior, truth = _relabelled(20, seed=8)
    with pytest.raises(InvalidParameterError, match=pattern) as info:
        aligner.align(a, b, prior, **kw)
    assert info.value.param == next(iter(kw))


def _bad_value(spec):
    """A value outside what the declaration allows (None where None is not allowed)."""
    if spec.kind == "choice":
        return "not-a-choice"
    if spec.kind == "bool":
        return 1
    if spec.kind == "text":
        return 3
    if spec.low is not None:
        return spec.low - 1
    return "text"


def test_every_declared_option_is_checked_by_align():
    # Source: the declarations in aligner.config (one per option); each bad value must be refused
    # through the public path with the option's own name, as sklearn's test_public_functions does
    # for its estimators (the idea, not the wording).
    from aligner.config import AlignConfig, specs

    a, b, prior, truth = _relabelled(12, seed=8)
    for name, (default, spec) in specs(AlignConfig).items():
        with pytest.raises(InvalidParameterError, match=rf"^{name} must be ") as info:
            aligner.align(a, b, prior, **{name: _bad_value(spec)})
        assert info.value.param == name


def test_summary_keys_and_solver_agreement():
    a, b, prior, truth = _relabelled(300, seed=10, noise=0.05)
    r1 = aligner.align(a, b, prior, truth=truth, solver="push", tol=1e-9)
    r2 = aligner.align(a, b, prior, truth=truth, solver="power", tol=1e-9)
    for key in ("ec", "ics", "s3", "nc", "conserved_edges"):
        assert key in r1.summary["scores"]
    assert r1.summary["sizes"]["candidates"] == r1.candidates.m
    assert r1.summary["sizes"]["product_edges"] == r1.product.n_edges
    assert np.abs(r1.diffusion.x - r2.diffusion.x).sum() <= r1.diffusion.error_bound + r2.diffusion.error_bound
    assert r1.scores.nc > 0.95


def test_signature_shows_every_declared_option_with_its_default():
    # Source: the declarations in aligner.config; help() and IDEs read inspect.signature.
    import inspect

    from aligner.config import AlignConfig, specs

    params = inspect.signature(aligner.align).parameters
    for name, (default, _) in specs(AlignConfig).items():
        assert params[name].kind is inspect.Parameter.KEYWORD_ONLY
        assert params[name].default == default
    assert "alpha : float, default 0.9" in aligner.align.__doc__


def test_clock_reports_each_stage_own_peak_memory(monkeypatch):
    # Source: proc(5), Linux manual: writing "5" to /proc/[pid]/clear_refs resets the peak resident
    # set size (VmHWM of /proc/[pid]/status). A stage that touches 400 MiB peaks that much higher
    # than the stage after it, which allocates nothing, only when the peak is reset per stage.
    import sys

    from aligner.pipeline import Clock

    monkeypatch.setattr(Clock, "reset_peaks", True)
    clock = Clock()
    with clock.stage("big"):
        block = np.ones(400 * 2**20 // 8)
        del block
    with clock.stage("small"):
        pass
    report = clock.memory_report()
    assert set(report["peak_gib"]) == {"big", "small"}
    if sys.platform.startswith("linux") and report["per_stage"]:
        assert report["peak_gib"]["big"] - report["peak_gib"]["small"] > 0.35
    else:  # elsewhere: the peak so far, which never decreases
        assert report["peak_gib"]["small"] >= report["peak_gib"]["big"]


def test_summary_has_memory_for_every_timed_stage():
    # the documented schema (docs/formats.md, summary.json): one memory figure per timed stage
    a, b, prior, truth = _relabelled(60, seed=3, noise=0.05)
    res = aligner.align(a, b, prior, truth=truth)
    mem = res.summary["memory"]
    assert set(mem["peak_gib"]) == set(res.summary["timings"]) and all(v > 0 for v in mem["peak_gib"].values())
    assert mem["per_stage"] is False  # the Python API leaves the host process's counters alone


def test_command_line_resets_peaks_only_while_it_runs(tmp_path):
    # the command line measures each stage's own peak (per_stage true on Linux) and leaves the
    # setting as it found it, so a host program that runs it in-process keeps its counters
    import sys

    from typer.testing import CliRunner

    from aligner.cli import app
    from aligner.pipeline import Clock

    a, b, prior, truth = _relabelled(40, seed=5, noise=0.05)
    paths = []
    for name, frame in (("a", a), ("b", b), ("p", prior)):
        frame.to_csv(tmp_path / f"{name}.tsv", sep="\t", index=False, header=False)
        paths.append(str(tmp_path / f"{name}.tsv"))
    res = CliRunner().invoke(app, ["align", *paths[:2], "--prior", paths[2], "-o", str(tmp_path / "out"), "-q"])
    assert res.exit_code == 0, res.output
    summary = json.loads((tmp_path / "out" / "summary.json").read_text())
    assert summary["memory"]["per_stage"] is sys.platform.startswith("linux")
    assert Clock.reset_peaks is False
    assert aligner.align(a, b, prior).summary["memory"]["per_stage"] is False


def test_warnings_point_at_the_callers_line():
    # Issue found in a fresh-clone trial: warnings named the package's own line. Common practice
    # (Python's warnings module, stacklevel): a library's warning names the line of the code that
    # called it, whatever path inside the library led to it.
    import warnings

    a, b, prior, truth = _relabelled(40, seed=7)
    prior = pd.concat([prior, pd.DataFrame({prior.columns[0]: ["nowhere"], prior.columns[1]: ["b0"],
                                            prior.columns[2]: [1.0]})], ignore_index=True)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        aligner.align(a, b, prior)  # the line the warning must name
    ours = [w for w in caught if issubclass(w.category, AlignerWarning)]
    assert ours and all(w.filename == __file__ for w in ours), [(w.filename, w.lineno) for w in ours]


def test_prepared_problem_keeps_the_prior_counts_not_its_rows():
    # The candidates hold the prior's scores for every later stage; the prior table's own rows
    # are released after the candidate stage (memory), its counts stay for summary.json.
    from aligner.pipeline import prepare, read_inputs

    a, b, prior, truth = _relabelled(50, seed=11)
    full = read_inputs(a, b, prior).prior
    problem = prepare(a, b, prior)
    kept = problem.inputs.prior
    assert len(kept.pairs) == 0 and len(kept.scores) == 0
    assert kept.pairs.base is None and kept.scores.base is None  # not views holding the rows alive
    assert kept.n_pairs == len(full.pairs) > 0 and kept.n_rows == full.n_rows
    assert aligner.align(a, b, prior).summary["inputs"]["prior"]["pairs"] == len(full.pairs)


@pytest.mark.parametrize("empty", [nx.Graph(), nx.DiGraph(), pd.DataFrame({"u": [], "v": []})])
def test_an_empty_network_is_named_as_such(empty):
    # Issue found in a fresh-clone trial: an empty graph got "are the columns swapped?" from the
    # prior check. Common practice: name the fault itself.
    directed = isinstance(empty, nx.DiGraph)
    other = nx.path_graph(3, create_using=nx.DiGraph if directed else nx.Graph)
    prior = pd.DataFrame({"a": [0], "b": [1], "s": [1.0]})
    with pytest.raises(InvalidParameterError, match=r"network_a has no nodes .*nothing to align"):
        aligner.align(empty, other, prior, directed=directed)


def test_networkx_integer_nodes_come_back_as_integers(tmp_path):
    # Issue found in a fresh-clone trial: integer node ids of a networkx graph came back as
    # strings. Reference: the same pair given with string ids (the alignment is the same; only
    # the type of the ids in the output tables differs).
    from aligner.io.outputs import write_outputs

    g = nx.powerlaw_cluster_graph(60, 3, 0.3, seed=2)
    h = nx.relabel_nodes(g, {v: v + 1000 for v in g})
    prior = pd.DataFrame({"a": list(g), "b": [v + 1000 for v in g], "s": 1.0})
    res = aligner.align(g, h, prior)
    as_text = aligner.align(nx.relabel_nodes(g, str), nx.relabel_nodes(h, str), prior.astype({"a": str, "b": str}))
    assert all(isinstance(v, (int, np.integer)) for v in res.pairs.node_a)
    assert all(isinstance(v, (int, np.integer)) for v in res.conserved_edges.node_b1)
    assert sorted(zip(res.pairs.node_a, res.pairs.node_b)) == \
        sorted((int(a), int(b)) for a, b in zip(as_text.pairs.node_a, as_text.pairs.node_b))
    assert (res.pairs.node_b - res.pairs.node_a == 1000).all()
    written = write_outputs(tmp_path / "out", res)
    assert {p.name for p in written} >= {"alignment.tsv", "conserved_edges.tsv"}
    back = pd.read_csv(tmp_path / "out" / "alignment.tsv", sep="\t")
    assert sorted(zip(back.node_a, back.node_b)) == sorted(zip(res.pairs.node_a, res.pairs.node_b))


def test_a_prepared_problem_takes_solve_options_and_refuses_those_of_its_product_graph():
    # the prepared problem's contract (docs: DEVELOPERS.md, stage functions): solve options may
    # change, options that shaped the candidates or the product graph may not
    a, b, prior = _relabelled(120, 3)[:3]
    a = a.assign(w=1.0 + np.arange(len(a)) % 3)
    b = b.assign(w=1.0 + np.arange(len(b)) % 4)
    problem = aligner.prepare(a, b, prior, weighted=True)
    other = problem.with_options(alpha=0.5, refine_starts=2)
    assert other.config.alpha == 0.5 and other.product is problem.product
    for option, value in (("weight_model", "product"), ("top_k", 3), ("normalization", "product")):
        with pytest.raises(InvalidParameterError, match=f"{option} changes the prepared candidates"):
            problem.with_options(**{option: value})


def test_prepare_shows_the_options_and_the_stage_helpers_do_not():
    # with_options (aligner.config) puts the options in prepare's signature (help(), IDEs);
    # diffusion_source takes a finished config and must not advertise them
    import inspect

    from aligner.pipeline import diffusion_source, prepare

    assert {"alpha", "weight_model", "refine_starts"} <= set(inspect.signature(prepare).parameters)
    assert list(inspect.signature(diffusion_source).parameters) == ["cand", "seeds", "cfg"]


@pytest.mark.parametrize("directed", [False, True])
def test_a_run_lets_go_of_its_caches_and_they_are_made_again_alike(directed):
    # The product graph's row sizes and the candidates' end columns are caches the run drops
    # once their last reader is done; made again on use they are what numpy makes of the arrays
    # they come from (numpy.diff of the row pointer, the pairs' two columns: common practice).
    from aligner.datasets.instances import as_frames, noisy_relabelled

    a, b, prior, _ = as_frames(noisy_relabelled(300, seed=2))
    res = aligner.align(a, b, prior, directed=directed)
    prod, cand = res.product, res.candidates
    assert "_degree" not in prod.__dict__ and "ends" not in cand.__dict__
    assert np.array_equal(prod.degree, np.diff(prod.indptr))
    assert np.array_equal(cand.ends[0], cand.pairs[:, 0]) and np.array_equal(cand.ends[1], cand.pairs[:, 1])


def test_integer_nodes_of_a_graph_are_written_in_the_same_order_as_from_a_file(tmp_path):
    # Found by fuzzing the Python API: a networkx graph with integer nodes wrote alignment.tsv in
    # numeric order (1, 2, 3, 9, 10), the same network from a file in text order (1, 10, 2, ...).
    # Reference: the command line's files on the same edges (one network, one order).
    import networkx as nx
    from typer.testing import CliRunner

    from aligner.cli.app import app
    from aligner.io.outputs import write_outputs

    g = nx.Graph([(1, 2), (2, 3), (3, 9), (9, 10), (10, 11), (11, 1), (2, 10)])
    pd.DataFrame(list(g.edges())).to_csv(tmp_path / "g.tsv", sep="\t", index=False, header=False)
    prior = pd.DataFrame({"a": [str(v) for v in g], "b": [str(v) for v in g], "s": 1.0})
    prior.to_csv(tmp_path / "p.tsv", sep="\t", index=False, header=False)
    write_outputs(tmp_path / "api", aligner.align(g, g, prior))
    got = CliRunner().invoke(app, ["align", str(tmp_path / "g.tsv"), str(tmp_path / "g.tsv"), "-p",
                                   str(tmp_path / "p.tsv"), "-o", str(tmp_path / "cli"), "-q"])
    assert got.exit_code == 0, got.output
    for name in ("alignment.tsv", "conserved_edges.tsv", "transferred_edges.tsv"):
        assert (tmp_path / "api" / name).read_bytes() == (tmp_path / "cli" / name).read_bytes(), name


def test_api_arguments_of_the_wrong_kind_are_refused_by_name():
    # Found by fuzzing the Python API; common practice: a bad argument is refused before any work
    # with an error naming it, not a bare TypeError from inside. A one-element array passed the
    # choice check as the text "['product']"; AlignConfig(alpah=...) was the dataclass's own
    # TypeError; progress=5 failed inside the pipeline; sweep(alphas=0.5) iterated a float; score
    # took and ignored alignment options such as alpha.
    from aligner.config import AlignConfig

    a, b, prior, truth = _relabelled(20, seed=8)
    with pytest.raises(InvalidParameterError, match=r"^normalization must be one of .*; got array") as info:
        AlignConfig(normalization=np.array(["product"]))
    assert info.value.param == "normalization"
    with pytest.raises(InvalidParameterError, match=r"^unknown option 'alpah'; the options are delimiter, "):
        AlignConfig(alpah=0.5)
    with pytest.raises(InvalidParameterError, match=r"^AlignConfig takes its options by name"):
        AlignConfig(0.5)
    for kw in ({"progress": 5}, {"permutation_progress": "x"}):
        with pytest.raises(InvalidParameterError, match=r"must be a function \(or None\); got") as info:
            aligner.align(a, b, prior, **kw)
        assert info.value.param == next(iter(kw))
    one = aligner.sweep(a, b, prior, alphas=0.5)  # one alpha is a sweep of one row
    assert one.table["alpha"].tolist() == [0.5]
    with pytest.raises(InvalidParameterError, match=r"^alphas must be numbers in \[0, 1\)"):
        aligner.sweep(a, b, prior, alphas="0.5")
    res = aligner.align(a, b, prior)
    with pytest.raises(InvalidParameterError, match=r"^alpha is an option of the alignment, which score does not run"):
        aligner.score(a, b, res.pairs[["node_a", "node_b"]], alpha=0.3)
    assert aligner.score(a, b, res.pairs[["node_a", "node_b"]], directed=False)[0].ec == res.scores.ec
