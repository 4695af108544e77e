"""The ``aligner`` typer application: its callback (``--version``) and the commands it holds.

Each command lives in :mod:`aligner.cli.commands`; its options come from
:mod:`aligner.cli.options`. Nothing heavy is imported here, so ``aligner --help`` is quick.
"""

from __future__ import annotations

import sys
from typing import Annotated

import typer
import typer.core
from typer.core import TyperGroup

from aligner import __version__
from aligner.cli.commands.align import align, score
from aligner.cli.commands.classes import prior_from_classes
from aligner.cli.commands.demo import demo
from aligner.cli.commands.labels import prior_from_labels
from aligner.cli.commands.query import query
from aligner.cli.commands.report import report
from aligner.cli.commands.sweep import sweep
from aligner.cli.commands.transfer import transfer
from aligner.cli.commands.update import update
from aligner.cli.runtime import err, say

__all__ = ["app"]

# the click typer runs on: its own copy in recent typer versions, the click package before
_click = getattr(typer.core, "_click", None) or __import__("click")


class _Group(TyperGroup):
    """The app's command group: a mistake on the command line itself (a missing argument, an
    unknown option) is reported like every other user error, as one ``error:`` line with exit
    status 2, instead of the framework's boxed message."""

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        if not standalone_mode:
            return super().main(args, prog_name, complete_var, standalone_mode=False, **extra)
        errors = _click.exceptions
        try:
            status = super().main(args, prog_name, complete_var, standalone_mode=False, **extra)
        except errors.UsageError as exc:
            if type(exc).__name__ == "NoArgsIsHelpError":  # no arguments at all: the help, as before
                return super().main(args, prog_name, complete_var, standalone_mode=True, **extra)
            where = exc.ctx.command_path if exc.ctx is not None else "aligner"
            text = exc.format_message().rstrip(".")
            if isinstance(exc, errors.NoSuchOption) and exc.ctx is not None and exc.ctx.command.name == "update" \
                    and exc.option_name in _option_names(self.commands.get("align")):
                # not a typo for an update option: an option of the run being updated
                text = (f"{exc.option_name} is an option of align; an update keeps the previous run's options "
                        "(run align again to change them)")
            say(f"error: {where}: {text[:1].lower()}{text[1:]}; see '{where} --help'", console=err)
            sys.exit(2)
        except errors.ClickException as exc:  # not a usage error: the framework's own words and status
            exc.show()
            sys.exit(exc.exit_code)
        except typer.Abort:  # typer's name for the framework's abort (Ctrl-C at a prompt, a closed pipe)
            say("interrupted", console=err)
            sys.exit(130)
        # the command ran (None), or an exit was asked for with its status (an int)
        sys.exit(status if isinstance(status, int) else 0)


def _option_names(command) -> set[str]:
    """Every option spelling of ``command`` (None: no names)."""
    if command is None:
        return set()
    return {name for param in command.params for name in (*param.opts, *param.secondary_opts)}


app = typer.Typer(
    name="aligner",
    help="One-to-one alignment of two networks from a prior similarity table and their wiring.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
    cls=_Group,
)


def _version(value: bool) -> None:
    if value:
        say(f"aligner {__version__}")
        raise typer.Exit()


@app.callback()
def main(version: Annotated[bool, typer.Option("--version", callback=_version, is_eager=True, metavar="",
                                               help="Print the version and exit.")] = False) -> None:
    """One-to-one alignment of two networks from a prior similarity table and their wiring."""


for _cmd in (align, score, demo, sweep, query, report, transfer, update):
    app.command()(_cmd)
app.command("prior-from-labels")(prior_from_labels)
app.command("prior-from-classes")(prior_from_classes)

if __name__ == "__main__":  # pragma: no cover
    sys.exit(app())
