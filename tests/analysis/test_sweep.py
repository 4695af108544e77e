import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from aligner.pipeline import align
from aligner.cli.app import app
from aligner.errors import InvalidParameterError
from aligner.analysis.sweep import SWEEP_COLUMNS, knee_index, sweep
from aligner.datasets.synthetic import powerlaw_graph, relabelled_pair


def _write(tmp_path, n=150, seed=4):
    sp = relabelled_pair(powerlaw_graph(n, m=3, seed=seed), n, noise=0.1, decoys=6, seed=seed + 1)
    name = lambda prefix, v: [f"{prefix}{int(i)}" for i in v]  # noqa: E731
    pd.DataFrame({"a": name("a", sp.edges_a[:, 0]), "b": name("a", sp.edges_a[:, 1])}).to_csv(
        tmp_path / "a.tsv", sep="\t", index=False, header=False)
    pd.DataFrame({"a": name("b", sp.edges_b[:, 0]), "b": name("b", sp.edges_b[:, 1])}).to_csv(
        tmp_path / "b.tsv", sep="\t", index=False, header=False)
    pd.DataFrame({"a": name("a", sp.prior_pairs[:, 0]), "b": name("b", sp.prior_pairs[:, 1]),
                  "s": sp.prior_scores}).to_csv(tmp_path / "p.tsv", sep="\t", index=False, header=False)
    pd.DataFrame({"a": name("a", sp.truth[:, 0]), "b": name("b", sp.truth[:, 1])}).to_csv(
        tmp_path / "t.tsv", sep="\t", index=False, header=False)
    return [tmp_path / f for f in ("a.tsv", "b.tsv", "p.tsv", "t.tsv")]


def test_knee_of_known_curves():
    # reference: Satopää et al. (2011) — for y = x**4 sampled on [0, 1] the point farthest from
    # the chord y = x after scaling is where the slope equals 1: x = 4**(-1/3) ≈ 0.63
    x = np.linspace(0, 1, 101)
    k = knee_index(x, x**4)
    assert x[k] == pytest.approx(4 ** (-1 / 3), abs=0.011)
    assert knee_index([0, 1, 2], [0, 1, 2]) is None  # straight line: no knee
    assert knee_index([0, 1], [0, 5]) is None
    # every alpha past the first lands on one point (a step): two distinct points, no knee
    assert knee_index([1.0, 0.9, 0.9, 0.9], [0.0, 5.0, 5.0, 5.0]) is None


def _same_or_certified_tie(cand, x_sweep, x_align, idx_sweep, idx_align, bound):
    """True when two roundings agree, or differ only as far as the solver's bound allows.

    Each x is within its error bound (1-norm) of the exact solution, so for any matching M the
    two weights differ by at most ``bound`` = sum of both bounds; if the sweep's matching were
    not optimal for align's x by more than 2 * bound, the two could not both be optimal roundings
    (common practice: perturbation bound of a linear objective).
    """
    if np.array_equal(np.sort(idx_sweep), np.sort(idx_align)):
        return True
    return x_align[idx_align].sum() - x_align[idx_sweep].sum() <= 2 * bound


@pytest.mark.parametrize("refine", [True, False])
def test_sweep_rows_equal_align_at_each_alpha(tmp_path, refine):
    # Reference: align itself at each alpha with the same options (issue: the first row of a sweep
    # was refined and the others were not). The first alpha is > 0, so the first row is a real solve.
    a, b, p, t = _write(tmp_path)
    res = sweep(a, b, p, alphas=[0.9, 0.5, 0.7, 0.7], truth=t, refine=refine)
    assert list(res.table.columns) == list(SWEEP_COLUMNS)
    assert res.table["alpha"].tolist() == [0.5, 0.7, 0.9]  # sorted, duplicates dropped
    for row, got in zip(res.table.itertuples(), res.results):
        one = align(a, b, p, alpha=row.alpha, truth=t, refine=refine)
        bound = got.diffusion.error_bound + one.diffusion.error_bound
        assert np.abs(got.diffusion.x - one.diffusion.x).sum() <= bound
        rounded_s, rounded_a = got.improvement.rounded.index, one.improvement.rounded.index
        assert _same_or_certified_tie(one.candidates, got.diffusion.x, one.diffusion.x, rounded_s, rounded_a, bound)
        if np.array_equal(np.sort(rounded_s), np.sort(rounded_a)):
            # same start, same options: the refinement must end in the same matching
            pd.testing.assert_frame_equal(got.pairs[["node_a", "node_b"]], one.pairs[["node_a", "node_b"]])
            assert row.conserved_edges == one.scores.conserved_edges
            assert row.nc == pytest.approx(one.scores.nc)
            assert row.prior_weight == pytest.approx(float(one.pairs["prior"].sum()))
        assert got.summary["parameters"]["refine"] is refine


def test_sweep_of_one_alpha_equals_two(tmp_path):
    # The symptom the issue reports: `--alphas 0.9` and `--alphas 0.8,0.9` must agree at 0.9.
    a, b, p, t = _write(tmp_path)
    one = sweep(a, b, p, alphas=[0.9], truth=t).table.iloc[-1]
    two = sweep(a, b, p, alphas=[0.8, 0.9], truth=t).table.iloc[-1]
    assert one.conserved_edges == two.conserved_edges and one.nc == two.nc


def test_sweep_alpha_zero_returns_prior(tmp_path):
    # Common practice: at alpha 0 the diffusion is h itself, no push, and refinement is off.
    a, b, p, t = _write(tmp_path)
    res = sweep(a, b, p, alphas=[0.0, 0.5])
    assert res.table["solver_steps"].iloc[0] == 0
    assert res.results[0].summary["refine"] is None


def test_warm_start_saves_pushes(tmp_path):
    # common practice: a warm start from a nearby solution needs less work than a cold start
    a, b, p, _ = _write(tmp_path)
    alphas = [0.5, 0.6, 0.7, 0.8, 0.9]
    warm = sweep(a, b, p, alphas=alphas, refine=False)
    cold = sweep(a, b, p, alphas=alphas, warm_start=False, refine=False)
    assert warm.table["edge_touches"].iloc[1:].sum() < cold.table["edge_touches"].iloc[1:].sum()
    assert warm.problem.product is not None


def test_sweep_takes_align_options(tmp_path):
    # Seeds, directed, weighted and refinement reach every row (the options of align).
    a, b, p, t = _write(tmp_path)
    seeds = pd.read_csv(t, sep="\t", header=None).head(5)
    res = sweep(a, b, p, alphas=[0.6, 0.9], seeds=seeds, directed=True, refine=False, truth=t)
    for r in res.results:
        assert r.summary["parameters"]["directed"] is True
        assert r.summary["seeds"]["pairs"] == 5
        assert r.summary["refine"] is None


def test_bad_alphas():
    with pytest.raises(InvalidParameterError):
        sweep("x", "y", "z", alphas=[1.0])


def test_cli_sweep_writes_table_and_figures(tmp_path):
    a, b, p, t = _write(tmp_path)
    out = tmp_path / "out"
    r = CliRunner().invoke(app, ["sweep", str(a), str(b), "-p", str(p), "-o", str(out), "--truth", str(t),
                                 "--alphas", "0,0.3,0.6,0.9"])
    assert r.exit_code == 0, r.output
    tab = pd.read_csv(out / "sweep.tsv", sep="\t")
    assert len(tab) == 4 and tab["nc"].notna().all()
    assert "suggested alpha" in r.output or "no knee" in r.output
    # PNG signature and an SVG root element (PNG spec; W3C SVG)
    assert (out / "sweep.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert b"<svg" in (out / "sweep.svg").read_bytes()[:2000]
    again = CliRunner().invoke(app, ["sweep", str(a), str(b), "-p", str(p), "-o", str(out)])
    assert again.exit_code == 2 and "--force" in again.output


def test_a_prior_summing_past_the_largest_float_sweeps_without_numpy_warnings(tmp_path):
    # Reference: the same sweep on the prior divided by its largest score (the diffusion divides such a prior
    # by its maximum first, so every alignment is the same). The sum of the matched pairs' scores passes the
    # largest float: numpy printed RuntimeWarnings (overflow in the rounding's weight, invalid values in the
    # knee and the figure) and sweep.tsv held prior_weight inf with nothing said; now no numpy warning, the
    # weight is inf with an AlignerWarning saying so, and there is no knee (noticed by differential testing).
    import warnings

    from aligner.errors import AlignerWarning

    a, b, p, _ = _write(tmp_path)
    table = pd.read_csv(p, sep="\t", header=None)
    huge, scaled = tmp_path / "huge.tsv", tmp_path / "scaled.tsv"
    top = table[2].max()
    table.assign(s=table[2] / top * 1e308)[[0, 1, "s"]].to_csv(huge, sep="\t", index=False, header=False)
    table.assign(s=table[2] / top)[[0, 1, "s"]].to_csv(scaled, sep="\t", index=False, header=False)
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        warnings.simplefilter("error", RuntimeWarning)
        res = sweep(a, b, huge, alphas=[0.0, 0.5, 0.9])
    ours = [str(w.message) for w in seen if issubclass(w.category, AlignerWarning)]
    assert any("sum past the largest float" in m and "prior_weight is given as inf" in m for m in ours), ours
    assert np.isinf(res.table["prior_weight"]).all() and res.knee is None
    ref = sweep(a, b, scaled, alphas=[0.0, 0.5, 0.9])
    for got, want in zip(res.results, ref.results):
        pd.testing.assert_frame_equal(got.pairs[["node_a", "node_b"]], want.pairs[["node_a", "node_b"]])
    assert knee_index([np.inf, 1.0, 0.5], [0, 5, 6]) is None


def test_cli_sweep_and_report_of_a_prior_summing_past_the_largest_float(tmp_path):
    # docs/errors.md: what a sweep says when the prior weight passes the largest float; no numpy warning
    # reaches the user (as errors here: the command fails with one), the figure and the report are drawn
    # (noticed by differential testing)
    import warnings

    a, b, p, _ = _write(tmp_path)
    table = pd.read_csv(p, sep="\t", header=None)
    huge = tmp_path / "huge.tsv"
    table.assign(s=1e308)[[0, 1, "s"]].to_csv(huge, sep="\t", index=False, header=False)
    out = tmp_path / "out"
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        r = CliRunner().invoke(app, ["sweep", str(a), str(b), "-p", str(huge), "-o", str(out), "--alphas", "0,0.5,0.9"])
        assert r.exit_code == 0, (r.output, r.exception)
        text = " ".join(r.output.split())
        assert "warning: the prior scores of the matched pairs sum past the largest float" in text
        assert "no knee: a prior weight passed the largest float" in text
        assert "RuntimeWarning" not in text
        tab = pd.read_csv(out / "sweep.tsv", sep="\t")
        assert np.isinf(tab["prior_weight"]).all()
        r = CliRunner().invoke(app, ["align", str(a), str(b), "-p", str(huge), "-o", str(tmp_path / "run")])
        assert r.exit_code == 0, (r.output, r.exception)
        for f in ("sweep.tsv", "sweep.png", "sweep.svg"):
            (tmp_path / "run" / f).write_bytes((out / f).read_bytes())
        r = CliRunner().invoke(app, ["report", str(tmp_path / "run"), "-q"])
        assert r.exit_code == 0, (r.output, r.exception)
