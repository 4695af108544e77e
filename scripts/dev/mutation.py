"""Mutation testing of the core stage modules with mutmut (>= 3), in bounded time.

Usage (from the repository root, with the development extra installed)::

    nice -n 10 python scripts/dev/mutation.py --max-minutes 40
    python scripts/dev/mutation.py --modules scoring rounding --max-minutes 15 --children 1

For every selected module the script copies the package and the tests that exercise that
module into a scratch directory under ``--out`` (``bench_out/mutation`` by default, git-ignored),
writes a ``setup.cfg`` there that tells mutmut which file to mutate and which tests to run, and
runs ``mutmut run`` inside that copy under ``nice``. mutmut then makes its own ``mutants/`` copy
below the scratch directory: nothing in the working tree's ``aligner/`` is ever edited. Modules
run one after the other until the time budget is spent; the run in progress is then stopped
(its finished mutants keep their verdicts) and the modules not reached are reported as such.

The report (``report.md`` in ``--out``) gives, per module, the mutants killed, survived, timed
out, crashed, without covering tests and not checked, the score (caught over caught + survived,
where a kill, a timeout and a crash all count as caught), and the
diff of every surviving mutant. A mutant that survives is either equivalent (no test can tell
it from the original: explain it in docs/testing.md) or a missing test.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]

#: module -> the tests that exercise it (kept short: a mutant runs only the tests that reach it)
MODULE_TESTS = {
    "scoring": ["tests/core/test_scoring.py", "tests/core/test_scoring_recount.py"],
    "candidates": ["tests/core/test_candidates.py"],
    "rounding": ["tests/core/test_rounding.py"],
    "diffusion": ["tests/core/test_diffusion.py", "tests/kernels/test_push.py",
                  "tests/core/test_directed_weighted.py"],
    "product": ["tests/core/test_product.py", "tests/core/test_directed_weighted.py"],
    "significance": ["tests/core/test_significance.py"],
    "refine": ["tests/core/test_refine.py"],
}

#: mutmut's exit-code meanings (mutmut/stats.py, version 3.8): what each verdict is called here
STATUS = {1: "killed", 3: "killed", 0: "survived", 5: "no tests", 33: "no tests", 34: "skipped",
          35: "suspicious", 36: "timeout", -24: "timeout", 24: "timeout", 152: "timeout",
          255: "timeout", 37: "caught by type check", -11: "segfault", -9: "segfault", None: "not checked"}


def _parse(argv: list[str] | None) -> argparse.Namespace:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--modules", nargs="+", choices=list(MODULE_TESTS), default=list(MODULE_TESTS),
                   help="core modules to mutate (default: all seven)")
    p.add_argument("--max-minutes", type=float, default=40.0,
                   help="wall-time budget for the whole run (default 40)")
    p.add_argument("--children", type=int, default=1, help="parallel mutant workers (default 1)")
    p.add_argument("--out", type=Path, default=ROOT / "bench_out" / "mutation",
                   help="scratch and report directory (default bench_out/mutation)")
    p.add_argument("--nice", type=int, default=10, help="niceness of the mutmut processes (default 10)")
    p.add_argument("--report-only", action="store_true",
                   help="write the report from the verdicts already in --out, without running mutmut")
    return p.parse_args(argv)


def _prepare(module: str, work: Path) -> None:
    """A fresh copy of the package and the module's tests, with mutmut's configuration."""
    if work.exists():
        shutil.rmtree(work)
    work.mkdir(parents=True)
    ignore = shutil.ignore_patterns("__pycache__", "*.pyc", "*.nbi", "*.nbc")
    shutil.copytree(ROOT / "aligner", work / "aligner", ignore=ignore)
    (work / "tests").mkdir()
    shutil.copy2(ROOT / "tests" / "conftest.py", work / "tests" / "conftest.py")
    for data in ("data", "assets"):  # files the tests read
        if (ROOT / "tests" / data).is_dir():
            shutil.copytree(ROOT / "tests" / data, work / "tests" / data)
    tests = [t for t in MODULE_TESTS[module] if (ROOT / t).exists()]
    for t in tests:
        (work / t).parent.mkdir(parents=True, exist_ok=True)
        shutil.copy2(ROOT / t, work / t)
    cfg = ["[mutmut]", "source_paths = aligner", f"only_mutate = aligner/core/{module}.py",
           "pytest_add_cli_args_test_selection ="] + [f"    {t}" for t in tests] + [
           "pytest_add_cli_args =", "    -p", "    no:cacheprovider", "    -x", "    -q",
           "use_git_change_detection = false", ""]
    (work / "setup.cfg").write_text("\n".join(cfg))


def _run_mutmut(work: Path, args: argparse.Namespace, seconds: float) -> str:
    """Run mutmut in ``work`` for at most ``seconds``; return how it ended."""
    exe = Path(sys.executable).parent / "mutmut"
    cmd = ["nice", "-n", str(args.nice), str(exe), "run", "--max-children", str(args.children)]
    env = dict(os.environ, PYTHONDONTWRITEBYTECODE="1")
    with open(work / "mutmut.log", "w") as log:
        proc = subprocess.Popen(cmd, cwd=work, stdout=log, stderr=subprocess.STDOUT, env=env,
                                start_new_session=True)
        try:
            proc.wait(timeout=max(seconds, 1.0))
            return f"finished (exit {proc.returncode})"
        except subprocess.TimeoutExpired:
            # verdicts are saved after every mutant, so stopping loses at most the one running;
            # mutmut 3.8 may ignore SIGINT while a worker runs, hence SIGTERM, then SIGKILL
            for sig in (signal.SIGINT, signal.SIGTERM, signal.SIGKILL):
                try:
                    os.killpg(proc.pid, sig)
                    proc.wait(timeout=20)
                    break
                except subprocess.TimeoutExpired:
                    continue
                except ProcessLookupError:
                    break
            return "stopped at the time budget"


def _verdicts(work: Path, module: str) -> dict[str, str]:
    meta = work / "mutants" / "aligner" / "core" / f"{module}.py.meta"
    if not meta.exists():
        return {}
    codes = json.loads(meta.read_text()).get("exit_code_by_key", {})
    return {k: STATUS.get(v, "suspicious") for k, v in codes.items()}


def _diff(work: Path, name: str) -> str:
    exe = Path(sys.executable).parent / "mutmut"
    out = subprocess.run([str(exe), "show", name], cwd=work, capture_output=True, text=True, timeout=120)
    return out.stdout.strip() or out.stderr.strip()


def _section(module: str, ended: str, verdicts: dict[str, str], work: Path, minutes: float) -> list[str]:
    count = {s: sum(v == s for v in verdicts.values()) for s in sorted(set(verdicts.values()))}
    caught = count.get("killed", 0) + count.get("timeout", 0) + count.get("segfault", 0)
    checked = caught + count.get("survived", 0)
    score = f"{100 * caught / checked:.1f} %" if checked else "n/a"
    lines = [f"## aligner/core/{module}.py", "",
             f"- run: {ended}, {minutes:.1f} min; tests: {', '.join(MODULE_TESTS[module])}",
             f"- mutants: {len(verdicts)}; " + ", ".join(f"{k} {v}" for k, v in count.items()),
             f"- score (killed + timeout + segfault) / (the same + survived): {score}", ""]
    for name in sorted(k for k, v in verdicts.items() if v == "survived"):
        lines += [f"### {name}", "", "```diff", _diff(work, name), "```", ""]
    return lines


def main(argv: list[str] | None = None) -> int:
    args = _parse(argv)
    args.out.mkdir(parents=True, exist_ok=True)
    deadline = time.monotonic() + 60 * args.max_minutes
    report = ["# Mutation testing report", "",
              f"mutmut run on {len(args.modules)} module(s), budget {args.max_minutes:g} min, "
              f"{args.children} worker(s).", ""]
    for module in args.modules:
        left = deadline - time.monotonic()
        if left < 30:
            report += [f"## aligner/core/{module}.py", "", "- not run: the time budget was spent", ""]
            continue
        work = args.out / module
        if args.report_only:
            report += _section(module, "verdicts of an earlier run", _verdicts(work, module), work, 0.0)
            continue
        _prepare(module, work)
        t0 = time.monotonic()
        ended = _run_mutmut(work, args, left)
        minutes = (time.monotonic() - t0) / 60
        report += _section(module, ended, _verdicts(work, module), work, minutes)
        (args.out / "report.md").write_text("\n".join(report))
        print(f"{module}: {ended} after {minutes:.1f} min", flush=True)
    (args.out / "report.md").write_text("\n".join(report))
    print(f"report: {args.out / 'report.md'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
