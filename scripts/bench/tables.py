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


def memory_pages() -> str:
    """How this machine hands out memory, which moves the timings of large runs: the kernel's
    transparent huge page settings (enabled, defrag), whether numpy asks for huge pages
    (``NUMPY_MADVISE_HUGEPAGE``, read by numpy at import; unset means yes on Linux 4.6 and
    later), and the free and cached memory at the start (see docs/benchmarks.md, "Memory pages")."""
    import os

    def chosen(path: str) -> str:
        try:
            text = Path(path).read_text()
        except OSError:
            return "n/a"
        return text[text.index("[") + 1:text.index("]")] if "[" in text else text.strip()

    info = {}
    try:
        for line in Path("/proc/meminfo").read_text().splitlines():
            key, _, value = line.partition(":")
            info[key] = int(value.split()[0]) / 2**20  # kB -> GiB
    except (OSError, ValueError, IndexError):
        pass
    free = f", {info['MemFree']:.1f} GiB free and {info['Cached']:.1f} GiB cached" if "MemFree" in info else ""
    return (f"transparent huge pages {chosen('/sys/kernel/mm/transparent_hugepage/enabled')} (defrag "
            f"{chosen('/sys/kernel/mm/transparent_hugepage/defrag')}), NUMPY_MADVISE_HUGEPAGE "
            f"{os.environ.get('NUMPY_MADVISE_HUGEPAGE', 'unset')}{free}")
