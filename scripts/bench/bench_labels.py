"""Labels alone against structure plus labels on the registry demo, and the cost of label_prior.

Usage::

    python scripts/bench/bench_labels.py                      # NC/EC table, then label_prior at 10^5 x 10^5 names
    python scripts/bench/bench_labels.py --n 20000            # a smaller timing run
    python scripts/bench/bench_labels.py --n 0                # the table only
    python scripts/bench/bench_labels.py --csv out.csv        # also write the rows as CSV
    python scripts/bench/bench_labels.py --markdown out.md    # also write the rows as a Markdown table

The table aligns the two registries of ``demo_pairs/registry`` (see its README) with the prior
from :func:`aligner.priors.labels.label_prior`: ``alpha=0`` is the prior's own best one-to-one matching
(labels alone), the default ``alpha=0.9`` adds the contract networks (and the refinement).
The timing run makes ``n`` invented names and ``n`` corrupted copies with the generator of the registry demo
(:mod:`aligner.datasets.registry`, seeded) and times ``label_prior`` on them; peak memory is
the process's maximum resident set size (``resource.getrusage``).
"""

from __future__ import annotations

import argparse
import csv
import resource
import sys
import time
import warnings
from pathlib import Path

import numpy as np

from aligner.datasets import registry as demo
from aligner.datasets.demo import scenario_dir
from aligner.pipeline import align
from aligner.priors.labels import label_prior

DATA = scenario_dir("registry")
SEED = 7


def _peak_mib() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # KiB on Linux


def table() -> list[dict[str, object]]:
    """NC and EC of labels alone and of structure plus labels on the registry demo."""
    t0 = time.perf_counter()
    prior = label_prior(DATA / "labels_a.tsv", DATA / "labels_b.tsv")
    t_prior = time.perf_counter() - t0
    rows = []
    for name, alpha in (("labels alone (alpha=0)", 0.0), ("structure + labels (alpha=0.9)", 0.9)):
        t0 = time.perf_counter()
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            res = align(DATA / "network_a.tsv", DATA / "network_b.tsv", prior, alpha=alpha,
                        truth=DATA / "truth.tsv")
        rows.append({"method": name, "nc": res.scores.nc, "ec": res.scores.ec,
                     "seconds": time.perf_counter() - t0})
    print(f"registry demo: {len(prior)} prior pairs from label_prior in {t_prior:.2f} s")
    print(f"{'method':34s} {'NC':>7s} {'EC':>7s} {'seconds':>8s}")
    for r in rows:
        print(f"{r['method']:34s} {r['nc']:7.4f} {r['ec']:7.4f} {r['seconds']:8.2f}")
    return rows


def timing(n: int) -> dict[str, object]:
    """Seconds and peak memory of label_prior on n x n invented names."""
    rng = np.random.default_rng(SEED)
    words, _ = demo.company_names(n, rng)
    a = {f"A{i:07d}": " ".join(w) for i, w in enumerate(words)}
    b = {f"B{i:07d}": demo.corrupt(w, rng) for i, w in enumerate(words)}
    label_prior({"x": "warm up the kernels"}, {"y": "warm up"})  # compile (or load) the kernels first
    base = _peak_mib()
    t0 = time.perf_counter()
    prior = label_prior(a, b)
    seconds = time.perf_counter() - t0
    peak = _peak_mib()
    row = {"method": f"label_prior {n} x {n}", "seconds": seconds, "pairs": len(prior),
           "peak_rss_mib": peak, "peak_rss_before_mib": base}
    print(f"label_prior on {n} x {n} names: {seconds:.1f} s, {len(prior)} pairs, peak RSS {peak:.0f} MiB "
          f"(before the call {base:.0f} MiB)")
    return row


def markdown(rows: list[dict[str, object]]) -> str:
    """The rows as a Markdown table: method, NC, EC, seconds (and pairs and peak memory of a timing run)."""
    lines = ["| method | NC | EC | seconds | pairs | peak RSS MiB |", "|---|---:|---:|---:|---:|---:|"]
    for r in rows:
        nc, ec = (f"{r[k]:.4f}" if k in r else "" for k in ("nc", "ec"))
        pairs = f"{r['pairs']:,}" if "pairs" in r else ""
        peak = f"{r['peak_rss_mib']:.0f}" if "peak_rss_mib" in r else ""
        lines.append(f"| {r['method']} | {nc} | {ec} | {r['seconds']:.2f} | {pairs} | {peak} |")
    return "\n".join(lines) + "\n"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--n", type=int, default=100_000, help="names per side of the timing run (0: skip)")
    parser.add_argument("--csv", type=Path, default=None, help="also write the rows to this CSV file")
    parser.add_argument("--markdown", type=Path, default=None, help="also write the rows as a Markdown table")
    args = parser.parse_args(argv)
    rows = table()
    if args.n > 0:
        rows.append(timing(args.n))
    if args.csv is not None:
        fields = sorted({k for r in rows for k in r})
        with open(args.csv, "w", newline="") as fh:
            w = csv.DictWriter(fh, fieldnames=fields)
            w.writeheader()
            w.writerows(rows)
    if args.markdown is not None:
        args.markdown.write_text(markdown(rows), encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
