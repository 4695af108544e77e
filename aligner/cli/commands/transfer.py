"""``aligner transfer``: the interactions a finished run carries across, ranked, without realigning."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from aligner.cli.options import Quiet, Use, command, output_path
from aligner.cli.runtime import out, say
from aligner.config import TransferConfig

RunDir = Annotated[Path, typer.Argument(help="Directory of a finished run of align or demo (it holds "
                                        "transferred_edges.tsv).", parser=output_path)]


@command(Use(TransferConfig, into="selection"))
def transfer(outdir: RunDir, quiet: Quiet = False, *, selection: TransferConfig):
    """Rank the edges one network has and the other lacks under a run's alignment; print them and write
    OUTDIR/transferred_selected.tsv."""
    from aligner.io.outputs import read_transferred, write_transfer_selection
    from aligner.render.console import transfer_lines, transfer_table

    table = read_transferred(outdir)
    kept = table[table["support"] >= selection.min_support]
    if selection.top is not None:
        kept = kept.head(selection.top)
    path = write_transfer_selection(outdir, kept)
    if not quiet:
        out.print(transfer_table(kept))
        for line in transfer_lines(table, kept, selection.min_support, path):
            say(line)
