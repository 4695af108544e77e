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

from . import __version__
from .api import align as _align
from .api import score as _score
from .api import STAGES, check_outdir, write_outputs
from .exceptions import AlignerError, AlignerWarning, InvalidParameterError
from .report import scores_table, summary_table

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
             "header": "--header", "delimiter": "--delimiter", "max_memory": "--max-memory"}


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

        yield say


def _run_align(a, b, prior, outdir, *, alpha, top_k, min_score, score_kind, solver, tol, normalization,
               rounding, truth, delimiter, header, force, max_memory, quiet):
    with _user_errors(quiet):
        if outdir is not None:
            check_outdir(outdir, force=force)  # refuse before any work, not after it
        with _progress(quiet) as say:
            res = _align(a, b, prior, alpha=alpha, top_k=top_k, min_score=min_score, score_kind=score_kind,
                         solver=solver, tol=tol, normalization=normalization, rounding=rounding, truth=truth,
                         delimiter=delimiter, header=header, max_memory=max_memory, progress=say)
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
    prior: Annotated[Path, typer.Option("--prior", "-p", help="Prior similarity table: node_a, node_b, score.")],
    outdir: Annotated[Path, typer.Option("--out", "-o", help="Output directory for alignment.tsv, "
                                         "conserved_edges.tsv and summary.json.")],
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
    quiet: Quiet = False,
):
    """Align network A to network B and write the one-to-one map with its scores."""
    if max_memory is not None and not max_memory > 0:  # a usage error (exit 2), in the option's own unit
        raise typer.BadParameter(f"must be a positive number of GiB, such as 4 or 0.5; got {max_memory:g}",
                                 param_hint="'--max-memory'")
    _run_align(network_a, network_b, prior, outdir, alpha=alpha, top_k=top_k, min_score=min_score,
               score_kind=score_kind, solver=solver, tol=tol, normalization=normalization, rounding=rounding,
               truth=truth, delimiter=delimiter, header=header, force=force,
               max_memory=None if max_memory is None else max_memory * 2**30, quiet=quiet)


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
    quiet: Quiet = False,
):
    """Score an existing alignment of A to B with the same measures as align."""
    import json

    with _user_errors(quiet):
        sc, _ = _score(network_a, network_b, alignment, truth=truth, delimiter=delimiter, header=header)
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
    quiet: Quiet = False,
):
    """Run the bundled example (two invented firefly interaction maps) end to end."""
    base = resources.files("aligner") / "demo_data" / "firefly"
    with resources.as_file(base) as d:
        d = Path(d)
        target = Path(outdir) if outdir is not None else Path(tempfile.mkdtemp(prefix="aligner-demo-"))
        if not quiet:
            out.print(f"demo: aligning {d / 'network_a.tsv'} to {d / 'network_b.tsv'} with prior "
                      f"{d / 'prior.tsv'}", highlight=False, soft_wrap=True, markup=False, emoji=False)
        _run_align(d / "network_a.tsv", d / "network_b.tsv", d / "prior.tsv", target, alpha=0.9, top_k=25,
                   min_score=0.0, score_kind="similarity", solver="push", tol=1e-6, normalization="restricted",
                   rounding="auto", truth=d / "truth.tsv", delimiter=None, header="auto", force=force,
                   max_memory=None, quiet=quiet)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(app())
