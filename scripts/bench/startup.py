"""Start-up time of the ``aligner`` command line: median wall-clock seconds per command.

Runs each command N times as a subprocess of the installed ``aligner`` entry point (the one
on PATH, or ``--exe``) and prints a Markdown table of the median, minimum and maximum; with
``--out FILE`` the table is also written to FILE. The error exit is ``aligner align`` on an
input file that does not exist (exit status 2 is expected).

Below them, the floor any run stands on: bare Python processes that import numpy, pandas, and
numba with one small kernel loaded from numba's cache (compiled by an untimed run first), the
libraries a run of ``aligner align`` cannot do without.

Usage::

    python scripts/bench/startup.py [--runs 10] [--out startup.md] [--exe aligner]
"""

from __future__ import annotations

import argparse
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

#: (label, arguments, expected exit status)
COMMANDS = (
    ("aligner --help", ["--help"], 0),
    ("aligner --version", ["--version"], 0),
    ("aligner align --help", ["align", "--help"], 0),
    ("aligner align (missing input file)", ["align", "{tmp}/missing_a.tsv", "{tmp}/missing_b.tsv",
                                            "-o", "{tmp}/out"], 2),
)

#: (label, Python source run by ``python -c``); {kernel} is a file defining one cached kernel
FLOOR = (
    ("python: import numpy", "import numpy"),
    ("python: import pandas", "import pandas"),
    ("python: import numba, load one cached kernel and call it", "import runpy; runpy.run_path({kernel!r})"),
)

#: a kernel numba compiles once into its cache, then loads
KERNEL = """import numba
import numpy as np


@numba.njit(cache=True)
def total(x):
    s = 0.0
    for i in range(x.shape[0]):
        s += x[i]
    return s


total(np.ones(3))
"""


def time_command(exe: str, args: list[str], expect: int, runs: int) -> list[float]:
    """Wall-clock seconds of ``runs`` runs of ``exe args``; fails if an exit status differs from ``expect``."""
    seconds = []
    for _ in range(runs):
        t0 = time.perf_counter()
        proc = subprocess.run([exe, *args], stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
        seconds.append(time.perf_counter() - t0)
        if proc.returncode != expect:
            raise SystemExit(f"{exe} {' '.join(args)} exited {proc.returncode}, expected {expect}:\n"
                             f"{proc.stderr.decode(errors='replace')}")
    return seconds


def table(rows: list[tuple[str, list[float]]], runs: int) -> str:
    """The Markdown table of the timings."""
    lines = ["| command | median s | min s | max s |", "|---|---:|---:|---:|"]
    for label, secs in rows:
        lines.append(f"| `{label}` | {statistics.median(secs):.3f} | {min(secs):.3f} | {max(secs):.3f} |")
    lines.append("")
    lines.append(f"Median of {runs} runs each, wall-clock, `python scripts/bench/startup.py --runs {runs}`.")
    return "\n".join(lines) + "\n"


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=10, help="runs per command (default 10)")
    ap.add_argument("--exe", default="aligner", help="the entry point to time (default: aligner on PATH)")
    ap.add_argument("--out", type=Path, help="also write the Markdown table to this file")
    ns = ap.parse_args(argv)
    exe = shutil.which(ns.exe)
    if exe is None:
        ap.error(f"{ns.exe!r} is not on PATH; install the package (pip install -e .) or give --exe")
    rows = []
    with tempfile.TemporaryDirectory(prefix="aligner-startup-") as tmp:
        time_command(exe, ["--version"], 0, 1)  # warm the file cache once, untimed
        for label, args, expect in COMMANDS:
            rows.append((label, time_command(exe, [a.format(tmp=tmp) for a in args], expect, ns.runs)))
        kernel = Path(tmp) / "one_kernel.py"
        kernel.write_text(KERNEL, encoding="utf-8")
        for label, source in FLOOR:
            args = ["-c", source.format(kernel=str(kernel))]
            time_command(sys.executable, args, 0, 1)  # fills numba's cache (and the file cache), untimed
            rows.append((label, time_command(sys.executable, args, 0, ns.runs)))
    text = table(rows, ns.runs)
    sys.stdout.write(text)
    if ns.out is not None:
        ns.out.write_text(text, encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
