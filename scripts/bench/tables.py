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
