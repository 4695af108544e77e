"""The longest functions of the package, compiled kernels left out.

    python scripts/dev/function_lengths.py [--top 15] [--max 80] [PACKAGE_DIR]

Counts every line from ``def`` to the function's last line, docstring included. With ``--max``,
exits with status 1 when a function is longer.
"""

from __future__ import annotations

import argparse
import ast
from pathlib import Path


def function_lengths(root: Path) -> list[tuple[int, str]]:
    """(lines, "path:line name") of every function under ``root`` outside ``kernels/``, longest first."""
    rows = []
    for path in sorted(root.rglob("*.py")):
        if "kernels" in path.relative_to(root).parts:
            continue
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                rows.append((node.end_lineno - node.lineno + 1, f"{path.as_posix()}:{node.lineno} {node.name}"))
    return sorted(rows, reverse=True)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("root", nargs="?", default="aligner", type=Path)
    ap.add_argument("--top", type=int, default=15, help="how many to list")
    ap.add_argument("--max", type=int, default=None, help="fail when a function is longer than this")
    args = ap.parse_args(argv)
    rows = function_lengths(args.root)
    for n, where in rows[: args.top]:
        print(f"{n:5d}  {where}")
    if args.max is not None and rows and rows[0][0] > args.max:
        print(f"{sum(n > args.max for n, _ in rows)} function(s) longer than {args.max} lines")
        return 1
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
