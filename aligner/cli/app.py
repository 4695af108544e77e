"""The ``aligner`` typer application: its callback (``--version``) and the commands it holds.

Each command lives in :mod:`aligner.cli.commands`; its options come from
:mod:`aligner.cli.options`. Nothing heavy is imported here, so ``aligner --help`` is quick.
"""

from __future__ import annotations

import sys
from typing import Annotated

import typer

from aligner import __version__
from aligner.cli.commands.align import align, score
from aligner.cli.commands.demo import demo
from aligner.cli.commands.labels import prior_from_labels
from aligner.cli.commands.query import query
from aligner.cli.commands.report import report
from aligner.cli.commands.sweep import sweep
from aligner.cli.commands.transfer import transfer
from aligner.cli.runtime import say

__all__ = ["app"]

app = typer.Typer(
    name="aligner",
    help="One-to-one alignment of two networks from a prior similarity table and their wiring.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
)


def _version(value: bool) -> None:
    if value:
        say(f"aligner {__version__}")
        raise typer.Exit()


@app.callback()
def main(version: Annotated[bool, typer.Option("--version", callback=_version, is_eager=True,
                                               help="Print the version and exit.")] = False) -> None:
    """One-to-one alignment of two networks from a prior similarity table and their wiring."""


for _cmd in (align, score, demo, sweep, query, report, transfer):
    app.command()(_cmd)
app.command("prior-from-labels")(prior_from_labels)

if __name__ == "__main__":  # pragma: no cover
    sys.exit(app())
