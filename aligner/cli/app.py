"""The ``aligner`` command line: parse, call the Python API, print, exit 2 on a user error."""

from __future__ import annotations

import re
import sys
import tempfile
import warnings
from contextlib import contextmanager
from importlib import resources
from pathlib import Path
from typing import Annotated, Optional

import typer
from rich.console import Console
from rich.markup import escape

from aligner import __version__
from aligner.pipeline import align as _align
from aligner.pipeline import score as _score
from aligner.pipeline import STAGES
from aligner.io.outputs import check_outdir, write_outputs
from aligner.core.refine import DEFAULT_BETA, DEFAULT_MAX_ITER
from aligner.errors import AlignerError, AlignerWarning, InvalidParameterError
from aligner.render.console import scores_table, summary_table

app = typer.Typer(
    name="aligner",
    help="One-to-one alignment of two networks from a prior similarity table and their wiring.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
)
out = Console()
err = Console(stderr=True)

Delimiter = Annotated[Optional[str], typer.Option(
    "--delimiter", help="Column delimiter of the input files: tab, comma, semicolon, whitespace, or a "
    "character. Default: detected from the first data line.")]
Header = Annotated[str, typer.Option(
    "--header", help="Whether input files start with a header line: auto, yes or no. 'auto' takes the first "
    "line as a header when its fields are column names such as node_a/source/target.")]
Quiet = Annotated[bool, typer.Option("--quiet", "-q", help="Print nothing but errors.")]
SeedsOption = Annotated[Optional[Path], typer.Option(
    "--seeds", help="Anchor pairs known to correspond (node_a, node_b): fixed in the matching, extra diffusion "
    "sources; with no --prior the candidates are grown from them through the wiring.")]
Directed = Annotated[bool, typer.Option(
    "--directed", help="Read edge lists as arcs (first column -> second): the walk follows the arcs and divides "
    "by out-degree; an edge is conserved only onto an arc pointing the same way.")]
Weighted = Annotated[bool, typer.Option(
    "--weighted", help="Use the third column of both edge lists as edge weights: the walk divides by strength "
    "(summed weights), and the scores add the conserved weight and weighted EC.")]
SeedWeight = Annotated[float, typer.Option(
    "--seed-weight", min=0.0, help="Total mass of the seed pairs in the diffusion's h, relative to the prior's "
    "(1: as much as the whole prior; 0: fixed only).")]


def _version(value: bool):
    if value:
        out.print(f"aligner {__version__}")
        raise typer.Exit()


@app.callback()
def main(
    version: Annotated[bool, typer.Option("--version", callback=_version, is_eager=True,
                                          help="Print the version and exit.")] = False,
):
    """One-to-one alignment of two networks from a prior similarity table and their wiring."""


#: parameters of the Python API and the command-line options that set them, to name the option
#: in an error message
OPTION_OF = {"alpha": "--alpha", "top_k": "--top-k", "min_score": "--min-score", "score_kind": "--score-kind",
             "solver": "--solver", "tol": "--tol", "normalization": "--normalization", "rounding": "--rounding",
             "header": "--header", "delimiter": "--delimiter", "max_memory": "--max-memory", "beta": "--beta",
             "refine_iter": "--refine-iter", "weighted": "--weighted", "directed": "--directed",
             "structural_weight": "--structural-weight", "min_similarity": "--min-similarity"}


def _message(exc: AlignerError) -> str:
    """The error's text, with the command-line option named when a parameter is at fault."""
    text = str(exc)
    m = re.match(r"The '(\w+)' parameter of ", text)
    if isinstance(exc, InvalidParameterError) and m and m.group(1) in OPTION_OF:
        text += f" (command-line option {OPTION_OF[m.group(1)]})"
    return text


@contextmanager
def _user_errors(quiet: bool):
    """Turn the package's errors into a one-line message and exit status 2; show warnings."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", AlignerWarning)
        try:
            yield
        except AlignerError as exc:
            _flush(caught, quiet)
            err.print(f"[bold red]error:[/] {escape(_message(exc))}", highlight=False, soft_wrap=True, emoji=False)
            raise typer.Exit(code=2) from None
        except KeyboardInterrupt:
            err.print("interrupted; no output was left half-written")
            raise typer.Exit(code=130) from None
    _flush(caught, quiet)


def _flush(caught, quiet: bool):
    for w in caught:
        if issubclass(w.category, AlignerWarning) and not quiet:
            err.print(f"[yellow]warning:[/] {escape(str(w.message))}", highlight=False, soft_wrap=True, emoji=False)


@contextmanager
def _progress(quiet: bool):
    """A progress bar over the pipeline's stages, naming the running one; on a terminal only."""
    if quiet or not err.is_terminal:
        yield lambda stage: None
        return
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, SpinnerColumn, TextColumn, TimeElapsedColumn

    with Progress(SpinnerColumn(), TextColumn("[bold]{task.description:<12}"), BarColumn(), MofNCompleteColumn(),
                  TimeElapsedColumn(), console=err, transient=True) as bar:
        task = bar.add_task("starting", total=len(STAGES))
        seen: list[str] = []

        def say(stage: str) -> None:
            if seen:
                bar.advance(task)
            seen.append(stage)
            bar.update(task, description=stage)

        say.count = lambda done, total: bar.update(task, description=f"null maps {done}/{total}")
        yield say


def _run_align(a, b, prior, outdir, *, alpha, top_k, min_score, score_kind, solver, tol, normalization,
               rounding, truth, delimiter, header, force, max_memory, quiet, permutations=0,
               permutation_seed=0, seeds=None, seed_weight=1.0, refine=True, beta=DEFAULT_BETA,
               refine_iter=DEFAULT_MAX_ITER, directed=False, weighted=False, structural=False,
               structural_weight=0.5):
    with _user_errors(quiet):
        if outdir is not None:
            check_outdir(outdir, force=force)  # refuse before any work, not after it
        with _progress(quiet) as say:
            res = _align(a, b, prior, alpha=alpha, top_k=top_k, min_score=min_score, score_kind=score_kind,
                         solver=solver, tol=tol, normalization=normalization, rounding=rounding, truth=truth,
                         delimiter=delimiter, header=header, max_memory=max_memory, progress=say,
                         permutations=permutations, permutation_seed=permutation_seed,
                         permutation_progress=getattr(say, "count", None), seeds=seeds, seed_weight=seed_weight,
                         refine=refine, beta=beta, refine_iter=refine_iter, directed=directed, weighted=weighted,
                         structural=structural, structural_weight=structural_weight)
            say("writing")
            written = write_outputs(outdir, res, force=force) if outdir is not None else []
    if not quiet:
        out.print(summary_table(res.summary))
        if written:
            out.print(f"wrote {', '.join(str(p) for p in written)}", highlight=False, soft_wrap=True,
                      markup=False, emoji=False)
    return res


@app.command()
def align(
    network_a: Annotated[Path, typer.Argument(help="Edge list of network A (TSV/CSV, optional weight column, "
                                              "may be gzip-compressed).")],
    network_b: Annotated[Path, typer.Argument(help="Edge list of network B.")],
    outdir: Annotated[Path, typer.Option("--out", "-o", help="Output directory for alignment.tsv, "
                                         "conserved_edges.tsv and summary.json.")],
    prior: Annotated[Optional[Path], typer.Option("--prior", "-p", help="Prior similarity table: node_a, node_b, "
                                                  "score. Without it (and without --seeds) the candidates come from "
                                                  "structural features.")] = None,
    alpha: Annotated[float, typer.Option(help="Weight of the wiring against the prior, in [0, 1); 0 returns "
                                         "the prior's own best matching.")] = 0.9,
    top_k: Annotated[int, typer.Option("--top-k", help="Candidates: each node's top-k prior pairs on each "
                                       "side (their union).")] = 25,
    min_score: Annotated[float, typer.Option("--min-score", help="Drop prior pairs scoring below this (after "
                                             "the score-kind transformation).")] = 0.0,
    score_kind: Annotated[str, typer.Option("--score-kind", help="similarity (higher is better), evalue "
                                            "(-log10, 0 capped at 310, rows with E > 1 dropped) or distance "
                                            "(1/(1+d)).")] = "similarity",
    solver: Annotated[str, typer.Option(help="Diffusion solver: push (Gauss-Southwell) or power "
                                        "(power iteration, the reference).")] = "push",
    tol: Annotated[float, typer.Option(help="1-norm residual tolerance of the diffusion (the prior sums to "
                                       "1); the error is at most tol / (1 - alpha).")] = 1e-6,
    normalization: Annotated[str, typer.Option(help="Random walk on the product graph: restricted "
                                               "(1/neighbours inside the candidates) or product "
                                               "(1/(deg_A deg_B)).")] = "restricted",
    rounding: Annotated[str, typer.Option(help="Assignment solver: auto, sparse, dense (lapjv) or scipy.")]
    = "auto",
    truth: Annotated[Optional[Path], typer.Option(help="Known true pairs (node_a, node_b), to report node "
                                                  "correctness.")] = None,
    delimiter: Delimiter = None,
    header: Header = "auto",
    force: Annotated[bool, typer.Option("--force", help="Replace outputs already in the output directory.")]
    = False,
    max_memory: Annotated[Optional[float], typer.Option("--max-memory", help="Memory budget for the product "
                                                        "graph in GiB. Default: half the machine's memory.")]
    = None,
    permutations: Annotated[int, typer.Option("--permutations", min=0, help="Random one-to-one maps over the "
                                              "candidate pairs for the empirical p-value of the conserved edges "
                                              "(0, the default: closed-form null only; about 0.05 s per map on the demo).")] = 0,
    permutation_seed: Annotated[int, typer.Option("--permutation-seed", help="Seed of the random maps.")] = 0,
    seeds: SeedsOption = None,
    seed_weight: SeedWeight = 1.0,
    refine: Annotated[bool, typer.Option("--refine/--no-refine", help="Refine the rounded matching for conserved "
                                         "edges (Frank-Wolfe steps, then a local search).")] = True,
    beta: Annotated[float, typer.Option("--beta", help="Refinement: weight of a pair's normalised diffusion score "
                                        "against one conserved edge.")] = DEFAULT_BETA,
    refine_iter: Annotated[int, typer.Option("--refine-iter", help="Refinement: cap on iterations (each one "
                                             "sparse product and one assignment).")] = DEFAULT_MAX_ITER,
    directed: Directed = False,
    weighted: Weighted = False,
    structural: Annotated[bool, typer.Option("--structural-candidates", help="Add each node's top-k nearest nodes "
                                             "in structural-feature space to the prior's candidates (for a weak "
                                             "prior; used alone when there is no prior).")] = False,
    structural_weight: Annotated[float, typer.Option("--structural-weight", min=0.0, help="With "
                                                     "--structural-candidates and a prior: weight of the structural "
                                                     "similarity against the prior's (both rescaled to max 1).")]
    = 0.5,
    quiet: Quiet = False,
):
    """Align network A to network B and write the one-to-one map with its scores."""
    if max_memory is not None and not max_memory > 0:  # a usage error (exit 2), in the option's own unit
        raise typer.BadParameter(f"must be a positive number of GiB, such as 4 or 0.5; got {max_memory:g}",
                                 param_hint="'--max-memory'")
    _run_align(network_a, network_b, prior, outdir, alpha=alpha, top_k=top_k, min_score=min_score,
               score_kind=score_kind, solver=solver, tol=tol, normalization=normalization, rounding=rounding,
               truth=truth, delimiter=delimiter, header=header, force=force,
               max_memory=None if max_memory is None else max_memory * 2**30, quiet=quiet,
               permutations=permutations, permutation_seed=permutation_seed, seeds=seeds, seed_weight=seed_weight,
               refine=refine, beta=beta, refine_iter=refine_iter, directed=directed, weighted=weighted,
               structural=structural, structural_weight=structural_weight)


@app.command()
def score(
    network_a: Annotated[Path, typer.Argument(help="Edge list of network A.")],
    network_b: Annotated[Path, typer.Argument(help="Edge list of network B.")],
    alignment: Annotated[Path, typer.Argument(help="Alignment table; its first two columns are node_a, node_b "
                                              "(an alignment.tsv works as it is).")],
    truth: Annotated[Optional[Path], typer.Option(help="Known true pairs, to report node correctness.")] = None,
    delimiter: Delimiter = None,
    header: Header = "auto",
    as_json: Annotated[bool, typer.Option("--json", help="Print the scores as JSON.")] = False,
    directed: Directed = False,
    weighted: Weighted = False,
    quiet: Quiet = False,
):
    """Score an existing alignment of A to B with the same measures as align."""
    import json

    with _user_errors(quiet):
        sc, _ = _score(network_a, network_b, alignment, truth=truth, delimiter=delimiter, header=header,
                       directed=directed, weighted=weighted)
    if as_json:
        typer.echo(json.dumps(sc.as_dict(), indent=2))
    elif not quiet:
        out.print(scores_table(sc.as_dict(), title=f"Scores of {alignment}"))


@app.command()
def demo(
    outdir: Annotated[Optional[Path], typer.Option("--out", "-o", help="Where to write the outputs. Default: "
                                                   "a new temporary directory.")] = None,
    force: Annotated[bool, typer.Option("--force", help="Replace outputs already in the output directory.")]
    = False,
    scenario: Annotated[str, typer.Option("--scenario", help="firefly: two invented firefly protein-interaction "
                                          "maps with a sequence-similarity prior; registry: two invented trade "
                                          "registries' records of the same companies, with a prior from their "
                                          "names (aligner prior-from-labels).")] = "firefly",
    quiet: Quiet = False,
):
    """Run a bundled example end to end (default: two invented firefly interaction maps)."""
    if scenario not in SCENARIOS:
        raise typer.BadParameter(f"must be one of {', '.join(SCENARIOS)}; got {scenario!r}",
                                 param_hint="'--scenario'")
    base = resources.files("aligner") / "demo_data" / scenario
    with resources.as_file(base) as d:
        d = Path(d)
        target = Path(outdir) if outdir is not None else Path(tempfile.mkdtemp(prefix="aligner-demo-"))
        if not quiet:
            out.print(f"demo: aligning {d / 'network_a.tsv'} to {d / 'network_b.tsv'} with prior "
                      f"{d / 'prior.tsv'}", highlight=False, soft_wrap=True, markup=False, emoji=False)
        _run_align(d / "network_a.tsv", d / "network_b.tsv", d / "prior.tsv", target, alpha=0.9, top_k=25,
                   min_score=0.0, score_kind="similarity", solver="push", tol=1e-6, normalization="restricted",
                   rounding="auto", truth=d / "truth.tsv", delimiter=None, header="auto", force=force,
                   max_memory=None, quiet=quiet, permutations=100)


#: the bundled demo scenarios (folders of aligner/demo_data)
SCENARIOS = ("firefly", "registry")


def _alpha_list(text: str) -> list[float]:
    try:
        return [float(t) for t in text.replace(" ", "").split(",") if t]
    except ValueError:
        raise typer.BadParameter(f"must be comma-separated numbers such as 0,0.5,0.9; got {text!r}",
                                 param_hint="'--alphas'") from None


@app.command()
def sweep(
    network_a: Annotated[Path, typer.Argument(help="Edge list of network A.")],
    network_b: Annotated[Path, typer.Argument(help="Edge list of network B.")],
    prior: Annotated[Path, typer.Option("--prior", "-p", help="Prior similarity table: node_a, node_b, score.")],
    outdir: Annotated[Path, typer.Option("--out", "-o", help="Output directory for sweep.tsv, sweep.png and "
                                         "sweep.svg.")],
    alphas: Annotated[str, typer.Option(help="Comma-separated values of alpha in [0, 1), run in ascending "
                                        "order.")] = "0,0.1,0.2,0.3,0.4,0.5,0.6,0.7,0.8,0.9,0.95",
    truth: Annotated[Optional[Path], typer.Option(help="Known true pairs, to add NC per alpha.")] = None,
    top_k: Annotated[int, typer.Option("--top-k", help="Candidates: each node's top-k prior pairs on each "
                                       "side.")] = 25,
    min_score: Annotated[float, typer.Option("--min-score", help="Drop prior pairs scoring below this.")] = 0.0,
    score_kind: Annotated[str, typer.Option("--score-kind", help="similarity, evalue or distance.")]
    = "similarity",
    solver: Annotated[str, typer.Option(help="Diffusion solver: push or power.")] = "push",
    tol: Annotated[float, typer.Option(help="1-norm residual tolerance of each solve.")] = 1e-6,
    normalization: Annotated[str, typer.Option(help="restricted or product.")] = "restricted",
    rounding: Annotated[str, typer.Option(help="Assignment solver: auto, sparse, dense or scipy.")] = "auto",
    delimiter: Delimiter = None,
    header: Header = "auto",
    force: Annotated[bool, typer.Option("--force", help="Replace a sweep already in the output directory.")]
    = False,
    quiet: Quiet = False,
):
    """Align at several alphas on one candidate set and product graph; tabulate and draw the trade-off."""
    from aligner.analysis.sweep import KNEE_RULE, plot_sweep
    from aligner.analysis.sweep import sweep as _sweep

    values = _alpha_list(alphas)
    target = Path(outdir)
    with _user_errors(quiet):
        if target.exists() and not target.is_dir():
            raise InvalidParameterError(f"The output '{target}' exists and is not a directory.")
        if (target / "sweep.tsv").exists() and not force:
            raise InvalidParameterError(f"The output directory '{target}' already holds sweep.tsv; choose "
                                        "another directory or pass --force to replace it.")
        say = (lambda a: None) if quiet else (lambda a: err.print(f"alpha {a:g}", highlight=False))
        res = _sweep(network_a, network_b, prior, alphas=values, truth=truth, top_k=top_k, min_score=min_score,
                     score_kind=score_kind, solver=solver, tol=tol, normalization=normalization,
                     rounding=rounding, delimiter=delimiter, header=header, progress=say)
        target.mkdir(parents=True, exist_ok=True)
        tmp = target / "sweep.tsv.tmp"
        res.table.to_csv(tmp, sep="\t", index=False, float_format="%.6g", na_rep="NA")
        tmp.replace(target / "sweep.tsv")
        plot_sweep(res.table, res.knee, [target / "sweep.png", target / "sweep.svg"])
    if not quiet:
        from rich.table import Table

        t = Table(title="aligner sweep", header_style="bold")
        for c in ("alpha", "conserved", "EC", "S3", "prior weight", "NC", "pushes", "seconds"):
            t.add_column(c, justify="right")
        for r in res.table.itertuples(index=False):
            t.add_row(f"{r.alpha:g}", f"{r.conserved_edges:,}", f"{r.ec:.4f}", f"{r.s3:.4f}",
                      f"{r.prior_weight:,.4g}", "—" if r.nc != r.nc else f"{r.nc:.4f}", f"{r.solver_steps:,}",
                      f"{r.seconds:.2f}")
        out.print(t)
        if res.knee is None:
            out.print("no knee: fewer than three alphas or a straight curve", highlight=False)
        else:
            out.print(f"suggested alpha = {res.knee_alpha:g} (knee rule: {KNEE_RULE})", highlight=False,
                      soft_wrap=True)
        out.print(f"wrote {target / 'sweep.tsv'}, {target / 'sweep.png'}, {target / 'sweep.svg'}",
                  highlight=False, soft_wrap=True, markup=False, emoji=False)


@app.command()
def report(
    outdir: Annotated[Path, typer.Argument(help="Directory of a finished run (summary.json, alignment.tsv, "
                                           "conserved_edges.tsv; sweep.tsv if a sweep was written there).")],
    network_a: Annotated[Optional[Path], typer.Option("--a", help="Network A, when it is no longer where "
                                                      "summary.json says.")] = None,
    network_b: Annotated[Optional[Path], typer.Option("--b", help="Network B, likewise.")] = None,
    delimiter: Delimiter = None,
    header: Header = "auto",
    quiet: Quiet = False,
):
    """Write OUTDIR/report.html: one self-contained page with the run's tables and figures."""
    from aligner.render.html import build_report

    with _user_errors(quiet):
        path = build_report(outdir, network_a=network_a, network_b=network_b, delimiter=delimiter, header=header)
    if not quiet:
        out.print(f"wrote {path}", highlight=False, soft_wrap=True, markup=False, emoji=False)


@app.command()
def query(
    network_a: Annotated[Path, typer.Argument(help="Edge list of network A.")],
    network_b: Annotated[Path, typer.Argument(help="Edge list of network B.")],
    node: Annotated[list[str], typer.Option("--node", "-n", help="A node to ask about (repeat for several).")],
    prior: Annotated[Optional[Path], typer.Option("--prior", "-p", help="Prior similarity table: node_a, node_b, "
                                                  "score. Required unless --seeds is given.")] = None,
    side: Annotated[str, typer.Option(help="a: the nodes are in A, counterparts in B; b: the reverse.")] = "a",
    top: Annotated[int, typer.Option("--top", min=1, help="Counterparts listed per node.")] = 10,
    alpha: Annotated[float, typer.Option(help="Weight of the wiring against the prior, in [0, 1).")] = 0.9,
    tol: Annotated[float, typer.Option(help="Push tolerance relative to the query's mass: each score is "
                                       "certified within tol * support / (1 - alpha).")] = 1e-6,
    top_k: Annotated[int, typer.Option("--top-k", help="Candidates: each node's top-k prior pairs on each "
                                       "side (their union).")] = 25,
    min_score: Annotated[float, typer.Option("--min-score", help="Drop prior pairs scoring below this.")] = 0.0,
    score_kind: Annotated[str, typer.Option("--score-kind", help="similarity, evalue or distance.")]
    = "similarity",
    normalization: Annotated[str, typer.Option(help="Random walk on the product graph: restricted or "
                                               "product.")] = "restricted",
    seeds: SeedsOption = None,
    seed_weight: SeedWeight = 1.0,
    delimiter: Delimiter = None,
    header: Header = "auto",
    as_json: Annotated[bool, typer.Option("--json", help="Print the answer as JSON.")] = False,
    quiet: Quiet = False,
):
    """Rank the best counterparts of a few nodes by a local diffusion, without aligning everything."""
    import json

    from rich.table import Table

    from aligner.analysis.query import query as _query

    if prior is None and seeds is None:
        raise typer.BadParameter("give a prior similarity table, or --seeds", param_hint="'--prior'")
    with _user_errors(quiet):
        res = _query(network_a, network_b, prior, nodes=node, side=side, top=top, seeds=seeds,
                     seed_weight=seed_weight, alpha=alpha, tol=tol, top_k=top_k, min_score=min_score,
                     score_kind=score_kind, normalization=normalization, delimiter=delimiter, header=header)
    if as_json:
        typer.echo(json.dumps(res.as_dict(), indent=2))
        return
    if quiet:
        return
    other = "B" if side == "a" else "A"
    for rec in res.summary["queries"]:
        t = Table(title=f"Counterparts in {other} of {rec['query']}", header_style="bold")
        for col, just in (("rank", "right"), ("counterpart", "left"), ("score", "right"), ("± bound", "right"),
                          ("prior", "right"), ("support", "right"), ("seed", "left")):
            t.add_column(col, justify=just)
        for row in rec["counterparts"]:
            t.add_row(str(row["rank"]), escape(str(row["counterpart"])), f"{row['score']:.6f}",
                      f"{row['error_bound']:.1e}", f"{row['prior']:.4g}", f"{row['support']:,}",
                      "fixed" if row["fixed"] else "")
        out.print(t)
        w = rec["work"]
        out.print(f"  {w['candidates']} candidates · {w['pairs_touched']:,} pairs touched · "
                  f"{w['product_edges_scanned']:,} product edges scanned · {w['pushes']:,} pushes · "
                  f"{1000 * w['seconds']:.1f} ms", highlight=False, markup=False, emoji=False)


@app.command("prior-from-labels")
def prior_from_labels(
    labels_a: Annotated[Path, typer.Argument(help="Labels of network A's nodes: identifier, a tab, the label "
                                             "text (a line without a tab: the identifier is its own label).")],
    labels_b: Annotated[Path, typer.Argument(help="Labels of network B's nodes, the same way.")],
    output: Annotated[Path, typer.Option("--out", "-o", help="Prior table to write (TSV: node_a, node_b, "
                                         "score).")],
    top_k: Annotated[int, typer.Option("--top-k", min=1, help="Keep each node's top-k most similar labels on "
                                       "each side (their union).")] = 10,
    min_similarity: Annotated[float, typer.Option("--min-similarity", help="Drop pairs whose cosine similarity "
                                                  "is below this, in (0, 1].")] = 0.1,
    from_networks: Annotated[bool, typer.Option("--from-networks", help="The two arguments are edge lists: the "
                                                "node identifiers themselves are the labels.")] = False,
    delimiter: Delimiter = None,
    header: Header = "auto",
    force: Annotated[bool, typer.Option("--force", help="Replace the output file if it exists.")] = False,
    quiet: Quiet = False,
):
    """Build a prior from node names or attribute text: character n-gram TF-IDF cosine similarity."""
    from aligner.io.readers import read_network
    from aligner.priors.labels import label_prior, read_labels, write_prior

    with _user_errors(quiet):
        if output.exists() and not force:
            raise InvalidParameterError(f"The output '{output}' already exists; choose another path or pass "
                                        "--force to replace it.")
        if output.exists() and output.is_dir():
            raise InvalidParameterError(f"The output '{output}' is a directory; give a file path with --out.")
        if from_networks:
            la, lb = (_identity_labels(read_network(p, delimiter=delimiter, header=header).names)
                      for p in (labels_a, labels_b))
        else:
            la, lb = read_labels(labels_a), read_labels(labels_b)
        table = label_prior(la, lb, top_k=top_k, min_similarity=min_similarity)
        write_prior(table, output)
    if not quiet:
        out.print(f"wrote {len(table):,} pairs ({len(la):,} x {len(lb):,} labels, top {top_k} per node, "
                  f"similarity >= {min_similarity:g}) to {output}", highlight=False, soft_wrap=True, markup=False,
                  emoji=False)


def _identity_labels(names):
    """Node identifiers as their own labels."""
    import pandas as pd

    ids = [str(n) for n in names]
    return pd.Series(ids, index=ids, dtype=object)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(app())
