"""Benchmark the pipeline end to end on seeded synthetic instances.

Each case is generated once (cached as TSV files under OUT/instances/), then aligned in a fresh
child process so that its peak memory (ru_maxrss) is the pipeline's own: read, candidates,
product graph, push solve, rounding, scoring and writing the outputs. In the same child the
diffusion is solved again with power iteration to the same residual, for the push-versus-power
comparison of work.

    python scripts/bench/bench.py --quick                 # one 10^4 case, under a minute
    python scripts/bench/bench.py --sizes 10000,100000    # the grid at 10^4 and 10^5
    python scripts/bench/bench.py --sizes 1000000 --models powerlaw --noise 0.05 --decoys uniform

Instances come from :func:`aligner.datasets.instances.noisy_relabelled` (models ``powerlaw`` and
``dd``, duplication-divergence, 10 decoys per node). Writes OUT/bench.csv and the Markdown table to OUT/bench.md or
to ``--markdown FILE`` (OUT defaults to bench_out/, which git ignores).
"""

from __future__ import annotations

import argparse
import csv
import json
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path


#: --models name -> base graph of aligner.datasets.instances
MODELS = {"powerlaw": "powerlaw", "dd": "dupdiv"}


def make_instance(path: Path, n: int, model: str, noise: float, decoys: str, seed: int) -> None:
    """Write network_a.tsv, network_b.tsv, prior.tsv, truth.tsv for one case (skipped if present)."""
    from aligner.datasets.instances import noisy_relabelled, write_instance

    if (path / "truth.tsv").exists():
        return
    pair = noisy_relabelled(n, graph=MODELS[model], noise=noise, decoys=10, decoy_mode=decoys, seed=seed)
    write_instance(pair, path, [f"a{i}" for i in range(pair.n_a)], [f"b{i}" for i in range(pair.n_b)])


def worker(inst: Path, result: Path, power: bool) -> None:
    """Child process: one end-to-end run on the files in ``inst``; figures written to ``result``."""
    t0 = time.perf_counter()
    import aligner
    from aligner.io.outputs import write_outputs
    from aligner.core.diffusion import column_scale, diffuse, prior_vector

    t_import = time.perf_counter() - t0
    with tempfile.TemporaryDirectory() as out:
        t1 = time.perf_counter()
        res = aligner.align(inst / "network_a.tsv", inst / "network_b.tsv", inst / "prior.tsv",
                            truth=inst / "truth.tsv")
        t2 = time.perf_counter()
        write_outputs(out, res)
        t3 = time.perf_counter()
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
    d = res.diffusion
    fig = {
        "import_s": t_import,
        "end_to_end_s": t3 - t1,
        "write_s": t3 - t2,
        **{f"{k}_s": v for k, v in res.summary["timings"].items()},
        "peak_rss_gb": rss / 2**30,
        "nodes_a": res.network_a.n, "edges_a": res.network_a.n_edges,
        "candidates": res.candidates.m,
        "product_edges": res.product.n_edges,
        "pushes": d.steps, "push_touches": d.edge_touches, "residual": d.residual,
        "nc": res.scores.nc, "ec": res.scores.ec, "s3": res.scores.s3,
        "rounding": res.matching.method,
    }
    if power:
        scale = column_scale(res.product)
        p = diffuse(res.product, prior_vector(res.candidates.prior), scale, alpha=d.alpha, tol=d.tol,
                    solver="power")
        fig |= {"power_iterations": p.steps, "power_touches": p.edge_touches, "power_s": p.seconds,
                "touch_ratio_power_over_push": p.edge_touches / max(d.edge_touches, 1)}
    result.write_text(json.dumps(fig))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--sizes", default="10000,100000")
    ap.add_argument("--models", default="powerlaw,dd", help="powerlaw and/or dd (duplication-divergence)")
    ap.add_argument("--noise", default="0.05,0.15")
    ap.add_argument("--decoys", default="uniform,near")
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--out", default="bench_out")
    ap.add_argument("--markdown", type=Path, default=None, help="where to write the Markdown table "
                    "(default: OUT/bench.md)")
    ap.add_argument("--quick", action="store_true", help="one 10^4 case (under a minute)")
    ap.add_argument("--no-power", action="store_true", help="skip the power-iteration comparison")
    ap.add_argument("--cold", action="store_true", help="also time a first run with an empty compile cache")
    ap.add_argument("--worker", help=argparse.SUPPRESS)
    ap.add_argument("--result", help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.worker:
        worker(Path(args.worker), Path(args.result), power=not args.no_power)
        return
    if args.quick:
        args.sizes, args.models, args.noise, args.decoys = "10000", "powerlaw", "0.05", "uniform"
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    rows = []
    cases = [(int(n), m, float(z), d) for n in args.sizes.split(",") for m in args.models.split(",")
             for z in args.noise.split(",") for d in args.decoys.split(",")]
    for n, model, noise, decoys in cases:
        name = f"{model}-n{n}-noise{noise:g}-{decoys}"
        inst = out / "instances" / name
        t = time.perf_counter()
        make_instance(inst, n, model, noise, decoys, args.seed)
        print(f"[{name}] instance ready ({time.perf_counter() - t:.1f} s)", flush=True)
        runs = [("warm", {})]
        if args.cold:
            runs.insert(0, ("cold", {"NUMBA_CACHE_DIR": tempfile.mkdtemp(prefix="numba-cold-")}))
        for label, env in runs:
            res_file = out / f"{name}.{label}.json"
            cmd = [sys.executable, __file__, "--worker", str(inst), "--result", str(res_file)]
            if args.no_power or label == "cold":
                cmd.append("--no-power")
            if label == "warm":  # make sure the cache is filled before the timed warm run
                subprocess.run(cmd + ["--no-power"], check=True, env=os.environ | env)
            wall = time.perf_counter()
            subprocess.run(cmd, check=True, env=os.environ | env)
            fig = json.loads(res_file.read_text())
            fig |= {"case": name, "run": label, "n": n, "model": model, "noise": noise, "decoys": decoys,
                    "process_wall_s": time.perf_counter() - wall}
            rows.append(fig)
            print(f"[{name}] {label}: end to end {fig['end_to_end_s']:.2f} s, peak {fig['peak_rss_gb']:.2f} GB, "
                  f"NC {fig['nc']:.3f}", flush=True)
    keys = sorted({k for r in rows for k in r})
    with open(out / "bench.csv", "w", newline="") as fh:
        w = csv.DictWriter(fh, fieldnames=keys)
        w.writeheader()
        w.writerows(rows)
    cols = [("case", "case"), ("run", "run"), ("candidates", "candidates"), ("product_edges", "product edges"),
            ("read_s", "read s"), ("product_s", "product s"), ("diffusion_s", "push s"), ("rounding_s", "round s"),
            ("scoring_s", "score s"), ("write_s", "write s"), ("end_to_end_s", "end to end s"),
            ("peak_rss_gb", "peak GB"), ("pushes", "pushes"), ("push_touches", "push touches"),
            ("power_iterations", "power iters"), ("power_touches", "power touches"),
            ("touch_ratio_power_over_push", "power/push touches"), ("nc", "NC"), ("ec", "EC")]
    lines = ["| " + " | ".join(c[1] for c in cols) + " |", "|" + "---|" * len(cols)]
    for r in rows:
        cells = []
        for k, _ in cols:
            v = r.get(k, "")
            if isinstance(v, float):
                v = f"{v:.3f}" if k not in ("nc", "ec") else f"{v:.4f}"
            elif isinstance(v, int):
                v = f"{v:,}"
            cells.append(str(v))
        lines.append("| " + " | ".join(cells) + " |")
    (args.markdown or out / "bench.md").write_text("\n".join(lines) + "\n")
    print("\n".join(lines))


if __name__ == "__main__":
    main()
