"""Benchmark of alignment from structure alone (aligner.priors.structural): no prior table at all.

Instances: relabelled noisy copies (aligner.datasets.synthetic.relabelled_pair; its own prior is
ignored) of a power-law graph with triangle formation (aligner.datasets.synthetic.powerlaw_graph,
defaults m=4, p=0.3) and of a duplication-divergence graph
(aligner.datasets.synthetic.duplication_divergence_graph, defaults), at edge noise 0, 0.01, 0.05 and
0.15. The prior handed to aligner.align is the output of structural_candidates (k given by
``--k``) as a node_a, node_b, score table; align runs with its defaults (refinement on) except
``top_k`` (``--top-k``, default 25 as in align).

Prints a Markdown table (graph, n, noise, seed, NC, EC, share of true pairs among the
candidates, candidates, seconds; seconds are the structural candidates plus align), writes it
to ``--markdown`` and as CSV to ``--csv`` when given. Instances come from
:func:`aligner.datasets.instances.noisy_relabelled`.

Usage::

    python scripts/bench/bench_structural.py [--sizes 2000 10000] [--seeds 0 1] [--k 25] [--top-k 25]
                                             [--noise 0 0.01 0.05 0.15] [--csv bench_out/structural.csv]
                                             [--markdown bench_out/structural.md]
    python scripts/bench/bench_structural.py --timing 100000 1000000   # cost of the features and candidates
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

import numpy as np
import pandas as pd

import aligner
from aligner.core.network import network_from_edges
from aligner.datasets.instances import GRAPHS, as_networks, base_graph, noisy_relabelled
from aligner.priors.structural import structural_candidates


def run_one(graph: str, n: int, noise: float, seed: int, k: int, top_k: int) -> dict:
    """Align one relabelled noisy pair with the structural prior only; NC, EC and timing."""
    pair = noisy_relabelled(n, graph=graph, noise=noise, seed=seed, pair_seed=seed + 1000)
    names = np.arange(n).astype(str).astype(object)
    net_a, net_b = as_networks(pair, names, names)
    t0 = time.perf_counter()
    pairs, scores = structural_candidates(net_a, net_b, k=k)
    prior = pd.DataFrame({"node_a": net_a.names[pairs[:, 0]], "node_b": net_b.names[pairs[:, 1]],
                          "score": scores})
    truth = zip(net_a.names[pair.truth[:, 0]], net_b.names[pair.truth[:, 1]])
    res = aligner.align(net_a, net_b, prior, truth=list(truth), top_k=top_k)
    seconds = time.perf_counter() - t0
    true_key = pair.truth[:, 0] * n + pair.truth[:, 1]
    recall = float(np.isin(true_key, pairs[:, 0] * n + pairs[:, 1]).mean())
    return {"graph": graph, "n": n, "noise": noise, "seed": seed, "NC": res.scores.nc, "EC": res.scores.ec,
            "truth_in_candidates": recall, "candidates": len(pairs), "seconds": seconds}


def markdown(table: pd.DataFrame) -> str:
    """The table as Markdown (floats to three decimals), without optional dependencies."""
    cells = [[f"{v:.3f}" if isinstance(v, float) else str(v) for v in row] for row in table.itertuples(index=False)]
    lines = ["| " + " | ".join(table.columns) + " |", "|" + "---|" * len(table.columns)]
    return "\n".join(lines + ["| " + " | ".join(r) + " |" for r in cells])


def timing(n: int, k: int, candidates: bool) -> None:
    """Time node_features on an n-node power-law graph, and structural_candidates against itself."""
    from aligner.priors.structural import node_features

    e = base_graph("powerlaw", n, seed=0)
    net = network_from_edges(np.arange(n).astype(str).astype(object), e[:, 0], e[:, 1])
    node_features(net)  # compile
    t0 = time.perf_counter()
    node_features(net)
    line = f"n={n:,} edges={net.n_edges:,}: node_features {time.perf_counter() - t0:.2f} s"
    if candidates:
        t0 = time.perf_counter()
        pairs, _ = structural_candidates(net, net, k=k)
        line += f", structural_candidates (k={k}) {time.perf_counter() - t0:.1f} s, {len(pairs):,} pairs"
    print(line, flush=True)


def main(argv=None) -> pd.DataFrame:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[2000])
    ap.add_argument("--seeds", type=int, nargs="+", default=[0])
    ap.add_argument("--noise", type=float, nargs="+", default=[0.0, 0.01, 0.05, 0.15])
    ap.add_argument("--graphs", nargs="+", default=list(GRAPHS), choices=list(GRAPHS))
    ap.add_argument("--k", type=int, default=25)
    ap.add_argument("--top-k", type=int, default=25, help="top_k of aligner.align")
    ap.add_argument("--csv", default=None)
    ap.add_argument("--markdown", default=None, help="also write the Markdown table to this file")
    ap.add_argument("--timing", type=int, nargs="+", default=None,
                    help="instead: time the features (and, up to 2e5 nodes, the candidates) at these sizes")
    args = ap.parse_args(argv)
    if args.timing:
        for n in args.timing:
            timing(n, args.k, candidates=n <= 200_000)
        return pd.DataFrame()
    rows = [run_one(g, n, noise, seed, args.k, args.top_k)
            for g in args.graphs for n in args.sizes for noise in args.noise for seed in args.seeds]
    table = pd.DataFrame(rows)
    print(markdown(table), flush=True)
    if args.markdown:
        Path(args.markdown).write_text(markdown(table) + "\n", encoding="utf-8")
    if args.csv:
        table.to_csv(args.csv, index=False)
    return table


if __name__ == "__main__":
    main()
