"""Console renderers: hand-made results in, the text a user reads out (hand-worked expectations)."""

import io
import math
import shlex
from pathlib import Path

import pandas as pd
from rich.console import Console

from aligner.render.console import next_steps, prior_message, query_tables, sweep_lines, sweep_table


def _text(renderable) -> str:
    console = Console(width=200, record=True, file=io.StringIO())
    console.print(renderable)
    return console.export_text()


def _sweep_frame():
    return pd.DataFrame({"alpha": [0.0, 0.9], "conserved_edges": [10, 1234], "ec": [0.1, 0.61234], "s3": [0.05, 0.5],
                         "prior_weight": [50.0, 41.25], "nc": [0.5, math.nan], "matched_pairs": [6, 6],
                         "solver_steps": [0, 56789], "edge_touches": [0, 1], "residual_l1": [0.0, 1e-7],
                         "solve_seconds": [0.0, 0.5], "seconds": [0.01, 0.754]})


def test_sweep_table_rows():
    text = _text(sweep_table(_sweep_frame()))
    rows = [" ".join(line.replace("│", " ").split()) for line in text.splitlines()]
    # one row per alpha: alpha, conserved (thousands separated), EC and S3 to 4 places, prior weight to 4
    # significant digits, NC (a dash for NaN: no truth table), steps, seconds to 2 places
    assert "0 10 0.1000 0.0500 50 0.5000 0 0.01" in rows
    assert "0.9 1,234 0.6123 0.5000 41.25 — 56,789 0.75" in rows


def test_sweep_lines():
    assert sweep_lines(None, "rule", [Path("o/sweep.tsv")]) == [
        "no knee: the alphas give fewer than three distinct points, or points on a straight line", "wrote o/sweep.tsv"]
    assert sweep_lines(0.8, "farthest from the chord", [Path("o/sweep.tsv"), Path("o/sweep.png")]) == [
        "suggested alpha = 0.8 (knee rule: farthest from the chord)", "wrote o/sweep.tsv, o/sweep.png"]


def test_query_tables_one_per_node():
    work = {"candidates": 3, "pairs_touched": 1200, "product_edges_scanned": 45000, "pushes": 9876, "seconds": 0.0123}
    summary = {"queries": [
        {"query": "[bold]x", "counterparts": [
            {"rank": 1, "counterpart": "y1", "score": 0.5, "error_bound": 1e-5, "prior": 2.0, "support": 1500,
             "fixed": True},
            {"rank": 2, "counterpart": "[red]y2", "score": 0.25, "error_bound": 2e-5, "prior": 1.0, "support": 3,
             "fixed": False},
            {"rank": 3, "counterpart": "y3", "score": 0.2, "error_bound": 2e-5, "prior": 1.0, "support": 30,
             "fixed": False}],
         "answer": {"counterpart": "y3", "fixed": False, "certified": True, "margin": 0.1, "runner_up": "y2",
                    "rival": None, "region_rows": 10, "region_pairs": 30},
         "work": work}]}
    (table, line), = query_tables(summary, side="b")
    text = _text(table)
    assert "Counterparts in A of [bold]x, by diffusion score" in text  # side b; markup shown as typed
    rows = [" ".join(r.replace("│", " ").split()) for r in text.splitlines()]
    assert "1 y1 0.500000 1.0e-05 2 1,500 seed pair" in rows
    assert "2 [red]y2 0.250000 2.0e-05 1 3" in rows
    # the global assignment's pick is marked where the diffusion score ranks it (found by a user
    # trial: the top-ranked counterpart was often not the one align chooses)
    assert "3 y3 0.200000 2.0e-05 1 30 assigned" in rows
    assert line == "  3 candidates · 1,200 pairs touched · 45,000 product edges scanned · 9,876 pushes · 12.3 ms"


def test_prior_message():
    assert prior_message(12345, 100, 2000, 10, 0.1, Path("p.tsv")) == (
        "wrote 12,345 pairs (100 x 2,000 labels, top 10 per node, similarity >= 0.1) to p.tsv")


def test_next_steps_are_commands_a_shell_reads_back():
    # POSIX shell quoting (shlex, Python standard library): a path with a space or a quote survives
    inputs = {"network_a": Path("data/my nets/a.tsv"), "network_b": Path("data/b.tsv"),
              "prior": Path("data/it's prior.tsv"), "truth": Path("data/truth.tsv")}
    lines = next_steps(Path("runs/run 1"), inputs, node="P 1")
    assert lines[:2] == ["outputs are in runs/run 1", "next, try:"]
    query, sweep, report = (shlex.split(line) for line in lines[2:])
    assert query == ["aligner", "query", "data/my nets/a.tsv", "data/b.tsv", "-p", "data/it's prior.tsv",
                     "--node", "P 1"]
    assert sweep[:6] == ["aligner", "sweep", "data/my nets/a.tsv", "data/b.tsv", "-p", "data/it's prior.tsv"]
    assert sweep[sweep.index("-o") + 1] == "runs/run 1" and sweep[sweep.index("--truth") + 1] == "data/truth.tsv"
    assert report == ["aligner", "report", "runs/run 1"]


def test_next_steps_suggest_a_label_prior_when_there_are_labels():
    inputs = {"network_a": Path("a.tsv"), "network_b": Path("b.tsv"), "prior": Path("p.tsv"), "truth": Path("t.tsv")}
    assert not any("prior-from-labels" in line for line in next_steps(Path("o"), inputs, node="x"))
    lines = next_steps(Path("o"), {**inputs, "labels_a": Path("la.tsv"), "labels_b": Path("lb.tsv")}, node="x")
    assert shlex.split(lines[-1]) == ["aligner", "prior-from-labels", "la.tsv", "lb.tsv", "-o",
                                      str(Path("o") / "prior_from_labels.tsv")]


def test_a_directed_runs_sizes_count_arcs():
    # Found by a user trial: a directed run's table showed undirected edges while EC counts arcs
    # (3,709 conserved arcs of 4,020, shown beside 3,969 "edges"). Definition (docs/method.md: in a
    # directed run EC, ICS and S3 count arcs): the arcs are shown, first.
    from aligner.render.console import network_size

    assert network_size("A", {"nodes": 400, "edges": 3969, "arcs": 4020}) == (
        "network A: nodes / arcs / edges", "400 / 4,020 / 3,969")
    assert network_size("B", {"nodes": 5, "edges": 4}) == ("network B: nodes / edges", "5 / 4")
