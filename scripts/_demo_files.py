"""Shared by the demo generators: write the demo files, or check that they are up to date."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Callable


def write_or_check(argv: list[str] | None, description: str, build: Callable, readme: Callable,
                   out_dirs: tuple[Path, ...], root: Path) -> int:
    """Write ``build()``'s files into every folder of ``out_dirs`` and ``readme(stats)`` into the first.

    With ``--check`` nothing is written; the exit status is 1 when a file differs from what
    would be written.
    """
    parser = argparse.ArgumentParser(description=description)
    parser.add_argument("--check", action="store_true",
                        help="do not write; exit 1 if any file differs from what would be written")
    args = parser.parse_args(argv)
    files, stats = build()
    targets = [(d / name, text) for d in out_dirs for name, text in files.items()]
    targets.append((out_dirs[0] / "README.md", readme(stats)))
    if args.check:
        stale = [str(p.relative_to(root)) for p, text in targets
                 if not p.exists() or p.read_bytes() != text.encode("utf-8")]
        for p in stale:
            print(f"out of date: {p}")
        return 1 if stale else 0
    for path, text in targets:
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_bytes(text.encode("utf-8"))
        print(f"wrote {path.relative_to(root)}")
    return 0
