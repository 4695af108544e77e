"""Human-readable views of results already computed: the tables and lines the command line prints.

Takes plain data (summary dicts, a sweep table, a query summary) and returns rich tables or
text; prints nothing itself and imports nothing heavy.
"""

from __future__ import annotations

import shlex
from pathlib import Path
from typing import Iterable, Mapping

from rich.markup import escape
from rich.table import Table

__all__ = ["summary_table", "scores_table", "sweep_table", "sweep_lines", "query_tables", "prior_message",
           "next_steps", "transfer_table", "transfer_lines"]


def _fmt(v) -> str:
    if v is None:
        return "—"
    if isinstance(v, float):
        return f"{v:.4f}"
    if isinstance(v, int):
        return f"{v:,}"
    return str(v)


def scores_table(scores: dict, title: str = "Scores") -> Table:
    """A two-column table of the alignment scores."""
    t = Table(title=title, show_header=True, header_style="bold")
    t.add_column("measure")
    t.add_column("value", justify="right")
    labels = [
        ("conserved_edges", "conserved edges"),
        ("ec", "EC (edge correctness)"),
        ("ics", "ICS (induced conserved structure)"),
        ("s3", "S3 (symmetric substructure score)"),
        ("lccs_nodes", "largest common connected subgraph: nodes"),
        ("lccs_edges", "largest common connected subgraph: edges"),
        ("nc", "NC (node correctness)"),
        ("conserved_weight", "conserved weight"),
        ("weighted_ec", "weighted EC"),
        ("n_matched", "matched pairs"),
    ]
    if scores.get("directed"):
        labels[0] = ("conserved_edges", "conserved arcs")
    for key, label in labels:
        if key in ("nc", "conserved_weight", "weighted_ec") and scores.get(key) is None:
            continue
        t.add_row(label, _fmt(scores.get(key)))
    return t


def network_size(tag: str, net: dict) -> tuple[str, str]:
    """A network's size as a (label, value) row: nodes and edges, and in a directed run the arcs
    first (what its scores count), from a ``summary.json`` network record."""
    if net.get("arcs") is None:
        return f"network {tag}: nodes / edges", f"{net['nodes']:,} / {net['edges']:,}"
    return f"network {tag}: nodes / arcs / edges", f"{net['nodes']:,} / {net['arcs']:,} / {net['edges']:,}"


def summary_table(summary: dict) -> Table:
    """The run summary: sizes, solver figures and scores in one table."""
    t = Table(title="aligner run", show_header=True, header_style="bold")
    t.add_column("item")
    t.add_column("value", justify="right")
    ia, ib = summary["inputs"]["network_a"], summary["inputs"]["network_b"]
    t.add_row(*network_size("A", ia))
    t.add_row(*network_size("B", ib))
    for tag, net in (("A", ia), ("B", ib)):
        if net["self_loops_dropped"] or net["duplicate_edges_merged"]:
            t.add_row(f"network {tag}: self-loops dropped / duplicates merged",
                      f"{net['self_loops_dropped']:,} / {net['duplicate_edges_merged']:,}")
    pr = summary["inputs"]["prior"]
    st = summary.get("structural")
    if pr is None and st is None:
        t.add_row("prior", "none: candidates grown from the seeds")
    elif pr is None:
        t.add_row("prior", f"none: structural candidates ({st['pairs']:,} pairs, k = {st['k']})")
    else:
        t.add_row("prior rows / usable pairs", f"{pr['rows']:,} / {pr['pairs']:,}")
        if st is not None:
            t.add_row("structural candidates added", f"{st['pairs']:,} (weight {st['weight']:g})")
    if pr is not None and pr["unknown_node_rows"]:
        t.add_row("prior rows naming unknown nodes", f"{pr['unknown_node_rows']:,}")
    sd = summary.get("seeds")
    if sd:
        t.add_row("seed pairs / conserved edges among them", f"{sd['pairs']:,} / {sd['conserved_among_seeds']:,}")
    s = summary["sizes"]
    t.add_row("candidate pairs", f"{s['candidates']:,}")
    t.add_row("coverage A / B", f"{s['coverage_a']:.1%} / {s['coverage_b']:.1%}")
    t.add_row("product-graph edges", f"{s['product_edges']:,}")
    sv = summary["solver"]
    steps = sv.get("pushes", sv.get("iterations"))
    t.add_row(f"{sv['solver']} solve: {'pushes' if 'pushes' in sv else 'iterations'} / edge touches",
              f"{steps:,} / {sv['edge_touches']:,}")
    t.add_row("residual (1-norm) / error bound", f"{sv['residual_l1']:.2e} / {sv['error_bound_l1']:.2e}")
    sc = summary["scores"]
    rf = summary.get("refine")
    if rf and "skipped" not in rf:
        t.add_row("refinement: iterations / conserved edges gained",
                  f"{rf['iterations']:,} / {rf['conserved_after'] - rf['conserved_before']:+,}")
        if rf.get("starts"):
            ends = [st["conserved_after"] for st in rf["starts"]]
            t.add_row("refinement starts: conserved edges reached", f"{len(ends)}: {min(ends):,} to {max(ends):,}")
    elif rf:
        t.add_row("refinement", rf["skipped"])
    t.add_row("matched pairs", f"{sc['n_matched']:,}")
    t.add_row("conserved arcs" if sc.get("directed") else "conserved edges", f"{sc['conserved_edges']:,}")
    if sc.get("conserved_weight") is not None:
        t.add_row("conserved weight / weighted EC", f"{sc['conserved_weight']:,.4g} / {sc['weighted_ec']:.4f}")
    t.add_row("EC / ICS / S3", f"{sc['ec']:.4f} / {sc['ics']:.4f} / {sc['s3']:.4f}")
    t.add_row("largest common connected subgraph", f"{sc['lccs_nodes']:,} nodes, {sc['lccs_edges']:,} edges")
    if sc.get("nc") is not None:
        t.add_row("NC (node correctness)", f"{sc['nc']:.4f}")
    if sd:
        fr = sd["scores_without_seed_edges"]
        t.add_row("without seed-seed edges: EC / S3" + (" / NC (non-seed nodes)" if fr.get("nc") is not None else ""),
                  f"{fr['ec']:.4f} / {fr['s3']:.4f}" + (f" / {fr['nc']:.4f}" if fr.get("nc") is not None else ""))
    sig = summary.get("significance") or {}
    rb, cm = sig.get("random_bijection"), sig.get("candidate_maps")
    if rb:
        z = "—" if rb.get("z") is None else f"{rb['z']:.1f}"
        t.add_row("chance (random bijection): mean ± sd / z", f"{rb['mean']:.1f} ± {rb['sd']:.1f} / {z}")
    if cm:
        t.add_row(f"chance ({cm['permutations']:,} candidate maps): max / p-value",
                  f"{cm['null_max']:,} / {cm['p_value']:.3g}")
    total = sum(v for v in summary["timings"].values())
    t.add_row("time", f"{total:.2f} s")
    return t


def sweep_table(table) -> Table:
    """One row per alpha of a sweep.

    Parameters
    ----------
    table : pandas.DataFrame
        A sweep table (:data:`aligner.analysis.sweep.SWEEP_COLUMNS`); NaN NC (no truth) shows as a dash.

    Returns
    -------
    rich.table.Table
    """
    t = Table(title="aligner sweep", header_style="bold")
    for c in ("alpha", "conserved", "EC", "S3", "prior weight", "NC", "steps", "seconds"):
        t.add_column(c, justify="right")
    for r in table.itertuples(index=False):
        t.add_row(f"{r.alpha:g}", f"{r.conserved_edges:,}", f"{r.ec:.4f}", f"{r.s3:.4f}", f"{r.prior_weight:,.4g}",
                  "—" if r.nc != r.nc else f"{r.nc:.4f}", f"{r.solver_steps:,}", f"{r.seconds:.2f}")
    return t


def sweep_lines(knee_alpha: float | None, knee_rule: str, written: Iterable[Path], *,
                weights_finite: bool = True) -> list[str]:
    """The lines printed after a sweep's table.

    Parameters
    ----------
    knee_alpha : float or None
        The alpha at the knee of the trade-off curve, None when there is none.
    knee_rule : str
        How the knee was chosen, shown beside it.
    written : iterable of Path
        The files written.
    weights_finite : bool
        False when a prior weight of the table passed the largest float (no knee is sought then).

    Returns
    -------
    list of str
        The suggested alpha (or why there is none), then the files written.
    """
    if knee_alpha is None and not weights_finite:
        first = "no knee: a prior weight passed the largest float (see the warning above)"
    elif knee_alpha is None:
        first = "no knee: the alphas give fewer than three distinct points, or points on a straight line"
    else:
        first = f"suggested alpha = {knee_alpha:g} (knee rule: {knee_rule})"
    return [first, "wrote " + ", ".join(str(p) for p in written)]


def query_tables(summary: Mapping, *, side: str) -> list[tuple[Table, str]]:
    """The tables of a counterpart query, one per asked node.

    Parameters
    ----------
    summary : mapping
        ``QueryResult.summary``: ``queries``, each with ``query``, ``counterparts`` and ``work``.
    side : {"a", "b"}
        The side of the asked nodes (their counterparts are in the other network).

    Returns
    -------
    list of (rich.table.Table, str)
        For each node, its counterparts and a line of the work its query took.
    """
    other = "B" if side == "a" else "A"
    shown = []
    for rec in summary["queries"]:
        t = Table(title=f"Counterparts in {other} of {escape(str(rec['query']))}, by diffusion score",
                  header_style="bold")
        for col, just in (("rank", "right"), ("counterpart", "left"), ("score", "right"), ("± bound", "right"),
                          ("prior", "right"), ("support", "right"), ("note", "left")):
            t.add_column(col, justify=just)
        # the global assignment's counterpart, marked: the diffusion score alone also ranks high the
        # pairs with few product-graph neighbours (docs/method.md, what the score is not)
        chosen = (rec.get("answer") or {}).get("counterpart")
        for row in rec["counterparts"]:
            note = "seed pair" if row["fixed"] else "assigned" if chosen is not None and \
                str(row["counterpart"]) == str(chosen) else ""
            t.add_row(str(row["rank"]), escape(str(row["counterpart"])), f"{row['score']:.6f}",
                      f"{row['error_bound']:.1e}", f"{row['prior']:.4g}", f"{row['support']:,}", note)
        if rec.get("answer"):
            t.caption = _answer_line(rec["answer"])
        w = rec["work"]
        work = (f"  {w['candidates']} candidates · {w['pairs_touched']:,} pairs touched · "
                f"{w['product_edges_scanned']:,} product edges scanned · {w['pushes']:,} pushes · "
                f"{1000 * w['seconds']:.1f} ms")
        shown.append((t, work))
    return shown


def _answer_line(ans: Mapping) -> str:
    """The answer of a query in one line: the global assignment's counterpart, and how sure."""
    if ans["counterpart"] is None:
        return "global assignment: no counterpart (unmatched in the region's assignment)"
    if ans["fixed"]:
        return f"global assignment: {escape(ans['counterpart'])} (a seed pair)"
    how = (f"certified, margin {ans['margin']:.2g}" if ans["certified"] else
           "not certified" + (f", margin {ans['margin']:.2g}" if ans["margin"] is not None else ""))
    others = [f"{label} {escape(str(ans[key]))}" for key, label in (("runner_up", "runner-up"), ("rival", "rival"))
              if ans[key] is not None]
    return (f"global assignment: {escape(ans['counterpart'])} ({how}; " + ", ".join(others + [
        f"region {ans['region_rows']:,} nodes, {ans['region_pairs']:,} pairs"]) + ")")


def transfer_table(rows) -> Table:
    """The transferred edges ``aligner transfer`` selected, best first, one row each.

    Parameters
    ----------
    rows : pandas.DataFrame
        Rows of transferred_edges.tsv (docs/formats.md), in their order.

    Returns
    -------
    rich.table.Table
    """
    t = Table(title="Transferred interactions (pair 1 - pair 2)", header_style="bold")
    for col, just in (("#", "right"), ("dir", "left"), ("in A", "left"), ("in B", "left"), ("support", "right"),
                      ("tri", "right"), ("cn", "right")):
        t.add_column(col, justify=just)
    for rank, r in enumerate(rows.itertuples(index=False), 1):
        t.add_row(str(rank), r.direction, escape(f"{r.node_a1} - {r.node_a2}"), escape(f"{r.node_b1} - {r.node_b2}"),
                  f"{r.support:.4g}", f"{r.triangles:,}", f"{r.common_neighbours:,}")
    return t


def transfer_lines(table, kept, min_support: float, path) -> list[str]:
    """The lines printed after ``aligner transfer``'s table: what was kept of what, and the file written.

    Parameters
    ----------
    table, kept : pandas.DataFrame
        The whole transferred_edges.tsv and the rows selected from it.
    min_support : float
        The support floor.
    path : path
        The file written.

    Returns
    -------
    list of str
    """
    per = {d: int((table["direction"] == d).sum()) for d in ("A->B", "B->A")}
    return [f"{len(kept):,} of {len(table):,} transferred edges shown (A->B: {per['A->B']:,}, B->A: "
            f"{per['B->A']:,}; support >= {min_support:g}, best first); tri: conserved triangles through the "
            "pair, cn: matched common neighbours on the receiving side", f"wrote {path}"]


def prior_message(pairs: int, labels_a: int, labels_b: int, top_k: int, min_similarity: float, path) -> str:
    """The line ``prior-from-labels`` prints.

    Parameters
    ----------
    pairs, labels_a, labels_b : int
        Pairs written; labels read on each side.
    top_k : int
        Pairs kept per node.
    min_similarity : float
        The similarity floor.
    path : path
        The file written.

    Returns
    -------
    str
    """
    return (f"wrote {pairs:,} pairs ({labels_a:,} x {labels_b:,} labels, top {top_k} per node, "
            f"similarity >= {min_similarity:g}) to {path}")


def next_steps(outdir: Path, inputs: Mapping[str, Path], *, node: str) -> list[str]:
    """The closing lines of ``aligner demo``: where the outputs are and the commands to try next.

    Parameters
    ----------
    outdir : Path
        The demo's output directory.
    inputs : mapping of str to Path
        The paths of ``network_a``, ``network_b``, ``prior`` and ``truth``; with ``labels_a`` and
        ``labels_b`` (node labels), a ``prior-from-labels`` command is suggested too.
    node : str
        A node of A to ask about.

    Returns
    -------
    list of str
        Paths and names are quoted for a POSIX shell, so each command can be pasted as it is.
    """
    q = lambda p: shlex.quote(str(p))  # noqa: E731
    a, b, prior = q(inputs["network_a"]), q(inputs["network_b"]), q(inputs["prior"])
    return [
        f"outputs are in {outdir}",
        "next, try:",
        f"  aligner query {a} {b} -p {prior} --node {q(node)}",
        f"  aligner sweep {a} {b} -p {prior} --truth {q(inputs['truth'])} -o {q(outdir)} --alphas 0,0.5,0.8,0.9,0.95",
        f"  aligner report {q(outdir)}",
    ] + ([f"  aligner prior-from-labels {q(inputs['labels_a'])} {q(inputs['labels_b'])} "
          f"-o {q(Path(outdir) / 'prior_from_labels.tsv')}"] if "labels_a" in inputs else [])
