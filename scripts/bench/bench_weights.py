"""Weighted against unweighted runs, and the refinement's spread over its starts.

Instances:

* the adult C. elegans pair of tests/data (Witvliet et al. 2021, datasets 7 and 8; synapse
  counts as weights; names hidden, the names are the truth), with the class prior and with the
  noisy sequence-like prior, B's weights changed as ``aligner.datasets.instances.perturb_weights``
  does: unchanged, times 0.3, times 3, Poisson noise (seeds 0 .. ``--poisson-seeds`` - 1),
  weakest 20 % of edges dropped;
* generated weighted pairs: a sparse power-law graph (2 links per new node) and a
  duplication-divergence graph (2,000 nodes), each relabelled with 30 % of the edges moved, near
  decoys scored like the true partner (the prior only names candidates); weights log-normal in
  A, a kept edge's weight in B is its weight in A times log-normal noise (sigma 0.3) times 3
  (another scale), a moved edge gets a fresh draw: weights that carry signal.

Table 1 (``models``): NC, conserved edges and NC up to interchangeable nodes of unweighted runs,
the earlier weight model (``product``: w_A * w_B) and the default one (``agreement``), each with
one refinement start and with the default starts.

Table 2 (``starts``): the spread of the refinement's result over reasonable starts: the
diffusion at alpha 0.5, 0.7, 0.9, 0.95, unweighted and weighted (agreement), one start each, then
the same runs with the default starts; min and max over the alphas of conserved edges and of NC,
for each setting.

    python scripts/bench/bench_weights.py --poisson-seeds 5 --markdown docs/weights_benchmark.md

Writes OUT/bench_weights.csv (every run) and the Markdown tables (OUT defaults to bench_out/).
"""

from __future__ import annotations

import argparse
import platform
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
from tables import finish

import aligner
from aligner.datasets.instances import hidden_connectome, noisy_relabelled, perturb_weights, read_connectome

DATA = Path(__file__).resolve().parents[2] / "tests" / "data"
ALPHAS = (0.5, 0.7, 0.9, 0.95)


def connectome_instances(poisson_seeds: int):
    """(name, edges A, edges B, prior, truth) of the adult pair under every change of B's weights."""
    a, b, classes = read_connectome(DATA)
    changes = [("none", 0), ("scale-0.3", 0), ("scale-3", 0)] + [("poisson", s) for s in range(poisson_seeds)]
    changes.append(("drop-weakest-20%", 0))
    for task in ("class", "noisy"):
        for change, seed in changes:
            name = f"adult {task}, B {change}" + (f" (seed {seed})" if change == "poisson" else "")
            yield (name, *hidden_connectome(a, perturb_weights(b, change, seed=seed), classes, task, seed=0,
                                            weighted=True))


GENERATED = (("power-law", "powerlaw", {"m": 2}), ("duplication-divergence", "dupdiv", None))


def generated_instances(seeds: int, n: int = 2000):
    """Generated pairs whose weights carry signal (see the module docstring)."""
    for (label, graph, options), seed in ((g, s) for g in GENERATED for s in range(seeds)):
        sp = noisy_relabelled(n, graph=graph, graph_options=options, noise=0.3, decoys=10, decoy_mode="near",
                              true_score=(0.5, 0.25), decoy_score=(0.5, 0.25), seed=seed)
        rng = np.random.default_rng(100 + seed)
        wa = rng.lognormal(0.0, 1.0, len(sp.edges_a))
        to_a = np.full(sp.n_b, -1)
        to_a[sp.truth[:, 1]] = sp.truth[:, 0]
        ua, va = to_a[sp.edges_b[:, 0]], to_a[sp.edges_b[:, 1]]
        key_a = {(int(min(u, v)), int(max(u, v))): k for k, (u, v) in enumerate(sp.edges_a)}
        kept = np.array([key_a.get((int(min(u, v)), int(max(u, v))), -1) for u, v in zip(ua, va)])
        wb = np.where(kept >= 0, wa[np.maximum(kept, 0)] * rng.lognormal(0.0, 0.3, len(kept)),
                      rng.lognormal(0.0, 1.0, len(kept))) * 3.0
        ea = pd.DataFrame({"u": sp.edges_a[:, 0], "v": sp.edges_a[:, 1], "w": wa}).astype({"u": str, "v": str})
        eb = pd.DataFrame({"u": sp.edges_b[:, 0], "v": sp.edges_b[:, 1], "w": wb}).astype({"u": str, "v": str})
        prior = pd.DataFrame({"a": sp.prior_pairs[:, 0].astype(str), "b": sp.prior_pairs[:, 1].astype(str),
                              "s": sp.prior_scores})
        truth = pd.DataFrame({"a": sp.truth[:, 0].astype(str), "b": sp.truth[:, 1].astype(str)})
        yield f"generated {label}, {n:,} nodes (seed {seed})", ea, eb, prior, truth


def run(ea, eb, prior, truth, *, weighted: bool, model: str = "agreement", **kw) -> dict:
    cols = ["u", "v", "w"] if weighted else ["u", "v"]
    t = time.perf_counter()
    res = aligner.align(ea[cols], eb[cols], prior, truth=truth, top_k=None, weighted=weighted,
                        weight_model=model, **kw)
    return {"nc": res.scores.nc, "conserved": res.scores.conserved_edges,
            "nc_up": res.summary["scores"].get("nc_up_to_ambiguity"), "seconds": time.perf_counter() - t}


def measure(instances) -> list[dict]:
    rows = []
    for name, ea, eb, prior, truth in instances:
        for label, weighted, model in (("unweighted", False, "agreement"), ("product", True, "product"),
                                       ("agreement", True, "agreement")):
            for starts in (1, None):
                r = run(ea, eb, prior, truth, weighted=weighted, model=model, refine_starts=starts)
                rows.append({"table": "models", "instance": name, "setting": label, "alpha": 0.9,
                             "starts": starts or "default", **r})
        for weighted in (False, True):
            for alpha in ALPHAS:
                for starts in (1, None):
                    r = run(ea, eb, prior, truth, weighted=weighted, alpha=alpha, refine_starts=starts)
                    rows.append({"table": "starts", "instance": name,
                                 "setting": "agreement" if weighted else "unweighted", "alpha": alpha,
                                 "starts": starts or "default", **r})
        print(f"  {name}: done", file=sys.stderr, flush=True)
    return rows


def markdown(rows: list[dict], command: str) -> str:
    df = pd.DataFrame(rows)
    lines = [f"Measured on {platform.machine()} ({platform.system()}), {time.strftime('%Y-%m-%d')}, with", "",
             f"    {command}", "",
             "## Weight models (alpha 0.9)", "",
             "NC / conserved edges; one refinement start, then the default starts. `product` is the "
             "earlier model (w_A * w_B, the walk dividing by strength), `agreement` the default "
             "(docs/method.md, \"Edge weights\").", "",
             "| instance | unweighted, 1 start | product, 1 start | agreement, 1 start | unweighted | product "
             "| agreement | agreement − unweighted (NC, conserved) | NC up to interchangeable nodes: unweighted "
             "/ product / agreement |", "|---|---|---|---|---|---|---|---|---|"]
    models = df[df.table == "models"]
    for name, g in models.groupby("instance", sort=False):
        cell = {}
        for r in g.itertuples():
            cell[(r.setting, str(r.starts))] = r
        row = [name]
        for starts in ("1", "default"):
            for setting in ("unweighted", "product", "agreement"):
                r = cell[(setting, starts)]
                row.append(f"{r.nc:.3f} / {r.conserved:,}")
        u, w = cell[("unweighted", "default")], cell[("agreement", "default")]
        row.append(f"{w.nc - u.nc:+.3f}, {(w.conserved - u.conserved) / max(u.conserved, 1):+.2%}")
        row.append(" / ".join(f"{cell[(s, 'default')].nc_up:.3f}" for s in ("unweighted", "product", "agreement")))
        lines.append("| " + " | ".join(row) + " |")
    lines += ["", "## Spread over starts", "",
              "Reasonable starts: the diffusion at alpha 0.5, 0.7, 0.9, 0.95, unweighted and weighted "
              "(agreement; its refinement sums the agreement of conserved edge pairs, so the two settings "
              "are shown apart). Min - max over the four alphas of conserved edges and NC, with one "
              "refinement start and with the default starts.", "",
              "| instance | setting | conserved, 1 start | conserved, default starts | NC, 1 start | "
              "NC, default starts |", "|---|---|---|---|---|---|"]
    starts = df[df.table == "starts"]
    for (name, setting), g in starts.groupby(["instance", "setting"], sort=False):
        one, many = g[g.starts.astype(str) == "1"], g[g.starts.astype(str) == "default"]
        lines.append(f"| {name} | {setting} | {one.conserved.min():,} - {one.conserved.max():,} | "
                     f"{many.conserved.min():,} - {many.conserved.max():,} | {one.nc.min():.3f} - {one.nc.max():.3f} | "
                     f"{many.nc.min():.3f} - {many.nc.max():.3f} |")
    return "\n".join(lines) + "\n"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--poisson-seeds", type=int, default=3, help="Poisson-noise draws of B's weights")
    ap.add_argument("--generated", type=int, default=2, help="generated weighted pairs (seeds)")
    ap.add_argument("--out", default="bench_out", help="folder of the CSV (and of the Markdown by default)")
    ap.add_argument("--markdown", help="Markdown file to write (default OUT/bench_weights.md)")
    args = ap.parse_args(argv)
    instances = list(connectome_instances(args.poisson_seeds)) + list(generated_instances(args.generated))
    rows = measure(instances)
    return finish(rows, "bench_weights", argv, markdown, args.out, args.markdown)


if __name__ == "__main__":
    sys.exit(main())
