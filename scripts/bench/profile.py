"""Stage-by-stage profile of ``aligner align``: seconds and peak memory per stage, per size.

Each case is a relabelled power-law pair (:func:`aligner.datasets.instances.noisy_relabelled`:
Holme–Kim graph, 5 % of the edges moved, prior = the true partner plus 10 uniform decoys),
generated once and cached as TSV files under OUT/instances/. Every case is aligned by the
installed ``aligner align`` command in a fresh process, as a user runs it, after a small run
of the same kind has filled the compile cache. The stage figures come from the run's
``summary.json`` (``timings`` and ``memory``: each stage's own peak resident memory); "outside
the stages" is the process's wall-clock time minus the stages (start-up, checks, writing the
outputs); the process's peak is the largest of the stages' peaks and the operating system's
figure for the process (``wait4``).

    python scripts/bench/profile.py                                  # 10^5 and 10^6
    python scripts/bench/profile.py --sizes 100000 --runs 3          # best of three
    python scripts/bench/profile.py --cold                           # also the demo, cold and warm
    python scripts/bench/profile.py --markdown docs/profile_table.md

Writes OUT/profile.csv (one row per case and stage) and the Markdown table to OUT/profile.md
or ``--markdown FILE`` (OUT defaults to bench_out/, which git ignores).
"""

from __future__ import annotations

import argparse
import csv
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from tables import memory_pages

STAGES = ("read", "candidates", "product", "diffusion", "rounding", "refine", "scoring")


def make_instance(path: Path, n: int, decoys: str, seed: int) -> None:
    """Write network_a.tsv, network_b.tsv, prior.tsv, truth.tsv for one case (skipped if present)."""
    from aligner.datasets.instances import noisy_relabelled, write_instance

    if (path / "truth.tsv").exists():
        return
    pair = noisy_relabelled(n, graph="powerlaw", noise=0.05, decoys=10, decoy_mode=decoys, seed=seed)
    write_instance(pair, path, [f"a{i}" for i in range(pair.n_a)], [f"b{i}" for i in range(pair.n_b)])


def _exe() -> str:
    exe = shutil.which("aligner") or str(Path(sys.executable).with_name("aligner"))
    if not Path(exe).exists():
        sys.exit("the aligner command is not installed in this environment (pip install -e .)")
    return exe


def timed(cmd: list[str], env: dict | None = None) -> tuple[float, float]:
    """Run ``cmd`` to completion; (wall seconds, peak resident GiB of that process)."""
    t0 = time.perf_counter()
    proc = subprocess.Popen(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.perf_counter() - t0
    err = proc.stderr.read().decode() if proc.stderr else ""
    if os.waitstatus_to_exitcode(status) != 0:
        sys.exit(f"{' '.join(cmd)} failed:\n{err}")
    return wall, usage.ru_maxrss * 1024 / 2**30


def align_case(inst: Path, out: Path) -> dict:
    """One end-to-end run of the command line on the files in ``inst``; its figures."""
    cmd = [_exe(), "align", str(inst / "network_a.tsv"), str(inst / "network_b.tsv"), "--prior",
           str(inst / "prior.tsv"), "--truth", str(inst / "truth.tsv"), "-o", str(out), "--force", "--quiet"]
    wall, peak = timed(cmd)
    s = json.loads((out / "summary.json").read_text())
    solver = s["solver"]
    # the command line resets the high-water mark at each stage start, so the operating system's
    # figure for the process may be one stage's; the process's peak is the largest of them all
    peak = max([peak, *s["memory"]["peak_gib"].values()])
    return {"wall_s": wall, "peak_gib": peak, "timings": s["timings"], "memory": s["memory"]["peak_gib"],
            "candidates": s["sizes"]["candidates"], "product_edges": s["sizes"]["product_edges"],
            "edge_touches": solver["edge_touches"], "touches_per_s": solver["edge_touches_per_second"],
            "nc": s["scores"]["nc"], "conserved_edges": s["scores"]["conserved_edges"]}


def cold_and_warm(runs: int) -> dict:
    """``aligner demo`` with an empty compile cache, then warm (best of ``runs``)."""
    cache = tempfile.mkdtemp(prefix="numba-cold-")
    env = os.environ | {"NUMBA_CACHE_DIR": cache}
    with tempfile.TemporaryDirectory() as tmp:
        cold, _ = timed([_exe(), "demo", "-o", f"{tmp}/cold", "--quiet"], env)
        warm = min(timed([_exe(), "demo", "-o", f"{tmp}/w{i}", "--quiet"], env)[0] for i in range(runs))
    shutil.rmtree(cache, ignore_errors=True)
    return {"cold_s": cold, "warm_s": warm}


def provenance() -> str:
    """Where the figures come from: the command, the commit, the machine and its load."""
    import platform

    try:
        commit = subprocess.run(["git", "rev-parse", "--short", "HEAD"], capture_output=True, text=True,
                                check=True).stdout.strip()
        dirty = subprocess.run(["git", "status", "--porcelain", "--untracked-files=no"], capture_output=True,
                               text=True, check=True).stdout.strip()
        commit += " (with uncommitted changes)" if dirty else ""
    except (OSError, subprocess.CalledProcessError):
        commit = "unknown"
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    return (f"Written by `python scripts/bench/profile.py {' '.join(sys.argv[1:])}` on commit {commit}; "
            f"{os.cpu_count()} cores, Python {platform.python_version()}, {platform.machine()}, load average "
            f"{load:.2f} at the start; {memory_pages()}. Do not edit by hand: rerun the command.\n\n")


def markdown(rows: list[dict], demo: dict | None) -> str:
    names = [r["case"] for r in rows]
    head = "| stage | " + " | ".join(f"{n}: s | {n}: peak GiB" for n in names) + " |"
    lines = [head, "|---|" + "---:|---:|" * len(rows)]
    for st in STAGES:
        cells = []
        for r in rows:
            t, m = r["timings"].get(st), r["memory"].get(st)
            cells += [f"{t:.2f}" if t is not None else "", f"{m:.2f}" if m is not None else ""]
        lines.append(f"| {st} | " + " | ".join(cells) + " |")
    outside = [f"{r['wall_s'] - sum(r['timings'].values()):.2f} | " for r in rows]
    lines.append("| outside the stages (start-up, checks, writing) | " + " | ".join(outside) + " |")
    lines.append("| **whole process** | " + " | ".join(f"**{r['wall_s']:.2f}** | **{r['peak_gib']:.2f}**"
                                                       for r in rows) + " |")
    lines.append("")
    lines.append("| case | candidates | product edges | edge touches | touches per s | NC | conserved edges |")
    lines.append("|---|---:|---:|---:|---:|---:|---:|")
    for r in rows:
        lines.append(f"| {r['case']} | {r['candidates']:,} | {r['product_edges']:,} | {r['edge_touches']:,} | "
                     f"{r['touches_per_s'] / 1e6:.0f} M | {r['nc']:.4f} | {r['conserved_edges']:,} |")
    if demo:
        lines += ["", "| demo (`aligner demo`, whole process) | s |", "|---|---:|",
                  f"| empty compile cache | {demo['cold_s']:.2f} |", f"| warm | {demo['warm_s']:.2f} |",
                  f"| compiling (difference) | {demo['cold_s'] - demo['warm_s']:.2f} |"]
    return "\n".join(lines) + "\n"


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--sizes", default="100000,1000000", help="nodes per side, comma-separated")
    ap.add_argument("--decoys", default="uniform", choices=("uniform", "near"),
                    help="decoys drawn uniformly, or near the true partner (a denser product graph)")
    ap.add_argument("--runs", type=int, default=1, help="runs per case; the fastest is kept")
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--cold", action="store_true", help="also time the demo with an empty compile cache")
    ap.add_argument("--out", type=Path, default=Path("bench_out"))
    ap.add_argument("--markdown", type=Path, default=None, help="where to write the Markdown (default OUT/profile.md)")
    args = ap.parse_args()
    args.out.mkdir(parents=True, exist_ok=True)
    warm_inst = args.out / "instances" / f"powerlaw-n10000-noise0.05-{args.decoys}"
    make_instance(warm_inst, 10000, args.decoys, args.seed)
    align_case(warm_inst, args.out / "profile_run")  # fill the compile cache
    rows = []
    for n in (int(v) for v in args.sizes.split(",")):
        name = f"powerlaw-n{n}-noise0.05-{args.decoys}"
        inst = args.out / "instances" / name
        t = time.perf_counter()
        make_instance(inst, n, args.decoys, args.seed)
        print(f"[{name}] instance ready ({time.perf_counter() - t:.1f} s)", flush=True)
        best = min((align_case(inst, args.out / "profile_run") for _ in range(args.runs)), key=lambda r: r["wall_s"])
        rows.append(best | {"case": f"n={n:,}"})
        print(f"[{name}] {best['wall_s']:.2f} s, peak {best['peak_gib']:.2f} GiB, " +
              ", ".join(f"{k} {v:.2f}" for k, v in best["timings"].items()), flush=True)
    demo = cold_and_warm(args.runs) if args.cold else None
    with open(args.out / "profile.csv", "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["case", "stage", "seconds", "peak_gib"])
        for r in rows:
            for st in STAGES:
                if st in r["timings"]:
                    w.writerow([r["case"], st, r["timings"][st], r["memory"].get(st)])
            w.writerow([r["case"], "outside", round(r["wall_s"] - sum(r["timings"].values()), 4), ""])
            w.writerow([r["case"], "process", round(r["wall_s"], 4), round(r["peak_gib"], 3)])
        if demo:
            w.writerow(["demo", "cold", round(demo["cold_s"], 4), ""])
            w.writerow(["demo", "warm", round(demo["warm_s"], 4), ""])
    text = provenance() + markdown(rows, demo)
    (args.markdown or args.out / "profile.md").write_text(text)
    print(text)


if __name__ == "__main__":
    main()
