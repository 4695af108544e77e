"""Regenerate docs/sweep_demo.png: the trade-off curve of the bundled demo.

Usage: python scripts/make_docs_figure.py
"""

from __future__ import annotations

from pathlib import Path

from aligner.analysis.sweep import plot_sweep, sweep

ROOT = Path(__file__).resolve().parent.parent


def main():
    d = ROOT / "demo_pairs" / "firefly"
    res = sweep(d / "network_a.tsv", d / "network_b.tsv", d / "prior.tsv", truth=d / "truth.tsv")
    (ROOT / "docs").mkdir(exist_ok=True)
    target = ROOT / "docs" / "sweep_demo.png"
    plot_sweep(res.table, res.knee, [target], title="Demo (firefly): wiring against prior across α")
    print(res.table[["alpha", "conserved_edges", "prior_weight", "nc"]].to_string(index=False))
    print(f"knee alpha = {res.knee_alpha}; wrote {target.relative_to(ROOT)}")


if __name__ == "__main__":
    main()
