"""Cost of a sweep over 12 alphas against 12 separate align runs on the same inputs.

Usage::

    python scripts/bench/bench_sweep.py [--n 3000]    # synthetic relabelled pair, 5 % edge noise
    python scripts/bench/bench_sweep.py --demo        # the bundled firefly demo
    python scripts/bench/bench_sweep.py --demo --markdown bench_out/sweep.md

The synthetic pair is :func:`aligner.datasets.instances.noisy_relabelled` (power-law graph,
m = 4, 10 uniform decoys). Prints the figures and, with ``--markdown FILE``, writes them as a
Markdown table.
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

from aligner.analysis.sweep import sweep
from aligner.datasets.demo import scenario_dir
from aligner.datasets.instances import noisy_relabelled, write_instance
from aligner.pipeline import align

ALPHAS = [0.0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.85, 0.9, 0.95]


def synthetic_files(d: Path, n: int, seed: int = 1) -> tuple[Path, Path, Path]:
    """Network and prior files of a relabelled power-law pair with 5 % of the edges moved."""
    write_instance(noisy_relabelled(n, graph_options={"m": 4}, noise=0.05, decoys=10, seed=seed), d)
    return d / "network_a.tsv", d / "network_b.tsv", d / "prior.tsv"


def measure(a: Path, b: Path, p: Path, rounding: str) -> dict:
    """Seconds and edge touches of one sweep and of separate align runs at the same alphas."""
    align(a, b, p, alpha=0.5, rounding=rounding)  # compile the kernels first
    t0 = time.perf_counter()
    res = sweep(a, b, p, alphas=ALPHAS, rounding=rounding)
    t_sweep = time.perf_counter() - t0
    t0 = time.perf_counter()
    touches = 0
    for alpha in ALPHAS:
        touches += align(a, b, p, alpha=alpha, rounding=rounding).diffusion.edge_touches
    t_sep = time.perf_counter() - t0
    sweep_touches = int(res.table["edge_touches"].sum())
    first = res.results[0]
    return {"candidates": first.candidates.m, "product_edges": first.product.n_edges,
            "sweep_s": t_sweep, "setup_s": res.setup_seconds, "sweep_touches": sweep_touches,
            "separate_s": t_sep, "separate_touches": touches, "time_ratio": t_sweep / t_sep,
            "touch_ratio": sweep_touches / max(touches, 1), "knee_alpha": res.knee_alpha}


def markdown(f: dict, inputs: str) -> str:
    """The figures as a Markdown table."""
    return "\n".join([
        f"Sweep over {len(ALPHAS)} values of α against {len(ALPHAS)} separate `align` runs; inputs: {inputs}; "
        f"{f['candidates']:,} candidates, {f['product_edges']:,} product edges; knee at α = {f['knee_alpha']}.",
        "", "| | seconds | edge touches |", "|---|---:|---:|",
        f"| sweep (set-up once: {f['setup_s']:.2f} s) | {f['sweep_s']:.2f} | {f['sweep_touches']:,} |",
        f"| separate runs | {f['separate_s']:.2f} | {f['separate_touches']:,} |",
        f"| ratio sweep / separate | {f['time_ratio']:.2f} | {f['touch_ratio']:.2f} |", ""])


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--n", type=int, default=3000, help="nodes of the synthetic pair")
    ap.add_argument("--demo", action="store_true", help="use the bundled firefly demo instead")
    ap.add_argument("--rounding", default="auto")
    ap.add_argument("--markdown", type=Path, default=None, help="also write the figures as a Markdown table")
    args = ap.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        if args.demo:
            d = scenario_dir("firefly")
            a, b, p = d / "network_a.tsv", d / "network_b.tsv", d / "prior.tsv"
        else:
            a, b, p = synthetic_files(Path(tmp), args.n)
        f = measure(a, b, p, args.rounding)
    text = markdown(f, "demo (firefly)" if args.demo else f"synthetic n = {args.n:,}")
    print(text)
    if args.markdown is not None:
        args.markdown.write_text(text, encoding="utf-8")


if __name__ == "__main__":
    main()
