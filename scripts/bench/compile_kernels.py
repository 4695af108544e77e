"""Compile time of each kernel a default run calls, alone, in a fresh process with an empty cache.

For every kernel of the compile-ahead table (``aligner.kernels.ahead.STAGE_KERNELS``, by its
signature there), a fresh Python process with an empty ``NUMBA_CACHE_DIR`` first compiles a
trivial function (numba's one-time start-up, paid by any process) and then times compiling the
kernel, numba's own implementations it calls (``np.empty`` and the like) included. Prints one
line per kernel and the total: the compiling a first run spreads over its two processes (less
what they share: numba's implementations, compiled once per process).

    python scripts/bench/compile_kernels.py [--root DIR]

``--root`` puts another checkout first on the path (to compare two commits side by side).
"""

from __future__ import annotations

import argparse
import os
import re
import subprocess
import sys
import tempfile
from pathlib import Path

#: run in the fresh process: warm numba up, then time one kernel's compilation
CHILD = """
import importlib, sys, time
import numba, numpy as np
@numba.njit
def _warm(a):
    s = 0
    for i in range(a.shape[0]):
        s += a[i]
    return s
_warm(np.zeros(3, dtype=np.int64))
module, name, sig = sys.argv[1:4]
kernel = getattr(importlib.import_module(f"aligner.kernels.{module}"), name)
t0 = time.perf_counter()
kernel.compile(sig)
print(f"{time.perf_counter() - t0:.3f}")
"""


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--root", type=Path, default=Path(__file__).resolve().parents[2],
                    help="checkout whose aligner is compiled (default: this one)")
    args = ap.parse_args(argv)
    root = str(args.root.resolve())
    sys.path.insert(0, root)
    from aligner.kernels.ahead import STAGE_KERNELS

    total = 0.0
    for stage, kernels in STAGE_KERNELS.items():
        for module, name, sig in kernels:
            with tempfile.TemporaryDirectory() as cache:
                out = subprocess.run([sys.executable, "-c", CHILD, module, name, f"({sig},)"], cwd=tempfile.gettempdir(),
                                     env=os.environ | {"NUMBA_CACHE_DIR": cache, "PYTHONPATH": root},
                                     capture_output=True, text=True)
            found = re.search(r"^([0-9.]+)$", out.stdout, re.M)
            if out.returncode or not found:
                print(f"{stage:<11} {module}.{name}: failed\n{out.stderr[-2000:]}", file=sys.stderr)
                return 1
            seconds = float(found.group(1))
            total += seconds
            print(f"{stage:<11} {module}.{name:<22} {seconds:6.3f} s", flush=True)
    print(f"{'total':<11} {'':<30} {total:6.3f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
