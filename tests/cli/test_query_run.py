"""``aligner query --run OUTDIR``: counterpart queries about a finished run, its inputs and options
taken from the run's state instead of its files.

The reference for every answer is the same query given the run's input files (whose answers are
checked against scipy's linear assignment and sparse solver in tests/analysis/test_query.py and
test_answer.py): asking about the run must give the same answers, field for field, but the
seconds.
"""

import json
import shutil

import numpy as np
import pytest
from typer.testing import CliRunner

from aligner.cli.app import app
from aligner.datasets.instances import as_frames, noisy_relabelled

runner = CliRunner()


def _files(tmp_path, n=300, seed=11):
    a, b, prior, _ = as_frames(noisy_relabelled(n, seed=seed, noise=0.1, decoys=3))
    paths = {k: tmp_path / f"{k}.tsv" for k in ("a", "b", "prior")}
    for key, frame in zip(paths, (a, b, prior)):
        frame.to_csv(paths[key], sep="\t", index=False)
    return paths, a


def _align(paths, out, *extra):
    res = runner.invoke(app, ["align", str(paths["a"]), str(paths["b"]), "--prior", str(paths["prior"]),
                              "-o", str(out), "-q", *extra])
    assert res.exit_code == 0, res.output
    return out


def _answers(args):
    res = runner.invoke(app, ["query", *args, "--json"])
    assert res.exit_code == 0, res.output
    return _without_seconds(json.loads(res.stdout))


def _without_seconds(obj):
    if isinstance(obj, dict):
        return {k: _without_seconds(v) for k, v in obj.items() if not k.endswith("seconds")}
    if isinstance(obj, list):
        return [_without_seconds(v) for v in obj]
    return obj


def _nodes(frame, k=4):
    names = sorted(set(frame.iloc[:, 0].astype(str)))
    return [names[i] for i in np.linspace(0, len(names) - 1, k).astype(int)]


def test_query_of_a_run_answers_as_the_query_of_its_files(tmp_path):
    paths, a = _files(tmp_path)
    run = _align(paths, tmp_path / "run")
    asked = [arg for v in _nodes(a) for arg in ("-n", v)]
    from_files = _answers([str(paths["a"]), str(paths["b"]), "--prior", str(paths["prior"]), *asked])
    from_run = _answers(["--run", str(run), *asked])
    assert from_run == from_files
    assert len(from_run["queries"]) == 4


def test_query_of_a_run_needs_no_input_file_the_state_holds(tmp_path):
    paths, a = _files(tmp_path)
    run = _align(paths, tmp_path / "run", "--alpha", "0.7", "--top-k", "3")
    asked = [arg for v in _nodes(a, 2) for arg in ("-n", v)]
    before = _answers(["--run", str(run), *asked])
    # the reference while the files exist: a query of the files with the run's options
    assert before == _answers([str(paths["a"]), str(paths["b"]), "--prior", str(paths["prior"]), "--alpha", "0.7",
                               "--top-k", "3", *asked])
    moved = tmp_path / "moved"
    moved.mkdir()
    for p in paths.values():
        shutil.move(p, moved / p.name)
    assert _answers(["--run", str(run), *asked]) == before


def test_query_of_a_run_with_seeds_reads_its_unchanged_files(tmp_path):
    paths, a = _files(tmp_path)
    seeds = tmp_path / "seeds.tsv"
    prior = paths["prior"].read_text().splitlines()
    chosen, seen_a, seen_b = [], set(), set()
    for row in prior[1:]:  # three prior pairs, each node in one of them (seeds are one-to-one)
        u, v = row.split("\t")[:2]
        if u not in seen_a and v not in seen_b and len(chosen) < 3:
            chosen.append(f"{u}\t{v}")
            seen_a.add(u)
            seen_b.add(v)
    seeds.write_text("node_a\tnode_b\n" + "\n".join(chosen) + "\n")
    run = _align(paths, tmp_path / "run", "--seeds", str(seeds))
    asked = ["-n", _nodes(a, 1)[0]]
    assert _answers(["--run", str(run), *asked]) == _answers(
        [str(paths["a"]), str(paths["b"]), "--prior", str(paths["prior"]), "--seeds", str(seeds), *asked])
    # with seeds the state does not stand for the prior: an edited prior file is refused
    paths["prior"].write_text(paths["prior"].read_text() + prior[1].split("\t")[0] + "\tnew_b\t0.5\n")
    res = runner.invoke(app, ["query", "--run", str(run), *asked])
    assert res.exit_code == 2
    assert "has changed since the run" in res.output and "align again" in res.output
    assert "Traceback" not in res.output


@pytest.mark.parametrize("case", ["inputs too", "option differs", "no inputs", "no run", "directed run"])
def test_query_of_a_run_refusals(tmp_path, case):
    paths, a = _files(tmp_path, n=60)
    node = ["-n", _nodes(a, 1)[0]]
    run = _align(paths, tmp_path / "run", *(["--directed"] if case == "directed run" else []))
    args, says = {
        "inputs too": (["--run", str(run), str(paths["a"]), *node], "leave out NETWORK_A"),
        "option differs": (["--run", str(run), "--alpha", "0.5", *node], "a query of a run keeps the run's options"),
        "no inputs": (node, "or a finished run with --run OUTDIR"),
        "no run": (["--run", str(tmp_path / "nothing"), *node], "no such run"),
        "directed run": (["--run", str(run), *node], "the run is directed"),
    }[case]
    res = runner.invoke(app, ["query", *args])
    assert res.exit_code == 2, res.output
    assert says in res.output
    assert "Traceback" not in res.output
