"""Benchmark query answers against the global alignment: agreement, certificates, local work.

Two families of generated pairs (seeded), at each size of ``--sizes``:

- ``uniform``: power-law graph (``powerlaw_graph(n, m=4, p=0.3)``), relabelled copy with 5 % of
  the edges moved, prior = true partner + 10 uniform decoys;
- ``near``: duplication-divergence graph, 10 % of the edges moved, prior = true partner + 10
  decoys drawn near the partner (random walks in B): a denser product graph.

For each, :func:`aligner.align` runs once with default options (the reference), then
``--queries`` random nodes of A (the same RNG seed for every size) are answered by
:meth:`aligner.analysis.query.QueryEngine.answer` on the same prepared problem. Recorded: how
many answers equal the global alignment's pair, both the assignment's (before refinement: what
the certificate speaks of) and the final one; how many are certified, and how many certified
answers differ from the assignment (must be 0); pairs the answer's pushes held and region pairs
(median and max, and the max as a share of the candidates); seconds per answer (median and
max, after the index is built; the index build is timed apart).

    python scripts/bench/bench_answer.py                                  # 10^4 and 10^5, 20 queries
    python scripts/bench/bench_answer.py --sizes 100000 --queries 20 --markdown docs/answer_benchmark.md

Writes OUT/bench_answer.csv and the Markdown table to OUT/bench_answer.md or ``--markdown FILE``
(OUT defaults to bench_out/, git-ignored).
"""

from __future__ import annotations

import argparse
import platform
import sys
import time

import numpy as np
from tables import finish

FAMILIES = {
    "uniform": dict(graph="powerlaw", noise=0.05, decoys=10, decoy_mode="uniform"),
    "near": dict(graph="dupdiv", noise=0.10, decoys=10, decoy_mode="near"),
}


def run(n: int, family: str, queries: int, seed: int) -> dict:
    import aligner
    from aligner.analysis.query import QueryEngine
    from aligner.datasets.instances import as_frames, noisy_relabelled

    pair = noisy_relabelled(n, seed=seed, **FAMILIES[family])
    a, b, prior, _ = as_frames(pair)
    t0 = time.perf_counter()
    res = aligner.align(a, b, prior)
    align_s = time.perf_counter() - t0
    problem, cand = res.problem, res.candidates
    rounded = np.full(cand.n1, -1, dtype=np.int64)
    rounded[cand.pairs[res.improvement.rounded.index, 0]] = cand.pairs[res.improvement.rounded.index, 1]
    final = np.full(cand.n1, -1, dtype=np.int64)
    final[cand.pairs[res.matching.index, 0]] = cand.pairs[res.matching.index, 1]
    eng = QueryEngine.from_problem(problem)
    t0 = time.perf_counter()
    eng.answer_index()  # built once for every answer
    index_s = time.perf_counter() - t0
    eng.answer(0, max_pairs=1)  # loads the kernels outside the timings
    asked = np.random.default_rng(seed).choice(cand.n1, queries, replace=False)
    got = [eng.answer(int(v)) for v in asked]
    agree = sum(g.counterpart == rounded[v] for g, v in zip(got, asked))
    agree_final = sum(g.counterpart == final[v] for g, v in zip(got, asked))
    cert = sum(g.certified for g in got)
    wrong = sum(g.certified and g.counterpart != rounded[v] for g, v in zip(got, asked))
    touched = np.array([g.pairs_touched for g in got])
    region = np.array([g.pairs for g in got])
    secs = np.array([g.seconds for g in got])
    return {"family": family, "nodes": n, "candidates": cand.m, "queries": queries, "align_s": round(align_s, 2),
            "index_s": round(index_s, 3), "agree_assignment": int(agree), "agree_final": int(agree_final),
            "certified": int(cert), "certified_wrong": int(wrong),
            "touched_median": int(np.median(touched)), "touched_max": int(touched.max()),
            "touched_max_share": float(touched.max() / cand.m), "region_median": int(np.median(region)),
            "region_max": int(region.max()), "s_median": round(float(np.median(secs)), 4),
            "s_max": round(float(secs.max()), 4)}


def markdown(rows: list[dict], command: str) -> str:
    lines = [
        f"Query answers against `aligner.align` (default options), `{command}` on {platform.machine()} / Python "
        f"{platform.python_version()}. uniform: power-law pair, 5 % of edges moved, true partner + 10 uniform "
        "decoys; near: duplication-divergence pair, 10 % moved, 10 decoys near the partner.",
        "",
        "| family | nodes | candidates | answer = assignment's pair | = final alignment's pair | certified "
        "| certified and different | pairs touched (median / max, max share) | region pairs (median / max) "
        "| s per answer (median / max) | index s | align s |",
        "|---|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|",
    ]
    for r in rows:
        q = r["queries"]
        lines.append(
            f"| {r['family']} | {r['nodes']:,} | {r['candidates']:,} | {r['agree_assignment']} / {q} | "
            f"{r['agree_final']} / {q} | {r['certified']} / {q} | {r['certified_wrong']} | "
            f"{r['touched_median']:,} / {r['touched_max']:,} ({r['touched_max_share']:.2%}) | "
            f"{r['region_median']:,} / {r['region_max']:,} | {r['s_median']} / {r['s_max']} | {r['index_s']} | "
            f"{r['align_s']} |")
    return "\n".join(lines) + "\n"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="10000,100000")
    ap.add_argument("--families", default="uniform,near")
    ap.add_argument("--queries", type=int, default=20)
    ap.add_argument("--seed", type=int, default=3)
    ap.add_argument("--out", default="bench_out")
    ap.add_argument("--markdown", default=None)
    args = ap.parse_args(argv)
    rows = []
    for n in (int(s) for s in args.sizes.split(",")):
        for fam in args.families.split(","):
            rows.append(run(n, fam, args.queries, args.seed))
            print(rows[-1], flush=True)
    return finish(rows, "bench_answer", argv, markdown, args.out, args.markdown)


if __name__ == "__main__":
    sys.exit(main())
