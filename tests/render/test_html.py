import base64
import fcntl
import json
import os
import re
import select
import shutil
import subprocess
import tempfile
from html.parser import HTMLParser

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
    # a truth table with errors and gaps, so the report shows true, false and unknown pairs: the
    # partners of the first ten nodes rotated, the last five nodes left out
    truth = pd.read_csv(t, sep="\t", header=None, dtype=str)
    truth.loc[:9, 1] = truth.loc[:9, 1].tolist()[1:] + truth.loc[:0, 1].tolist()
    truth.iloc[:-5].to_csv(t, sep="\t", index=False, header=False)
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


def _rewrite_line(path, number, text):
    lines = path.read_text(encoding="utf-8").splitlines(keepends=True)
    lines[number - 1] = text
    path.write_text("".join(lines), encoding="utf-8")


def _drop_key(path, *keys):
    summary = json.loads(path.read_text())
    holder = summary
    for key in keys[:-1]:
        holder = holder[key]
    del holder[keys[-1]]
    path.write_text(json.dumps(summary, indent=2))


@pytest.mark.parametrize("file, damage, where, what", [
    ("summary.json", lambda p: p.write_text('{\n  "version": "0.1.0",\n  not json\n'), "summary.json, line 3:",
     "the file is not valid JSON"),
    ("summary.json", lambda p: _drop_key(p, "inputs", "network_a", "nodes"), "summary.json:",
     "'inputs.network_a.nodes' is missing"),
    ("transferred_edges.tsv", lambda p: p.write_text(""), "transferred_edges.tsv:", "the file is empty"),
    ("transferred_edges.tsv", lambda p: _rewrite_line(p, 3, "A->B\tx\ty\n"), "transferred_edges.tsv, line 3:",
     "the row has 3 fields where the header has 12"),
    ("alignment.tsv", lambda p: _rewrite_line(p, 5, "a1\tb1\t?\t1\t2\t0.5\t\n"), "alignment.tsv, line 5:",
     "the score field '?' is not a number"),
    ("conserved_edges.tsv", lambda p: _rewrite_line(p, 2, "a1\n"), "conserved_edges.tsv, line 2:",
     "the row has 1 field where the header has 4"),
    ("sweep.tsv", lambda p: _rewrite_line(p, 4, "0.8\t12\n"), "sweep.tsv, line 4:", "the row has 2 fields"),
], ids=["json", "summary-key", "transfer-empty", "transfer-short", "alignment-number", "conserved-short", "sweep"])
def test_report_refuses_a_damaged_run(run_dir, tmp_path, file, damage, where, what):
    # common practice: bad input gives exit 2 and one line naming the file and the line, no traceback
    # and nothing written (docs/errors.md); found by fuzzing, where an empty or short
    # transferred_edges.tsv and a summary.json that is not JSON escaped as tracebacks
    bad = tmp_path / "bad"
    shutil.copytree(run_dir, bad)
    (bad / "report.html").unlink()
    damage(bad / file)
    r = CliRunner().invoke(app, ["report", str(bad)])
    assert r.exit_code == 2, r.output
    text = " ".join(r.output.split())
    assert "Traceback" not in r.output and text.count("error:") == 1
    assert f"error: {bad / where}" in text and what in text, text
    rerun = "sweep" if file == "sweep.tsv" else "align"
    assert "the run's outputs look damaged" in text and f"aligner {rerun} ... -o {bad} --force" in text
    assert not (bad / "report.html").exists()


def test_report_skips_blank_lines_of_a_run_table(run_dir, tmp_path):
    # a blank line carries no row (as pandas' reader skipped it before the run's tables were
    # checked); a damaged line after it is still named by its own number
    copy = tmp_path / "copy"
    shutil.copytree(run_dir, copy)
    lines = (copy / "alignment.tsv").read_text().splitlines(keepends=True)
    (copy / "alignment.tsv").write_text("".join(lines[:3] + ["\n"] + lines[3:]))
    assert build_report(copy).is_file()
    (copy / "alignment.tsv").write_text("".join(lines[:3] + ["\n"] + lines[3:5] + ["a1\n"] + lines[5:]))
    r = CliRunner().invoke(app, ["report", str(copy)])
    assert r.exit_code == 2 and "alignment.tsv, line 7: the row has 1 field" in " ".join(r.output.split())


def test_report_network_override(run_dir, tmp_path):
    # the input networks moved: --a points to them
    summary = json.loads((run_dir / "summary.json").read_text())
    moved = tmp_path / "moved_a.tsv"
    shutil.copy(summary["inputs"]["network_a"]["source"], moved)
    assert build_report(run_dir, network_a=moved).is_file()


def test_report_refuses_a_network_that_is_not_the_runs(run_dir, tmp_path):
    # Checked against the run's own records: alignment.tsv names every matched node, and summary.json the
    # networks' numbers of nodes and edges. --a (or --b) naming another network was accepted, and the page
    # drew that network's degrees and neighbourhoods as the run's; now exit 2 naming the file and the
    # mismatch, nothing written (noticed by differential testing). The run's network itself, moved or not,
    # is still taken.
    summary = json.loads((run_dir / "summary.json").read_text())
    src_a, src_b = summary["inputs"]["network_a"]["source"], summary["inputs"]["network_b"]["source"]
    other_a, other_b = _write(tmp_path, n=120, seed=9)[:2]  # another pair, named as the run's (a0, b0, ...)
    edges = pd.read_csv(src_a, sep="\t", header=None, dtype=str)
    plus = tmp_path / "plus_a.tsv"  # the run's network A and one edge more
    pd.concat([edges, pd.DataFrame([[edges.iloc[0, 0], "a_new"]])]).to_csv(plus, sep="\t", index=False, header=False)
    report = run_dir / "report.html"
    before = report.read_bytes()
    runner = CliRunner()
    for args, where, said in (
            (["--a", str(other_a)], other_a, "is not network A of the run in"),
            (["--a", src_b], src_b, "matched nodes of A in alignment.tsv are missing from it"),
            (["--a", str(plus)], plus, "it has 201 nodes and"),
            (["--a", src_a, "--b", str(other_b)], other_b, "is not network B of the run in")):
        r = runner.invoke(app, ["report", str(run_dir), *args])
        text = " ".join(r.output.split())
        assert r.exit_code == 2, r.output
        assert f"error: {where}: is not network" in text and said in text, text
        assert f"give the run's network {'B with --b' if '--b' in args else 'A with --a'}" in text
        assert "Traceback" not in r.output
    assert report.read_bytes() == before
    r = runner.invoke(app, ["report", str(run_dir), "--a", src_a, "--b", src_b, "-q"])
    assert r.exit_code == 0, r.output


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


# --------------------------------------------------------------------------- the pair table, without a browser

class _PageParser(HTMLParser):
    """The embedded pair data (the JSON script element) and the header cells of the pair table."""

    def __init__(self):
        super().__init__()
        self.data_text, self.heads, self._in = "", [], None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "script" and a.get("id") == "pair-data":
            self._in = "data"
        elif tag == "table" and a.get("id") == "pair-table":
            self._in = "table"
        elif tag == "th" and self._in == "table":
            self._in = "th"
            self.heads.append("")

    def handle_endtag(self, tag):
        if tag == "script" and self._in == "data":
            self._in = None
        elif tag == "th" and self._in == "th":
            self._in = "table"
        elif tag == "table" and self._in == "table":
            self._in = None

    def handle_data(self, data):
        if self._in == "data":
            self.data_text += data
        elif self._in == "th":
            self.heads[-1] += data


def _page_data(path):
    parser = _PageParser()
    parser.feed(path.read_text(encoding="utf-8"))
    return json.loads(parser.data_text), parser.heads


def _truth_pairs(path):
    t = pd.read_csv(path, sep="\t", header=None, dtype=str)
    return set(t[0]), set(zip(t[0], t[1]))


def test_embedded_pairs_match_the_run(run_dir):
    data, heads = _page_data(run_dir / "report.html")
    # reference: alignment.tsv, the file the run wrote (every row, in its order, its columns)
    pairs = pd.read_csv(run_dir / "alignment.tsv", sep="\t", dtype={"node_a": str, "node_b": str})
    assert heads == data["columns"] == ["node_a", "node_b", "score", "prior", "conserved", "confidence", "true"]
    assert len(data["rows"]) == len(pairs)
    assert [r[0] for r in data["rows"]] == pairs["node_a"].tolist()
    assert [r[1] for r in data["rows"]] == pairs["node_b"].tolist()
    assert [r[4] for r in data["rows"]] == pairs["conserved"].tolist()
    for k, col in ((2, "score"), (3, "prior"), (5, "confidence")):
        assert [r[k] for r in data["rows"]] == pytest.approx(pairs[col].tolist(), rel=1e-5)
    # reference: the truth table itself (t.tsv) and summary.json's count of correct nodes
    summary = json.loads((run_dir / "summary.json").read_text())
    named, true_pairs = _truth_pairs(summary["inputs"]["truth"]["source"])
    flags = [r[6] for r in data["rows"]]
    expect = [None if a not in named else (a, b) in true_pairs for a, b in zip(pairs["node_a"], pairs["node_b"])]
    assert flags == expect
    assert flags.count(True) == summary["scores"]["nc_detail"]["correct"]
    assert flags.count(False) > 0  # the fixture's noisy run has wrong pairs, so both values are checked


def test_embedded_edges_match_the_networks(run_dir):
    # reference: networkx graphs of the input edge lists; every edge among matched nodes is in the
    # page once, as conserved (in both networks), A only, or B only
    import networkx as nx

    data, _ = _page_data(run_dir / "report.html")
    summary = json.loads((run_dir / "summary.json").read_text())
    read = lambda key: nx.from_pandas_edgelist(pd.read_csv(  # noqa: E731
        summary["inputs"][key]["source"], sep="\t", header=None, dtype=str), 0, 1)
    ga, gb = read("network_a"), read("network_b")
    rows = data["rows"]
    f = {r[0]: r[1] for r in rows}
    inv = {r[1]: r[0] for r in rows}

    def named(key):
        e = data["edges"][key]
        return {frozenset((rows[e[k]][0], rows[e[k + 1]][0])) for k in range(0, len(e), 2)}

    in_a = {frozenset(e) for e in ga.edges if e[0] in f and e[1] in f}
    in_b = {frozenset((inv[u], inv[v])) for u, v in gb.edges if u in inv and v in inv}
    assert named("conserved") == in_a & in_b and len(in_a & in_b) == summary["scores"]["conserved_edges"]
    assert named("a_only") == in_a - in_b and named("b_only") == in_b - in_a
    assert len(data["edges"]["conserved"]) // 2 == len(in_a & in_b)  # each edge once


def test_report_sections_follow_the_summary(run_dir, tmp_path):
    page = (run_dir / "report.html").read_text(encoding="utf-8")
    # readable labels, the raw keys only in tooltips (common practice)
    assert ">nodes of A with a candidate (share)</th>" in page and ">coverage_a</th>" not in page
    assert "title='product_edges_estimate'" in page and ">product_edges_estimate<" not in page
    assert "Null 2: random one-to-one maps" in page  # the fixture ran 10 permutations
    assert "<h2>Seeds</h2>" not in page and "<h2>Weighted scores</h2>" not in page
    # the same run without permutations, with seeds and weights (reference: the summary.json edited
    # as such a run writes it, docs/formats.md)
    other = tmp_path / "other"
    shutil.copytree(run_dir, other)
    summary = json.loads((other / "summary.json").read_text())
    summary["parameters"]["permutations"] = 0
    summary["significance"]["candidate_maps"] = None
    summary["parameters"]["weighted"] = True
    summary["scores"] |= {"conserved_weight": 123.25, "weighted_ec": 0.4375}
    summary["seeds"] = {"source": "/somewhere/seeds.tsv", "rows": 11, "pairs": 10, "repeated_rows_merged": 1,
                        "seed_edges_a": 21, "seed_edges_b": 22, "conserved_among_seeds": 19,
                        "scores_without_seed_edges": dict(summary["scores"], conserved_edges=4321),
                        "expansion": None}
    (other / "summary.json").write_text(json.dumps(summary))
    page = build_report(other).read_text(encoding="utf-8")
    assert "Null 2" not in page and "empirical p-value" not in page and "--permutations N" in page
    assert "<h2>Weighted scores</h2>" in page and "123.25" in page and "0.4375" in page
    seeds = page[page.index("<h2>Seeds</h2>"):]
    assert "/somewhere/seeds.tsv" in seeds and "11 / 10" in seeds and "4,321" in seeds
    # a directed run: the reason the significance was skipped
    summary["significance"] = {"skipped": "not computed for directed networks: its null model counts undirected edges"}
    (other / "summary.json").write_text(json.dumps(summary))
    page = build_report(other).read_text(encoding="utf-8")
    assert "No significance in this run: not computed for directed networks" in page and "Null 1" not in page


def test_report_lists_the_refinement_starts(run_dir, tmp_path):
    # the refine section of summary.json (docs/formats.md) as a table: one row per start, in order
    summary = json.loads((run_dir / "summary.json").read_text())
    starts = summary["refine"]["starts"]
    assert len(starts) >= 2  # the fixture is small: several starts by default
    page = (run_dir / "report.html").read_text(encoding="utf-8")
    section = page[page.index("<h2>Refinement starts</h2>"):]
    section = section[:section.index("</section>")]
    assert section.count("<tr>") == len(starts) + 1
    assert all(f">{s['start']}<" in section for s in starts)
    other = tmp_path / "one"
    shutil.copytree(run_dir, other)
    del summary["refine"]["starts"]
    (other / "summary.json").write_text(json.dumps(summary))
    assert "Refinement starts" not in build_report(other).read_text(encoding="utf-8")


def test_report_of_an_update_whose_network_a_no_file_holds(run_dir, tmp_path):
    # Found by testing the commands together: after `update --add-a`, network A is the previous
    # edges with the diff applied, which no file holds, so the report asked for --a and refused
    # the only file there is (the one before the diff). The run's state holds A exactly (as
    # query --run and update read it). Reference: degrees recounted by networkx on the edited file.
    import networkx as nx

    summary = json.loads((run_dir / "summary.json").read_text())
    a_file = summary["inputs"]["network_a"]["source"]
    edges = pd.read_csv(a_file, sep="\t", header=None, dtype=str)
    added = pd.DataFrame([(edges.iloc[0, 0], "fresh_node")])
    added.to_csv(tmp_path / "add.tsv", sep="\t", index=False, header=False)
    out = tmp_path / "upd"
    r = CliRunner().invoke(app, ["update", str(run_dir), "--add-a", str(tmp_path / "add.tsv"), "-o", str(out), "-q"])
    assert r.exit_code == 0, r.output
    r = CliRunner().invoke(app, ["report", str(out), "-q"])
    assert r.exit_code == 0, r.output
    assert (out / "report.html").is_file()
    from aligner.render.html import _load_run

    g = nx.Graph([tuple(e) for e in pd.concat([edges, added]).itertuples(index=False) if e[0] != e[1]])
    assert _load_run(out, None, None, None, "auto").degree == dict(g.degree())


def test_report_without_its_truth_file(run_dir, tmp_path):
    # the truth table named in summary.json is gone: no true/false column, and the page says why
    other = tmp_path / "moved"
    shutil.copytree(run_dir, other)
    summary = json.loads((other / "summary.json").read_text())
    truth = summary["inputs"]["truth"]["source"]
    summary["inputs"]["truth"]["source"] = str(tmp_path / "gone.tsv")
    (other / "summary.json").write_text(json.dumps(summary))
    data, heads = _page_data(build_report(other))
    assert "true" not in data["columns"] and "true" not in heads
    assert "cannot be read now" in (other / "report.html").read_text(encoding="utf-8")
    # --truth points to it again (reference: the truth table)
    r = CliRunner().invoke(app, ["report", str(other), "--truth", truth, "-q"])
    assert r.exit_code == 0, r.output
    data, _ = _page_data(other / "report.html")
    named, _ = _truth_pairs(truth)
    assert data["columns"][-1] == "true" and sum(r[6] is not None for r in data["rows"]) == len(
        [r for r in data["rows"] if r[0] in named])


# --------------------------------------------------------------------------- driving Chromium

class _Chromium:
    """Chromium driven over its DevTools protocol on a pipe (``--remote-debugging-pipe``: commands
    are NUL-terminated JSON read from fd 3, answers and events written to fd 4); no extra package."""

    def __init__(self, exe, profile):
        to_r, self._to_w = os.pipe()
        self._from_r, from_w = os.pipe()
        # the child's ends, moved above fd 10 so that placing them at 3 and 4 cannot clobber one another
        child_in, child_out = (fcntl.fcntl(fd, fcntl.F_DUPFD_CLOEXEC, 10) for fd in (to_r, from_w))
        os.close(to_r)
        os.close(from_w)

        def place():  # runs in the child before exec: dup2 clears close-on-exec
            os.dup2(child_in, 3)
            os.dup2(child_out, 4)

        args = [exe, "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                "--disable-component-update", "--disable-sync", "--no-first-run", "--remote-debugging-pipe",
                f"--user-data-dir={profile}", "--window-size=1200,1600", "about:blank"]
        self.proc = subprocess.Popen(args, stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL,
                                     stderr=subprocess.DEVNULL, close_fds=False, preexec_fn=place)
        os.close(child_in)
        os.close(child_out)
        self._buf, self._id, self.session = b"", 0, None

    def send(self, method, params=None, *, session=True):
        self._id += 1
        msg = {"id": self._id, "method": method, "params": params or {}}
        if session and self.session:
            msg["sessionId"] = self.session
        os.write(self._to_w, json.dumps(msg).encode() + b"\0")
        while True:
            while b"\0" not in self._buf:
                ready, _, _ = select.select([self._from_r], [], [], 60)  # a hung browser fails the test
                assert ready, f"no answer from Chromium to {method}"
                chunk = os.read(self._from_r, 1 << 16)
                assert chunk, f"Chromium closed the pipe during {method}"
                self._buf += chunk
            raw, self._buf = self._buf.split(b"\0", 1)
            answer = json.loads(raw)
            if answer.get("id") == self._id:
                assert "error" not in answer, answer
                return answer["result"]

    def open(self, url):
        target = self.send("Target.createTarget", {"url": "about:blank"}, session=False)["targetId"]
        self.session = self.send("Target.attachToTarget", {"targetId": target, "flatten": True},
                                 session=False)["sessionId"]
        self.send("Page.navigate", {"url": url})
        self.wait_for("document.readyState === 'complete'")

    def js(self, expression):
        res = self.send("Runtime.evaluate", {"expression": expression, "returnByValue": True})
        assert "exceptionDetails" not in res, res
        return res["result"].get("value")

    def wait_for(self, expression, tries=200):
        for _ in range(tries):
            if self.js(expression):
                return
            select.select([], [], [], 0.05)
        raise AssertionError(f"never true in the page: {expression}")

    def type_text(self, text):
        for ch in text:  # one key press per character, as a person types
            self.send("Input.dispatchKeyEvent", {"type": "keyDown", "text": ch, "key": ch})
            self.send("Input.dispatchKeyEvent", {"type": "keyUp", "key": ch})

    def click(self, selector):
        box = self.js(f"(function(){{var e=document.querySelector({json.dumps(selector)});e.scrollIntoView();"
                      "var r=e.getBoundingClientRect();return [r.left+r.width/2,r.top+r.height/2];})()")
        for kind in ("mousePressed", "mouseReleased"):
            self.send("Input.dispatchMouseEvent", {"type": kind, "x": box[0], "y": box[1], "button": "left",
                                                   "clickCount": 1})

    def screenshot(self, path):
        path.write_bytes(base64.b64decode(self.send("Page.captureScreenshot", {"format": "png"})["data"]))

    def close(self):
        try:
            self.send("Browser.close", session=False)
            self.proc.wait(timeout=60)
        finally:
            if self.proc.poll() is None:
                self.proc.kill()
                self.proc.wait()
            os.close(self._to_w)
            os.close(self._from_r)


@pytest.fixture
def chromium(tmp_path):
    exe = _browser()
    if exe is None:
        pytest.skip("no Chromium/Chrome on PATH (apt-get install chromium); cannot drive the page")
    browser = _Chromium(exe, tmp_path / "profile")
    try:
        yield browser
    finally:
        browser.close()


def test_pair_search_and_focus_in_headless_browser(run_dir, chromium, tmp_path):
    chromium.open((run_dir / "report.html").resolve().as_uri())
    pairs = pd.read_csv(run_dir / "alignment.tsv", sep="\t", dtype={"node_a": str, "node_b": str})
    rows = lambda: chromium.js(  # noqa: E731
        "Array.from(document.querySelectorAll('#pair-table tbody tr')).map(function(t){"
        "return [t.cells[0].textContent, t.cells[1].textContent]})")
    # before typing: the first page of rows (reference: alignment.tsv's row count)
    assert len(rows()) == min(len(pairs), 200)
    assert chromium.js("document.getElementById('pair-count').textContent").startswith(f"{len(pairs):,} pairs")
    # type a node name: the rows left are those whose node in A or B contains it (reference: alignment.tsv)
    match = lambda q: pairs[pairs["node_a"].str.contains(q, regex=False)  # noqa: E731
                            | pairs["node_b"].str.contains(q, regex=False)]
    # the name of A found in the most rows, up to 50 (a12 is in a12, a120, ..., a129)
    name = max((v for v in pairs["node_a"] if len(match(v)) <= 50), key=lambda v: (len(match(v)), v))
    hits = match(name)
    # the rows' own order is not already by conserved edges, so the sorting below is tested
    assert len(hits) >= 3 and hits["conserved"].tolist() != sorted(hits["conserved"], reverse=True)
    chromium.click("#pair-search")
    chromium.type_text(name)
    assert chromium.js("document.getElementById('pair-search').value") == name
    assert sorted(map(tuple, rows())) == sorted(zip(hits["node_a"], hits["node_b"]))
    # click the column header "conserved" twice: descending, then ascending (common practice for sortable tables)
    chromium.click("#pair-table thead th:nth-child(5)")
    got = [int(v) for v in chromium.js("Array.from(document.querySelectorAll('#pair-table tbody tr'))"
                                       ".map(function(t){return t.cells[4].textContent})")]
    assert got == sorted(hits["conserved"], reverse=True)
    # click the row of the node: the focus view appears with its matched neighbours
    # (reference: networkx graphs of the input edge lists)
    import networkx as nx

    summary = json.loads((run_dir / "summary.json").read_text())
    ga = nx.from_pandas_edgelist(pd.read_csv(summary["inputs"]["network_a"]["source"], sep="\t", header=None,
                                             dtype=str), 0, 1)
    gb = nx.from_pandas_edgelist(pd.read_csv(summary["inputs"]["network_b"]["source"], sep="\t", header=None,
                                             dtype=str), 0, 1)
    f = dict(zip(pairs["node_a"], pairs["node_b"]))
    inv = {b: a for a, b in f.items()}
    image = f[name]
    nb_a = {v for v in ga[name] if v in f}
    nb_b = {inv[v] for v in gb[image] if v in inv}
    assert chromium.js("document.getElementById('focus').hidden") is True
    chromium.click(f"#pair-table tbody tr[data-row='{pairs.index[pairs['node_a'] == name][0]}']")
    chromium.wait_for("!document.getElementById('focus').hidden")
    assert chromium.js("document.getElementById('focus-title').textContent") == f"{name} → {image}"
    assert len(nb_a | nb_b) <= 40  # every neighbour drawn (the fixture's graph is small)
    circles = chromium.js("Array.from(document.querySelectorAll('#focus-a circle')).map(function(c){"
                          "return c.getAttribute('data-row')})")
    assert sorted(pairs["node_a"].iloc[int(r)] for r in circles) == sorted(nb_a | nb_b | {name})
    at = lambda svg, cls: chromium.js(  # noqa: E731 -- lines of one class at the chosen node
        f"document.querySelectorAll('#{svg} line.{cls}[data-u=\"{circles[0]}\"], "
        f"#{svg} line.{cls}[data-v=\"{circles[0]}\"]').length")
    conserved, a_only, b_only = nb_a & nb_b, nb_a - nb_b, nb_b - nb_a
    assert at("focus-a", "e-cons") == at("focus-b", "e-cons") == len(conserved)
    assert at("focus-a", "e-here") == at("focus-b", "e-missing") == len(a_only)
    assert at("focus-b", "e-here") == at("focus-a", "e-missing") == len(b_only)
    assert len(conserved) + len(a_only) + len(b_only) > 0
    assert chromium.js("document.getElementById('page-errors').textContent") == ""
    shot = tmp_path / "focus.png"  # pytest's tmp_path, never the repository
    chromium.screenshot(shot)
    assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG specification)


def test_report_rereads_the_inputs_as_the_run_read_them(tmp_path):
    # Found by differential testing: a run read with --header no, whose files start with lines that
    # look like header lines (node_a/node_b), was re-read by the report with --header auto, which
    # dropped those lines: node 'node_a' lost an edge (degree 1 beside 2 conserved edges) and the
    # truth table's first row was lost. Reference: the degrees and the truth rows hand-counted from
    # the files as the run read them (every line is data).
    nodes = ["node_a", "node_b", "x1", "x2", "x3"]
    edges = [("node_a", "node_b"), ("node_a", "x1"), ("node_b", "x2"), ("x1", "x2"), ("x2", "x3")]
    (tmp_path / "a.tsv").write_text("".join(f"{u}\t{v}\n" for u, v in edges))
    (tmp_path / "b.tsv").write_text("".join(f"B{u}\tB{v}\n" for u, v in edges))
    (tmp_path / "p.tsv").write_text("".join(f"{v}\tB{v}\t1\n" for v in nodes))
    (tmp_path / "t.tsv").write_text("node_a\tBnode_a\nx1\tBx1\n")
    out = tmp_path / "out"
    runner = CliRunner()
    r = runner.invoke(app, ["align", str(tmp_path / "a.tsv"), str(tmp_path / "b.tsv"), "-p", str(tmp_path / "p.tsv"),
                            "--truth", str(tmp_path / "t.tsv"), "--header", "no", "-o", str(out), "-q"])
    assert r.exit_code == 0, r.output
    assert json.loads((out / "summary.json").read_text())["scores"]["conserved_edges"] == 5
    r = runner.invoke(app, ["report", str(out), "-q"])
    assert r.exit_code == 0, r.output
    data, _ = _page_data(out / "report.html")
    degree = dict(zip((row[0] for row in data["rows"]), data["degree_a"]))
    assert degree == {"node_a": 2, "node_b": 2, "x1": 2, "x2": 3, "x3": 1}
    flags = {row[0]: row[-1] for row in data["rows"]}
    assert flags == {"node_a": True, "node_b": None, "x1": True, "x2": None, "x3": None}


def test_report_of_a_directed_run_measures_conserved_arcs_against_arcs(tmp_path):
    # Found by differential testing: in a directed run the report set each pair's conserved arcs
    # (alignment.tsv counts arcs) against the node's undirected degree, so a node of two reciprocal
    # arcs showed 2 conserved beside degree 1. Reference: networkx DiGraph in- plus out-degree.
    import networkx as nx

    arcs = [("u", "v"), ("v", "u"), ("v", "w"), ("w", "x"), ("x", "u")]
    (tmp_path / "a.tsv").write_text("".join(f"{s}\t{t}\n" for s, t in arcs))
    (tmp_path / "b.tsv").write_text("".join(f"B{s}\tB{t}\n" for s, t in arcs))
    (tmp_path / "p.tsv").write_text("".join(f"{v}\tB{v}\t1\n" for v in "uvwx"))
    out = tmp_path / "out"
    runner = CliRunner()
    r = runner.invoke(app, ["align", str(tmp_path / "a.tsv"), str(tmp_path / "b.tsv"), "-p", str(tmp_path / "p.tsv"),
                            "--directed", "-o", str(out), "-q"])
    assert r.exit_code == 0, r.output
    r = runner.invoke(app, ["report", str(out), "-q"])
    assert r.exit_code == 0, r.output
    data, _ = _page_data(out / "report.html")
    g = nx.DiGraph(arcs)
    degree = dict(zip((row[0] for row in data["rows"]), data["degree_a"]))
    assert degree == {v: g.in_degree(v) + g.out_degree(v) for v in g}
    conserved = pd.read_csv(out / "alignment.tsv", sep="\t").set_index("node_a")["conserved"]
    assert all(conserved[v] <= degree[v] for v in degree) and conserved["u"] == 3


def test_a_large_run_embeds_its_least_confident_pairs(run_dir):
    # Reference: the uncapped page data of the same tables (checked against networkx above) and a
    # stable sort of alignment.tsv's confidence column: capped, the page holds the `cap` least
    # confident pairs in row order, and exactly the edges among them.
    from aligner.render import explorer
    from aligner.render.html import _load_run

    run = _load_run(run_dir, None, None, None, "auto", None)
    full = explorer.pair_data(run.pairs, run.truth, run.conserved, run.transferred, run.degree)
    cap = 50
    part = explorer.pair_data(run.pairs, run.truth, run.conserved, run.transferred, run.degree, max_pairs=cap)
    conf = run.pairs["confidence"].to_numpy()
    picked = sorted(sorted(range(len(conf)), key=lambda i: (conf[i], i))[:cap])
    assert part["total"] == full["total"] == len(run.pairs) > cap
    assert part["rows"] == [full["rows"][i] for i in picked]
    where = {i: k for k, i in enumerate(picked)}
    for key in ("conserved", "a_only", "b_only"):
        e = full["edges"][key]
        expect = {(where[e[k]], where[e[k + 1]]) for k in range(0, len(e), 2) if e[k] in where and e[k + 1] in where}
        got = part["edges"][key]
        assert {(got[k], got[k + 1]) for k in range(0, len(got), 2)} == expect
    page = explorer.explorer_section(part, "")
    assert f"The {cap} least confident of {len(run.pairs):,} matched pairs" in page
    assert "All matched pairs" in explorer.explorer_section(full, "")


def test_a_report_that_cannot_be_written_is_one_line_and_exit_2(run_dir, tmp_path, monkeypatch):
    # Found by running on a read-only and a full file system: the report printed a traceback and
    # exited 1 where align, sweep and transfer give one line and exit 2 (docs/errors.md).
    import errno

    import aligner.io.outputs as outputs

    def refuse(path, data):
        raise OSError(errno.EROFS, "Read-only file system", str(path))

    monkeypatch.setattr(outputs, "write_text_atomic", refuse)
    other = tmp_path / "copy"
    shutil.copytree(run_dir, other)
    (other / "report.html").unlink(missing_ok=True)
    r = CliRunner().invoke(app, ["report", str(other), "-q"])
    assert r.exit_code == 2, r.output
    assert "cannot be written: Read-only file system" in r.output and "Traceback" not in r.output
    assert not (other / "report.html").exists()
