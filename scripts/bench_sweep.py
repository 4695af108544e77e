"""Cost of a sweep over 12 alphas against 12 separate align runs on the same inputs.

Usage: python scripts/bench_sweep.py [--n 3000]   (synthetic relabelled pair, 5 % edge noise)
       python scripts/bench_sweep.py --demo          (the bundled firefly demo)
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

from aligner.pipeline import align
from aligner.analysis.sweep import sweep
from aligner.datasets.synthetic import powerlaw_graph, relabelled_pair

ALPHAS = [0.0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.85, 0.9, 0.95]


def synthetic_files(d: Path, n: int, seed: int = 1):
    sp = relabelled_pair(powerlaw_graph(n, m=4, seed=seed), n, noise=0.05, decoys=10, seed=seed + 1)
    pd.DataFrame(sp.edges_a).to_csv(d / "a.tsv", sep="\t", index=False, header=False)
    pd.DataFrame(sp.edges_b).to_csv(d / "b.tsv", sep="\t", index=False, header=False)
    pd.DataFrame({"a": sp.prior_pairs[:, 0], "b": sp.prior_pairs[:, 1], "s": sp.prior_scores}).to_csv(
        d / "p.tsv", sep="\t", index=False, header=False)
    return d / "a.tsv", d / "b.tsv", d / "p.tsv"


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--n", type=int, default=3000)
    ap.add_argument("--demo", action="store_true")
    ap.add_argument("--rounding", default="auto")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        if args.demo:
            d = Path(__file__).resolve().parent.parent / "demo_pairs" / "firefly"
            a, b, p = d / "network_a.tsv", d / "network_b.tsv", d / "prior.tsv"
        else:
            a, b, p = synthetic_files(Path(tmp), args.n)
        align(a, b, p, alpha=0.5, rounding=args.rounding)  # compile the kernels first
        t0 = time.perf_counter()
        res = sweep(a, b, p, alphas=ALPHAS, rounding=args.rounding)
        t_sweep = time.perf_counter() - t0
        t0 = time.perf_counter()
        touches = 0
        for alpha in ALPHAS:
            touches += align(a, b, p, alpha=alpha, rounding=args.rounding).diffusion.edge_touches
        t_sep = time.perf_counter() - t0
    print(f"inputs: {'demo' if args.demo else f'synthetic n={args.n}'}; {len(ALPHAS)} alphas; "
          f"candidates {res.base.candidates.m:,}, product edges {res.base.product.n_edges:,}")
    print(f"sweep: {t_sweep:.2f} s (setup once {res.setup_seconds:.2f} s), "
          f"edge touches {int(res.table['edge_touches'].sum()):,}")
    print(f"separate runs: {t_sep:.2f} s, edge touches {touches:,}")
    print(f"ratio sweep / separate: time {t_sweep / t_sep:.2f}, "
          f"edge touches {res.table['edge_touches'].sum() / max(touches, 1):.2f}")
    print(f"knee: alpha = {res.knee_alpha}")


if __name__ == "__main__":
    main()
