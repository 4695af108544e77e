"""Trade-off sweep over alpha: how many edges the wiring buys for how much prior weight.

One prepared problem (candidates and product graph) serves every alpha: :func:`sweep` prepares
it once (:func:`aligner.pipeline.prepare`) and runs the same stages as :func:`aligner.align`
(:func:`aligner.pipeline.run_stages`: diffusion, rounding, refinement, scoring) at each alpha in
ascending order, warm-starting each diffusion from the previous solution. So every row is what
``align`` returns at that alpha with the same options; warm starts move x only within the
solver's certified bound. The knee of the resulting curve is the point farthest from the chord
between its end points after scaling both axes to [0, 1], the "Kneedle" rule of Satopää,
Albrecht, Irwin & Raghavan (2011).
"""

from __future__ import annotations

import numbers
import time
from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any, Callable, Sequence

import numpy as np
import pandas as pd

from aligner.checks import check_real, warn
from aligner.config import AlignConfig, from_options, with_options
from aligner.errors import InvalidParameterError
from aligner.pipeline import AlignmentResult, Clock, Problem, prepare, run_stages

__all__ = ["DEFAULT_ALPHAS", "SweepResult", "sweep", "knee_index", "KNEE_RULE", "SWEEP_COLUMNS"]

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
        edges, EC, S3, ``prior_weight`` (sum of the prior similarity of the matched pairs; inf,
        with a warning, when it passes the largest float), NC
        (NaN without a truth table), matched pairs, and the solve figures (pushes or
        iterations, edge touches, final 1-norm residual, diffusion seconds, seconds for the
        whole alpha: diffusion, rounding, refinement and scoring).
    knee : int or None
        Row of the knee (see :func:`knee_index`), None with fewer than three distinct points or
        points on a straight line.
    results : list of AlignmentResult
        The full result at each alpha, in the order of ``table``.
    problem : Problem
        The prepared problem every alpha was solved on.
    setup_seconds : float
        Reading, candidates and product graph, paid once.
    """

    table: pd.DataFrame
    knee: int | None
    results: list[AlignmentResult]
    problem: Problem
    setup_seconds: float

    @property
    def knee_alpha(self) -> float | None:
        return None if self.knee is None else float(self.table["alpha"].iloc[self.knee])


def knee_index(x: Sequence[float], y: Sequence[float]) -> int | None:
    """The knee of a curve given as points in order: the interior point farthest from the chord.

    Both coordinates are min-max scaled to [0, 1] first (a flat axis stays 0), then the
    distance of each point to the straight line through the first and the last point is
    |(p_n - p_1) x (p_i - p_1)| / |p_n - p_1| (Satopää et al. 2011, "Finding a 'kneedle' in a
    haystack", ICDCS workshops). None with fewer than three points, coinciding end points, every
    distance below 1e-12, or a coordinate that is not finite (a prior weight past the largest float:
    the curve has no known extent to scale).
    """
    x = np.asarray(x, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    if len(x) < 3 or not (np.isfinite(x).all() and np.isfinite(y).all()):
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
    if isinstance(alphas, np.ndarray) and alphas.ndim == 0:
        alphas = alphas.item()
    if isinstance(alphas, numbers.Real):  # one alpha
        alphas = [alphas]
    if isinstance(alphas, (str, bytes)) or not isinstance(alphas, Iterable):
        raise InvalidParameterError(f"alphas must be numbers in [0, 1), such as [0.5, 0.9]; got {alphas!r}",
                                    param="alphas")
    vals = sorted({check_real(a, "alphas", low=0.0, high=1.0, closed="left") for a in alphas})
    if not vals:
        raise InvalidParameterError("alphas must hold at least one value in [0, 1); got none", param="alphas")
    return vals


def _prior_weight(res: AlignmentResult) -> float:
    """The sum of the prior scores of the matched pairs: inf when it passes the largest float (scores
    near 1e308; the diffusion divides such a prior by its largest score, so the alignment is sound)."""
    with np.errstate(over="ignore"):
        return float(res.candidates.prior[res.matching.index].sum())


def _warn_infinite_weights(table: pd.DataFrame) -> None:
    """Say which rows' prior weight passed the largest float, what the table holds there, and what to do."""
    over = table.loc[~np.isfinite(table["prior_weight"].to_numpy(dtype=np.float64)), "alpha"]
    if len(over):
        where = "every alpha" if len(over) == len(table) else "alpha " + ", ".join(f"{a:g}" for a in over)
        warn(f"the prior scores of the matched pairs sum past the largest float ({np.finfo(np.float64).max:.4g}) "
             f"at {where}: prior_weight is given as inf there and the sweep has no knee (the alignments are not "
             "affected: the diffusion divides such a prior by its largest score); divide the prior's scores by a "
             "constant, such as their largest, for finite weights")


def _row(res: AlignmentResult, seconds: float) -> dict:
    sc, diff = res.scores, res.diffusion
    return {"alpha": res.config.alpha, "conserved_edges": sc.conserved_edges, "ec": sc.ec, "s3": sc.s3,
            "prior_weight": _prior_weight(res),
            "nc": np.nan if sc.nc is None else sc.nc, "matched_pairs": sc.n_matched,
            "solver_steps": diff.steps, "edge_touches": diff.edge_touches, "residual_l1": diff.residual,
            "solve_seconds": diff.seconds, "seconds": seconds}


@with_options(AlignConfig)
def sweep(network_a, network_b, prior=None, *, alphas: Sequence[float] = DEFAULT_ALPHAS, seeds=None, truth=None,
          config: AlignConfig | None = None, warm_start: bool = True,
          progress: Callable[[float], None] | None = None, **options: Any) -> SweepResult:
    """Align at every alpha of ``alphas`` (sorted ascending, duplicates dropped) on one prepared problem.

    Inputs and options as for :func:`aligner.align` (its ``alpha`` is replaced by each value of
    ``alphas``); every row equals ``align`` at that alpha with the same options, refinement
    included. ``warm_start=False`` starts each solve from zero (for comparison);
    ``progress(alpha)`` is called as each alpha starts. Returns a :class:`SweepResult`.
    """
    alphas = _check_alphas(alphas)
    cfg = from_options(AlignConfig, config, options)
    say = progress or (lambda a: None)
    clock = Clock()
    problem = prepare(network_a, network_b, prior, seeds=seeds, truth=truth, config=cfg.replace(alpha=alphas[0]),
                      clock=clock)
    setup = sum(clock.timings.values())
    results, rows, x = [], [], None
    for alpha in alphas:
        say(alpha)
        t0 = time.perf_counter()
        res = run_stages(problem.with_options(alpha=alpha), Clock(), x0=x if warm_start else None)
        rows.append(_row(res, time.perf_counter() - t0))
        results.append(res)
        x = res.diffusion.x
    table = pd.DataFrame(rows, columns=list(SWEEP_COLUMNS))
    _warn_infinite_weights(table)
    return SweepResult(table, knee_index(table["prior_weight"], table["conserved_edges"]), results, problem, setup)
