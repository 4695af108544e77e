"""``aligner report``: one self-contained HTML page from a finished run."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer

from aligner.cli.options import Quiet, Use, command, output_path
from aligner.cli.runtime import check_inputs, say
from aligner.config import AlignConfig

RunDir = Annotated[Path, typer.Argument(help="Directory of a finished run (summary.json, alignment.tsv, "
                                        "conserved_edges.tsv; sweep.tsv if a sweep was written there).",
                                        parser=output_path)]


@command(Use(AlignConfig, ("delimiter", "header")))
def report(outdir: RunDir,
           network_a: Annotated[Optional[Path], typer.Option("--a", help="Network A, when it is no longer where "
                                                             "summary.json says.")] = None,
           network_b: Annotated[Optional[Path], typer.Option("--b", help="Network B, likewise.")] = None,
           truth: Annotated[Optional[Path], typer.Option("--truth", help="Truth table for the true/false column, "
                                                         "when it is no longer where summary.json says.")] = None,
           quiet: Quiet = False, *, config: AlignConfig):
    """Write OUTDIR/report.html: one self-contained page with the run's tables and figures."""
    check_inputs(network_a, network_b, truth)
    from aligner.render.html import build_report

    path = build_report(outdir, network_a=network_a, network_b=network_b, delimiter=config.delimiter,
                        header=config.header, truth=truth)
    if not quiet:
        say(f"wrote {path}")
