"""Benchmark ``aligner update`` against a full run on the changed inputs.

A generated pair (power-law graph ``powerlaw_graph(n, m=4, p=0.3)``, relabelled copy with 5 % of
the edges moved, true partner + 10 uniform decoys; seeded; ``--graph dupdiv``, ``--decoys near``
and ``--noise`` draw other families, ``--seeds 0.05`` gives every 20th true pair as a seed pair)
is aligned and its outputs written (with the run state). Each change is then applied to the
input files and both ``aligner.analysis.update.update`` (from the state) and ``aligner.align`` (from zero) run on the
new inputs, in this process, each timed whole (reading included, writing excluded), ``--repeats``
times alternately, the best of each kept (the first run of anything in a process also pays for
memory the system has not handed out yet, which would otherwise fall on whichever runs first):

- ``rewire-0.1%``: 0.1 % of the edges of B get a new random end (and the same change given as
  the edges added and removed, ``--add-b`` / ``--remove-b``, in place of the whole new file);
- ``edges-1%+nodes-1%``: 1 % of the edges of B rewired and 1 % new nodes of A, each with 4 edges
  and a prior row;
- ``prior-1%``: the prior rows of 1 % of the nodes of A rescored (times 0.5 to 1.5);
- the last two again, given as diffs (``--add-a``, ``--add-b``, ``--remove-b``, ``--add-prior``:
  the new edges and rows only), as a feed of daily changes would come;
- ``prior-1% as a diff, the next day``: the rows of 1 % more nodes rescored, as a diff to the
  update of the case before (whose prior no file holds: its state keeps the rows).

Recorded per change: seconds of the update and of the full run and their ratio, the update's
stage seconds, how it refined (``update.refine`` of the summary: the local search continued
from the previous matching, with the candidates it marked, or as ``align``), pushes of each,
whether the matchings are the same, the largest score difference against the sum of the two
certified bounds, and the update's mode.

    python scripts/bench/bench_update.py --sizes 100000 --markdown docs/update_benchmark.md

Writes OUT/bench_update.csv and the Markdown table to OUT/bench_update.md or ``--markdown FILE``
(OUT defaults to bench_out/, git-ignored).
"""

from __future__ import annotations

import argparse
import platform
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd
from tables import finish, memory_pages

#: the machine's memory settings when the script started (set by main)
MEMORY = ""


def changes(a: pd.DataFrame, b: pd.DataFrame, prior: pd.DataFrame, rng):
    nodes_b = b.iloc[:, 0].unique()
    nodes_a = a.iloc[:, 0].unique()

    def rewire(frame, share):
        f = frame.copy()
        rows = rng.choice(len(f), max(1, int(share * len(f))), replace=False)
        f.iloc[rows, 1] = rng.choice(nodes_b, len(rows))
        return f

    b1 = rewire(b, 0.001)
    yield "rewire-0.1%", {"network_b": b1}
    yield "rewire-0.1% as a diff", {"network_b": b1, "diff": True}
    k = max(1, len(nodes_a) // 100)
    new = [f"added{i:06d}" for i in range(k)]
    a2 = pd.concat([a, pd.DataFrame({a.columns[0]: np.repeat(new, 4), a.columns[1]: rng.choice(nodes_a, 4 * k)})],
                   ignore_index=True)
    p2 = pd.concat([prior, pd.DataFrame({prior.columns[0]: new, prior.columns[1]: rng.choice(nodes_b, k),
                                         prior.columns[2]: rng.random(k) + 0.5})], ignore_index=True)
    b2 = rewire(b, 0.01)
    yield "edges-1%+nodes-1%", {"network_a": a2, "network_b": b2, "prior": p2}
    p3 = prior.copy()
    asked = rng.choice(nodes_a, k, replace=False)
    rows = np.flatnonzero(p3.iloc[:, 0].isin(asked).to_numpy())
    p3.iloc[rows, 2] = p3.iloc[rows, 2] * rng.uniform(0.5, 1.5, len(rows))
    yield "prior-1%", {"prior": p3}
    # the same two changes given as diffs (the new edges and prior rows, the edges of B removed),
    # as a daily feed of changes would come: drawn above, so the cases before are unchanged
    yield "edges-1%+nodes-1% as diffs", {"network_a": a2, "network_b": b2, "prior": p2,
                                          "diff": {"add_a": a2.iloc[len(a):], "add_prior": p2.iloc[len(prior):]}}
    yield "prior-1% as a diff", {"prior": p3, "diff": {"add_prior": p3.iloc[rows]}}
    # the next day's feed: 1 % more nodes' rows rescored, updating the update above, whose prior no
    # file holds (its state keeps the rows)
    p4 = p3.copy()
    asked = rng.choice(nodes_a, k, replace=False)
    rows = np.flatnonzero(p4.iloc[:, 0].isin(asked).to_numpy())
    p4.iloc[rows, 2] = p4.iloc[rows, 2] * rng.uniform(0.5, 1.5, len(rows))
    yield "prior-1% as a diff, the next day", {"prior": p4, "diff": {"add_prior": p4.iloc[rows]},
                                                "after": "prior-1% as a diff"}


def run(n: int, seed: int, repeats: int = 2, graph: str = "powerlaw", decoy_mode: str = "uniform",
        noise: float = 0.05, seeds: float = 0.0) -> list[dict]:
    import aligner
    from aligner.analysis.update import update
    from aligner.datasets.instances import as_frames, noisy_relabelled
    from aligner.io.outputs import write_outputs

    pair = noisy_relabelled(n, seed=seed, noise=noise, decoys=10, graph=graph, decoy_mode=decoy_mode)
    a, b, prior, truth = as_frames(pair)
    work = Path(tempfile.mkdtemp(prefix="bench_update_"))
    files = {"network_a": work / "a.tsv", "network_b": work / "b.tsv", "prior": work / "p.tsv"}
    for key, frame in zip(files, (a, b, prior)):
        frame.to_csv(files[key], sep="\t", index=False)
    opts, instance = {}, f"{graph}, {decoy_mode} decoys, noise {noise:g}"
    if seeds > 0:  # true pairs as seeds, on nodes of degree 3 or more (which the changes leave in the networks)
        degree = [pd.concat([f.iloc[:, 0], f.iloc[:, 1]]).value_counts() for f in (a, b)]
        sure = truth[truth.iloc[:, 0].map(degree[0]).fillna(0).ge(3).to_numpy()
                     & truth.iloc[:, 1].map(degree[1]).fillna(0).ge(3).to_numpy()]
        sure = sure.iloc[::max(1, round(1 / seeds))]
        sure.to_csv(work / "s.tsv", sep="\t", index=False)
        opts["seeds"] = work / "s.tsv"
        instance += f", {len(sure)} seed pairs"
    t0 = time.perf_counter()
    first = aligner.align(files["network_a"], files["network_b"], files["prior"], **opts)
    first_s = time.perf_counter() - t0
    write_outputs(work / "run", first)
    update(work / "run")  # untimed: the first update of a process also loads its kernels and memory
    rows = []
    rng = np.random.default_rng(seed)
    cases = list(changes(a, b, prior, rng))
    wanted = {changed.get("after") for _, changed in cases}  # updates a later case starts from
    for name, changed in cases:
        diff = changed.pop("diff", False)
        base = work / "run" if changed.get("after") is None else work / f"after-{changed.pop('after')}"
        new = dict(files)
        for key, frame in changed.items():
            new[key] = work / f"{name}-{key}.tsv"
            frame.to_csv(new[key], sep="\t", index=False)
        given = {k: v for k, v in new.items() if k in changed}
        if diff:  # diffs in place of the whole new files: B's edges added and removed, and the
            parts = dict(diff) if isinstance(diff, dict) else {}  # rows added to A and to the prior
            if "network_b" in changed:
                parts["add_b"], parts["remove_b"] = _edge_diff(b, changed["network_b"])
            given = {}
            for key, frame in parts.items():
                given[key] = work / f"{name}-{key}.tsv"
                frame.to_csv(given[key], sep="\t", index=False)
        upd_s = ref_s = np.inf
        for _ in range(repeats):  # alternately, best of each: the first of any run in a process
            t0 = time.perf_counter()  # pays for memory the system has not handed out yet
            upd = update(base, **given)
            upd_s = min(upd_s, time.perf_counter() - t0)
            t0 = time.perf_counter()
            ref = aligner.align(new["network_a"], new["network_b"], new["prior"], **opts)
            ref_s = min(ref_s, time.perf_counter() - t0)
        if name in wanted:
            write_outputs(work / f"after-{name}", upd)
        same = set(map(tuple, _named(upd))) == set(map(tuple, _named(ref)))
        gap = float(np.max(np.abs(upd.diffusion.x - ref.diffusion.x))) if upd.candidates.m == ref.candidates.m else None
        u = upd.summary["update"]
        t = upd.summary["timings"]
        rows.append({"nodes": n, "instance": instance, "change": name, "mode": u["mode"], "update_s": round(upd_s, 3),
                     "full_s": round(ref_s, 3), "ratio": round(upd_s / ref_s, 3), "first_run_s": round(first_s, 3),
                     "read_s": t.get("read"), "product_s": t.get("product"), "diffusion_s": t.get("diffusion"),
                     "rounding_s": t.get("rounding"), "refine_s": t.get("refine"), "scoring_s": t.get("scoring"), "candidates_s": t.get("candidates"),
                     "carry_s": u["carry_seconds"], "pushes": u["pushes"], "full_pushes": ref.diffusion.steps,
                     "refine_mode": (u["refine"] or {}).get("mode"),
                     "refine_marked": (u["refine"] or {}).get("candidates_marked"),
                     "same_matching": same, "matches_changed": u["matches_changed"],
                     "max_score_gap": gap, "bounds": upd.diffusion.error_bound + ref.diffusion.error_bound})
        print(rows[-1], flush=True)
    return rows


def _edge_diff(old: pd.DataFrame, new: pd.DataFrame) -> tuple[pd.DataFrame, pd.DataFrame]:
    """The undirected edges ``new`` has and ``old`` lacks, and those ``old`` has and ``new`` lacks
    (self-loops left out, as the readers drop them)."""
    def edges(frame):
        u, v = frame.iloc[:, 0].astype(str).to_numpy(), frame.iloc[:, 1].astype(str).to_numpy()
        lo, hi = np.where(u < v, u, v), np.where(u < v, v, u)
        return {(x, y) for x, y in zip(lo, hi) if x != y}

    e_old, e_new = edges(old), edges(new)
    cols = ["node_a", "node_b"]
    return (pd.DataFrame(sorted(e_new - e_old), columns=cols), pd.DataFrame(sorted(e_old - e_new), columns=cols))


def _named(res):
    c = res.candidates.pairs[res.matching.index]
    return np.stack([res.network_a.names[c[:, 0]], res.network_b.names[c[:, 1]]], axis=1)


def markdown(rows: list[dict], command: str) -> str:
    lines = [f"`{command}` on {platform.machine()} / Python {platform.python_version()}; seconds in this process, "
             "reading included, writing excluded, the best of the runs of each (alternately); the stage seconds are "
             f"the last update's. At the start: {MEMORY or memory_pages()}.", "",
             "| nodes | change | mode | update s | full run s | ratio | update: read / product / diffusion / rounding / "
             "refine / scoring / carry s | refinement (candidates marked) | pushes (update / full) | same matching "
             "| matches changed | max score gap (bounds) |",
             "|---:|---|---|---:|---:|---:|---|---|---:|---|---:|---|"]
    for r in rows:
        stages = " / ".join(f"{r[k]}" for k in ("read_s", "product_s", "diffusion_s", "rounding_s", "refine_s",
                                                "scoring_s", "carry_s"))
        gap = "n/a" if r["max_score_gap"] is None else f"{r['max_score_gap']:.1e} ({r['bounds']:.1e})"
        refine = r["refine_mode"] or "n/a"
        if r["refine_marked"] is not None:
            refine += f" ({r['refine_marked']:,})"
        lines.append(f"| {r['nodes']:,} | {r['change']} | {r['mode']} | {r['update_s']} | {r['full_s']} | "
                     f"{r['ratio']:.0%} | {stages} | {refine} | {r['pushes']:,} / {r['full_pushes']:,} | "
                     f"{'yes' if r['same_matching'] else 'no'} | {r['matches_changed']:,} | {gap} |")
    return "\n".join(lines) + "\n"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="100000")
    ap.add_argument("--seed", type=int, default=5)
    ap.add_argument("--repeats", type=int, default=2, help="runs of each, alternately; the best is kept")
    ap.add_argument("--out", default="bench_out")
    ap.add_argument("--markdown", default=None)
    ap.add_argument("--graph", choices=("powerlaw", "dupdiv"), default="powerlaw",
                    help="base graph model (aligner.datasets.instances.GRAPHS)")
    ap.add_argument("--decoys", choices=("uniform", "near"), default="uniform",
                    help="the prior's 10 decoys per node: uniform over B, or near the true partner")
    ap.add_argument("--noise", type=float, default=0.05, help="share of B's edges moved against A")
    ap.add_argument("--seeds", type=float, default=0.0,
                    help="share of the true pairs given as seed pairs (on nodes of degree 3 or more)")
    args = ap.parse_args(argv)
    global MEMORY
    MEMORY = memory_pages()
    rows = [r for n in (int(s) for s in args.sizes.split(","))
            for r in run(n, args.seed, args.repeats, args.graph, args.decoys, args.noise, args.seeds)]
    return finish(rows, "bench_update", argv, markdown, args.out, args.markdown)


if __name__ == "__main__":
    sys.exit(main())
