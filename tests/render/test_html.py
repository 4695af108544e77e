import base64
import json
import re
import shutil
import subprocess
import tempfile

import pytest
from typer.testing import CliRunner

import pandas as pd

from aligner.cli.app import app
from aligner.datasets.synthetic import powerlaw_graph, relabelled_pair
from aligner.render.html import build_report

BROWSERS = ("chromium", "chromium-browser", "google-chrome", "google-chrome-stable")


def _write(tmp_path, n=150, seed=4):
    """A seeded power-law graph, its noisy relabelled copy, a prior with decoys and the truth, as TSV files."""
    sp = relabelled_pair(powerlaw_graph(n, m=3, seed=seed), n, noise=0.1, decoys=6, seed=seed + 1)
    name = lambda prefix, v: [f"{prefix}{int(i)}" for i in v]  # noqa: E731
    frames = {"a.tsv": (name("a", sp.edges_a[:, 0]), name("a", sp.edges_a[:, 1])),
              "b.tsv": (name("b", sp.edges_b[:, 0]), name("b", sp.edges_b[:, 1])),
              "p.tsv": (name("a", sp.prior_pairs[:, 0]), name("b", sp.prior_pairs[:, 1]), sp.prior_scores),
              "t.tsv": (name("a", sp.truth[:, 0]), name("b", sp.truth[:, 1]))}
    for file, cols in frames.items():
        pd.DataFrame(dict(enumerate(cols))).to_csv(tmp_path / file, sep="\t", index=False, header=False)
    return [tmp_path / f for f in frames]


def _browser():
    for name in BROWSERS:
        path = shutil.which(name)
        if path:
            return path
    return None


@pytest.fixture(scope="module")
def run_dir(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("report")
    a, b, p, t = _write(tmp, n=200)
    out = tmp / "out"
    runner = CliRunner()
    r = runner.invoke(app, ["align", str(a), str(b), "-p", str(p), "-o", str(out), "--truth", str(t),
                            "--permutations", "10", "-q"])
    assert r.exit_code == 0, r.output
    r = runner.invoke(app, ["sweep", str(a), str(b), "-p", str(p), "-o", str(out), "--alphas", "0,0.5,0.8,0.9",
                            "-q"])
    assert r.exit_code == 0, r.output
    r = runner.invoke(app, ["report", str(out)])
    assert r.exit_code == 0, r.output
    return out


def test_report_is_self_contained(run_dir):
    page = (run_dir / "report.html").read_text(encoding="utf-8")
    # no network access: no http(s) resource anywhere (common practice for offline HTML)
    assert not re.search(r"""(src|href)\s*=\s*['"]?https?:""", page)
    imgs = re.findall(r"src='data:image/png;base64,([A-Za-z0-9+/=]+)'", page)
    assert len(imgs) >= 5  # trade-off, two histograms, degree plot, conserved subgraph
    for b64 in imgs:
        data = base64.b64decode(b64)
        assert data[:8] == b"\x89PNG\r\n\x1a\n" and len(data) > 5000  # PNG signature (PNG specification)
    for text in ("Trade-off across", "Least confident pairs", "empirical p-value", "z-score"):
        assert text in page
    # the transferred interactions: counts per direction as in transferred_edges.tsv, the support
    # quantiles, the best row (common practice: the page shows what the file holds)
    tab = pd.read_csv(run_dir / "transferred_edges.tsv", sep="\t", keep_default_na=False, dtype=str)
    section = page[page.index("<h2>Transferred interactions</h2>"):]
    for d in ("A->B", "B->A"):
        n = int((tab["direction"] == d).sum())
        assert f">{d.replace('>', '&gt;')}</th><td class='n'>{n:,}</td>" in section
    assert "support histogram" in section and "q0.5" in section
    assert tab["node_a1"].iloc[0] in section
    summary = json.loads((run_dir / "summary.json").read_text())
    assert summary["significance"]["candidate_maps"]["permutations"] == 10


def test_report_of_a_run_without_transferred_edges(run_dir, tmp_path):
    # a run written before transferred_edges.tsv existed still gets its report, with a note
    old = tmp_path / "old"
    shutil.copytree(run_dir, old)
    (old / "transferred_edges.tsv").unlink()
    page = build_report(old).read_text(encoding="utf-8")
    assert "This run has no transferred_edges.tsv" in page and "support histogram" not in page


def test_report_needs_a_finished_run(tmp_path):
    r = CliRunner().invoke(app, ["report", str(tmp_path)])
    assert r.exit_code == 2 and "summary.json" in r.output


def test_report_network_override(run_dir, tmp_path):
    # the input networks moved: --a points to them
    summary = json.loads((run_dir / "summary.json").read_text())
    moved = tmp_path / "moved_a.tsv"
    shutil.copy(summary["inputs"]["network_a"]["source"], moved)
    assert build_report(run_dir, network_a=moved).is_file()


def test_report_renders_in_headless_browser(run_dir):
    # reference: a real browser engine (Chromium) loads the page and decodes every figure
    exe = _browser()
    if exe is None:
        pytest.skip("no Chromium/Chrome on PATH (apt-get install chromium); cannot render the page")
    with tempfile.TemporaryDirectory() as profile:
        args = [exe, "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                "--disable-component-update", "--disable-sync", "--no-first-run", f"--user-data-dir={profile}",
                "--virtual-time-budget=10000"]
        url = (run_dir / "report.html").resolve().as_uri()
        dom = subprocess.run(args + ["--dump-dom", url], capture_output=True, text=True, timeout=120).stdout
        shot = run_dir / "shot.png"
        subprocess.run(args + ["--window-size=1200,2400", f"--screenshot={shot}", url], capture_output=True,
                       timeout=120)
    m = re.search(r"images (\d+) decoded (\d+)", dom)
    assert m, dom[-2000:]
    assert int(m.group(1)) >= 5 and m.group(1) == m.group(2)
    errors = re.search(r'id="page-errors">([^<]*)<', dom)
    assert errors is not None and errors.group(1) == ""
    assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" and shot.stat().st_size > 20000
