"""Does accuracy rise with confidence? Accuracy of the matched pairs by confidence decile.

Usage: python scripts/calibration.py   (prints a Markdown table for the demo and a synthetic pair)
"""

from __future__ import annotations

from pathlib import Path

import networkx as nx
import numpy as np
import pandas as pd

from aligner.pipeline import align
from aligner.datasets.synthetic import powerlaw_graph, relabelled_pair


def table(res, truth: set[tuple[str, str]]) -> pd.DataFrame:
    p = res.pairs.copy()
    p["correct"] = [(a, b) in truth for a, b in zip(p["node_a"], p["node_b"])]
    # deciles by rank, so ties (many pairs at confidence 0 or 1) still split into ten equal groups
    p["decile"] = np.floor(10 * p["confidence"].rank(method="first") / (len(p) + 1)).astype(int) + 1
    g = p.groupby("decile").agg(pairs=("correct", "size"), conf_min=("confidence", "min"),
                                conf_max=("confidence", "max"), accuracy=("correct", "mean"))
    return g.reset_index()


def markdown(name: str, t: pd.DataFrame) -> str:
    lines = [f"**{name}**", "", "| decile | pairs | confidence | accuracy |", "|---|---|---|---|"]
    for r in t.itertuples(index=False):
        lines.append(f"| {r.decile} | {r.pairs} | {r.conf_min:.2f}–{r.conf_max:.2f} | {r.accuracy:.3f} |")
    return "\n".join(lines)


def main():
    d = Path(__file__).resolve().parent.parent / "demo_pairs" / "firefly"
    res = align(d / "network_a.tsv", d / "network_b.tsv", d / "prior.tsv")
    tr = pd.read_csv(d / "truth.tsv", sep="\t", dtype=str, keep_default_na=False, comment="#", header=None)
    truth = set(zip(tr.iloc[:, 0], tr.iloc[:, 1]))
    print(markdown("demo (firefly), alpha 0.9", table(res, truth)))
    print()
    n = 2000
    sp = relabelled_pair(powerlaw_graph(n, m=3, seed=11), n, noise=0.2, decoys=10,
                         true_score=(1.0, 0.5), decoy_score=(0.7, 0.5), seed=12)
    ga, gb = nx.Graph(), nx.Graph()
    ga.add_nodes_from(range(n)), gb.add_nodes_from(range(n))
    ga.add_edges_from(map(tuple, sp.edges_a)), gb.add_edges_from(map(tuple, sp.edges_b))
    prior = pd.DataFrame({"a": sp.prior_pairs[:, 0].astype(str), "b": sp.prior_pairs[:, 1].astype(str),
                          "s": sp.prior_scores})
    res = align(ga, gb, prior)
    truth = {(str(a), str(b)) for a, b in sp.truth}
    print(markdown(f"synthetic relabelled pair, n = {n}, 20 % edge noise, noisy prior, alpha 0.9",
                   table(res, truth)))


if __name__ == "__main__":
    main()
