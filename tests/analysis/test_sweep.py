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


def test_sweep_matches_separate_runs(tmp_path):
    # reference: the pipeline itself — each alpha of a sweep equals an independent align run at that
    # alpha up to the solver tolerance (warm starts change x by at most 2 tol / (1 - alpha))
    a, b, p, t = _write(tmp_path)
    res = sweep(a, b, p, alphas=[0.9, 0.0, 0.5, 0.5], truth=t, tol=1e-9)
    assert list(res.table.columns) == list(SWEEP_COLUMNS)
    assert res.table["alpha"].tolist() == [0.0, 0.5, 0.9]  # sorted, duplicates dropped
    for alpha, row in zip(res.table["alpha"], res.table.itertuples()):
        one = align(a, b, p, alpha=alpha, truth=t, tol=1e-9, refine=False)
        assert row.conserved_edges == one.scores.conserved_edges
        assert row.nc == pytest.approx(one.scores.nc)
        w = float(one.pairs["prior"].sum())
        assert row.prior_weight == pytest.approx(w)
    assert res.table["solver_steps"].iloc[0] == 0  # alpha = 0 returns the prior


def test_warm_start_saves_pushes(tmp_path):
    # common practice: a warm start from a nearby solution needs less work than a cold start
    a, b, p, _ = _write(tmp_path)
    alphas = [0.5, 0.6, 0.7, 0.8, 0.9]
    warm = sweep(a, b, p, alphas=alphas)
    cold = sweep(a, b, p, alphas=alphas, warm_start=False)
    assert warm.table["edge_touches"].iloc[1:].sum() < cold.table["edge_touches"].iloc[1:].sum()
    assert warm.base.candidates is not None


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
