"""Benchmark counterpart queries: work and time per query as the networks grow.

Graph pairs of 10^4, 10^5 and 10^6 nodes with the same local structure (power-law graphs with
clustering, ``powerlaw_graph(n, m=4, p=0.3)``, and a relabelled copy with 5 % of the edges moved
and 10 uniform decoys per node in the prior, ``relabelled_pair``; all seeded). For each size,
``--queries`` random nodes of A are asked (the same RNG seed for every size) and the figures of
each query are recorded: pairs touched (held with a residual or a score), pairs expanded
(neighbour list discovered), product edges scanned by the pushes, binary-search probes of the
discovery, pushes, and wall time. The preparation (building the networks, the candidates and
the query index, once per size) is timed apart.

With ``--check N`` the first N queries of the smallest size are also solved on the full
product graph (``aligner.core.diffusion.diffuse`` with the same h, tolerance 1e-12) and the largest
violation of the certified per-score bound is reported (it must be <= 0), with how often the
query's top counterpart is the true partner.

    python scripts/bench/bench_query.py                       # 10^4, 10^5, 10^6; 200 queries each
    python scripts/bench/bench_query.py --sizes 10000,100000 --queries 100 --check 20

Instances come from :func:`aligner.datasets.instances.noisy_relabelled`. Writes
OUT/bench_query.csv and the Markdown table to OUT/bench_query.md or to ``--markdown FILE`` (OUT
defaults to bench_out/, git-ignored).
"""

from __future__ import annotations

import argparse
import csv
import platform
import sys
import time
from pathlib import Path

import numpy as np


def build(n: int, seed: int, noise: float):
    """Networks, candidates (top-k 25) and the true partner of every node of A (index form)."""
    from aligner.core.candidates import build_candidates
    from aligner.datasets.instances import as_networks, in_reader_order, node_names, noisy_relabelled

    # node names are the decimal labels, numbered in their string order (as the readers number nodes)
    labels = node_names(n, pad=False)
    pair, names, _ = in_reader_order(noisy_relabelled(n, noise=noise, decoys=10, seed=seed), labels, labels)
    net_a, net_b = as_networks(pair, names, names)
    cand = build_candidates(pair.prior_pairs, pair.prior_scores, n, n, top_k=25)
    truth = np.full(n, -1, dtype=np.int64)
    truth[pair.truth[:, 0]] = pair.truth[:, 1]
    return net_a, net_b, cand, truth


def ask(eng, cand, truth, asked) -> tuple[list[dict], int, int]:
    """Work figures of each query, and how often the top counterpart (and the best prior) is true."""
    per = []
    top1 = top1_prior = 0
    for node in asked:
        c0 = time.perf_counter()
        tab, work = eng.counterparts(int(node), "a", top=1)
        work["call_seconds"] = time.perf_counter() - c0  # the whole call, table included
        per.append(work)
        if len(tab) and tab["counterpart"].iloc[0] == truth[node]:
            top1 += 1
        own = eng.candidates_of(int(node))
        if len(own) and cand.pairs[own[np.argmax(cand.prior[own])], 1] == truth[node]:
            top1_prior += 1
    return per, top1, top1_prior


def bound_violation(eng, net_a, net_b, cand, nodes, alpha: float) -> float:
    """Largest ``|x_full - x_query| - bound`` over ``nodes`` (<= 0: every score within its bound)."""
    from aligner.core.diffusion import column_scale, diffuse
    from aligner.core.product import build_product

    prod = build_product(net_a.indptr, net_a.indices, net_b.indptr, net_b.indices, cand)
    scale = column_scale(prod)
    viol = -np.inf
    for node in nodes:
        idx, h = eng.personalization(int(node))
        sol = eng.solve(int(node), idx=idx, h=h)
        hf = np.zeros(cand.m)
        hf[idx] = h
        ref = diffuse(prod, hf, scale, alpha=alpha, tol=1e-12)
        xq = np.zeros(cand.m)
        xq[sol.pairs] = sol.x
        bound = np.full(cand.m, sol.residual_l1)
        bound = np.minimum(bound, sol.eps * prod.degree) / (1 - alpha)
        viol = max(viol, float(np.max(np.abs(ref.x - xq) - bound - ref.error_bound)))
    return viol


def summarise(n, net_a, cand, asked, per, top1, top1_prior, prep, index_s, viol) -> dict:
    """One row of the table from the figures of every query at one size."""
    col = {k: np.array([w[k] for w in per], dtype=np.float64) for k in per[0]}

    def ms(values, q=50):
        return round(1000 * float(np.percentile(values, q)), 2)

    return {
        "nodes": n, "edges_a": net_a.n_edges, "candidates": cand.m, "queries": len(asked),
        "prep_s": round(prep, 2), "index_s": round(index_s, 3),
        "touched_median": int(np.median(col["pairs_touched"])),
        "touched_p90": int(np.percentile(col["pairs_touched"], 90)),
        "touched_max": int(col["pairs_touched"].max()),
        "expanded_median": int(np.median(col["pairs_expanded"])),
        "scanned_median": int(np.median(col["product_edges_scanned"])),
        "probes_median": int(np.median(col["search_probes"])),
        "pushes_median": int(np.median(col["pushes"])),
        "ms_median": ms(col["seconds"]), "ms_p90": ms(col["seconds"], 90),
        "ms_mean": round(1000 * float(np.mean(col["seconds"])), 2),
        "call_ms_median": ms(col["call_seconds"]),
        "top1_true": round(top1 / len(asked), 3),
        "top1_prior_alone": round(top1_prior / len(asked), 3),
        "bound_violation": None if viol is None else float(viol),
    }


def markdown(rows: list[dict], args, tol: float, command: str) -> str:
    """The Markdown table of the rows, with the settings and the bound check."""
    lines = [
        f"Counterpart queries, alpha = {args.alpha}, tol = {tol:g}, {args.queries} random nodes of A per size; "
        f"power-law pair (m = 4, p = 0.3), {args.noise:.0%} edges moved, 10 uniform decoys, top-k 25. "
        f"`{command}` on {platform.machine()} / Python {platform.python_version()}.",
        "",
        "| nodes | candidates | pairs touched (median / p90 / max) | pairs expanded | product edges scanned "
        "| probes | pushes | push ms per query (median / p90) | ms per call, table included (median) "
        "| preparation s |",
        "|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|",
    ]
    for r in rows:
        lines.append(f"| {r['nodes']:,} | {r['candidates']:,} | {r['touched_median']:,} / {r['touched_p90']:,} / "
                     f"{r['touched_max']:,} | {r['expanded_median']:,} | {r['scanned_median']:,} | "
                     f"{r['probes_median']:,} | {r['pushes_median']:,} | {r['ms_median']} / {r['ms_p90']} | "
                     f"{r['call_ms_median']} | {r['prep_s']} |")
    if rows[0]["bound_violation"] is not None:
        lines += ["", f"Certified bound checked against the full solve on {args.check} queries at "
                  f"{rows[0]['nodes']:,} nodes: largest |x_full - x_query| - bound = "
                  f"{rows[0]['bound_violation']:.2e} (<= 0 means every score is within its bound)."]
    lines += ["", "Top counterpart = true partner: " + ", ".join(
        f"{r['top1_true']:.0%} at {r['nodes']:,} (best prior alone: {r['top1_prior_alone']:.0%})" for r in rows) + "."]
    return "\n".join(lines) + "\n"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--sizes", default="10000,100000,1000000")
    ap.add_argument("--queries", type=int, default=200)
    ap.add_argument("--tol", type=float, default=None, help="query tolerance (default: the package default)")
    ap.add_argument("--alpha", type=float, default=0.9)
    ap.add_argument("--noise", type=float, default=0.05)
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--check", type=int, default=0, help="queries of the smallest size checked against the "
                    "full solve")
    ap.add_argument("--out", default="bench_out")
    ap.add_argument("--markdown", type=Path, default=None, help="where to write the Markdown table "
                    "(default: OUT/bench_query.md)")
    args = ap.parse_args(argv)

    from aligner.analysis.query import DEFAULT_QUERY_TOL, QueryEngine

    tol = DEFAULT_QUERY_TOL if args.tol is None else args.tol
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    rows = []
    for si, n in enumerate(int(s) for s in args.sizes.split(",")):
        t0 = time.perf_counter()
        net_a, net_b, cand, truth = build(n, args.seed, args.noise)
        t1 = time.perf_counter()
        eng = QueryEngine(net_a, net_b, cand, alpha=args.alpha, tol=tol)
        t2 = time.perf_counter()
        eng.solve(0)  # compile / load the kernels outside the timings
        asked = np.random.default_rng(args.seed).choice(n, size=min(args.queries, n), replace=False)
        per, top1, top1_prior = ask(eng, cand, truth, asked)
        viol = None
        if si == 0 and args.check:
            viol = bound_violation(eng, net_a, net_b, cand, asked[: args.check], args.alpha)
        rows.append(summarise(n, net_a, cand, asked, per, top1, top1_prior, t2 - t0, t2 - t1, viol))
        print(rows[-1], flush=True)

    with open(out / "bench_query.csv", "w", newline="") as fh:
        w = csv.DictWriter(fh, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)
    command = ("python scripts/bench/bench_query.py " + " ".join(argv if argv is not None else sys.argv[1:])).strip()
    text = markdown(rows, args, tol, command)
    (args.markdown or out / "bench_query.md").write_text(text)
    print(text, end="")
    return 0


if __name__ == "__main__":
    sys.exit(main())
