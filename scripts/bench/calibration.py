"""Does the confidence column predict which matched pairs are right? Old confidence against new.

Usage::

    python scripts/bench/calibration.py                          # prints the Markdown tables
    python scripts/bench/calibration.py --markdown bench_out/calibration.md

Every case is aligned with ``aligner.align`` at its default options (refinement on), and every
matched pair of the final matching is labelled right or wrong by the case's truth table. Two
confidences are compared on the same pairs:

* **new**: the ``confidence`` column of the result
  (:func:`aligner.core.confidence.matching_confidence`: the loss of the refinement's objective
  at the pair's best 2-exchange on the final matching, as L / (1 + L));
* **old**: the previous definition, the margin of the pair's diffusion score over its best
  competing candidate (:func:`aligner.core.confidence.pair_confidence`), evaluated on the same
  final matching.

Measures: the area under the ROC curve for "pair is right" (scikit-learn's ``roc_auc_score``;
0.5 = no better than chance, "–" when every pair is right), and a reliability table: the pairs
in each tenth of the confidence range [0, 0.1), ..., [0.9, 1.0] and the share of them that is
right.

Cases:

* generated pairs with errors (:func:`aligner.datasets.instances.noisy_relabelled`, 25 % of the
  edges moved): power-law (m = 3) and duplication-divergence base graphs of 500, 1,000 and
  2,000 nodes, each with two priors: ``decoys`` (true partner N(1, 0.25) and 10 uniform decoys
  N(0.5, 0.25), the library's defaults) and ``noisy`` (10 decoys near the partner in B, at
  distance 1 or 2, and overlapping scores, true N(1, 0.5), decoys N(0.7, 0.5));
* the bundled demo (``demo_pairs/firefly``, its truth table);
* the adult connectome pair of tests/data with hidden names
  (:func:`aligner.datasets.instances.hidden_connectome`), task ``class`` (every pair of neurons of
  one class is a candidate with score 1: left/right homologues are interchangeable) and task
  ``noisy`` (simulated similarity prior), seed 0, ``top_k=None`` as in tests/test_connectome.py.
"""

from __future__ import annotations

import argparse
import subprocess
from pathlib import Path

import numpy as np
import pandas as pd
from sklearn.metrics import roc_auc_score

from aligner.core.confidence import pair_confidence
from aligner.datasets.demo import scenario_dir
from aligner.datasets.instances import as_frames, hidden_connectome, noisy_relabelled, read_connectome
from aligner.pipeline import align

ROOT = Path(__file__).resolve().parents[2]
PRIORS = {
    "decoys": dict(decoy_mode="uniform", true_score=(1.0, 0.25), decoy_score=(0.5, 0.25)),
    "noisy": dict(decoy_mode="near", true_score=(1.0, 0.5), decoy_score=(0.7, 0.5)),
}
GRAPHS = {"power law": ("powerlaw", {"m": 3}), "dup.-div.": ("dupdiv", {})}
BINS = np.linspace(0.0, 1.0, 11)


def labelled(res, truth: set) -> pd.DataFrame:
    """The matched pairs with ``new`` and ``old`` confidence and ``right`` (bool)."""
    cand, index = res.candidates, res.matching.index
    p = res.pairs
    return pd.DataFrame({"new": p["confidence"].to_numpy(),
                         "old": pair_confidence(cand, res.diffusion.x, index),
                         "right": [(str(a), str(b)) in truth for a, b in zip(p["node_a"], p["node_b"])]})


def auc(frame: pd.DataFrame, column: str) -> float:
    y = frame["right"].to_numpy()
    return float(roc_auc_score(y, frame[column])) if 0 < y.sum() < len(y) else float("nan")


def generated_cases(sizes=(500, 1000, 2000), seed: int = 3):
    for gname, (graph, options) in GRAPHS.items():
        for n in sizes:
            for pname, kw in PRIORS.items():
                sp = noisy_relabelled(n, graph=graph, graph_options=options, noise=0.25, decoys=10, seed=seed, **kw)
                ea, eb, prior, truth = as_frames(sp)
                res = align(ea, eb, prior)
                pairs = {(str(a), str(b)) for a, b in truth.itertuples(index=False)}
                yield f"{gname}, {n:,} nodes, prior {pname}", "generated", labelled(res, pairs)


def demo_case():
    d = scenario_dir("firefly")
    res = align(d / "network_a.tsv", d / "network_b.tsv", d / "prior.tsv")
    tr = pd.read_csv(d / "truth.tsv", sep="\t", dtype=str, keep_default_na=False, comment="#", header=None)
    return "demo (firefly)", "demo", labelled(res, set(zip(tr.iloc[:, 0], tr.iloc[:, 1])))


def connectome_cases():
    for task in ("class", "noisy"):
        ea, eb, prior, truth = hidden_connectome(*read_connectome(ROOT / "tests" / "data"), task, seed=0)
        res = align(ea, eb, prior, top_k=None)
        yield (f"connectome adult 7 vs 8, {task} prior", "connectome",
               labelled(res, set(zip(truth["a"], truth["b"]))))


def fmt(v: float) -> str:
    return "–" if np.isnan(v) else f"{v:.3f}"


def auc_table(cases) -> str:
    lines = ["| case | pairs | wrong | AUC old | AUC new | share at confidence 0, old / new |",
             "|---|---:|---:|---:|---:|---:|"]
    for name, _, f in cases:
        lines.append(f"| {name} | {len(f):,} | {int((~f['right']).sum()):,} | {fmt(auc(f, 'old'))} | "
                     f"{fmt(auc(f, 'new'))} | {(f['old'] == 0).mean():.2f} / {(f['new'] == 0).mean():.2f} |")
    return "\n".join(lines)


def reliability(groups: dict[str, pd.DataFrame]) -> str:
    """Per tenth of the confidence range: pairs and share right, old and new, for each group."""
    head = "| confidence |" + "".join(f" {g}: pairs old / new | {g}: right old / new |" for g in groups)
    lines = [head, "|---|" + "---:|---:|" * len(groups)]
    cuts = {g: {c: np.clip(np.digitize(f[c], BINS[1:-1]), 0, 9) for c in ("old", "new")} for g, f in groups.items()}
    for b in range(10):
        row = f"| {BINS[b]:.1f}–{BINS[b + 1]:.1f} |"
        for g, f in groups.items():
            cells = []
            for c in ("old", "new"):
                sel = cuts[g][c] == b
                cells.append((int(sel.sum()), f["right"][sel].mean() if sel.any() else float("nan")))
            row += f" {cells[0][0]:,} / {cells[1][0]:,} | {fmt(cells[0][1])} / {fmt(cells[1][1])} |"
        lines.append(row)
    return "\n".join(lines)


def commit() -> str:
    try:
        return subprocess.run(["git", "rev-parse", "--short", "HEAD"], cwd=ROOT, capture_output=True, text=True,
                              check=True).stdout.strip()
    except (OSError, subprocess.CalledProcessError):
        return "unknown"


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--markdown", type=Path, default=None, help="also write the tables to this Markdown file")
    args = ap.parse_args(argv)
    cases = [*generated_cases(), demo_case(), *connectome_cases()]
    pooled = {kind: pd.concat([f for _, k, f in cases if k == kind], ignore_index=True)
              for kind in ("generated", "demo", "connectome")}
    summary = [(f"all {kind} cases pooled", kind, f) for kind, f in pooled.items() if kind != "demo"]
    text = (f"Measured on commit {commit()} by `python scripts/bench/calibration.py`.\n\n"
            "**Area under the ROC curve for \"pair is right\"** (default pipeline, refinement on)\n\n"
            + auc_table(cases + summary) + "\n\n"
            "**Reliability: pairs and share right per tenth of the confidence range**\n\n"
            + reliability(pooled) + "\n")
    print(text, end="")
    if args.markdown is not None:
        args.markdown.write_text(text, encoding="utf-8")


if __name__ == "__main__":
    main()
