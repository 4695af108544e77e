"""One self-contained HTML page from a finished run: every figure embedded, nothing fetched."""

from __future__ import annotations

import base64
import html
import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from aligner.analysis.subgraph import conserved_ball
from aligner.errors import AlignerError, InputFormatError, InvalidParameterError
from aligner.io.outputs import (REPORT_FILE, RERUN_SWEEP, TRANSFER_TABLE, damaged_output, read_run_table,
                                read_summary, read_transferred)
from aligner.io.readers import read_network, read_table
from aligner.io.state import STATE_FILE, held_network, read_state
from aligner.render import explorer
from aligner.render.console import network_size
from aligner.render.figures import (LABEL_ALL_UP_TO, LABELLED_HUBS, degree_plot, figure_bytes, histogram,
                                    subgraph_drawing, sweep_figure)

__all__ = ["build_report", "REPORT_FILE", "MAX_DRAWN_NODES"]

#: the conserved subgraph drawing keeps at most this many nodes (a breadth-first ball around its
#: best-connected node), so the picture stays readable
MAX_DRAWN_NODES = 150
TOP_ROWS = 20

#: readable names of summary.json's keys (``parameters``, ``sizes``); the key itself stays in the
#: row's tooltip, and a key missing here is shown with its underscores as spaces
LABELS = {
    "delimiter": "column delimiter (— : detected)", "header": "header line", "directed": "directed (arcs)",
    "weighted": "edge weights used", "top_k": "candidates per node (top k)", "min_score": "lowest prior score kept",
    "score_kind": "kind of prior score", "structural": "structural candidates",
    "structural_weight": "weight of structural similarity", "seed_weight": "weight of the seeds",
    "alpha": "α, weight of the wiring against the prior", "tol": "diffusion tolerance (1-norm residual)",
    "solver": "diffusion solver", "normalization": "random-walk normalisation", "rounding": "assignment solver",
    "refine": "refinement", "beta": "refinement β", "refine_iter": "refinement iterations (cap)",
    "permutations": "random maps for the p-value", "permutation_seed": "seed of the random maps",
    "max_memory": "memory budget (GiB; — : half the machine's)",
    "candidates": "candidate pairs", "coverage_a": "nodes of A with a candidate (share)",
    "coverage_b": "nodes of B with a candidate (share)", "product_edges": "product-graph edges",
    "product_edges_estimate": "product-graph edges, bound checked against the memory budget",
    "matched_pairs": "matched pairs",
}


def _label(key: str) -> str:
    return LABELS.get(key, key.replace("_", " "))

_CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",sans-serif;margin:0;background:#f6f5f1;color:#1d232b}
header{background:#23384d;color:#f3efe6;padding:18px 28px}
header h1{margin:0;font-size:1.45em;font-weight:600}
header p{margin:4px 0 0;opacity:.8;font-size:.9em}
main{max-width:1080px;margin:0 auto;padding:12px 24px 40px}
section{background:#fff;border:1px solid #e2ded5;border-radius:6px;margin:16px 0;padding:12px 18px}
h2{font-size:1.08em;color:#23384d;border-bottom:2px solid #d0542c;display:inline-block;padding-bottom:2px}
table{border-collapse:collapse;font-size:.86em;margin:6px 0}
td,th{padding:3px 10px;border-bottom:1px solid #ece9e2;text-align:left}
th{background:#f0ede6}
td.n{text-align:right;font-variant-numeric:tabular-nums}
.grid{display:flex;flex-wrap:wrap;gap:14px}
.grid figure{margin:0;flex:1 1 460px}
figcaption{font-size:.8em;color:#5b636d}
img{max-width:100%;height:auto}
.note{font-size:.82em;color:#5b636d}
"""

# fills #page-check once every image has loaded, so a headless browser's DOM dump tells a test
# whether the figures decoded; errors in the page land there too
_CHECK = """
<script>
window.addEventListener('error', function (e) {
  document.getElementById('page-errors').textContent += 'error: ' + e.message + ';';
});
window.addEventListener('load', function () {
  var imgs = document.images, ok = 0;
  for (var i = 0; i < imgs.length; i++) { if (imgs[i].complete && imgs[i].naturalWidth > 0) ok++; }
  document.getElementById('page-check').textContent = 'images ' + imgs.length + ' decoded ' + ok;
});
</script>
"""


def _esc(v) -> str:
    return html.escape(str(v))


def _fmt(v) -> str:
    if v is None or (isinstance(v, float) and np.isnan(v)):
        return "—"
    if isinstance(v, (bool, np.bool_)):
        return "true" if v else "false"
    if isinstance(v, (int, np.integer)):
        return f"{int(v):,}"
    if isinstance(v, (float, np.floating)):
        v = float(v)
        return f"{v:.3g}" if (abs(v) < 1e-3 and v != 0) or abs(v) >= 1e6 else f"{v:.4f}".rstrip("0").rstrip(".")
    return str(v)


def _kv_table(rows, keys=None) -> str:
    """A two-column table of (label, value); ``keys``, one per row, go into the label's tooltip."""
    keys = keys or [None] * len(rows)
    body = "".join(f"<tr><th{'' if key is None else f' title={_q(key)}'}>{_esc(k)}</th>"
                   f"<td class='n'>{_esc(_fmt(v))}</td></tr>" for (k, v), key in zip(rows, keys))
    return f"<table>{body}</table>"


def _q(v) -> str:
    return "'" + html.escape(str(v), quote=True) + "'"


def _keyed_table(d: dict) -> str:
    """A summary.json object as a table with readable labels (the keys in the tooltips)."""
    items = [(k, "yes" if v is True else "no" if v is False else v) for k, v in d.items() if not isinstance(v, dict)]
    return _kv_table([(_label(k), v) for k, v in items], [k for k, _ in items])


def _frame_table(df: pd.DataFrame) -> str:
    head = "".join(f"<th>{_esc(c)}</th>" for c in df.columns)
    body = "".join("<tr>" + "".join(
        f"<td class='n'>{_esc(_fmt(v))}</td>" if isinstance(v, (int, float, np.number)) else f"<td>{_esc(v)}</td>"
        for v in row) + "</tr>" for row in df.itertuples(index=False))
    return f"<table><tr>{head}</tr>{body}</table>"


def _png(fig) -> str:
    return base64.b64encode(figure_bytes(fig, ("png",))["png"]).decode("ascii")


def _figure(b64: str, alt: str, caption: str) -> str:
    return (f"<figure><img alt='{_esc(alt)}' src='data:image/png;base64,{b64}'>"
            f"<figcaption>{_esc(caption)}</figcaption></figure>")


def _significance_rows(sig: dict | None):
    if not sig:
        return []
    rows = []
    rb = sig.get("random_bijection") or {}
    if rb:
        rows += [("uniform random bijection: expected conserved edges", rb.get("mean")),
                 ("uniform random bijection: standard deviation", rb.get("sd")),
                 ("z-score of the observed count", rb.get("z"))]
    cm = sig.get("candidate_maps")
    if cm:
        rows += [("random candidate maps", cm.get("permutations")),
                 ("random candidate maps: mean / max conserved edges",
                  f"{_fmt(cm.get('null_mean'))} / {_fmt(cm.get('null_max'))}"),
                 ("empirical p-value, (1 + #≥ observed) / (N + 1)", cm.get("p_value"))]
    return rows


@dataclass(frozen=True, eq=False)
class _Run:
    """The files of a finished run, read back: its directory, summary, pairs, conserved edges, A's degrees."""

    out: Path
    summary: dict
    pairs: pd.DataFrame
    conserved: pd.DataFrame
    degree: dict
    transferred: pd.DataFrame | None = None
    #: per pair of ``pairs``: True / False when its node of A is in the truth table, else None;
    #: None for the whole run when no truth table was given or it could not be read
    truth: list | None = None
    #: what the page says about the truth column
    truth_note: str = ""


def _truth_flags(pairs: pd.DataFrame, summary: dict, truth, delimiter, header) -> tuple[list | None, str]:
    """The true/false flag of each matched pair from the run's truth table (the file summary.json
    names, or ``truth``), and a sentence for the page. A pair is true when it is a row of the
    table; a node of A absent from the table gets None (as NC counts only the table's nodes)."""
    named = (summary.get("inputs") or {}).get("truth")
    if truth is None and not named:
        return None, ""
    src = truth if truth is not None else named.get("source", "")
    try:
        tab = read_table(src, min_cols=2, max_cols=64, delimiter=delimiter, header=header, what="truth table")
    except (AlignerError, OSError) as exc:
        return None, (f"The run was scored against a truth table ({src}) that cannot be read now ({exc}), so the "
                      "tables have no true/false column; give it with aligner report --truth.")

    def names(col):
        c = tab.text(col)
        return [str(v) for v in (c.to_pylist() if hasattr(c, "to_pylist") else c)]

    a, b = names(0), names(1)
    known_a, true_pairs = set(a), set(zip(a, b))
    flags = [None if x not in known_a else (x, y) in true_pairs
             for x, y in zip(pairs["node_a"].astype(str), pairs["node_b"].astype(str))]
    n_true = sum(1 for f in flags if f)
    n_known = sum(1 for f in flags if f is not None)
    return flags, (f"true: the pair is a row of the truth table {src} ({n_true:,} of the {n_known:,} matched nodes "
                   "of A that it names; — : the node is not in the table).")


#: what the report reads from summary.json by name, parents before children: (key, what it must
#: be, whether it may be absent or null); a child is looked at only when its parent is there
_SUMMARY_SHAPE = (
    ("inputs", dict, False), ("inputs.network_a", dict, False), ("inputs.network_a.source", str, False),
    ("inputs.network_a.nodes", int, False), ("inputs.network_a.edges", int, False),
    ("inputs.network_b", dict, False), ("inputs.network_b.source", str, False),
    ("inputs.network_b.nodes", int, False), ("inputs.network_b.edges", int, False),
    ("inputs.prior", dict, True), ("inputs.prior.source", str, False), ("inputs.prior.rows", int, False),
    ("inputs.prior.pairs", int, False), ("inputs.truth", dict, True), ("inputs.truth.source", str, False),
    ("parameters", dict, True), ("sizes", dict, True), ("scores", dict, False),
    ("significance", dict, True), ("significance.random_bijection", dict, True),
    ("significance.candidate_maps", dict, True), ("seeds", dict, True),
    ("seeds.scores_without_seed_edges", dict, True), ("seeds.expansion", dict, True),
    ("seeds.expansion.accepted_per_round", list, True), ("refine", dict, True), ("refine.starts", list, True),
    ("ambiguity", dict, True),
    *((f"ambiguity.{k}", float, False) for k in ("groups", "nodes_in_groups", "largest_group",
                                                  "neutral_exchanges", "indistinguishable_pairs",
                                                  "prior_tolerance")),
)
_KIND_TEXT = {dict: "an object", list: "a list", str: "text", int: "a whole number", float: "a number"}


def _summary_problem(summary: dict) -> str | None:
    """What in ``summary`` is not as the report reads it (:data:`_SUMMARY_SHAPE`), or None."""
    for key, kind, optional in _SUMMARY_SHAPE:
        holder: object = summary
        for part in key.split(".")[:-1]:
            holder = holder.get(part) if isinstance(holder, dict) else None
        if not isinstance(holder, dict):
            continue  # an optional parent left out (a bad one was named before)
        value = holder.get(key.rsplit(".", 1)[-1])
        if value is None:
            if optional:
                continue
            return f"'{key}' is missing"
        ok = (isinstance(value, (int, float)) if kind is float else isinstance(value, kind)) \
            and not (kind in (int, float) and isinstance(value, bool))
        if not ok:
            return f"'{key}' is not {_KIND_TEXT[kind]}: {json.dumps(value)[:40]}"
    return None


#: alignment.tsv's and conserved_edges.tsv's columns as the report reads them (docs/formats.md)
_ALIGNMENT_COLUMNS = {"node_a": "name", "node_b": "name", "score": "number", "prior": "number",
                      "conserved": "number", "confidence": "number", "alternatives": "text"}
_CONSERVED_COLUMNS = {"node_a1": "name", "node_a2": "name", "node_b1": "name", "node_b2": "name"}
#: sweep.tsv's columns as the report reads them (nc is NA without a truth table)
_SWEEP_COLUMNS = {"alpha": "number", "conserved_edges": "number", "prior_weight": "number", "ec": "number?",
                  "ics": "number?", "s3": "number?", "nc": "number?", "matched_pairs": "number?"}


def _load_run(out: Path, network_a, network_b, delimiter: str | None, header: str, truth=None) -> _Run:
    need = [out / "summary.json", out / "alignment.tsv", out / "conserved_edges.tsv"]
    missing = [p.name for p in need if not p.is_file()]
    if missing:
        raise InvalidParameterError(f"'{out}' does not hold a finished run: {', '.join(missing)} missing; run "
                                    "aligner align -o there first.")
    summary = read_summary(out)
    problem = _summary_problem(summary)
    if problem is not None:
        raise damaged_output(out / "summary.json", problem)
    # left at their defaults, the inputs are re-read as the run read them (its own --header, --delimiter)
    params = summary.get("parameters") or {}
    delimiter = params.get("delimiter") if delimiter is None else delimiter
    header = (params.get("header") or "auto") if header == "auto" else header
    pairs = read_run_table(out / "alignment.tsv", _ALIGNMENT_COLUMNS, required=("node_a", "node_b", "score"))
    cons = read_run_table(out / "conserved_edges.tsv", _CONSERVED_COLUMNS, required=("node_a1", "node_a2"))
    src_a = network_a if network_a is not None else summary["inputs"]["network_a"]["source"]
    if network_b is not None and not Path(network_b).exists():
        raise InvalidParameterError(f"network B '{network_b}' does not exist")
    directed = bool(params.get("directed"))
    # A from its file; where no file is there (an update's edge diff, which no file holds, or a
    # file moved) from the run's state, which holds an unweighted A exactly
    net_a = _held_network_a(out, directed) if network_a is None and not Path(src_a).is_file() else None
    if net_a is None:
        try:
            net_a = read_network(src_a, delimiter=delimiter, header=header, directed=directed)
        except (OSError, AlignerError) as exc:
            raise InvalidParameterError(f"cannot re-read network A from '{src_a}' ({exc}); give it with --a") from None
    _check_run_network(net_a, "a", src_a, out, summary, pairs)
    if network_b is not None:  # B is not drawn (its size is in summary.json), but one given is the run's
        _check_run_network(read_network(network_b, delimiter=delimiter, header=header, directed=directed), "b",
                           network_b, out, summary, pairs)
    moved = read_transferred(out) if (out / TRANSFER_TABLE).is_file() else None
    flags, note = _truth_flags(pairs, summary, truth, delimiter, header)
    # the degree the pairs' conserved counts are measured against: arcs in and out of the node in a
    # directed run (alignment.tsv counts conserved arcs), edges otherwise
    degree = (np.bincount(np.asarray(net_a.arcs).reshape(-1), minlength=net_a.n) if directed else net_a.degree)
    return _Run(out, summary, pairs, cons, dict(zip(net_a.names.astype(str), degree.astype(int))), moved, flags, note)


def _held_network_a(out: Path, directed: bool):
    """Network A of the run in ``out`` from its state (:func:`aligner.io.state.held_network`), or
    None when the run kept no state, a damaged one, or one that does not hold A (weighted)."""
    if not (out / STATE_FILE).is_file():
        return None
    try:
        return held_network(read_state(out), "a", directed=directed)
    except InputFormatError:  # not readable as a state: A is read from its file, as without one
        return None


def _check_run_network(net, side: str, source, out: Path, summary: dict, pairs: pd.DataFrame) -> None:
    """Refuse a network that is not the run's network of ``side`` ("a" or "b"): one lacking a matched
    node of that side in alignment.tsv, or whose nodes and edges are not the numbers summary.json
    gives (the degrees and the drawing of the page would be another network's, read as the run's)."""
    name, flag = side.upper(), f"--{side}"
    advice = f"give the run's network {name} with {flag}"
    names = pairs[f"node_{side}"].astype(str)
    missing = names[~names.isin(pd.Index(net.names.astype(str)))]
    if len(missing):
        examples = ", ".join(repr(v) for v in missing.iloc[:3])
        raise InputFormatError(f"is not network {name} of the run in {out}: {len(missing):,} of the {len(names):,} "
                               f"matched nodes of {name} in alignment.tsv are missing from it (for example "
                               f"{examples}); {advice}", path=str(source))
    rec = summary["inputs"][f"network_{side}"]
    if (net.n, net.n_edges) != (rec["nodes"], rec["edges"]):
        raise InputFormatError(f"is not network {name} of the run in {out}: it has {net.n:,} nodes and "
                               f"{net.n_edges:,} edges where the run's had {rec['nodes']:,} and {rec['edges']:,} "
                               f"(summary.json); {advice}", path=str(source))


def _inputs_section(summary: dict) -> str:
    ins = summary["inputs"]
    rows = [("network A", ins["network_a"]["source"]), network_size("A", ins["network_a"]),
            ("network B", ins["network_b"]["source"]), network_size("B", ins["network_b"])]
    if ins.get("prior"):
        rows += [("prior", ins["prior"]["source"]),
                 ("prior rows / usable pairs", f"{ins['prior']['rows']:,} / {ins['prior']['pairs']:,}")]
    if ins.get("truth"):
        rows.append(("truth table", ins["truth"]["source"]))
    return ("<section><h2>Inputs and parameters</h2><div class='grid'><div>" + _kv_table(rows) + "</div><div>"
            + _keyed_table(summary.get("parameters", {})) + "</div><div>" + _keyed_table(summary.get("sizes", {}))
            + "</div></div></section>")


def _score_rows(sc: dict) -> list:
    rows = [("conserved edges", sc.get("conserved_edges")), ("EC (edge correctness)", sc.get("ec")),
            ("ICS (induced conserved structure)", sc.get("ics")), ("S3 (symmetric substructure score)", sc.get("s3")),
            ("largest common connected subgraph: nodes", sc.get("lccs_nodes")),
            ("largest common connected subgraph: edges", sc.get("lccs_edges")), ("matched pairs", sc.get("n_matched"))]
    if sc.get("nc") is not None:
        rows.append(("NC (node correctness)", sc.get("nc")))
    return rows


def _scores_section(summary: dict) -> str:
    sc = summary["scores"]
    rows = _score_rows(sc)
    if sc.get("directed"):
        rows.append(("counted as", "arcs (directed run)"))
    sig = summary.get("significance") or {}
    sig_rows = _significance_rows(sig)
    notes = []
    if sig.get("random_bijection"):
        notes.append("Null 1: a uniformly random one-to-one map between the matched nodes of A and their images "
                     "(exact mean and variance).")
    if sig.get("candidate_maps"):
        notes.append("Null 2: random one-to-one maps using candidate pairs only; the p-value counts the maps that "
                     "conserve at least as many edges as the alignment.")
    elif sig_rows:
        notes.append("No random candidate maps were drawn (align --permutations N adds a p-value from them).")
    if sig.get("skipped"):
        side = f"<p class='note'>No significance in this run: {_esc(sig['skipped'])}.</p>"
    elif not sig_rows:
        side = "<p class='note'>No significance in this run (summary.json holds none).</p>"
    else:
        side = _kv_table(sig_rows) + "".join(f"<p class='note'>{_esc(n)}</p>" for n in notes)
    return ("<section><h2>Scores</h2><div class='grid'><div>" + _kv_table(rows) + "</div><div>" + side
            + "</div></div></section>")


def _weighted_section(summary: dict) -> str:
    """Conserved weight and weighted EC of a run with --weighted, or nothing."""
    sc = summary.get("scores") or {}
    if not (summary.get("parameters") or {}).get("weighted") and "weighted_ec" not in sc:
        return ""
    ins = summary.get("inputs") or {}
    rows = [("conserved weight", sc.get("conserved_weight")), ("weighted EC", sc.get("weighted_ec")),
            ("total edge weight of A", (ins.get("network_a") or {}).get("total_weight")),
            ("total edge weight of B", (ins.get("network_b") or {}).get("total_weight"))]
    return ("<section><h2>Weighted scores</h2>" + _kv_table(rows)
            + "<p class='note'>The run read the third column of both edge lists as weights (--weighted). Conserved "
              "weight and weighted EC are defined in docs/method.md; the unweighted scores above count edges.</p>"
              "</section>")


def _seeds_section(summary: dict) -> str:
    """What the seeds contributed (summary.json's ``seeds``), or nothing for a run without seeds."""
    seeds = summary.get("seeds")
    if not seeds:
        return ""
    rows = [("seed table", seeds.get("source")), ("rows / distinct seed pairs", f"{_fmt(seeds.get('rows'))} / "
                                                                             f"{_fmt(seeds.get('pairs'))}"),
            ("repeated rows merged", seeds.get("repeated_rows_merged")),
            ("edges among seed nodes in A / in B", f"{_fmt(seeds.get('seed_edges_a'))} / "
                                                   f"{_fmt(seeds.get('seed_edges_b'))}"),
            ("conserved edges among seed nodes", seeds.get("conserved_among_seeds"))]
    parts = ["<section><h2>Seeds</h2><div class='grid'><div>", _kv_table(rows),
             "<p class='note'>Edges among seed nodes are conserved whatever the aligner does; the scores beside "
             "leave them out (NC over the truth table's nodes that are not seeds).</p></div>"]
    without = seeds.get("scores_without_seed_edges")
    if without:
        parts += ["<div><h3>Scores without the edges among seeds</h3>", _kv_table(_score_rows(without)), "</div>"]
    exp = seeds.get("expansion")
    if exp:
        rows = [("expansion rounds", exp.get("rounds")), ("provisional pairs", exp.get("provisional_pairs")),
                ("candidates", exp.get("candidates")),
                ("accepted per round", ", ".join(_fmt(v) for v in exp.get("accepted_per_round") or []))]
        parts += ["<div><h3>Expansion from the seeds (no prior)</h3>", _kv_table(rows), "</div>"]
    return "".join(parts) + "</div></section>"


def _sweep_section(out: Path) -> str:
    """The trade-off curve of a sweep written into the run's directory, or nothing."""
    if not (out / "sweep.tsv").is_file():
        return ""
    from aligner.analysis.sweep import KNEE_RULE, knee_index

    tab = read_run_table(out / "sweep.tsv", _SWEEP_COLUMNS, required=("alpha", "conserved_edges", "prior_weight"),
                         rerun=RERUN_SWEEP)
    knee = knee_index(tab["prior_weight"], tab["conserved_edges"])
    cap = f"One point per α from sweep.tsv. Knee: {KNEE_RULE}."
    if knee is not None:
        cap += f" Suggested α = {tab['alpha'].iloc[knee]:g}."
    cols = [c for c in ("alpha", "conserved_edges", "prior_weight", "ec", "ics", "s3", "nc", "matched_pairs")
            if c in tab]
    table = _frame_table(tab[cols].rename(columns={"alpha": "α", "conserved_edges": "conserved edges",
                                                   "prior_weight": "prior weight", "matched_pairs": "matched pairs"}))
    return ("<section><h2>Trade-off across α</h2><div class='grid'>"
            + _figure(_png(sweep_figure(tab, knee)), "trade-off curve", cap) + f"<div>{table}</div></div></section>")


def _distributions_section(run: _Run) -> str:
    pairs = run.pairs
    figs = [_figure(_png(histogram(pairs["score"], "diffusion score (log scale)", "#1f5f8b", log=True)),
                    "score histogram", "Diffusion scores of the matched pairs.")]
    if "confidence" in pairs:
        figs.append(_figure(_png(histogram(pairs["confidence"], "confidence", "#6a8d3a")), "confidence histogram",
                            "Confidence: L / (1 + L), L what the matching loses at the pair's best exchange "
                            "(0: the pair could be exchanged at no loss)."))
    figs.append(_figure(_png(degree_plot(pairs, run.degree)), "conserved edges against degree",
                        "Each matched pair: its node's degree in A against its conserved edges."))
    return "<section><h2>Distributions</h2><div class='grid'>" + "".join(figs) + "</div></section>"


def _subgraph_section(run: _Run) -> str:
    sub, full_n, full_e = conserved_ball(run.conserved, MAX_DRAWN_NODES)
    if not sub.number_of_nodes():
        return ""
    mapping = dict(zip(run.pairs["node_a"], run.pairs["node_b"]))
    drawn = sub.number_of_nodes()
    cap = (f"Largest connected component of the conserved edges: {full_n:,} nodes, {full_e:,} edges"
           + (f"; drawn: the {drawn} nodes nearest its best-connected node" if full_n > drawn else "")
           + ". Labels: node of A over its partner in B"
           + (f", for the {LABELLED_HUBS} best-connected nodes" if drawn > LABEL_ALL_UP_TO else "") + ".")
    return ("<section><h2>Conserved subgraph</h2>"
            + _figure(_png(subgraph_drawing(sub, mapping)), "largest conserved subgraph", cap) + "</section>")


def _pairs_sections(pairs: pd.DataFrame, truth: list | None = None) -> str:
    cols = [c for c in ("node_a", "node_b", "score", "prior", "conserved", "confidence") if c in pairs]
    if truth is not None:
        pairs = pairs.assign(true=["—" if t is None else "true" if t else "false" for t in truth])
        cols.append("true")
    key = "confidence" if "confidence" in pairs else "score"
    top = pairs.sort_values([key, "score"], ascending=False, kind="stable").head(TOP_ROWS)[cols]
    low = pairs.sort_values([key, "score"], ascending=True, kind="stable").head(TOP_ROWS)[cols]
    return (f"<section><h2>Most confident pairs</h2>{_frame_table(top)}</section>"
            f"<section><h2>Least confident pairs</h2><p class='note'>Check these first.</p>"
            f"{_frame_table(low)}</section>")


def _refine_section(summary: dict) -> str:
    """The refinement's starts: where each ended, which was kept (present with several starts)."""
    rf = summary.get("refine") or {}
    starts = rf.get("starts")
    if not starts:
        return ""
    frame = pd.DataFrame(starts).rename(columns={
        "conserved_before": "conserved edges at start", "conserved_after": "conserved edges reached",
        "objective_after": "objective reached", "accepted": "keeps the seed pairs"})
    return ("<section><h2>Refinement starts</h2><p class='note'>The refinement is a local search, so it ran "
            f"from {len(starts)} starts and kept the one of highest objective ({rf.get('objective_counts', 'edges')} "
            "counted); the spread of the conserved edges reached shows how much the start mattered.</p>"
            + _frame_table(frame) + "</section>")


#: ambiguity groups listed in the report at most
GROUP_ROWS = 30


def _ambiguity_section(summary: dict, pairs: pd.DataFrame) -> str:
    """The interchangeable nodes: the ambiguity figures and the nodes with alternatives, largest
    sets first."""
    amb = summary.get("ambiguity")
    if not amb:
        return ""
    rows = [("groups", amb["groups"]), ("nodes in groups", amb["nodes_in_groups"]),
            ("largest group", amb["largest_group"]), ("neutral 2-exchanges", amb["neutral_exchanges"]),
            ("indistinguishable pairs", amb["indistinguishable_pairs"]),
            ("near-optimal matchings / nodes they give an alternative", f"{amb.get('near_optima', 0)} / "
             f"{amb.get('near_optimum_nodes', 0)}"),
            ("prior tolerance", amb["prior_tolerance"])]
    if amb.get("nc_up_to_ambiguity") is not None:
        rows.append(("NC up to ambiguity", amb["nc_up_to_ambiguity"]))
    listed = ""
    if "alternatives" in pairs and (pairs["alternatives"] != "").any():
        alt = pairs.loc[pairs["alternatives"] != "", ["node_a", "node_b", "alternatives"]]
        alt = alt.assign(n=alt["alternatives"].str.count(";") + 1)
        alt = alt.sort_values(["n", "node_a"], ascending=[False, True], kind="stable").head(GROUP_ROWS)
        listed = _frame_table(alt.drop(columns="n"))
    return ("<section><h2>Interchangeable nodes</h2><p class='note'>Nodes the matching could map otherwise at no "
            "loss of conserved edges and within the prior tolerance: the choice among them is arbitrary. "
            f"Up to {GROUP_ROWS} nodes with alternatives are listed, most alternatives first.</p>"
            + _kv_table(rows) + listed + "</section>")


#: quantiles of the support shown in the report
SUPPORT_QUANTILES = (0.0, 0.25, 0.5, 0.75, 0.9, 0.99, 1.0)


def _transfer_section(tab: pd.DataFrame | None) -> str:
    """Counts per direction, the support distribution and the best rows of transferred_edges.tsv
    (``tab``, as read with the run); a note when the run predates that file (``tab`` None)."""
    if tab is None:
        return (f"<section><h2>Transferred interactions</h2><p class='note'>This run has no {TRANSFER_TABLE} "
                "(written by align since the file was introduced); align again to see this section.</p></section>")
    head = "<tr><th>direction</th><th>edges</th>" + "".join(f"<th>q{q:g}</th>" for q in SUPPORT_QUANTILES) + "</tr>"
    body = ""
    for d, meaning in (("A->B", "edges of A whose image is not an edge of B"),
                       ("B->A", "edges of B whose preimage is not an edge of A")):
        s = tab.loc[tab["direction"] == d, "support"].to_numpy(dtype=float)
        qs = np.quantile(s, SUPPORT_QUANTILES) if len(s) else [None] * len(SUPPORT_QUANTILES)
        cells = "".join(f"<td class='n'>{_esc(_fmt(None if q is None else float(q)))}</td>" for q in qs)
        body += (f"<tr><th title='{_esc(meaning)}'>{_esc(d)}</th><td class='n'>{_esc(_fmt(len(s)))}</td>"
                 f"{cells}</tr>")
    note = ("<p class='note'>Support of a transferred edge = confidence_1 × confidence_2 × (1 + conserved "
            "triangles): the confidences of its two end pairs, and the matched pairs adjacent to both ends in "
            "both networks (docs/method.md). Quantiles q0 (minimum) to q1 (maximum) of the support.</p>")
    parts = [f"<section><h2>Transferred interactions</h2><table>{head}{body}</table>{note}"]
    if len(tab):
        parts.append(_figure(_png(histogram(tab["support"], "support", "#8a4f9e", ylabel="transferred edges")),
                             "support histogram", "Support of every transferred edge, both directions."))
        cols = [c for c in ("direction", "node_a1", "node_a2", "node_b1", "node_b2", "support", "confidence_1",
                            "confidence_2", "triangles", "common_neighbours") if c in tab]
        parts.append(f"<h3>The {min(TOP_ROWS, len(tab))} best supported</h3>{_frame_table(tab.head(TOP_ROWS)[cols])}")
    return "".join(parts) + "</section>"


def _page(out: Path, version: str, sections: list[str]) -> str:
    return ("<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
            "<meta name='viewport' content='width=device-width, initial-scale=1'>"
            f"<title>aligner report — {_esc(out.name)}</title><style>{_CSS}{explorer.CSS}</style></head><body>"
            f"<header><h1>Alignment report</h1><p>{_esc(out)} · aligner {_esc(version)}</p>"
            "</header><main>" + "".join(sections)
            + "<p class='note' id='page-check'></p><p class='note' id='page-errors'></p></main>" + _CHECK
            + "</body></html>")


def build_report(outdir, *, network_a=None, network_b=None, delimiter: str | None = None,
                 header: str = "auto", truth=None) -> Path:
    """Write ``outdir/report.html`` from the outputs of a finished run in ``outdir``.

    Reads summary.json, alignment.tsv and conserved_edges.tsv (and sweep.tsv when a sweep was
    written there, transferred_edges.tsv when the run wrote it), and re-reads network A from
    ``summary["inputs"]["network_a"]["source"]`` unless ``network_a`` overrides it, read as the run
    read its inputs (its ``delimiter`` and ``header`` parameters) unless ``delimiter`` or ``header``
    is given (network B is only needed for its size, which the summary holds; ``network_b`` is
    accepted for symmetry, and read only to check it). A network that is not the run's (a matched
    node of alignment.tsv missing from it, or other numbers of nodes and edges than the summary's)
    is refused with an InputFormatError naming it. With a truth table
    (``summary["inputs"]["truth"]["source"]``, or ``truth``) the pair tables get a true/false
    column; when it cannot be read the page says so. Figures are PNG, embedded as base64; the
    matched pairs (at most :data:`aligner.render.explorer.MAX_PAIRS`, the least confident when
    there are more) are embedded as JSON for the searchable table and the focus view
    (:mod:`aligner.render.explorer`); the page loads no external resource.
    Returns the path of the page.
    """
    from aligner.io.outputs import write_text_atomic

    run = _load_run(Path(outdir), network_a, network_b, delimiter, header, truth)
    data = explorer.pair_data(run.pairs, run.truth, run.conserved, run.transferred, run.degree,
                              directed=bool((run.summary.get("parameters") or {}).get("directed")))
    truth_note = run.truth_note or ("No truth table was given, so there is no true/false column."
                                    if run.truth is None else "")
    sections = [_inputs_section(run.summary), _scores_section(run.summary), _weighted_section(run.summary),
                _seeds_section(run.summary), _sweep_section(run.out), explorer.explorer_section(data, truth_note),
                _distributions_section(run), _subgraph_section(run), _pairs_sections(run.pairs, run.truth),
                _refine_section(run.summary), _ambiguity_section(run.summary, run.pairs),
                _transfer_section(run.transferred)]
    path = run.out / REPORT_FILE
    page = _page(run.out, run.summary.get("version", ""), [s for s in sections if s])
    try:
        write_text_atomic(path, page)
    except OSError as exc:  # a read-only or full file system: one line and exit 2, as the other writers
        raise InvalidParameterError(f"The report '{path}' cannot be written: {exc.strerror or exc}.") from None
    return path
