"""Command-line options: derived from :mod:`aligner.config`, plus the few that are not configuration.

A command asks for configuration objects with :func:`command`; the decorator adds one typer option
per field (flag, help, default, help panel and kind from the field's :class:`~aligner.config.Spec`),
then builds the object from what was typed and hands it to the command under one name. Nothing
about an option is typed twice: its default, help and bounds live in the declaration alone, and
its check runs when the object is built (so ``--alpha 1.5`` fails with the same message as
``AlignConfig(alpha=1.5)``, the flag in place of the keyword).

The options that are not configuration (``--out``, ``--force``, ``--quiet``, ``--prior``,
``--truth``, ``--seeds``, ``--json``) are declared here once, as ``Annotated`` types that every
command reuses.

This module imports nothing heavy: ``aligner --help`` reads it.
"""

from __future__ import annotations

import functools
import inspect
from dataclasses import dataclass
from pathlib import Path
from typing import Annotated, Any, Callable, Optional, get_args, get_origin, get_type_hints

import typer
from rich.markup import escape

from aligner.config import Spec, specs
from aligner.errors import InvalidParameterError
from aligner.cli.runtime import user_errors

__all__ = ["Use", "command", "config_parameters", "Prior", "Truth", "Seeds", "Force", "Quiet", "Json", "Out",
           "OptionalOut", "Alphas", "Nodes", "NodeFile", "EmptyPath", "output_path", "out_option"]

# --------------------------------------------------------------------------- options that are not configuration

Prior = Annotated[Optional[Path], typer.Option(
    "--prior", "-p", help="Prior similarity table: node_a, node_b, score (TSV/CSV, may be gzip-compressed). Left "
    "out: the candidates are grown from --seeds, else (align, sweep) taken from structural features.")]
Truth = Annotated[Optional[Path], typer.Option(
    "--truth", help="Known true pairs (node_a, node_b), to report node correctness (NC).")]
Seeds = Annotated[Optional[Path], typer.Option(
    "--seeds", help="Anchor pairs known to correspond (node_a, node_b): fixed in the matching, extra diffusion "
    "sources; with no --prior the candidates are grown from them through the wiring.")]
#: flags take no value, so they show none in the help (``metavar=""``; typer would show "<bool>")
FLAG = ""
Force = Annotated[bool, typer.Option("--force", help="Replace the outputs of an earlier run at --out.", metavar=FLAG)]
Quiet = Annotated[bool, typer.Option("--quiet", "-q", help="Print nothing but errors.", metavar=FLAG)]
Json = Annotated[bool, typer.Option("--json", help="Print the result as JSON instead of tables.", metavar=FLAG)]


class EmptyPath:
    """What an output path typed as an empty string (``-o ""``, ``-o "$UNSET"``) parses to.

    A plain ``Path("")`` is ``Path(".")``: the working directory, which is never what an empty
    value meant. :func:`command` refuses it, naming the option, before the command runs.
    """

    def __repr__(self) -> str:
        return "''"


def output_path(value: Any) -> Any:
    """The parser of every output path option and argument: a Path, or :class:`EmptyPath` for ''."""
    if isinstance(value, str):
        return EmptyPath() if value == "" else Path(value)
    return value


def out_option(*decls: str, help: str) -> Any:
    """A typer option for an output path (``--out``), parsed by :func:`output_path`."""
    return typer.Option(*decls, help=help, parser=output_path, metavar="PATH")


Out = Annotated[Path, out_option("--out", "-o", help="Where to write the outputs (the command's description lists "
                                 "them).")]
OptionalOut = Annotated[Optional[Path], out_option("--out", "-o", help="Where to write the outputs. Default: a new "
                                                   "temporary directory.")]
Alphas = Annotated[Optional[str], typer.Option("--alphas", help="Comma-separated values of alpha in [0, 1), run in "
                                     "ascending order. Default: the sweep's own grid.")]
Nodes = Annotated[Optional[list[str]], typer.Option("--node", "-n", metavar="NODE",
                                                    help="A node to ask about (repeat for several).")]
NodeFile = Annotated[Optional[Path], typer.Option(
    "--node-file", metavar="FILE", help="A file of nodes to ask about, one per line (blank lines and lines "
    "starting with # skipped; may be gzip-compressed); with --node, both are asked.")]


# --------------------------------------------------------------------------- options from the declarations

@dataclass(frozen=True)
class Use:
    """Which fields of configuration class ``cls`` a command takes, and under which argument name.

    ``names``: those fields only (None: every field), minus ``exclude``. The command receives
    one ``cls`` object as its argument ``into``.
    """

    cls: type
    names: tuple[str, ...] | None = None
    exclude: tuple[str, ...] = ()
    into: str = "config"

    def fields(self) -> dict[str, tuple[Any, Spec]]:
        table = specs(self.cls)
        chosen = table if self.names is None else {n: table[n] for n in self.names}
        return {n: v for n, v in chosen.items() if n not in self.exclude}


def _parser(spec: Spec) -> Callable[[Any], Any]:
    """Text to number (or None for an optional option given "none").

    Text that is not a number is passed on unchanged, so the configuration's own check names
    the option and the value in the project's words. An empty value is refused that way too,
    not read as None: ``--top-k "$K"`` with K unset must not quietly keep every candidate (as
    ``-o ""`` is refused rather than taken as the working directory).
    """
    def parse(value: Any) -> Any:
        if not isinstance(value, str):
            return value  # the default, already typed
        text = value.strip()
        if spec.optional and text.lower() == "none":
            return None
        try:
            return int(text) if spec.kind == "int" else float(text)
        except ValueError:
            return value
    return parse


def _metavar(spec: Spec) -> str | None:
    if spec.kind == "choice":
        return "CHOICE"  # the choices go in the help: a list here would squeeze the flags out of an 80-column help
    if spec.kind in ("real", "int"):
        base = {"real": "NUMBER", "int": "INTEGER"}[spec.kind]
        return spec.metavar or (base + "|none" if spec.optional else base)
    return spec.metavar


def _option(spec: Spec) -> Any:
    """The typer option of one declared field (its annotation, default left to the signature)."""
    help_text = spec.help
    if spec.kind == "choice":
        help_text += f" Choices: {', '.join(spec.choices)}."
    if spec.optional and spec.kind in ("real", "int"):
        help_text += " Give 'none' for None."
    # the help is rich markup: brackets of the text ('aligner[dask]') are escaped, not taken as tags
    common = dict(help=escape(help_text), rich_help_panel=spec.group, metavar=_metavar(spec))
    if spec.kind == "bool":
        return Annotated[bool, typer.Option(spec.flag, **(common | {"metavar": FLAG}))]
    if spec.kind in ("real", "int"):
        return Annotated[Any, typer.Option(spec.flag, parser=_parser(spec), **common)]
    return Annotated[Optional[str] if spec.optional else str, typer.Option(spec.flag, **common)]


def config_parameters(use: Use) -> list[inspect.Parameter]:
    """The keyword-only parameters a command gains from ``use``.

    Parameters
    ----------
    use : Use

    Returns
    -------
    list of inspect.Parameter
        One per field, its default from the declaration and its typer option as annotation.
    """
    return [inspect.Parameter(name, inspect.Parameter.KEYWORD_ONLY, default=default, annotation=_option(spec))
            for name, (default, spec) in use.fields().items()]


def _flag(param: inspect.Parameter) -> str:
    """How the user types ``param``: its first long option, or its name in capitals for an argument."""
    infos = get_args(param.annotation)[1:] if get_origin(param.annotation) is Annotated else ()
    for info in infos:
        if isinstance(info, typer.models.OptionInfo):
            # in an Annotated option, typer keeps the first declaration in ``default``
            decls = [d.split("/")[0] for d in (info.default, *(info.param_decls or ()))
                     if isinstance(d, str) and d.startswith("-")]
            longs = [d for d in decls if d.startswith("--")]
            if decls:
                return (longs or decls)[0]
    return param.name.upper()


def command(*uses: Use) -> Callable[[Callable[..., Any]], Callable[..., Any]]:
    """Give a command the options of ``uses`` and run it under :func:`~aligner.cli.runtime.user_errors`.

    Parameters
    ----------
    *uses : Use
        The configuration classes the command takes, with the fields it takes of each.

    Returns
    -------
    callable
        A decorator. The decorated function names each configuration object as a keyword
        parameter (``Use.into``); the function it returns takes the fields' options instead
        (typer reads its ``__signature__``), builds the objects, and calls the original. An
        :class:`~aligner.errors.AlignerError` raised while building them or anywhere in the
        command becomes a one-line message, the option's flag in place of the keyword, and exit
        status 2. The returned function's ``flags`` maps each keyword to its flag.

    Raises
    ------
    TypeError
        When two options of the command have one name (a programming error, seen at import).

    Examples
    --------
    >>> from aligner.config import LabelConfig
    >>> @command(Use(LabelConfig, into="labels"))
    ... def run(path: str, *, labels: LabelConfig):
    ...     return labels.top_k
    >>> run(path="x", top_k=3, min_similarity=0.1)
    3
    >>> run.flags["min_similarity"]
    '--min-similarity'
    """
    def decorate(func: Callable[..., Any]) -> Callable[..., Any]:
        hints = get_type_hints(func, include_extras=True)
        own = [p.replace(annotation=hints.get(p.name, p.annotation))
               for p in inspect.signature(func).parameters.values() if p.name not in {u.into for u in uses}]
        added = [p for use in uses for p in config_parameters(use)]
        names = [p.name for p in own + added]
        if len(set(names)) != len(names):
            raise TypeError(f"{func.__name__}: an option is declared twice in {names}")
        params = own + added
        flags = {p.name: _flag(p) for p in params}
        flags.update({name: spec.flag.split("/")[0] for use in uses for name, (_, spec) in use.fields().items()})

        @functools.wraps(func)
        def run(**values: Any) -> Any:
            with user_errors(quiet=bool(values.get("quiet", False)), flags=flags):
                _refuse_empty_paths(values)
                for use in uses:
                    values[use.into] = use.cls(**{n: values.pop(n) for n in use.fields()})
                return func(**values)

        run.__signature__ = inspect.Signature(sorted(params, key=lambda p: p.kind))
        run.__annotations__ = {p.name: p.annotation for p in params}
        run.flags = flags
        return run
    return decorate


def _refuse_empty_paths(values: dict[str, Any]) -> None:
    """Refuse an output path given as an empty string (an unset shell variable in ``-o "$OUT"``,
    which would otherwise write into the working directory); the message names the keyword, shown
    as the option the user typed."""
    for name, value in values.items():
        if isinstance(value, EmptyPath):
            raise InvalidParameterError(f"{name} must be a path; got '' (the output path is empty: is a shell "
                                        "variable unset?)", param=name)
