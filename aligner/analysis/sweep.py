"""Trade-off sweep over alpha: how many edges the wiring buys for how much prior weight.

One candidate set and one product graph serve every alpha: :func:`sweep` runs
:func:`aligner.pipeline.align` at the smallest alpha (which builds both) and then, for each larger
alpha in turn, re-solves the diffusion warm-started from the previous solution, re-rounds and
re-scores. The knee of the resulting curve is the point farthest from the chord between its
end points after scaling both axes to [0, 1], the "Kneedle" rule of Satopää, Albrecht, Irwin &
Raghavan (2011).
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from pathlib import Path
from typing import Callable, Sequence

import numpy as np
import pandas as pd

from aligner.checks import check_real
from aligner.io.inputs import as_network, as_pairs, as_prior, known_pairs
from aligner.pipeline import AlignmentResult, align
from aligner.core.diffusion import column_scale, diffuse, prior_vector
from aligner.errors import InvalidParameterError
from aligner.core.rounding import round_matching
from aligner.core.scoring import score_matching

__all__ = ["DEFAULT_ALPHAS", "SweepResult", "sweep", "knee_index", "plot_sweep", "KNEE_RULE", "SWEEP_COLUMNS"]

DEFAULT_ALPHAS = (0.0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 0.95)
KNEE_RULE = ("largest distance to the chord between the two end points of the curve, both axes "
             "scaled to [0, 1] (Kneedle, Satopää et al. 2011)")
SWEEP_COLUMNS = ("alpha", "conserved_edges", "ec", "s3", "prior_weight", "nc", "matched_pairs", "solver_steps",
                 "edge_touches", "residual_l1", "solve_seconds", "seconds")


@dataclass(frozen=True, eq=False)
class SweepResult:
    """What a sweep produced.

    Attributes
    ----------
    table : DataFrame
        One row per alpha, ascending, with the columns of :data:`SWEEP_COLUMNS`: conserved
        edges, EC, S3, ``prior_weight`` (sum of the prior similarity of the matched pairs), NC
        (NaN without a truth table), matched pairs, and the solve figures (pushes or
        iterations, edge touches, final 1-norm residual, diffusion seconds, seconds for the
        whole alpha: diffusion, rounding and scoring).
    knee : int or None
        Row of the knee (see :func:`knee_index`), None with fewer than three points or a
        straight curve.
    base : AlignmentResult
        The full run at the smallest alpha (its candidates and product graph were reused).
    setup_seconds : float
        Reading, candidates and product graph, paid once.
    """

    table: pd.DataFrame
    knee: int | None
    base: AlignmentResult
    setup_seconds: float

    @property
    def knee_alpha(self) -> float | None:
        return None if self.knee is None else float(self.table["alpha"].iloc[self.knee])


def knee_index(x: Sequence[float], y: Sequence[float]) -> int | None:
    """The knee of a curve given as points in order: the interior point farthest from the chord.

    Both coordinates are min-max scaled to [0, 1] first (a flat axis stays 0), then the
    distance of each point to the straight line through the first and the last point is
    |(p_n - p_1) x (p_i - p_1)| / |p_n - p_1| (Satopää et al. 2011, "Finding a 'kneedle' in a
    haystack", ICDCS workshops). None with fewer than three points, coinciding end points, or
    every distance below 1e-12.
    """
    x = np.asarray(x, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    if len(x) < 3:
        return None

    def scale(v):
        span = v.max() - v.min()
        return (v - v.min()) / span if span > 0 else np.zeros_like(v)

    px, py = scale(x), scale(y)
    dx, dy = px[-1] - px[0], py[-1] - py[0]
    length = np.hypot(dx, dy)
    if length == 0:
        return None
    dist = np.abs(dx * (py - py[0]) - dy * (px - px[0])) / length
    dist[[0, -1]] = -1.0
    best = int(np.argmax(dist))
    return best if dist[best] > 1e-12 else None


def _check_alphas(alphas) -> list[float]:
    vals = sorted({check_real(a, "alphas", low=0.0, high=1.0, closed="left") for a in alphas})
    if not vals:
        raise InvalidParameterError("The 'alphas' parameter of sweep must hold at least one value in [0, 1).")
    return vals


def sweep(
    network_a,
    network_b,
    prior,
    *,
    alphas: Sequence[float] = DEFAULT_ALPHAS,
    truth=None,
    top_k: int | None = 25,
    min_score: float = 0.0,
    score_kind: str = "similarity",
    solver: str = "push",
    tol: float = 1e-6,
    normalization: str = "restricted",
    rounding: str = "auto",
    delimiter: str | None = None,
    header: str = "auto",
    max_memory: float | None = None,
    warm_start: bool = True,
    progress: Callable[[float], None] | None = None,
) -> SweepResult:
    """Align at every alpha of ``alphas`` (sorted ascending, duplicates dropped) on one candidate
    set and one product graph. Parameters as in :func:`aligner.pipeline.align`; ``warm_start=False``
    starts each solve from zero (for comparison); ``progress(alpha)`` is called as each alpha
    starts. Returns a :class:`SweepResult`."""
    alphas = _check_alphas(alphas)
    say = progress or (lambda a: None)
    t0 = time.perf_counter()
    net_a = as_network(network_a, delimiter=delimiter, header=header, name="network_a")
    net_b = as_network(network_b, delimiter=delimiter, header=header, name="network_b")
    prior_t = as_prior(prior, net_a, net_b, score_kind, delimiter, header)
    truth_t = None if truth is None else known_pairs(
        as_pairs(truth, net_a, net_b, "truth table", delimiter, header), "truth table")
    say(alphas[0])
    base = align(net_a, net_b, prior_t, alpha=alphas[0], top_k=top_k, min_score=min_score, score_kind=score_kind,
                 solver=solver, tol=tol, normalization=normalization, rounding=rounding, truth=truth_t,
                 max_memory=max_memory)
    tm = base.summary["timings"]
    first_seconds = tm.get("diffusion", 0.0) + tm.get("rounding", 0.0) + tm.get("scoring", 0.0)
    setup = time.perf_counter() - t0 - first_seconds
    cand, prod = base.candidates, base.product
    truth_pairs = None if truth_t is None else truth_t.pairs
    h = prior_vector(cand.prior)
    scale = column_scale(prod, normalization, deg_a=net_a.degree, deg_b=net_b.degree, pairs=cand.pairs)

    def row(alpha, diff, match, scores, seconds):
        return {"alpha": alpha, "conserved_edges": scores.conserved_edges, "ec": scores.ec, "s3": scores.s3,
                "prior_weight": float(cand.prior[match.index].sum()),
                "nc": np.nan if scores.nc is None else scores.nc, "matched_pairs": scores.n_matched,
                "solver_steps": diff.steps, "edge_touches": diff.edge_touches, "residual_l1": diff.residual,
                "solve_seconds": diff.seconds, "seconds": seconds}

    rows = [row(alphas[0], base.diffusion, base.matching, base.scores, first_seconds)]
    x = base.diffusion.x
    for alpha in alphas[1:]:
        say(alpha)
        t1 = time.perf_counter()
        diff = diffuse(prod, h, scale, alpha=alpha, tol=tol, solver=solver, x0=x if warm_start else None)
        match = round_matching(cand, diff.x, method=rounding)
        matched = cand.pairs[match.index].astype(np.int64)
        scores, _ = score_matching(net_a.edges, net_b.edges, matched, net_a.n, net_b.n, truth=truth_pairs)
        rows.append(row(alpha, diff, match, scores, time.perf_counter() - t1))
        x = diff.x
    table = pd.DataFrame(rows, columns=list(SWEEP_COLUMNS))
    return SweepResult(table, knee_index(table["prior_weight"], table["conserved_edges"]), base, setup)


def plot_sweep(table: pd.DataFrame, knee: int | None, paths: Sequence[str | Path] = (), *, title: str | None = None):
    """Draw conserved edges against matched prior weight, one labelled point per alpha, the knee
    ringed; save to each of ``paths`` (format from the suffix) and return the figure.

    matplotlib is imported here, with the Agg backend, so the package never needs a display.
    """
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(6.4, 4.4), dpi=110)
    xs, ys = table["prior_weight"].to_numpy(), table["conserved_edges"].to_numpy()
    ax.plot(xs, ys, "-", color="#7a8ca3", lw=1.2, zorder=1)
    ax.scatter(xs, ys, s=28, color="#1f5f8b", zorder=2)
    for a, px, py in zip(table["alpha"], xs, ys):
        ax.annotate(f"α={a:g}", (px, py), textcoords="offset points", xytext=(5, -11), fontsize=7.5,
                    color="#333333")
    if knee is not None:
        ax.scatter([xs[knee]], [ys[knee]], s=190, facecolors="none", edgecolors="#d0542c", linewidths=2,
                   zorder=3, label=f"knee: α = {table['alpha'].iloc[knee]:g}")
        ax.plot([xs[0], xs[-1]], [ys[0], ys[-1]], ":", color="#d0542c", lw=1, zorder=0, label="chord")
        ax.legend(loc="best", fontsize=8, frameon=False)
    ax.set_xlabel("total prior similarity of the matched pairs")
    ax.set_ylabel("conserved edges")
    ax.set_title(title or "Wiring against prior across α", fontsize=10)
    ax.grid(alpha=0.25)
    fig.tight_layout()
    for p in paths:
        fig.savefig(p)
    plt.close(fig)
    return fig
