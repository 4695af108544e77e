"""What every command shares at run time: the two consoles, user errors as exit status 2, warnings,
the stage progress line, and the cheap check that input files exist.

Imports nothing heavy; the pipeline is imported by the command bodies that need it.
"""

from __future__ import annotations

import os
import time
import warnings
from contextlib import contextmanager
from pathlib import Path
from typing import Callable, Iterator, Mapping

import typer
from rich.console import Console
from rich.markup import escape

from aligner.errors import AlignerError, AlignerWarning, ConvergenceError, InputFormatError, InvalidParameterError

__all__ = ["out", "err", "say", "message", "user_errors", "progress", "check_inputs", "check_option_combinations"]

out = Console()
err = Console(stderr=True)


def say(text: str, *, console: Console | None = None) -> None:
    """Print ``text`` as it is: no markup, no highlighting, no emoji codes, no wrapping of paths."""
    (console or out).print(text, highlight=False, soft_wrap=True, markup=False, emoji=False)


def message(exc: AlignerError, flags: Mapping[str, str]) -> str:
    """The error's text, with the option as the user typed it in place of the keyword it starts with
    (and in the advice of an error that gives some: :meth:`ConvergenceError.shown`)."""
    text = exc.shown(flags) if isinstance(exc, ConvergenceError) else str(exc)
    param = getattr(exc, "param", None)
    if param and param in flags and (text == param or text.startswith(param + " ")):
        text = flags[param] + text[len(param):]
    return text


def _show_warning(quiet: bool, original: Callable) -> Callable:
    def show(msg, category, filename, lineno, file=None, line=None):
        if not issubclass(category, AlignerWarning):
            original(msg, category, filename, lineno, file, line)
        elif not quiet:
            err.print(f"[yellow]warning:[/] {escape(str(msg))}", highlight=False, soft_wrap=True, emoji=False)
    return show


@contextmanager
def user_errors(*, quiet: bool = False, flags: Mapping[str, str] | None = None) -> Iterator[None]:
    """Run a command body: warnings shown as they come, an :class:`AlignerError` as one line and exit 2.

    Parameters
    ----------
    quiet : bool
        Hide the package's warnings (errors are always shown).
    flags : mapping of str to str, optional
        Keyword -> the option that sets it (see :func:`message`).

    Notes
    -----
    Ctrl-C exits 130 with a note that nothing was left half-written (the writers publish
    outputs as one set). No traceback is printed for either.
    """
    with warnings.catch_warnings():
        warnings.simplefilter("always", AlignerWarning)
        warnings.showwarning = _show_warning(quiet, warnings.showwarning)
        try:
            yield
        except AlignerError as exc:
            err.print(f"[bold red]error:[/] {escape(message(exc, flags or {}))}", highlight=False, soft_wrap=True,
                      emoji=False)
            # 2 for the user's mistakes; an error that is not one (a lost compute cluster) says its own
            raise typer.Exit(code=getattr(exc, "exit_status", 2)) from None
        except KeyboardInterrupt:
            err.print("interrupted; no output was left half-written")
            raise typer.Exit(code=130) from None
        except SystemError as exc:
            # Ctrl-C while a compiled kernel is being loaded from numba's cache surfaces as a
            # SystemError whose cause is the KeyboardInterrupt: an interruption all the same
            if not _caused_by_interrupt(exc):
                raise
            err.print("interrupted; no output was left half-written")
            raise typer.Exit(code=130) from None


def _caused_by_interrupt(exc: BaseException) -> bool:
    """Whether a KeyboardInterrupt is among the causes (or contexts) of ``exc``."""
    seen: set[int] = set()
    while exc is not None and id(exc) not in seen:
        if isinstance(exc, KeyboardInterrupt):
            return True
        seen.add(id(exc))
        exc = exc.__cause__ or exc.__context__
    return False


class _Stages:
    """Progress callbacks over a rich bar: ``stage(name)`` as each stage starts, ``count(done, total)``."""

    def __init__(self, bar, task):
        self.bar, self.task, self.seen = bar, task, 0

    def stage(self, name: str) -> None:
        if self.seen:
            self.bar.advance(self.task)
        self.seen += 1
        self.bar.update(self.task, description=name)

    def count(self, done: int, total: int) -> None:
        self.bar.update(self.task, description=f"null maps {done}/{total}")


class _Silent:
    def stage(self, name: str) -> None:
        pass

    def count(self, done: int, total: int) -> None:
        pass


class _Lines:
    """Progress for logs (standard error not a terminal): one line per stage as it ends, with its time."""

    def __init__(self):
        self.current: str | None = None
        self.t0 = 0.0

    def stage(self, name: str) -> None:
        self.finish()
        self.current, self.t0 = name, time.perf_counter()

    def finish(self) -> None:
        if self.current is not None:
            err.print(f"stage {self.current:<11} {time.perf_counter() - self.t0:8.2f} s", highlight=False)
            self.current = None

    def count(self, done: int, total: int) -> None:
        pass


@contextmanager
def progress(quiet: bool, total: int) -> Iterator[_Stages | _Silent | _Lines]:
    """Progress over ``total`` stages unless ``quiet``: a live line naming the running stage on a
    terminal, else (a log, a pipe) one line per stage as it ends, with its time."""
    if quiet:
        yield _Silent()
        return
    if not err.is_terminal:
        lines = _Lines()
        yield lines
        lines.finish()  # not reached when the run fails: no time is shown for a stage that failed
        return
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, SpinnerColumn, TextColumn, TimeElapsedColumn

    with Progress(SpinnerColumn(), TextColumn("[bold]{task.description:<12}"), BarColumn(), MofNCompleteColumn(),
                  TimeElapsedColumn(), console=err, transient=True) as bar:
        yield _Stages(bar, bar.add_task("starting", total=total))


def check_option_combinations(config, *, prior: Path | None, seeds: Path | None = None, query=None) -> None:
    """Refuse an option given where nothing uses it: the user expects an effect the run would not have.

    An option counts as given when it differs from its default (``config`` an AlignConfig, ``query``
    a QueryConfig); the message names it and says what it needs.
    """
    base = type(config)()
    given = {f: getattr(config, f) != getattr(base, f) for f in ("weight_model", "seed_weight", "structural_weight",
                                                                 "permutation_seed", "refine_starts", "beta",
                                                                 "refine_iter")}
    rules = [
        ("prior_columns", config.prior_columns is not None and prior is None,
         "picks the columns of the prior table, and no prior is given; add --prior or leave --prior-columns out"),
        ("weight_model", given["weight_model"] and not config.weighted,
         "says how edge weights enter the walk, and the run is not weighted; add --weighted or leave "
         "--weight-model out"),
        ("seed_weight", given["seed_weight"] and seeds is None,
         "is the seeds' share of the diffusion's source, and no seeds are given; add --seeds or leave "
         "--seed-weight out"),
        ("structural_weight", given["structural_weight"] and not (config.structural and prior is not None),
         "weighs structural candidates against a prior; it needs --structural-candidates and --prior"),
        ("permutation_seed", given["permutation_seed"] and config.permutations == 0,
         "seeds the random maps of --permutations, and none are drawn; add --permutations N or leave "
         "--permutation-seed out"),
    ]
    rules += [(name, given[name] and not config.refine,
               "is an option of the refinement, which --no-refine turns off; leave one of them out")
              for name in ("refine_starts", "beta", "refine_iter")]
    if query is not None:
        rules.append(("max_region_pairs",
                      query.max_region_pairs != type(query)().max_region_pairs and not query.answer,
                      "caps the region of an answer, and --no-answer asks for none; leave one of them out"))
    for name, bad, text in rules:
        if bad:
            raise InvalidParameterError(f"{name} {text}", param=name)


def check_inputs(*paths: Path | None) -> None:
    """Refuse a missing, directory or unreadable input path before the pipeline is imported.

    The same checks, in the same words, as the readers make (so the early exit reads like the
    late one); None is skipped.
    """
    from aligner.io.paths import input_files

    for p in paths:
        if p is None:
            continue
        if input_files(p) is not None:  # a pattern matching files (one matching none raises here)
            continue
        if not p.exists():
            raise InputFormatError("no such file; check the path", path=str(p))
        if p.is_dir():
            # the command line turns an empty argument (an unset shell variable) into "."
            empty = " (an empty argument names it too)" if str(p) == "." else ""
            raise InputFormatError(f"is a directory{empty}, not a file; give the path of a file", path=str(p))
        if not p.is_file():  # the readers' NOT_A_FILE, in the same words
            raise InputFormatError("is a pipe or a device, not a file (a shell's <(...) gives a pipe): an input is "
                                   "read more than once; write it to a file and give that", path=str(p))
        if not os.access(p, os.R_OK):
            raise InputFormatError("the file cannot be read (permission denied); check its permissions", path=str(p))
