import json
import shlex
from pathlib import Path

import pandas as pd
import pytest
from typer.testing import CliRunner

from aligner.cli.app import app

DEMO = Path(__file__).resolve().parents[2] / "demo_pairs" / "firefly"
runner = CliRunner()


def _align(tmp_path, *extra, out="out"):
    args = ["align", str(DEMO / "network_a.tsv"), str(DEMO / "network_b.tsv"), "--prior", str(DEMO / "prior.tsv"),
            "-o", str(tmp_path / out), "--truth", str(DEMO / "truth.tsv"), *extra]
    return runner.invoke(app, args)


def test_align_writes_documented_outputs(tmp_path):
    res = _align(tmp_path)
    assert res.exit_code == 0, res.output
    out = tmp_path / "out"
    tab = pd.read_csv(out / "alignment.tsv", sep="\t", keep_default_na=False)
    assert list(tab.columns) == ["node_a", "node_b", "score", "prior", "conserved", "confidence", "alternatives"]
    assert tab.node_a.is_unique and tab.node_b.is_unique
    summary = json.loads((out / "summary.json").read_text())
    for key in ("ec", "ics", "s3", "nc", "conserved_edges"):
        assert key in summary["scores"]
    assert summary["scores"]["conserved_edges"] == int(tab.conserved.sum()) // 2
    cons = pd.read_csv(out / "conserved_edges.tsv", sep="\t", keep_default_na=False)
    assert list(cons.columns) == ["node_a1", "node_a2", "node_b1", "node_b2"]
    assert len(cons) == summary["scores"]["conserved_edges"]
    assert "conserved edges" in res.output and "EC / ICS / S3" in res.output
    # the demo's evidence is strong: most proteins map to their true counterpart
    assert summary["scores"]["nc"] > 0.8


def test_existing_output_refused_unless_force(tmp_path):
    assert _align(tmp_path).exit_code == 0
    res = _align(tmp_path)
    assert res.exit_code == 2
    assert "already holds" in res.output and "--force" in res.output
    assert "Traceback" not in res.output
    assert _align(tmp_path, "--force").exit_code == 0


def test_demo_runs_from_any_directory(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    res = runner.invoke(app, ["demo", "-o", "demo_out"])
    assert res.exit_code == 0, res.output
    assert (tmp_path / "demo_out" / "summary.json").exists()
    assert "demo_out" in res.output
    # it ends by naming the output directory and the next commands, with the real paths
    tail = res.output.strip().splitlines()[-5:]
    assert tail[0] == f"outputs are in {Path('demo_out')}" and tail[1] == "next, try:"
    assert tail[-1] == "  aligner report demo_out"
    for line in tail[2:4]:
        words = line.split()
        assert words[:2] in (["aligner", "query"], ["aligner", "sweep"])
        assert Path(words[2]).is_file() and Path(words[3]).is_file()  # network A and B as real paths
    # the suggested query runs as printed (its node is a node of A)
    query = shlex.split(tail[2])
    assert query[:2] == ["aligner", "query"]
    res = runner.invoke(app, query[1:] + ["--json"])
    assert res.exit_code == 0, res.output
    assert json.loads(res.output)["queries"][0]["query"] == query[query.index("--node") + 1]


def test_bad_option_value_is_a_clear_error(tmp_path):
    res = _align(tmp_path, "--alpha", "1.5")
    assert res.exit_code == 2
    # the option as the user typed it, the allowed interval and the value (the declaration in aligner.config)
    assert "error: --alpha must be a number in [0, 1); got 1.5" in res.output
    assert not (tmp_path / "out").exists()
    res = _align(tmp_path, "--top-k", "0")
    assert res.exit_code == 2 and "--top-k must be a whole number >= 1; got 0" in res.output


def test_bad_input_file_names_file_and_line(tmp_path):
    bad = tmp_path / "bad.tsv"
    bad.write_text("a\tb\nb\tc\tnot-a-number\n")
    res = runner.invoke(app, ["align", str(bad), str(DEMO / "network_b.tsv"), "--prior", str(DEMO / "prior.tsv"),
                              "-o", str(tmp_path / "o")])
    assert res.exit_code == 2
    assert "bad.tsv" in res.output and "line 2" in res.output
    assert "Traceback" not in res.output


def test_help_states_defaults():
    res = runner.invoke(app, ["align", "--help"])
    assert res.exit_code == 0
    for opt in ("--alpha", "--top-k", "--min-score", "--score-kind", "--solver", "--tol", "--truth"):
        assert opt in res.output
    assert "0.9" in res.output and "default" in res.output.lower()


def test_progress_for_logs_is_one_line_per_stage_with_its_time(tmp_path):
    # Common practice for long runs whose output goes to a log: when standard error is not a
    # terminal (here, the test runner's capture), each stage is reported as it ends, in order,
    # with its time; -q silences it; a failed run reports no time for the stage that failed.
    import re

    res = _align(tmp_path)
    assert res.exit_code == 0, res.output
    stages = re.findall(r"^stage (\w+) +(\d+\.\d\d) s$", res.output, flags=re.M)
    assert [s for s, _ in stages] == ["read", "candidates", "product", "diffusion", "rounding", "refine",
                                      "scoring", "writing"]
    assert "stage " not in _align(tmp_path, "-q", out="quiet").output
    bad = runner.invoke(app, ["align", str(DEMO / "network_a.tsv"), str(DEMO / "network_b.tsv"), "--prior",
                              str(DEMO / "network_a.tsv"), "-o", str(tmp_path / "bad")])
    assert bad.exit_code == 2 and "stage read" not in bad.output


def test_summary_names_inputs_absolutely_so_report_works_from_elsewhere(tmp_path, monkeypatch):
    # Issue found in a fresh-clone trial: summary.json kept relative paths, so `aligner report`
    # from another directory could not find network A. Common practice: record absolute paths.
    monkeypatch.chdir(DEMO)
    res = runner.invoke(app, ["align", "network_a.tsv", "network_b.tsv", "--prior", "prior.tsv", "--truth",
                              "truth.tsv", "-o", str(tmp_path / "out"), "-q"])
    assert res.exit_code == 0, res.output
    ins = json.loads((tmp_path / "out" / "summary.json").read_text())["inputs"]
    for key in ("network_a", "network_b", "prior", "truth"):
        assert Path(ins[key]["source"]).is_absolute() and Path(ins[key]["source"]) == DEMO / f"{key}.tsv"
    truth = pd.read_csv(DEMO / "truth.tsv", sep="\t", comment="#", header=None, dtype=str).iloc[:, :2]
    one_to_one = truth.drop_duplicates(0).drop_duplicates(1).iloc[:20]
    one_to_one.to_csv(tmp_path / "seeds.tsv", sep="\t", header=False, index=False)
    monkeypatch.chdir(tmp_path)  # the seed file named relatively
    seeded = runner.invoke(app, ["align", str(DEMO / "network_a.tsv"), str(DEMO / "network_b.tsv"), "--prior",
                                 str(DEMO / "prior.tsv"), "--seeds", "seeds.tsv", "-o", "seeded", "-q"])
    assert seeded.exit_code == 0, seeded.output
    seeds = json.loads((tmp_path / "seeded" / "summary.json").read_text())["seeds"]
    assert Path(seeds["source"]) == tmp_path / "seeds.tsv"
    monkeypatch.chdir(tmp_path)
    rep = runner.invoke(app, ["report", str(tmp_path / "out")])
    assert rep.exit_code == 0, rep.output


def test_ctrl_c_while_the_command_line_loads_is_one_line_and_130():
    # Found by interrupting runs: Ctrl-C in the first tenth of a second, while typer and rich are
    # imported, printed a traceback (docs/errors.md: exit 130, one line). The interrupt is made to
    # land inside that import, in a separate process, by an import hook.
    import subprocess
    import sys

    code = ("import builtins\n"
            "real = builtins.__import__\n"
            "def hook(name, *args, **kwargs):\n"
            "    if name == 'aligner.cli.app':\n"
            "        raise KeyboardInterrupt\n"
            "    return real(name, *args, **kwargs)\n"
            "builtins.__import__ = hook\n"
            "from aligner.__main__ import main\n"
            "main()\n")
    got = subprocess.run([sys.executable, "-c", code, "--version"], capture_output=True, text=True, timeout=120)
    assert got.returncode == 130, got.stderr
    assert got.stderr == "interrupted; no output was left half-written\n"
