"""Benchmark anchor pairs (seeds): node correctness against the fraction of seeds.

Instances: a power-law graph with clustering (``powerlaw_graph(n, m, p=0.3)``) and a noisy
relabelled copy (``relabelled_pair``: a share ``noise`` of the edges moved), seeded. Seeds are a
uniform random sample of the true pairs (1 %, 2 %, 5 %, 10 % by default). For every noise level,
seed fraction and repetition, ``aligner.align`` is run

* **seeds only**: no prior, the candidates grown from the seeds (``expand_from_seeds``);
* **weak prior + seeds** (with ``--with-prior``): a prior whose true scores barely beat its
  near decoys (10 decoys per node drawn next to the true partner in B; true N(1, 0.3),
  decoys N(0.9, 0.3)), and the same seeds; fraction 0 is the prior alone.

NC is reported over all nodes and over the nodes that are not seeds (the honest figure: seeds
are correct by construction), with EC with and without the edges among seed nodes.

    python scripts/bench/bench_seeds.py                              # n = 2000, m = 4, 3 repetitions
    python scripts/bench/bench_seeds.py --m 3 --with-prior --reps 2  # a sparser, harder pair
    python scripts/bench/bench_seeds.py --no-refine                  # the seeds without the refinement stage

Instances come from :func:`aligner.datasets.instances.noisy_relabelled`. Writes
OUT/bench_seeds_m<m>[_norefine].csv and the Markdown table to OUT/bench_seeds_m<m>[_norefine].md
or to ``--markdown FILE`` (OUT defaults to bench_out/, git-ignored).
"""

from __future__ import annotations

import argparse
import csv
import platform
import sys
import time
import warnings
from pathlib import Path

import numpy as np


def instance(n, m, noise, seed, with_prior):
    """Networks, the prior table (or None) and the true pairs by name of one repetition."""
    from aligner.datasets.instances import as_networks, node_names, noisy_relabelled

    kw = dict(decoys=10, decoy_mode="near", true_score=(1.0, 0.3), decoy_score=(0.9, 0.3)) if with_prior else {}
    pair = noisy_relabelled(n, graph_options={"m": m, "p": 0.3}, noise=noise, seed=seed, **kw)
    names = node_names(n)  # zero-padded: sorted as strings = as numbers
    net_a, net_b = as_networks(pair, names, names)
    prior = None
    if with_prior:
        import pandas as pd

        prior = pd.DataFrame({"a": names[pair.prior_pairs[:, 0]], "b": names[pair.prior_pairs[:, 1]],
                              "s": pair.prior_scores})
    truth = [(names[a], names[b]) for a, b in pair.truth]
    return net_a, net_b, prior, truth


def run(net_a, net_b, prior, truth, seeds, weight, refine) -> tuple[dict, float]:
    """One alignment with ``seeds``; its figures (NC and EC with and without the seeds) and seconds."""
    import aligner

    t0 = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        res = aligner.align(net_a, net_b, prior, truth=truth, seeds=seeds, seed_weight=weight, permutations=0,
                            refine=refine)
    sec = time.perf_counter() - t0
    s = res.summary.get("seeds")
    free = s["scores_without_seed_edges"] if s else res.summary["scores"]
    return {"nc": res.scores.nc, "nc_non_seed": free["nc"], "ec": res.scores.ec,
            "ec_without_seed_edges": free["ec"], "conserved_among_seeds": s["conserved_among_seeds"] if s else 0,
            "candidates": res.summary["sizes"]["candidates"],
            "rounds": s["expansion"]["rounds"] if s and s.get("expansion") else None}, sec


def markdown(rows, modes, args, weight, command) -> str:
    """Mean (min) of every figure per mode, noise and seed fraction, as a Markdown table."""
    lines = [f"Seeds, n = {args.n:,}, powerlaw_graph(m = {args.m}, p = 0.3), seed weight {weight:g}, "
             f"refinement {'off' if args.no_refine else 'on'}, "
             f"{args.reps} repetitions (mean, min in brackets). `{command}` on {platform.machine()} / "
             f"Python {platform.python_version()}.", "",
             "| mode | edge noise | seeds | NC | NC (non-seed nodes) | EC | EC without seed-seed edges | s per run |",
             "|---|---:|---:|---:|---:|---:|---:|---:|"]
    keys = sorted({(r["mode"], r["noise"], r["fraction"]) for r in rows}, key=lambda t: (modes.index(t[0]), t[1], t[2]))
    for mode, noise, frac in keys:
        g = [r for r in rows if (r["mode"], r["noise"], r["fraction"]) == (mode, noise, frac)]

        def f(key):
            v = np.array([r[key] for r in g], dtype=float)
            return f"{v.mean():.4f} ({v.min():.4f})"

        sec = np.mean([r["seconds"] for r in g])
        lines.append(f"| {mode} | {noise:.0%} | {frac:.0%} | {f('nc')} | {f('nc_non_seed')} | {f('ec')} | "
                     f"{f('ec_without_seed_edges')} | {sec:.1f} |")
    return "\n".join(lines) + "\n"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--n", type=int, default=2000)
    ap.add_argument("--m", type=int, default=4)
    ap.add_argument("--fractions", default="0.01,0.02,0.05,0.1")
    ap.add_argument("--noises", default="0.05,0.15")
    ap.add_argument("--reps", type=int, default=3)
    ap.add_argument("--seed-weight", type=float, default=None, help="default: the package default")
    ap.add_argument("--with-prior", action="store_true", help="also run a weak prior with the same seeds")
    ap.add_argument("--no-refine", action="store_true", help="align without the refinement stage, to see what "
                    "the seeds do on their own")
    ap.add_argument("--seed", type=int, default=11)
    ap.add_argument("--out", default="bench_out")
    ap.add_argument("--markdown", type=Path, default=None, help="where to write the Markdown table "
                    "(default: OUT/bench_seeds_<tag>.md)")
    args = ap.parse_args(argv)

    from aligner.priors.seeds import DEFAULT_SEED_WEIGHT

    weight = DEFAULT_SEED_WEIGHT if args.seed_weight is None else args.seed_weight
    fractions = [float(f) for f in args.fractions.split(",")]
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    rows = []
    modes = ["seeds only"] + (["weak prior + seeds"] if args.with_prior else [])
    for noise in (float(f) for f in args.noises.split(",")):
        for rep in range(args.reps):
            gseed = args.seed + 100 * rep
            net_a, net_b, prior, truth = instance(args.n, args.m, noise, gseed, args.with_prior)
            order = np.random.default_rng(gseed + 7).permutation(len(truth))  # nested seed sets: 1 % is in 2 %, ...
            for mode in modes:
                for frac in ([0.0] if mode != "seeds only" else []) + fractions:
                    k = int(round(frac * args.n))
                    seeds = [truth[t] for t in order[:k]] if k else None
                    figures, sec = run(net_a, net_b, prior if mode != "seeds only" else None, truth, seeds, weight,
                                       not args.no_refine)
                    row = {"mode": mode, "noise": noise, "fraction": frac, "rep": rep, "seeds": k, **figures,
                           "seconds": sec}
                    rows.append(row)
                    print({k2: (round(v, 4) if isinstance(v, float) else v) for k2, v in row.items()}, flush=True)

    tag = f"m{args.m}" + ("_norefine" if args.no_refine else "")
    with open(out / f"bench_seeds_{tag}.csv", "w", newline="") as fh:
        w = csv.DictWriter(fh, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)
    command = ("python scripts/bench/bench_seeds.py " + " ".join(argv if argv is not None else sys.argv[1:])).strip()
    text = markdown(rows, modes, args, weight, command)
    (args.markdown or out / f"bench_seeds_{tag}.md").write_text(text)
    print(text, end="")
    return 0


if __name__ == "__main__":
    sys.exit(main())
