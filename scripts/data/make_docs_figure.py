"""Regenerate docs/sweep_demo.png: the trade-off curve of the bundled firefly demo.

Usage::

    python scripts/data/make_docs_figure.py
"""

from __future__ import annotations

from pathlib import Path

from aligner.analysis.sweep import sweep
from aligner.datasets.demo import scenario_dir
from aligner.render.figures import plot_sweep

ROOT = Path(__file__).resolve().parents[2]


def main() -> None:
    d = scenario_dir("firefly")
    res = sweep(d / "network_a.tsv", d / "network_b.tsv", d / "prior.tsv", truth=d / "truth.tsv")
    figures = plot_sweep(res.table, res.knee, ("png",), title="Demo (firefly): wiring against prior across α")
    target = ROOT / "docs" / "sweep_demo.png"
    target.parent.mkdir(exist_ok=True)
    target.write_bytes(figures["png"])
    print(res.table[["alpha", "conserved_edges", "prior_weight", "nc"]].to_string(index=False))
    print(f"knee alpha = {res.knee_alpha}; wrote {target.relative_to(ROOT)}")


if __name__ == "__main__":
    main()
