"""Write docs/commands.md, the command reference, from the typer application itself.

Usage::

    python scripts/dev/cli_reference.py            # (re)write docs/commands.md
    python scripts/dev/cli_reference.py --check    # exit 1 if docs/commands.md is not current
    python scripts/dev/cli_reference.py --stdout   # print it instead

Every command's usage line, description, arguments and options (grouped as in ``--help``, with
their defaults and allowed values) come from the click command that typer builds, so the page
says what ``aligner <command> --help`` says. Run it after changing a command or an option.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import typer

from aligner.checks import interval_text
from aligner.cli import app
from aligner.config import AlignConfig, ClassConfig, EngineConfig, LabelConfig, QueryConfig, TransferConfig, specs

ROOT = Path(__file__).resolve().parents[2]
TARGET = ROOT / "docs" / "commands.md"
#: options that are inputs of the Python functions under the same name, though not configuration
PYTHON_INPUTS = {"prior", "truth", "seeds", "alphas", "nodes"}

HEADER = """# Command reference

Written by `python scripts/dev/cli_reference.py` from the command-line application itself; do
not edit by hand (run the script after changing a command or an option). `aligner <command>
--help` shows the same. Every option that configures an alignment is also a keyword argument of
the Python functions (`aligner.align`, `aligner.sweep`, `aligner.query`, ...), under the name in
the *keyword* column; options without one exist on the command line only. What each option does
to the method is explained in [method.md](method.md).
"""


def _cell(text: object) -> str:
    """``text`` made safe for one Markdown table cell."""
    # (option help is escaped for rich markup: "\\[" shows as "[")
    return " ".join(str(text).split()).replace("\\[", "[").replace("|", "\\|")


def _is_option(param) -> bool:
    return param.param_type_name == "option" and not getattr(param, "hidden", False)


def _default(param) -> str:
    """The default of an option as the help shows it, or an empty string."""
    if getattr(param, "is_flag", False) and param.secondary_opts:
        return f"`{param.opts[0] if param.default else param.secondary_opts[0]}`"
    if getattr(param, "is_flag", False):
        return "off" if not param.default else "on"
    if param.required:
        return "(required)"
    if param.default is None or param.default in ((), ""):
        return ""
    return f"`{param.default}`"


#: classes whose fields are also keyword arguments of a Python function (the keyword column)
KEYWORD_CLASSES = (AlignConfig, QueryConfig, LabelConfig)
#: every class whose declarations give an option's allowed values
VALUE_CLASSES = KEYWORD_CLASSES + (ClassConfig, TransferConfig, EngineConfig)


def _declared(param, classes=KEYWORD_CLASSES):
    """The :class:`aligner.config.Spec` of the configuration field behind an option, if any.

    Options of several classes share a name (``top_k``, ``tol``); the one whose declared default
    is the option's default is taken.
    """
    found = [spec for cls in classes
             for name, (default, spec) in specs(cls).items()
             if name == param.name and spec.flag.split("/")[0] == param.opts[0] and default == param.default]
    return found[0] if found else None


def _values(param) -> str:
    """Allowed values, from the option's declaration in aligner.config; else the metavar."""
    spec = _declared(param, VALUE_CLASSES)
    if getattr(param, "is_flag", False):
        return ""
    if spec is not None and spec.kind == "choice":
        return ", ".join(f"`{c}`" for c in spec.choices)
    if spec is not None and spec.kind in ("real", "int"):
        what = "number" if spec.kind == "real" else "whole number"
        if spec.low is None and spec.high is None:
            return what
        if spec.kind == "int" and spec.high is None:
            return f"{what} ≥ {int(spec.low)}"
        return f"{what} in {interval_text(spec.low, spec.high, spec.closed)}"
    return (param.metavar or "").lower().replace("|", " or ")


def _options_tables(params: list) -> list[str]:
    """One Markdown table per help panel, in the order the panels first appear."""
    panels: dict[str, list] = {}
    for p in params:
        if _is_option(p):
            panels.setdefault(getattr(p, "rich_help_panel", None) or "Options", []).append(p)
    lines: list[str] = []
    for panel, opts in panels.items():
        lines += ["", f"**{panel}**", "", "| option | keyword | default | values | meaning |",
                  "|---|---|---|---|---|"]
        for p in opts:
            flags = ", ".join(f"`{o}`" for o in p.opts + p.secondary_opts)
            if p.secondary_opts:
                flags = f"`{p.opts[0]}/{p.secondary_opts[0]}`"
            keyword = f"`{p.name}`" if _declared(p) is not None or p.name in PYTHON_INPUTS else ""
            lines.append(f"| {flags} | {keyword} | {_default(p)} | {_values(p)} | {_cell(p.help or '')} |")
    return lines


def _command_section(name: str, command) -> list[str]:
    """The Markdown of one command: usage, description, arguments, options."""
    args = [p for p in command.params if p.param_type_name == "argument"]
    usage = " ".join(["[OPTIONS]"] + [p.name.upper() for p in args])
    lines = [f"## aligner {name}", "", "```", f"aligner {name} {usage}", "```", ""]
    lines.append((command.help or "").replace("\b\n", "").strip())
    if args:
        lines += ["", "| argument | meaning |", "|---|---|"]
        for p in args:
            lines.append(f"| `{p.name.upper()}` | {_cell(getattr(p, 'help', '') or '')} |")
    lines += _options_tables(command.params)
    return lines + [""]


def render() -> str:
    """The whole page, from the application."""
    group = typer.main.get_command(app)
    root = group.context_class(group, info_name="aligner")
    lines = [HEADER, "| command | what it does |", "|---|---|"]
    names = list(group.list_commands(root))
    for name in names:
        cmd = group.get_command(root, name)
        lines.append(f"| [`aligner {name}`](#aligner-{name}) | {_cell(cmd.get_short_help_str(limit=200))} |")
    lines += ["", "Every command also takes `--help`; `aligner --version` prints the version.", ""]
    for name in names:
        lines += _command_section(name, group.get_command(root, name))
    return "\n".join(lines).rstrip() + "\n"


def main(argv: list[str] | None = None) -> int:
    """Write, check or print the page; the exit status is 1 when ``--check`` finds it stale."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--check", action="store_true", help="exit 1 if docs/commands.md is not current")
    parser.add_argument("--stdout", action="store_true", help="print the page instead of writing it")
    args = parser.parse_args(argv)
    text = render()
    if args.stdout:
        sys.stdout.write(text)
        return 0
    if args.check:
        current = TARGET.read_text(encoding="utf-8") if TARGET.exists() else ""
        if current != text:
            print(f"{TARGET.relative_to(ROOT)} is not current: run python scripts/dev/cli_reference.py")
            return 1
        return 0
    TARGET.write_text(text, encoding="utf-8")
    print(f"wrote {TARGET.relative_to(ROOT)}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
