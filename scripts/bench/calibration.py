"""Does accuracy rise with confidence? Accuracy of the matched pairs by confidence decile.

Usage::

    python scripts/bench/calibration.py                          # prints the Markdown tables
    python scripts/bench/calibration.py --markdown bench_out/calibration.md

Two inputs: the bundled firefly demo, and a relabelled power-law pair with 20 % edge noise and
a noisy prior (:func:`aligner.datasets.instances.noisy_relabelled`).
"""

from __future__ import annotations

import argparse
from pathlib import Path

import networkx as nx
import numpy as np
import pandas as pd

from aligner.datasets.demo import scenario_dir
from aligner.datasets.instances import noisy_relabelled
from aligner.pipeline import align


def table(res, truth: set[tuple[str, str]]) -> pd.DataFrame:
    """Pairs, confidence range and accuracy of each confidence decile of the matched pairs."""
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


def demo_table() -> str:
    d = scenario_dir("firefly")
    res = align(d / "network_a.tsv", d / "network_b.tsv", d / "prior.tsv")
    tr = pd.read_csv(d / "truth.tsv", sep="\t", dtype=str, keep_default_na=False, comment="#", header=None)
    truth = set(zip(tr.iloc[:, 0], tr.iloc[:, 1]))
    return markdown("demo (firefly), alpha 0.9", table(res, truth))


def synthetic_table(n: int = 2000) -> str:
    sp = noisy_relabelled(n, graph_options={"m": 3}, noise=0.2, decoys=10, true_score=(1.0, 0.5),
                          decoy_score=(0.7, 0.5), seed=11, pair_seed=12)
    ga, gb = nx.Graph(), nx.Graph()
    ga.add_nodes_from(range(n)), gb.add_nodes_from(range(n))
    ga.add_edges_from(map(tuple, sp.edges_a)), gb.add_edges_from(map(tuple, sp.edges_b))
    prior = pd.DataFrame({"a": sp.prior_pairs[:, 0].astype(str), "b": sp.prior_pairs[:, 1].astype(str),
                          "s": sp.prior_scores})
    res = align(ga, gb, prior)
    truth = {(str(a), str(b)) for a, b in sp.truth}
    return markdown(f"synthetic relabelled pair, n = {n}, 20 % edge noise, noisy prior, alpha 0.9",
                    table(res, truth))


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--markdown", type=Path, default=None, help="also write the tables to this Markdown file")
    args = ap.parse_args(argv)
    text = demo_table() + "\n\n" + synthetic_table() + "\n"
    print(text, end="")
    if args.markdown is not None:
        args.markdown.write_text(text, encoding="utf-8")


if __name__ == "__main__":
    main()
