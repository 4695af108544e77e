"""Held-out edge check of the transferred interactions (issue 20), against two link-prediction baselines.

For each case (a pair of networks with a known correspondence) and seed: a seeded random 10 % of
B's edges are held out; A is aligned with the reduced B by ``aligner.align`` (default options,
the case's prior); the transferred ``A->B`` edges are taken in the order of
``AlignmentResult.transferred_edges()`` (the order of transferred_edges.tsv), and a row is a hit
when its image (node_b1, node_b2) is a held-out edge. The nodes left without an edge by the
hold-out stay in B (the networks are passed with every node named), as a protein with no
measured interaction still exists.

Baselines, computed on the reduced B alone:

* common neighbours (Liben-Nowell & Kleinberg 2007): every non-adjacent pair of B with at least
  one common neighbour, by that count (``A @ A`` with scipy.sparse), ties in a seeded random
  order; the pairs without a common neighbour follow in random order, and their contribution to
  precision and average precision is the expectation over that order (exact, not sampled);
* random ranking of all non-adjacent pairs of B: expected figures (exact).

A reference row, "true matching", is the list transfer would make under the true one-to-one map
(edges of A whose true image is missing from the reduced B) in random order: its expected
precision is the share of held-out edges in it, which no ranking by the surroundings of an edge
can beat on average when the other rows are edges removed by the generator's noise (those are
missing from B just like the held-out ones, with the same surroundings). Not shown for the
evolved pair, whose truth is not one-to-one.

Measures: precision at the top 100 and 1,000 (hits among the first k rows / k), recall of the
listed rows (held-out edges retrieved / held-out edges), and the area under the precision-recall
curve as average precision: the sum over hits of the precision at their rank, divided by the
number of held-out edges, so held-out edges never retrieved count as misses.

Cases: ``powerlaw-5`` / ``powerlaw-15``: relabelled power-law pairs
(:func:`aligner.datasets.instances.noisy_relabelled`, ``--n`` nodes, 5 % / 15 % of the edges
moved, prior = true partner + 10 uniform decoys); ``evolved``: a duplication-divergence pair
(:func:`aligner.datasets.synthetic.evolved_pair`, ``--evolved-ancestors`` ancestral nodes grown
by a quarter in each species, 5 % edge noise); ``connectome``: the adult C. elegans pair of
tests/data with hidden names and the simulated noisy prior
(:func:`aligner.datasets.instances.hidden_connectome`, task ``noisy``), aligned with
``top_k=None`` as tests/test_connectome.py does.

    python scripts/bench/bench_transfer.py                                  # all cases, 3 seeds
    python scripts/bench/bench_transfer.py --seeds 1 --cases connectome --markdown /tmp/transfer.md
    python scripts/bench/bench_transfer.py --markdown docs/transfer_benchmark.md

Writes OUT/transfer.csv (one row per case, seed and method) and the Markdown table to
OUT/transfer.md or ``--markdown FILE`` (OUT defaults to bench_out/transfer/, which git ignores).
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import time
import warnings
from pathlib import Path
from typing import NamedTuple

import numpy as np
import pandas as pd
import scipy.sparse as sp
from scipy.special import digamma

CASES = ("powerlaw-5", "powerlaw-15", "evolved", "connectome")
DATA = Path(__file__).resolve().parents[2] / "tests" / "data"
METHODS = ("aligner transfer", "common neighbours", "random", "true matching (random order)")


# --------------------------------------------------------------------------------------------
# Ranking measures (tested in tests/test_bench_transfer.py)
# --------------------------------------------------------------------------------------------


def expected_tail_precision_sum(k: int, h: int, r: int, h_r: int) -> float:
    """Expected sum of the precisions at the hits of a random tail.

    A ranked list of ``k`` rows holding ``h`` hits is followed by ``r`` rows in uniformly random
    order holding ``h_r`` hits. A hit at tail position j (rank k + j) has precision
    (h + 1 + hits before it in the tail) / (k + j); position j holds a hit with probability
    h_r / r, and given that, the other h_r - 1 hits fall among the j - 1 earlier tail rows with
    mean (j - 1)(h_r - 1)/(r - 1). Summed in closed form with harmonic numbers (digamma):
    sum_j 1/(k + j) = psi(k + r + 1) - psi(k + 1) and sum_j (j - 1)/(k + j) = r - (k + 1) * that.
    """
    if r <= 0 or h_r <= 0:
        return 0.0
    s0 = float(digamma(k + r + 1) - digamma(k + 1))
    s1 = r - (k + 1) * s0
    spread = (h_r - 1) / (r - 1) if r > 1 else 0.0
    return h_r / r * ((h + 1) * s0 + spread * s1)


def ranking_measures(hits, n_positive: int, *, tail_rows: int = 0, tail_hits: int = 0,
                     ks: tuple[int, ...] = (100, 1000)) -> dict:
    """Precision at each k, recall of the listed rows and average precision of a ranking.

    ``hits`` is a boolean per listed row, best first; ``n_positive`` the number of held-out
    edges. ``tail_rows`` rows holding ``tail_hits`` hits may follow in random order: precision at
    k and average precision then count them by their expectation; the recall is that of the
    listed rows only. Average precision = sum over hits of the precision at their rank /
    ``n_positive`` (positives never ranked count as misses).
    """
    hits = np.asarray(hits, dtype=bool)
    k_list = len(hits)
    cum = np.cumsum(hits)
    out = {}
    for k in ks:
        listed = int(cum[min(k, k_list) - 1]) if k_list else 0
        from_tail = max(0, min(k, k_list + tail_rows) - k_list) * (tail_hits / tail_rows if tail_rows else 0.0)
        out[f"p_at_{k}"] = (listed + from_tail) / k
    h = int(cum[-1]) if k_list else 0
    ranks = np.flatnonzero(hits) + 1
    total = float(np.sum(cum[hits] / ranks)) + expected_tail_precision_sum(k_list, h, tail_rows, tail_hits)
    out["recall"] = h / n_positive if n_positive else float("nan")
    out["aupr"] = total / n_positive if n_positive else float("nan")
    return out


# --------------------------------------------------------------------------------------------
# Edge keys, hold-out, baselines
# --------------------------------------------------------------------------------------------


def pair_keys(u, v, n: int) -> np.ndarray:
    """Key min * n + max of each unordered pair."""
    u, v = np.asarray(u, dtype=np.int64), np.asarray(v, dtype=np.int64)
    return np.minimum(u, v) * n + np.maximum(u, v)


def hold_out(edges: np.ndarray, share: float, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """(kept edges, held-out edges): a uniform random ``round(share * E)`` of the rows held out."""
    m = len(edges)
    held = np.zeros(m, dtype=bool)
    held[rng.choice(m, size=int(round(share * m)), replace=False)] = True
    return edges[~held], edges[held]


def common_neighbour_ranking(edges: np.ndarray, n: int, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """Keys and counts of the non-adjacent pairs with at least one common neighbour, best first.

    Counts from the sparse product A @ A of the symmetric adjacency; ties in a random order from
    ``rng``.
    """
    u, v = edges[:, 0].astype(np.int64), edges[:, 1].astype(np.int64)
    a = sp.coo_matrix((np.ones(len(u), dtype=np.int32), (u, v)), shape=(n, n)).tocsr()
    a = ((a + a.T) > 0).astype(np.int32)
    c = sp.triu(a @ a, k=1).tocoo()
    keys = c.row.astype(np.int64) * n + c.col.astype(np.int64)
    keep = ~np.isin(keys, pair_keys(u, v, n))
    keys, counts = keys[keep], c.data[keep].astype(np.int64)
    order = np.lexsort((rng.random(len(keys)), -counts))
    return keys[order], counts[order]


# --------------------------------------------------------------------------------------------
# Cases
# --------------------------------------------------------------------------------------------


class Case(NamedTuple):
    """A pair with names, integer edges (rows u, v over the names), prior and truth tables."""

    name: str
    names_a: np.ndarray
    edges_a: np.ndarray
    names_b: np.ndarray
    edges_b: np.ndarray
    prior: pd.DataFrame
    truth: pd.DataFrame
    one_to_one: bool
    options: dict = {}  # noqa: RUF012 (read only)


def _synthetic_case(name: str, pair, one_to_one: bool) -> Case:
    from aligner.datasets.instances import as_frames, node_names

    na, nb = node_names(pair.n_a, "a"), node_names(pair.n_b, "b")
    _, _, prior, truth = as_frames(pair, na, nb)
    return Case(name, na, pair.edges_a, nb, pair.edges_b, prior, truth, one_to_one)


def _indexed(names: np.ndarray, u: pd.Series, v: pd.Series) -> np.ndarray:
    idx = pd.Index(names)
    return np.stack([idx.get_indexer(u), idx.get_indexer(v)], axis=1).astype(np.int64)


def build_case(name: str, seed: int, n: int, evolved_ancestors: int) -> Case:
    """Case ``name`` with instance seed ``seed`` (see the module docstring)."""
    if name.startswith("powerlaw-"):
        from aligner.datasets.instances import noisy_relabelled

        noise = int(name.split("-")[1]) / 100
        pair = noisy_relabelled(n, graph="powerlaw", noise=noise, decoys=10, decoy_mode="uniform", seed=seed)
        return _synthetic_case(name, pair, True)
    if name == "evolved":
        from aligner.datasets.synthetic import evolved_pair

        pair = evolved_pair(evolved_ancestors, n_final=int(round(evolved_ancestors * 1.25)), edge_noise=0.05,
                            seed=seed)
        return _synthetic_case(name, pair, False)
    if name == "connectome":
        from aligner.datasets.instances import hidden_connectome, read_connectome

        ea, eb, prior, truth = hidden_connectome(*read_connectome(DATA), "noisy", seed=seed)
        na = np.array(sorted(set(ea.u) | set(ea.v) | set(truth.a)), dtype=object)
        nb = np.array(sorted(set(eb.u) | set(eb.v) | set(truth.b)), dtype=object)
        truth = truth.rename(columns={"a": "node_a", "b": "node_b"})
        return Case(name, na, _indexed(na, ea.u, ea.v), nb, _indexed(nb, eb.u, eb.v), prior, truth, True,
                    {"top_k": None})
    raise SystemExit(f"unknown case {name!r}; choose from {', '.join(CASES)}")


# --------------------------------------------------------------------------------------------
# One run
# --------------------------------------------------------------------------------------------


def run_case(case: Case, seed: int, share: float) -> list[dict]:
    """Hold out, align, rank; one row of measures per method."""
    import aligner
    from aligner.core.network import network_from_edges

    n_b = len(case.names_b)
    rng = np.random.default_rng([20, seed])
    kept, held = hold_out(case.edges_b, share, rng)
    held_keys = np.sort(pair_keys(held[:, 0], held[:, 1], n_b))
    n_pos = len(held_keys)
    kept_keys = pair_keys(kept[:, 0], kept[:, 1], n_b)
    non_adjacent = n_b * (n_b - 1) // 2 - len(kept_keys)
    base = {"case": case.name, "seed": seed, "nodes_a": len(case.names_a), "nodes_b": n_b,
            "edges_a": len(case.edges_a), "edges_b": len(case.edges_b), "held_out": n_pos,
            "non_adjacent": non_adjacent}

    net_a = network_from_edges(case.names_a, case.edges_a[:, 0], case.edges_a[:, 1], source="A")
    net_b = network_from_edges(case.names_b, kept[:, 0], kept[:, 1], source="B")
    t = time.perf_counter()
    res = aligner.align(net_a, net_b, case.prior, truth=case.truth, **case.options)
    table = res.transferred_edges()
    seconds = time.perf_counter() - t
    ab = table[table.direction == "A->B"]
    idx_b = pd.Index(case.names_b)
    keys = pair_keys(idx_b.get_indexer(ab.node_b1), idx_b.get_indexer(ab.node_b2), n_b)
    hits = np.isin(keys, held_keys)
    rows = [{**base, "method": METHODS[0], "listed": len(ab), "nc": res.scores.nc, "seconds": seconds,
             **ranking_measures(hits, n_pos)}]

    t = time.perf_counter()
    cn_keys, _ = common_neighbour_ranking(kept, n_b, rng)
    cn_hits = np.isin(cn_keys, held_keys)
    h = int(cn_hits.sum())
    rows.append({**base, "method": METHODS[1], "listed": len(cn_keys), "seconds": time.perf_counter() - t,
                 **ranking_measures(cn_hits, n_pos, tail_rows=non_adjacent - len(cn_keys), tail_hits=n_pos - h)})
    rows.append({**base, "method": METHODS[2], "listed": non_adjacent,
                 **ranking_measures([], n_pos, tail_rows=non_adjacent, tail_hits=n_pos), "recall": 1.0})

    if case.one_to_one:
        f = np.full(len(case.names_a), -1, dtype=np.int64)
        ia, ib = pd.Index(case.names_a).get_indexer(case.truth.node_a), idx_b.get_indexer(case.truth.node_b)
        f[ia] = ib
        u, v = f[case.edges_a[:, 0]], f[case.edges_a[:, 1]]
        both = (u >= 0) & (v >= 0)
        image = pair_keys(u[both], v[both], n_b)
        image = image[~np.isin(image, kept_keys)]
        h = int(np.isin(image, held_keys).sum())
        # the list in random order: every row in the "tail"; recall is that of the whole list
        rows.append({**base, "method": METHODS[3], "listed": len(image),
                     **ranking_measures([], n_pos, tail_rows=len(image), tail_hits=h), "recall": h / n_pos})
    return rows


# --------------------------------------------------------------------------------------------
# Output
# --------------------------------------------------------------------------------------------


def provenance() -> str:
    """Where the figures come from: the command, the commit, the machine and its load."""
    import platform

    try:
        commit = subprocess.run(["git", "rev-parse", "--short", "HEAD"], capture_output=True, text=True,
                                check=True).stdout.strip()
        # only what the figures depend on: the package and this script (the checkout is shared)
        dirty = subprocess.run(["git", "status", "--porcelain", "--untracked-files=no", "--", "aligner",
                                "scripts/bench/bench_transfer.py"], capture_output=True, text=True,
                               check=True).stdout.strip()
        commit += " (with uncommitted changes to aligner/ or this script)" if dirty else ""
    except (OSError, subprocess.CalledProcessError):
        commit = "unknown"
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    return (f"Written by `python scripts/bench/bench_transfer.py {' '.join(sys.argv[1:])}` on commit {commit}; "
            f"{os.cpu_count()} cores, Python {platform.python_version()}, {platform.machine()}, load average "
            f"{load:.2f} at the start. Do not edit by hand: rerun the command.\n\n")


CASE_LABELS = {
    "powerlaw-5": "relabelled power law, {nodes_b:,} nodes, 5 % of edges moved",
    "powerlaw-15": "relabelled power law, {nodes_b:,} nodes, 15 % of edges moved",
    "evolved": "evolved duplication-divergence, {nodes_a:,} / {nodes_b:,} nodes, 5 % edge noise",
    "connectome": "connectome (adult 7 -> adult 8), {nodes_b:,} neurons, noisy prior",
}


def markdown(df: pd.DataFrame, seeds: int, share: float) -> str:
    agg = df.groupby(["case", "method"], sort=False).agg(
        nodes_a=("nodes_a", "first"), nodes_b=("nodes_b", "first"), edges_b=("edges_b", "mean"),
        held_out=("held_out", "mean"), listed=("listed", "mean"), p100=("p_at_100", "mean"),
        p1000=("p_at_1000", "mean"), recall=("recall", "mean"), aupr=("aupr", "mean"),
        aupr_min=("aupr", "min"), aupr_max=("aupr", "max"), nc=("nc", "mean")).reset_index()
    cn = agg[agg.method == METHODS[1]].set_index("case").aupr
    lines = [f"Held-out edges: {share * 100:g} % of B's edges removed before aligning; mean of {seeds} seed(s) "
             "(AUPR: min-max over seeds in brackets). Rows of the list: transferred A->B edges; pairs with at "
             "least one common neighbour; all non-adjacent pairs of the reduced B; edges of A whose true image "
             "is missing from the reduced B.", "",
             "| case | method | held-out edges | rows of the list | precision at 100 | precision at 1,000 | "
             "recall of the list | AUPR | AUPR / common neighbours |",
             "|---|---|---:|---:|---:|---:|---:|---:|---:|"]
    for case in agg.case.unique():
        part = agg[agg.case == case]
        first = part.iloc[0]
        label = CASE_LABELS[case].format(nodes_a=int(first.nodes_a), nodes_b=int(first.nodes_b))
        for r in part.itertuples():
            name = r.method + (f" (NC {r.nc:.3f})" if r.method == METHODS[0] else "")
            spread = f" ({r.aupr_min:.3f}-{r.aupr_max:.3f})" if seeds > 1 and r.method == METHODS[0] else ""
            lines.append(f"| {label if r.Index == part.index[0] else ''} | {name} | {r.held_out:,.0f} | "
                         f"{r.listed:,.0f} | {r.p100:.3f} | {r.p1000:.3f} | {r.recall:.3f} | {r.aupr:.4f}{spread} | "
                         f"{r.aupr / cn[case]:.2f} |")
    lines += ["", "How to read it: precision at k is the hits among the first k rows divided by k (a list shorter "
              "than k counts the missing rows as misses). AUPR is average precision: the sum over hits of the "
              "precision at their rank, divided by the held-out edges, so held-out edges never listed count as "
              "misses. Common neighbours: ties in a seeded random order; the non-adjacent pairs without a common "
              "neighbour follow in random order and enter precision at k and AUPR by their exact expectation "
              "(recall is that of the pairs with a common neighbour). Random: exact expectations (its AUPR is close "
              "to the share of held-out edges among the non-adjacent pairs). True matching (random order): the "
              "list transfer would make under the true one-to-one map, in random order (exact expectations); its "
              "precision is the share of held-out edges among the edges of A missing from the reduced B. The "
              "evolved pair's truth is not one-to-one, so it has no such row."]
    lines += ["", "Targets of issue 20:", ""]
    for case, text in (("powerlaw-5", "relabelled 10^4-node pair, 5 % noise"), ("connectome", "connectome pair")):
        if case not in cn.index:
            continue
        r = agg[(agg.case == case) & (agg.method == METHODS[0])].iloc[0]
        ratio = r.aupr / cn[case]
        if case == "powerlaw-5":
            lines.append(f"- {text}: precision at 1,000 {r.p1000:.3f} (target >= 0.8: "
                         f"{'met' if r.p1000 >= 0.8 else 'not met'}); AUPR {ratio:.1f} times the common-neighbour "
                         f"baseline's (target >= 3: {'met' if ratio >= 3 else 'not met'}).")
        else:
            lines.append(f"- {text}: AUPR {r.aupr:.4f} against {cn[case]:.4f} for common neighbours (target: above "
                         f"it: {'met' if ratio > 1 else 'not met'}).")
    return "\n".join(lines) + "\n"


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--cases", nargs="+", default=list(CASES), choices=CASES)
    ap.add_argument("--seeds", type=int, default=3, help="seeds 0 .. SEEDS-1 (instance, hold-out and tie order)")
    ap.add_argument("--n", type=int, default=10_000, help="nodes of the relabelled power-law pairs")
    ap.add_argument("--evolved-ancestors", type=int, default=8_000,
                    help="ancestral nodes of the evolved pair (each species grows to 1.25 times as many)")
    ap.add_argument("--hold-out", type=float, default=0.10, help="share of B's edges held out")
    ap.add_argument("--out", type=Path, default=Path("bench_out/transfer"))
    ap.add_argument("--markdown", type=Path, help="Markdown file to write (default OUT/transfer.md)")
    args = ap.parse_args()
    import aligner

    # the evolved pair can leave nodes without an edge; the run warns, which is expected here
    warnings.simplefilter("ignore", aligner.AlignerWarning)
    head = provenance()
    rows = []
    for case_name in args.cases:
        for seed in range(args.seeds):
            case = build_case(case_name, seed, args.n, args.evolved_ancestors)
            got = run_case(case, seed, args.hold_out)
            rows += got
            r = got[0]
            print(f"{case_name} seed {seed}: NC {r['nc']:.3f}, held out {r['held_out']}, transferred {r['listed']}, "
                  f"P@1000 {r['p_at_1000']:.3f}, AUPR {r['aupr']:.4f} (common neighbours {got[1]['aupr']:.4f}), "
                  f"{r['seconds']:.1f} s", file=sys.stderr)
    df = pd.DataFrame(rows)
    args.out.mkdir(parents=True, exist_ok=True)
    df.to_csv(args.out / "transfer.csv", index=False)
    text = head + markdown(df, args.seeds, args.hold_out)
    md = args.markdown or args.out / "transfer.md"
    md.parent.mkdir(parents=True, exist_ok=True)
    md.write_text(text)
    print(text)


if __name__ == "__main__":
    main()
