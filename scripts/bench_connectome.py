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

    python scripts/bench_connectome.py [--out bench_out/connectome.md] [--seeds 5]

Reports NC, EC, S3 and conserved edges of the alignment (with and without refinement where the
installed version has it) and of the identity map (the oracle), and the time.
"""

from __future__ import annotations

import argparse
import inspect
import time
from pathlib import Path

import numpy as np
import pandas as pd

import aligner
from aligner.priors.classes import prior_from_classes
from aligner.datasets.synthetic import noisy_prior, opaque_names

DATA = Path(__file__).resolve().parent.parent / "tests" / "data"


def load():
    a = pd.read_csv(DATA / "witvliet2021_adult7.tsv", sep="\t")
    b = pd.read_csv(DATA / "witvliet2021_adult8.tsv", sep="\t")
    classes = pd.read_csv(DATA / "neuron_classes.tsv", sep="\t").set_index("neuron")["class"]
    return a, b, classes


def hidden_task(task: str, seed: int):
    """Edge tables with opaque names, the prior, the truth table, and the identity alignment."""
    a, b, classes = load()
    names_a = sorted(set(a.node_a) | set(a.node_b))
    names_b = sorted(set(b.node_a) | set(b.node_b))
    ha = dict(zip(names_a, opaque_names(len(names_a), seed=seed, prefix="a")))
    hb = dict(zip(names_b, opaque_names(len(names_b), seed=seed + 1, prefix="b")))
    ea = pd.DataFrame({"u": a.node_a.map(ha), "v": a.node_b.map(ha)})
    eb = pd.DataFrame({"u": b.node_a.map(hb), "v": b.node_b.map(hb)})
    shared = sorted(set(names_a) & set(names_b))
    truth = pd.DataFrame({"a": [ha[n] for n in shared], "b": [hb[n] for n in shared]})
    if task == "class":
        prior = prior_from_classes({ha[n]: classes[n] for n in names_a}, {hb[n]: classes[n] for n in names_b})
    else:
        ib = {n: k for k, n in enumerate(names_b)}
        t = np.array([(k, ib[n]) for k, n in enumerate(names_a) if n in ib])
        pairs, scores = noisy_prior(t, len(names_b), decoys=10, seed=11 + seed)
        prior = pd.DataFrame({"a": [ha[names_a[i]] for i in pairs[:, 0]],
                              "b": [hb[names_b[j]] for j in pairs[:, 1]], "s": scores})
    return ea, eb, prior, truth


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
    ap.add_argument("--out", default="bench_out/connectome.md")
    ap.add_argument("--seeds", type=int, default=5, help="name-hiding seeds (and noisy-prior seeds)")
    args = ap.parse_args()
    variants = [("diffusion + assignment", {})]
    if "refine" in inspect.signature(aligner.align).parameters:
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
    out = Path(args.out)
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
