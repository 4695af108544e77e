"""What the benchmark scripts share: writing their rows as CSV and their table as Markdown."""

from __future__ import annotations

import csv
from pathlib import Path


def write_results(rows: list[dict], out, name: str, text: str, markdown=None) -> Path:
    """Write ``rows`` to OUT/NAME.csv and ``text`` to ``markdown`` (default OUT/NAME.md); returns
    the Markdown file's path."""
    out = Path(out)
    out.mkdir(parents=True, exist_ok=True)
    with open(out / f"{name}.csv", "w", newline="") as fh:
        w = csv.DictWriter(fh, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)
    path = Path(markdown) if markdown else out / f"{name}.md"
    path.write_text(text)
    return path


def finish(rows: list[dict], name: str, argv, render, out, markdown=None) -> int:
    """The end of a script's main: its command line, the table ``render(rows, command)`` written
    with the rows (:func:`write_results`) and printed; returns the exit status 0."""
    import sys

    command = f"python scripts/bench/{name}.py " + " ".join(argv if argv is not None else sys.argv[1:])
    text = render(rows, command.strip())
    write_results(rows, out, name, text, markdown)
    print(text)
    return 0
