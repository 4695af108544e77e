"""Which alpha (and weight model) works best across the published pair and generated families.

The evidence behind the defaults (docs/method.md, "Defaults"): the default pipeline (refinement
from several starts) at alpha 0.5, 0.7, 0.8, 0.9 and 0.95 on

* the adult C. elegans pair of tests/data (Witvliet et al. 2021), names hidden, with the class
  prior and with the noisy sequence-like prior (``--seeds`` name-hiding and prior seeds),
  unweighted and weighted (synapse counts);
* generated pairs (2,000 nodes, ``--seeds`` seeds each): a power-law graph with 5 % of edges
  moved and uniform decoys; with 15 % moved and near decoys scored like the true partner; a
  duplication-divergence graph with 25 % moved and near decoys; and the weighted pairs of
  ``bench_weights.py`` (30 % moved, weights that carry signal), unweighted and weighted.

    python scripts/bench/bench_alpha.py --markdown docs/alpha_benchmark.md

Reports mean NC and mean conserved edges per family and alpha, and for every family the alpha of
highest mean NC. Writes OUT/bench_alpha.csv and the Markdown (OUT defaults to bench_out/).
"""

from __future__ import annotations

import argparse
import platform
import sys
import time
import warnings
from pathlib import Path

import pandas as pd
from bench_weights import generated_instances
from tables import finish

import aligner
from aligner.datasets.instances import as_frames, hidden_connectome, noisy_relabelled, read_connectome

DATA = Path(__file__).resolve().parents[2] / "tests" / "data"
ALPHAS = (0.5, 0.7, 0.8, 0.9, 0.95)


def families(seeds: int):
    """(family, weighted, edges A, edges B, prior, truth) of every instance."""
    a, b, classes = read_connectome(DATA)
    for task in ("class", "noisy"):
        for seed in range(seeds):
            inst = hidden_connectome(a, b, classes, task, seed=seed, weighted=True)
            for weighted in (False, True):
                yield (f"adult pair, {task} prior", weighted, *inst)
    generated = (("power-law, 5 % moved, uniform decoys", {"noise": 0.05}),
                 ("power-law, 15 % moved, near decoys", {"noise": 0.15, "decoy_mode": "near",
                                                         "true_score": (0.5, 0.25), "decoy_score": (0.5, 0.25)}),
                 ("duplication-divergence, 25 % moved, near decoys",
                  {"graph": "dupdiv", "noise": 0.25, "decoy_mode": "near", "true_score": (1.0, 0.25),
                   "decoy_score": (0.8, 0.25)}))
    for name, kw in generated:
        for seed in range(seeds):
            ea, eb, prior, truth = as_frames(noisy_relabelled(2000, seed=seed, **kw))
            yield name, False, ea, eb, prior, truth
    for name, ea, eb, prior, truth in generated_instances(seeds):
        family = "weighted " + name.split(",")[0].removeprefix("generated ") + ", 30 % moved"
        for weighted in (False, True):
            yield family, weighted, ea, eb, prior, truth


def measure(seeds: int) -> list[dict]:
    rows = []
    for family, weighted, ea, eb, prior, truth in families(seeds):
        cols = list(ea.columns) if weighted else list(ea.columns[:2])
        for alpha in ALPHAS:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")  # generated pairs name a few nodes without edges
                res = aligner.align(ea[cols], eb[cols], prior, truth=truth, top_k=None, weighted=weighted,
                                    alpha=alpha)
            rows.append({"family": family, "weighted": weighted, "alpha": alpha, "nc": res.scores.nc,
                         "conserved": res.scores.conserved_edges,
                         "nc_up": res.summary["scores"].get("nc_up_to_ambiguity")})
        print(f"  {family} ({'weighted' if weighted else 'unweighted'}): done", file=sys.stderr, flush=True)
    return rows


def markdown(rows: list[dict], command: str) -> str:
    df = pd.DataFrame(rows)
    df["setting"] = df.family + df.weighted.map({True: ", weighted", False: ""})
    lines = [f"Measured on {platform.machine()} ({platform.system()}), {time.strftime('%Y-%m-%d')}, with", "",
             f"    {command}", "",
             "Mean NC (mean NC up to interchangeable nodes in brackets) of the default pipeline per alpha; "
             "the best alpha of each row in bold.", "",
             "| family | " + " | ".join(f"alpha {a}" for a in ALPHAS) + " |",
             "|---|" + "---|" * len(ALPHAS)]
    wins = {a: 0 for a in ALPHAS}
    for setting, g in df.groupby("setting", sort=False):
        means = g.groupby("alpha").agg(nc=("nc", "mean"), nc_up=("nc_up", "mean"))
        top = means.nc.max()
        for a in ALPHAS:
            wins[a] += bool(means.nc[a] >= top - 1e-12)
        cells = [(f"**{means.nc[a]:.3f}**" if means.nc[a] >= top - 1e-12 else f"{means.nc[a]:.3f}")
                 + f" ({means.nc_up[a]:.3f})" for a in ALPHAS]
        lines.append(f"| {setting} | " + " | ".join(cells) + " |")
    lines += ["", "Rows where each alpha is best (ties count for each): "
              + ", ".join(f"alpha {a}: {n}" for a, n in wins.items()) + "."]
    return "\n".join(lines) + "\n"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--seeds", type=int, default=3, help="seeds per family")
    ap.add_argument("--out", default="bench_out", help="folder of the CSV (and of the Markdown by default)")
    ap.add_argument("--markdown", help="Markdown file to write (default OUT/bench_alpha.md)")
    args = ap.parse_args(argv)
    return finish(measure(args.seeds), "bench_alpha", argv, markdown, args.out, args.markdown)


if __name__ == "__main__":
    sys.exit(main())
