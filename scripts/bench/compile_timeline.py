"""Where a first run's compiling goes: a timeline of the kernels each process compiles.

Runs ``aligner demo`` with an empty numba cache (a fresh ``NUMBA_CACHE_DIR``) and a
``sitecustomize`` module put first on ``PYTHONPATH`` that records numba's ``numba:compile``
events in every Python process the run starts (the run and its compile-ahead helper). Prints,
per process, when it started, each top-level kernel it compiled (start, end, seconds, name) and
when it exited, in seconds from the start of the command, then the compiling seconds per
process. Then the same command warm (the cache just filled), for the difference.

    python scripts/bench/compile_timeline.py [--markdown FILE]
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

#: recorded in every process started with it on PYTHONPATH (numba's compile events, top level only)
SITE = '''
import os, sys, time, atexit
_out = os.environ.get("ALIGNER_TIMELINE")
if _out:
    try:
        from numba.core import event
        _open = []
        _log = open(f"{_out}.{os.getpid()}", "w")
        class _Listener(event.Listener):
            def on_start(self, ev):
                _open.append(time.time())
            def on_end(self, ev):
                t0 = _open.pop()
                if not _open:
                    d = ev.data.get("dispatcher")
                    name = getattr(getattr(d, "py_func", None), "__qualname__", "?")
                    _log.write(f"{t0:.3f} {time.time():.3f} {name}\\n")
                    _log.flush()
        event.register("numba:compile", _Listener())
        _log.write(f"{time.time():.3f} start\\n")
        atexit.register(lambda: (_log.write(f"{time.time():.3f} exit\\n"), _log.flush()))
    except ImportError:
        pass
'''


def _demo(env: dict, out: Path) -> float:
    exe = shutil.which("aligner")
    if exe is None:
        raise SystemExit("aligner is not on PATH; install the package (pip install -e .)")
    t0 = time.time()
    subprocess.run([exe, "demo", "-o", str(out), "--quiet", "--force"], env=env, check=True)
    return t0


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--markdown", type=Path, help="also write the report to this file")
    args = ap.parse_args(argv)
    with tempfile.TemporaryDirectory(prefix="aligner-timeline-") as tmp:
        tmp = Path(tmp)
        (tmp / "site").mkdir()
        (tmp / "site" / "sitecustomize.py").write_text(SITE, encoding="utf-8")
        env = os.environ | {"NUMBA_CACHE_DIR": str(tmp / "cache"), "ALIGNER_TIMELINE": str(tmp / "log"),
                            "PYTHONPATH": os.pathsep.join(filter(None, [str(tmp / "site"),
                                                                        os.environ.get("PYTHONPATH")]))}
        t0 = _demo(env, tmp / "cold")
        cold = time.time() - t0
        logs = sorted(tmp.glob("log.*"))
        env.pop("ALIGNER_TIMELINE")
        t1 = _demo(env, tmp / "warm")
        warm = time.time() - t1
        lines = [f"`aligner demo`: {cold:.2f} s with an empty compile cache, {warm:.2f} s warm "
                 f"(difference {cold - warm:.2f} s); `python scripts/bench/compile_timeline.py`", ""]
        for n, log in enumerate(logs):
            rows = [line.split() for line in log.read_text().splitlines()]
            total = sum(float(r[1]) - float(r[0]) for r in rows if len(r) == 3)
            lines += [f"process {n + 1}: {total:.2f} s compiling", "", "| from s | to s | seconds | kernel |",
                      "|---:|---:|---:|---|"]
            for r in rows:
                if len(r) == 3:
                    a, b = float(r[0]) - t0, float(r[1]) - t0
                    lines.append(f"| {a:.2f} | {b:.2f} | {b - a:.2f} | `{r[2]}` |")
                else:
                    lines.append(f"| {float(r[0]) - t0:.2f} | | | ({r[1]}) |")
            lines.append("")
    text = "\n".join(lines)
    print(text)
    if args.markdown:
        args.markdown.write_text(text, encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
