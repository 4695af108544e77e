"""One update, profiled in one process: where its seconds go, and warm against cold solves.

The instance and the changes are ``bench_update.py``'s (a seeded power-law pair, the true partner
plus 10 uniform decoys): a run is aligned and written with its state, then one change is applied
and ``update`` run ``--repeats`` times in this process (the first pays for loading kernels and
for memory the system has not handed out yet), printing each one's stage seconds, its
carry-over and how its product graph was made; then one more update under ``cProfile``, its
``--top`` functions by cumulative and by own time. With ``--solves K`` the diffusion of the
updated problem is then solved K times from zero and K times from the carried scores,
alternately (seconds, pushes, edge touches), and the warm solve profiled. With ``--coarse
2,4,8`` the warm solve is also run with push thresholds that many times coarser, then (when its
exact residual is still above the tolerance) finished at the usual ones: how much of the warm
solve's work a looser first pass could save (pushes of each pass, residual in units of tol).

    python scripts/bench/update_profile.py --size 1000000 --change diff --solves 3

Changes: ``diff`` (0.1 % of B's edges rewired, given as edges added and removed), ``file`` (the
same as a whole new file of B), ``prior`` (the prior rows of 1 % of the nodes of A rescored).
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
# this folder holds profile.py, which would stand in for the standard library's module of that
# name (cProfile imports it): import cProfile without it, then bench_update from it
sys.path = [p for p in sys.path if Path(p or ".").resolve() != HERE]
import cProfile  # noqa: E402
import pstats  # noqa: E402

sys.path.append(str(HERE))
from bench_update import _edge_diff, changes  # noqa: E402

CHANGES = {"diff": "rewire-0.1% as a diff", "file": "rewire-0.1%", "prior": "prior-1%",
           "grow": "edges-1%+nodes-1%"}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--size", type=int, default=100000, help="nodes per side")
    ap.add_argument("--change", choices=sorted(CHANGES), default="diff")
    ap.add_argument("--seed", type=int, default=5)
    ap.add_argument("--repeats", type=int, default=3, help="updates timed before the profiled one")
    ap.add_argument("--top", type=int, default=30, help="functions listed per ordering")
    ap.add_argument("--solves", type=int, default=0, help="cold/warm solve pairs after the update")
    ap.add_argument("--coarse", default="", help="threshold factors for a first warm pass, comma-separated")
    ap.add_argument("--dump", default="", help="also save the profiled update's statistics here (pstats)")
    ap.add_argument("--work", default="", help="work folder (kept; its run is reused when present)")
    ap.add_argument("--no-profile", action="store_true",
                    help="only the timed updates (one per fresh process with --repeats 1 and --work)")
    ap.add_argument("--moved", action="store_true",
                    help="after the updates: the share of pairs whose score moved, and of nodes of A with one")
    args = ap.parse_args(argv)

    import numpy as np

    import aligner
    from aligner.analysis import update as upd_module
    from aligner.datasets.instances import as_frames, noisy_relabelled
    from aligner.io.outputs import write_outputs
    from aligner.io.state import read_state
    from aligner.pipeline import solve

    a, b, prior, _ = as_frames(noisy_relabelled(args.size, seed=args.seed, noise=0.05, decoys=10))
    work = Path(args.work) if args.work else Path(tempfile.mkdtemp(prefix="update_profile_"))
    files = [work / "a.tsv", work / "b.tsv", work / "p.tsv"]
    if not (work / "run" / "state.npz").exists():
        work.mkdir(parents=True, exist_ok=True)
        for f, frame in zip(files, (a, b, prior)):
            frame.to_csv(f, sep="\t", index=False)
        write_outputs(work / "run", aligner.align(*files))
    for name, changed in changes(a, b, prior, np.random.default_rng(args.seed)):
        if name == CHANGES[args.change]:
            break
    if args.change == "diff":
        added, removed = _edge_diff(b, changed["network_b"])
        given = {"add_b": work / "added.tsv", "remove_b": work / "removed.tsv"}
        added.to_csv(given["add_b"], sep="\t", index=False)
        removed.to_csv(given["remove_b"], sep="\t", index=False)
    elif args.change == "grow":  # three whole new files
        given = {}
        for key in ("network_a", "network_b", "prior"):
            changed[key].to_csv(work / f"changed_{key}.tsv", sep="\t", index=False)
            given[key] = work / f"changed_{key}.tsv"
    else:
        key = "network_b" if args.change == "file" else "prior"
        changed[key].to_csv(work / "changed.tsv", sep="\t", index=False)
        given = {key: work / "changed.tsv"}

    print(f"{args.size:,} nodes, change {name!r}; work files in {work}")
    for _ in range(args.repeats):
        t0 = time.perf_counter()
        res = upd_module.update(work / "run", **given)
        u = res.summary["update"]
        print(f"update {time.perf_counter() - t0:.2f} s; stages {res.summary['timings']}; carry "
              f"{u['carry_seconds']} s; product {u['product']}; conserved {res.summary['scores']['conserved_edges']:,}",
              flush=True)
    if args.moved:  # what a warm-started assignment could skip: rows none of whose scores moved
        _moved(read_state(work / "run"), res)
    if args.no_profile:
        return 0
    prof = cProfile.Profile()
    res = prof.runcall(upd_module.update, work / "run", **given)
    for order in ("cumulative", "tottime"):
        pstats.Stats(prof).sort_stats(order).print_stats(args.top)
    if args.dump:
        prof.dump_stats(args.dump)

    if args.coarse:
        _coarse(res.problem, upd_module._carry(read_state(work / "run"), res.problem, {})[0],
                [float(c) for c in args.coarse.split(",")])
    if args.solves:
        x0 = upd_module._carry(read_state(work / "run"), res.problem, {})[0]
        for _ in range(args.solves):
            line = []
            for label, start in (("from zero", None), ("warm", x0)):
                t0 = time.perf_counter()
                d = solve(res.problem, x0=start)
                line.append(f"{label} {time.perf_counter() - t0:.2f} s ({d.steps:,} pushes, "
                            f"{d.edge_touches:,} touches)")
            print("solve: " + "   ".join(line), flush=True)
        prof = cProfile.Profile()
        prof.runcall(solve, res.problem, x0=x0)
        pstats.Stats(prof).sort_stats("tottime").print_stats(15)
    return 0


def _coarse(problem, x0, factors) -> None:
    """The warm solve with thresholds ``factor`` times the usual for a first pass, then the usual
    ones when the exact residual is still above tol: pushes of each pass and the residual."""
    import numpy as np

    from aligner.core import diffusion as dif

    cfg, plain = problem.config, dif._solve_push
    for factor in [1.0] + factors:
        passes = []

        def two_pass(graph, scale, alpha, tol, x, r, b, max_work):
            x, first, t1 = plain(graph, scale, alpha, tol * factor, x, r, b, max_work)
            resid = dif._exact_residual(graph, scale, alpha, x, b, r)
            second = t2 = 0
            if resid > tol:
                x, second, t2 = plain(graph, scale, alpha, tol, x, r, b, max_work)
            passes.append((first, resid / tol, second))
            return x, first + second, t1 + t2

        dif._solve_push = two_pass
        try:
            t0 = time.perf_counter()
            d = dif.diffuse(problem.product, problem.h, problem.scale, alpha=cfg.alpha, tol=cfg.tol,
                            x0=np.array(x0))
        finally:
            dif._solve_push = plain
        first, resid, second = passes[0]
        print(f"thresholds x{factor:g}: {time.perf_counter() - t0:.3f} s; first pass {first:,} pushes "
              f"(residual {resid:.2f} tol), then {second:,}; in all {d.steps:,} pushes, residual "
              f"{d.residual / cfg.tol:.2f} tol", flush=True)


def _moved(state, res) -> None:
    """The pairs whose score moved against the previous run's (kept in single precision) and the
    nodes of A with at least one such pair (same candidate pairs only)."""
    import numpy as np

    cand, x = res.candidates, res.diffusion.x
    if len(state.x) != cand.m:
        print("moved: the candidate pairs changed; not compared")
        return
    moved = np.abs(x - state.x.astype(np.float64)) > 0
    bound = res.summary["update"]["score_bound"]
    rows = np.zeros(cand.n1, dtype=bool)
    rows[cand.pairs[moved, 0]] = True
    print(f"moved: {moved.mean():.1%} of the pairs' scores, {rows.mean():.1%} of the nodes of A with one; "
          f"beyond the bound {bound:.2g}: {int((np.abs(x - state.x) > bound).sum())} pairs")


if __name__ == "__main__":
    sys.exit(main())

