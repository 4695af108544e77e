"""Align the two adult C. elegans connectomes of tests/data and compare with the identity map.

Real data (Witvliet et al. 2021, datasets 7 and 8; see tests/data/README.md): every neuron has the
same name in both animals, so the names are the ground truth while the wiring differs between
animals. Before aligning, every name is replaced by a random opaque identifier (fixed seed), so
no tie-breaking by name order can help; names are mapped back only to score.

Two tasks:
  class   every pair of neurons of the same anatomical class is a candidate, all with score 1
          (classes from Wang et al. 2024); the wiring must decide within each class.
  noisy   a simulated sequence-similarity prior: the true partner scores N(1.0, 0.25) and ten
          uniformly drawn decoys score N(0.5, 0.25), clipped at 1e-3 (seed 11).

    python scripts/bench/bench_connectome.py [--markdown bench_out/connectome.md] [--seeds 5]

Reports NC, EC, S3 and conserved edges of the alignment (without and with refinement) and of
the identity map (the oracle), and the time. The tasks are built by
:func:`aligner.datasets.instances.hidden_connectome`. Writes the Markdown table to
``--markdown`` and the rows as CSV next to it.
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

import pandas as pd

import aligner
from aligner.datasets.instances import hidden_connectome, read_connectome

DATA = Path(__file__).resolve().parents[2] / "tests" / "data"


def hidden_task(task: str, seed: int):
    """Edge tables with opaque names, the prior and the truth table (see ``hidden_connectome``)."""
    return hidden_connectome(*read_connectome(DATA), task, seed=seed)


def run(task: str, seed: int, **kw) -> dict:
    ea, eb, prior, truth = hidden_task(task, seed)
    t = time.perf_counter()
    res = aligner.align(ea, eb, prior, truth=truth, top_k=None, **kw)
    secs = time.perf_counter() - t
    oracle, _ = aligner.score(ea, eb, truth, truth=truth)
    return {"task": task, "seed": seed, "nc": res.scores.nc, "ec": res.scores.ec, "s3": res.scores.s3,
            "conserved": res.scores.conserved_edges, "oracle_ec": oracle.ec, "oracle_s3": oracle.s3,
            "oracle_conserved": oracle.conserved_edges, "candidates": res.candidates.m, "seconds": secs}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--markdown", "--out", dest="markdown", default="bench_out/connectome.md",
                    help="Markdown file to write (the CSV goes next to it)")
    ap.add_argument("--seeds", type=int, default=5, help="name-hiding seeds (and noisy-prior seeds)")
    args = ap.parse_args()
    variants = [("diffusion + assignment", {"refine": False}), ("+ refinement", {"refine": True})]
    rows = []
    for task in ("class", "noisy"):
        for label, kw in variants:
            for seed in range(args.seeds):
                r = run(task, seed, **kw)
                r["method"] = label
                rows.append(r)
    df = pd.DataFrame(rows)
    agg = df.groupby(["task", "method"], sort=False).agg(
        candidates=("candidates", "first"), nc=("nc", "mean"), nc_min=("nc", "min"), ec=("ec", "mean"),
        s3=("s3", "mean"), conserved=("conserved", "mean"), conserved_min=("conserved", "min"),
        oracle_conserved=("oracle_conserved", "first"), oracle_ec=("oracle_ec", "first"),
        oracle_s3=("oracle_s3", "first"), seconds=("seconds", "mean")).reset_index()
    out = Path(args.markdown)
    out.parent.mkdir(parents=True, exist_ok=True)
    df.to_csv(out.with_suffix(".csv"), index=False)
    lines = [f"Real data: C. elegans adult datasets 7 -> 8 (Witvliet et al. 2021), names hidden, "
             f"{args.seeds} seeds (mean; min in brackets).", "",
             "| task | method | candidates | NC | EC | S3 | conserved | identity map: conserved / EC / S3 | time s |",
             "|---|---|---|---|---|---|---|---|---|"]
    for r in agg.itertuples():
        lines.append(f"| {r.task} | {r.method} | {r.candidates:,} | {r.nc:.3f} ({r.nc_min:.3f}) | {r.ec:.3f} | "
                     f"{r.s3:.3f} | {r.conserved:.0f} ({r.conserved_min}) | {r.oracle_conserved} / {r.oracle_ec:.3f} / "
                     f"{r.oracle_s3:.3f} | {r.seconds:.2f} |")
    out.write_text("\n".join(lines) + "\n")
    print("\n".join(lines))


if __name__ == "__main__":
    main()
