r"""Overlap-aware refinement of a matching: more conserved edges at little cost in weight.

**Objective.** For a matching M of candidate pairs, with 1_M its indicator vector,

.. math:: F(M) = \beta\, \tilde w^\top 1_M + \tfrac12\, 1_M^\top S\, 1_M,
          \qquad \tilde w = w / \operatorname{mean}\{w_k : w_k > 0\},

the second term being C(M), the conserved edges: (i, j) of A with (f(i), f(j)) an edge of B,
counted over pairs of candidates only. Dividing w by its mean makes beta comparable across
instances: the diffusion scores sum to about 1, so their raw size is about 1/m, while their
maximum is set by a few hub pairs.

**Frank–Wolfe** [1]_. F is a quadratic over the matching polytope (convex hull of matchings
of candidate pairs, which is integral since the graph is bipartite). At a point x of it the
gradient is ``beta * w~ + S x``; for x = 1_M that is ``beta * w~ + g`` with g_k the number
of product-graph neighbours of pair k that are matched. The linear problem over the
polytope is a maximum-weight assignment on the candidates
(:func:`aligner.core.rounding.round_matching`), whose answer q is a matching.
``step="line"`` moves to x + gamma (1_q - x) with the exact maximiser gamma of the quadratic
on [0, 1] (gamma = 1 where it is convex along the direction), as in [2]_; ``step="unit"``
takes gamma = 1 and stops when F(q) <= F(x). Either way each q is scored by F and the best
matching seen is kept, so F of the result never falls. A round ends at a zero gap (x is
stationary), after ``patience`` iterations without a better q, or at ``max_iter``.

The assignment sees the gradient rounded to 36 significant bits (relative 1.5e-11), so that
near-ties left by rounding errors become exact ties (see :func:`_snap`).

**Local search.** Then, with g = S 1_M kept up to date, first-improvement sweeps over the
candidates make every move that raises F, of two kinds. *2-exchange*: for a candidate
p = (i, j') not in M, with k = (i, i') and l = (j, j') the pairs of M at i and j' (either
may be absent), replace k, l by p and, when it is a candidate, q = (j, i'): swaps of two
partners, moves to a free partner, additions. *3-rotation*: with k, l as above and
r = (h, h') in M, replace k, l, r by (i, j'), (j, h'), (h, i') when all three are
candidates. For removed pairs R and added pairs D the change of C is

.. math:: \Delta C = \textstyle\sum_D g - \sum_R g + \sum_{\{r, r'\} \subset R} S_{rr'}
          + \sum_{\{d, d'\} \subset D} S_{dd'} - \sum_{r \in R, d \in D} S_{rd},

where S_rd = 0 when r and d share a node, so a 2-exchange needs one look-up of S and a
rotation nine. Sweeps run until one makes no move (or ``local_sweeps``).

**Cost.** A Frank–Wolfe iteration is one sparse product (S 1_q, over the product-graph rows
of the pairs of q only, since S is symmetric), one assignment on the m candidates and O(m)
vector work; no m x m or n1 x n2 object is formed (except inside the dense assignment
solver that ``method="auto"`` picks for small inputs). A local search sweep costs
O(m log d) for 2-exchanges and O(m c log d) with rotations (c: candidates per node, d:
largest candidate or product degree), plus O(product degree) per move. Memory O(m).

The measured effect of each part and of beta, and the running times, are produced by
``scripts/bench/bench_refine.py``.

References
----------
.. [1] M. Frank, P. Wolfe, "An algorithm for quadratic programming", Naval Research
   Logistics Quarterly 3 (1956) 95-110. doi:10.1002/nav.3800030109
.. [2] J. T. Vogelstein et al., "Fast approximate quadratic programming for graph
   matching", PLoS ONE 10 (2015) e0121002. doi:10.1371/journal.pone.0121002
"""

from __future__ import annotations

import dataclasses
import time
from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np
import numpy.typing as npt

from aligner.kernels.refine import _local_search, _matched_neighbours, _max_entry, mark_changes
from aligner.kernels.utils import stable_order
from aligner.checks import bad_parameter, check_choice, check_int, check_real
from aligner.config import AlignConfig, specs
from aligner.core.candidates import CandidateSet
from aligner.errors import InvalidParameterError
from aligner.core.product import ProductGraph
from aligner.core.rounding import METHODS, round_matching

__all__ = ["RefineResult", "refine_matching", "refine_from_starts", "continue_local_search", "perturbed_scores",
           "held_weight", "start_record",
           "refine_objective", "normalise_weights", "matched_counts",
           "DEFAULT_BETA", "DEFAULT_MAX_ITER", "DEFAULT_PATIENCE", "STEPS"]

#: Default weight of the normalised matched weight against one conserved edge (the ``beta``
#: of :class:`aligner.config.AlignConfig`). The weights are divided by their mean, so a pair
#: of mean weight counts beta conserved edges: the default, a fraction of one, is meant to
#: break ties and plateaus of the conserved-edge count without outvoting the wiring.
#: ``scripts/bench/bench_refine.py`` measures other values against it.
DEFAULT_BETA: float = specs(AlignConfig)["beta"][0]
#: Default cap on Frank–Wolfe iterations over all rounds, each one sparse product and one
#: assignment (the ``refine_iter`` of :class:`aligner.config.AlignConfig`). The stall rule is
#: meant to end the run first; the cap bounds the worst case.
DEFAULT_MAX_ITER: int = specs(AlignConfig)["refine_iter"][0]
#: Iterations without a better matching after which a Frank–Wolfe round ends.
DEFAULT_PATIENCE = 3
STEPS = ("line", "unit")
#: Relative tolerance of "F rises" (and of a zero Frank–Wolfe gap).
RISE_TOL = 1e-9


@dataclass(frozen=True)
class RefineResult:
    """A refined matching and the figures of the run.

    Attributes
    ----------
    index : ndarray of int64
        Candidate indices of the final matching, sorted (so rows are sorted by node of A).
    iterations : int
        Frank–Wolfe iterations made (assignments solved), over all rounds.
    objective : list of float
        F(M) = beta * W~(M) + C(M) of the best matching known (W~: normalised weight): the
        first entry is the start, then one entry after every Frank–Wolfe iteration and one
        after every local search, in the order they ran. Never decreasing.
    conserved_before, conserved_after : int
        Conserved edges C(M) of the input and of the final matching.
    weight_before, weight_after : float
        Matched weight sum_{k in M} w_k (the raw ``w``, not normalised) before and after.
    local_moves : int
        Moves (2-exchanges and 3-rotations) made by the local search.
    rounds : int
        Frank–Wolfe + local search rounds run.
    hit_cap : bool
        True when the run stopped at ``max_iter`` rather than at a fixed point (no round
        improving F, or every round ended by the stall rule or a zero Frank–Wolfe gap).
    beta : float
        The β used.
    w_scale : float
        The divisor applied to ``w`` (its mean over candidates with w > 0).
    seconds : float
        Wall time of the refinement.
    starts : tuple of dict
        With several starts (:func:`refine_from_starts`): one record per start.
    near_optima : tuple of ndarray
        With several starts: the other results that conserve nearly as many edges (see
        :data:`NEAR_TIE`), as candidate indices.
    counts : {"edges", "agreement"}
        What C(M) in the objective summed: conserved edges, or their entry weights
        (``edge_weights``).
    neighbours : ndarray of float64, shape (m,), or None
        S 1_index, each stored entry of S counting 1: the matched product-graph neighbours of
        every candidate pair under the final matching (what the confidence and the ambiguity
        start from; made by the refinement anyway, so they need not make it again).
    """

    index: npt.NDArray[np.int64]
    iterations: int
    objective: list
    conserved_before: int
    conserved_after: int
    weight_before: float
    weight_after: float
    local_moves: int
    rounds: int
    hit_cap: bool
    beta: float
    w_scale: float
    seconds: float
    starts: tuple = ()
    near_optima: tuple = ()
    counts: str = "edges"
    neighbours: npt.NDArray[np.float64] | None = field(default=None, repr=False, compare=False)

    def report(self) -> dict:
        """The figures as a JSON-ready dict (for a run summary)."""
        out = {"iterations": self.iterations, "rounds": self.rounds, "hit_cap": self.hit_cap,
               "local_moves": self.local_moves, "beta": self.beta, "w_scale": self.w_scale,
               "conserved_before": self.conserved_before, "conserved_after": self.conserved_after,
               "weight_before": self.weight_before, "weight_after": self.weight_after,
               "objective_before": self.objective[0], "objective_after": self.objective[-1],
               "objective_counts": self.counts, "seconds": round(self.seconds, 4)}
        if len(self.starts) > 1:
            out["starts"] = [dict(s) for s in self.starts]
        return out


def normalise_weights(w: npt.ArrayLike) -> tuple[npt.NDArray[np.float64], float]:
    """``w / mean(w[w > 0])`` and that mean (1.0 when no weight is positive)."""
    w = np.asarray(w, dtype=np.float64)
    positive = w > 0
    pos = w if positive.all() else w[positive]  # diffusion scores are all positive: no copy of m entries
    scale = float(pos.mean()) if len(pos) else 1.0
    return w / scale, scale


_UNIT = np.empty(0, dtype=np.float64)  # no entry weights: every entry of S counts 1


def matched_counts(prod: ProductGraph, index: npt.NDArray[np.int64],
                   s_w: npt.NDArray[np.float64] = _UNIT) -> npt.NDArray[np.float64]:
    """S @ 1_index: matched product-graph neighbours of every pair (summed entry weights with ``s_w``)."""
    g = np.empty(prod.m, dtype=np.float64)
    _matched_neighbours(prod.indptr, prod.indices, s_w, np.ascontiguousarray(index, dtype=np.int64), g)
    return g


def _objective(bw: npt.NDArray[np.float64], g: npt.NDArray[np.float64], index: npt.NDArray[np.int64]) -> float:
    """F(M) = sum_{k in M} bw_k + 1/2 sum_{k in M} g_k, with g = S 1_M."""
    return float(bw[index].sum() + 0.5 * g[index].sum())


def _conserved(g: npt.NDArray[np.float64], index: npt.NDArray[np.int64]) -> int:
    """C(M) = 1/2 sum_{k in M} (S 1_M)_k, with g = S 1_M."""
    return int(round(0.5 * g[index].sum()))


def refine_objective(prod: ProductGraph, bw: npt.NDArray[np.float64], index: npt.ArrayLike,
                     edge_weights: npt.ArrayLike | None = None) -> tuple[float, int]:
    """F(M) = sum_{k in M} bw_k + C(M) and the conserved edges, with C(M) = 1/2 sum_{k in M} (S 1_M)_k
    (S's entries the ``edge_weights`` when given, else 1)."""
    index = np.asarray(index, dtype=np.int64)
    g = matched_counts(prod, index)
    if edge_weights is None:
        return _objective(bw, g, index), _conserved(g, index)
    gw = matched_counts(prod, index, np.ascontiguousarray(edge_weights, dtype=np.float64))
    return _objective(bw, gw, index), _conserved(g, index)


def _rises(new: float, old: float) -> bool:
    """Whether F went from ``old`` to ``new`` by more than the rounding tolerance."""
    return new > old + RISE_TOL * (1.0 + abs(old))


#: Bits kept of the linearised weights handed to the assignment solver (see :func:`_snap`).
SNAP_BITS = 36


def _snap(v: npt.NDArray[np.float64], out: npt.NDArray[np.float64] | None = None) -> npt.NDArray[np.float64]:
    """``v`` rounded to multiples of 2**(e - SNAP_BITS), 2**e >= max |v| (into ``out`` when
    given; ``v`` itself when there is nothing to round).

    The assignment solver then adds and subtracts numbers of at most ~36 + log2(n) bits, which
    double precision does exactly: near-ties that differ in the last bits (left by the line
    search's running sums) become exact ties. This matters: the dense Jonker–Volgenant solver
    (``lapjv`` 1.3.29) was seen to loop forever on a small matrix whose entries differed by
    one unit in the last place, and not on the same matrix snapped.
    """
    top = max(float(v.max()), -float(v.min())) if len(v) else 0.0
    if top <= 0 or not np.isfinite(top):
        return v
    step = 2.0 ** (int(np.ceil(np.log2(top))) - SNAP_BITS)
    out = np.divide(v, step, out=out)  # one array, rounded and scaled in place (the same values)
    np.round(out, out=out)
    out *= step
    return out


def _mates(cand: CandidateSet, index):
    mate_a = np.full(cand.n1, -1, dtype=np.int64)
    mate_b = np.full(cand.n2, -1, dtype=np.int64)
    mate_a[cand.pairs[index, 0]] = index
    mate_b[cand.pairs[index, 1]] = index
    return mate_a, mate_b


def _check_edge_weights(prod: ProductGraph, edge_weights: npt.ArrayLike) -> npt.NDArray[np.float64]:
    """``edge_weights`` as a float vector, after checking one entry in [0, 1] per stored entry."""
    s_w = np.ascontiguousarray(edge_weights, dtype=np.float64).reshape(-1)
    if len(s_w) != len(prod.indices):
        raise InvalidParameterError(f"edge_weights must have one entry per stored product-graph entry "
                                    f"({len(prod.indices)}); got {len(s_w)}", param="edge_weights")
    bad = s_w[~((s_w >= 0) & (s_w <= 1))]
    if len(bad):
        raise bad_parameter("edge_weights", "numbers in [0, 1]", float(bad[0]))
    return s_w


def _check_matching(cand: CandidateSet, index: npt.NDArray[np.int64]) -> None:
    """Raise unless ``index`` is a one-to-one matching of candidate indices."""
    outside = index[(index < 0) | (index >= cand.m)]
    if len(outside):
        raise bad_parameter("index", f"candidate indices in [0, {cand.m})", int(outside[0]))
    p = cand.pairs[index]
    for side, nodes, n in (("A", p[:, 0], cand.n1), ("B", p[:, 1], cand.n2)):
        counts = np.bincount(nodes, minlength=n)  # O(n), where a unique would sort or hash
        if len(counts) and counts.max() > 1:
            raise InvalidParameterError(
                "index must be a one-to-one matching of candidate pairs; got node "
                f"{int(np.argmax(counts > 1))} of {side} in {int(counts.max())} of its pairs", param="index")


def _check_weights(prod: ProductGraph, cand: CandidateSet, w: npt.ArrayLike) -> npt.NDArray[np.float64]:
    """``w`` as a float vector, after checking it has one finite entry >= 0 per candidate."""
    if prod.m != cand.m:
        raise InvalidParameterError(f"prod must be the product graph over the {cand.m} candidate pairs; "
                                    f"got one over {prod.m} pairs", param="prod")
    w = np.asarray(w, dtype=np.float64).reshape(-1)
    if len(w) != cand.m:
        raise InvalidParameterError(f"w must have one entry per candidate pair ({cand.m}); got {len(w)}",
                                    param="w")
    bad = w[~(np.isfinite(w) & (w >= 0))]
    if len(bad):
        raise bad_parameter("w", "finite numbers >= 0", float(bad[0]))
    return w


class _Options(NamedTuple):
    """The checked options of :func:`refine_matching`."""

    beta: float
    max_iter: int
    step: str
    patience: int
    rounds: int
    local_sweeps: int
    rotations: bool
    method: str
    s_w: npt.NDArray[np.float64] = _UNIT  # entry weights of S (empty: each entry counts 1)
    s_max: float = 1.0                    # the largest entry of S


def _check_options(beta, max_iter, step, patience, rounds, local_sweeps, rotations, method) -> _Options:
    """The options checked, in the order of the signature's numeric options first."""
    beta = check_real(beta, "beta", low=0.0)
    max_iter = check_int(max_iter, "max_iter", low=0)
    patience = check_int(patience, "patience", low=1)
    rounds = check_int(rounds, "rounds", low=1)
    local_sweeps = check_int(local_sweeps, "local_sweeps", low=0)
    return _Options(beta=beta, max_iter=max_iter, step=check_choice(step, "step", STEPS), patience=patience,
                    rounds=rounds, local_sweeps=local_sweeps, rotations=bool(rotations),
                    method=check_choice(method, "method", METHODS))


@dataclass(eq=False)
class _Incumbent:
    """The best matching seen so far, with g = S 1_M, F(M) and the history of F."""

    index: npt.NDArray[np.int64]
    g: npt.NDArray[np.float64]
    f: float
    history: list = field(default_factory=list)

    def take(self, index: npt.NDArray[np.int64], g: npt.NDArray[np.float64], f: float) -> None:
        self.index, self.g, self.f = index, g, f

    def record(self) -> None:
        """Append the current F to the history (after every iteration and local search)."""
        self.history.append(self.f)


class _Lookup(NamedTuple):
    """Candidate tables for the local search: both ends of every pair, candidates by node of B."""

    pair_a: npt.NDArray[np.int64]
    pair_b: npt.NDArray[np.int64]
    col_ptr: npt.NDArray[np.int64]
    col_idx: npt.NDArray[np.int64]


def _lookup(cand: CandidateSet) -> _Lookup:
    pair_a, pair_b = cand.ends
    col_idx = stable_order(pair_b, cand.n2)  # candidates of each node of B, by node of A
    col_ptr = np.zeros(cand.n2 + 1, dtype=np.int64)
    np.cumsum(np.bincount(pair_b, minlength=cand.n2), out=col_ptr[1:])
    return _Lookup(pair_a, pair_b, col_ptr, col_idx)


def _step_length(step: str, gap: float, curv: float, fq: float, fx: float) -> float | None:
    """Frank–Wolfe step gamma along d = 1_q - x, or None when the round should stop.

    ``gap`` = grad . d > 0 and ``curv`` = d . S d: F(x + gamma d) = fx + gamma gap +
    gamma^2 curv / 2, maximised on [0, 1] (line), or gamma = 1 while F(q) > F(x) (unit).
    """
    if step == "unit":
        return 1.0 if _rises(fq, fx) else None
    return 1.0 if curv >= 0 else min(1.0, gap / -curv)


def _frank_wolfe(prod: ProductGraph, cand: CandidateSet, bw: npt.NDArray[np.float64], inc: _Incumbent,
                 opts: _Options, *, budget: int) -> int:
    """One Frank–Wolfe round from ``inc``'s matching, offering every vertex q to ``inc``.

    Returns the iterations made (at most ``budget``).
    """
    x = np.zeros(cand.m)  # a point of the matching polytope, with sx = S x and fx = F(x)
    x[inc.index] = 1.0
    sx = inc.g.copy()
    fx = inc.f
    sq = np.empty(cand.m)
    grad = np.empty(cand.m)  # reused each iteration (the step's arithmetic is unchanged)
    iters = stall = 0
    while iters < budget and stall < opts.patience:
        np.add(bw, sx, out=grad)
        # the snapped gradient in sq's place: S 1_q is written there only after the assignment
        q = round_matching(cand, _snap(grad, out=sq), method=opts.method).index
        iters += 1
        _matched_neighbours(prod.indptr, prod.indices, opts.s_w, q, sq)
        fq = _objective(bw, sq, q)
        if _rises(fq, inc.f):
            inc.take(q, sq.copy(), fq)
            stall = 0
        else:
            stall += 1
        inc.record()
        d = np.negative(x)  # d = 1_q - x (freed before the next assignment)
        d[q] += 1.0
        gap = float(grad @ d)
        if gap <= RISE_TOL * (1.0 + abs(fx)):
            break  # x is a stationary point of the relaxation
        sd = np.subtract(sq, sx, out=grad)  # S d, in grad's place (grad is spent)
        curv = float(d @ sd)
        gamma = _step_length(opts.step, gap, curv, fq, fx)
        if gamma is None:
            break
        d *= gamma
        x += d
        sd *= gamma
        sx += sd
        del d
        fx = fx + gamma * gap + 0.5 * gamma * gamma * curv
    return iters


def _local_phase(prod: ProductGraph, cand: CandidateSet, bw: npt.NDArray[np.float64], inc: _Incumbent,
                 opts: _Options, lookup: _Lookup) -> int:
    """Local search from ``inc``'s matching; ``inc`` takes the result when F rose. Returns the moves."""
    mate_a, mate_b = _mates(cand, inc.index)
    g_ls = inc.g.copy()
    mv, _, _ = _local_search(prod.indptr, prod.indices, opts.s_w, cand.a_indptr, lookup.col_ptr, lookup.col_idx,
                             lookup.pair_a, lookup.pair_b, bw, g_ls, mate_a, mate_b, opts.local_sweeps,
                             opts.rotations, RISE_TOL, opts.s_max, None)
    if mv:
        new = np.sort(mate_a[mate_a >= 0])
        f_new = _objective(bw, g_ls, new)
        if f_new > inc.f:
            inc.take(new, g_ls, f_new)
    inc.record()
    return int(mv)


def _run_rounds(prod: ProductGraph, cand: CandidateSet, bw: npt.NDArray[np.float64], inc: _Incumbent,
                opts: _Options) -> tuple[int, int, int, bool]:
    """Rounds of Frank–Wolfe then local search: (iterations, moves, rounds, hit_cap)."""
    lookup = None  # built once the Frank-Wolfe arrays are freed: the two never peak together
    iters = moves = n_rounds = 0
    while n_rounds < opts.rounds:
        n_rounds += 1
        f_round = inc.f
        iters += _frank_wolfe(prod, cand, bw, inc, opts, budget=opts.max_iter - iters)
        if opts.local_sweeps:
            if lookup is None:
                lookup = _lookup(cand)
            moves += _local_phase(prod, cand, bw, inc, opts, lookup)
        if not _rises(inc.f, f_round) or iters >= opts.max_iter:
            break
    hit_cap = iters >= opts.max_iter > 0 and _rises(inc.f, f_round)
    return iters, moves, n_rounds, bool(hit_cap)


def _start(prod: ProductGraph, cand: CandidateSet, w, index, opts: _Options, edge_weights):
    """Checked inputs of a refinement: (opts with S's entry weights and largest entry, w, the
    start index sorted, bw = beta * w~, the divisor of w, g = S 1_index)."""
    w = _check_weights(prod, cand, w)
    index = np.sort(np.asarray(index, dtype=np.int64).reshape(-1))
    _check_matching(cand, index)
    if edge_weights is None:
        opts = opts._replace(s_max=_max_entry(prod.indptr, prod.indices))
    else:
        s_w = _check_edge_weights(prod, edge_weights)
        opts = opts._replace(s_w=s_w, s_max=_max_entry(prod.indptr, prod.indices) * float(s_w.max(initial=0.0)))
    wn, scale = normalise_weights(w)
    _check_beta_scale(opts.beta, wn)
    bw = np.multiply(wn, opts.beta, out=wn)  # in place: no second array of m entries
    return opts, w, index, bw, scale, matched_counts(prod, index, opts.s_w)


def held_weight(prod: ProductGraph, bw: npt.NDArray[np.float64], s_max: float | None = None) -> float:
    """A weight no move of the refinement can make up for: with f = bw + S 1_M every entry is at
    most max(bw) + s_max * (longest row of S), a 2-exchange or 3-rotation gains at most three
    such terms plus three entries of S, and an assignment that drops a held pair gains at most
    two; four times the bound, plus one, is more than any of them. ``s_max``: the largest entry
    of S (found when not given)."""
    if s_max is None:
        s_max = float(_max_entry(prod.indptr, prod.indices))
    longest = int(np.diff(prod.indptr).max(initial=0))
    return 4.0 * (float(bw.max(initial=0.0)) + s_max * (longest + 1)) + 1.0


def _hold(prod: ProductGraph, bw: npt.NDArray[np.float64], s_max: float, index: npt.NDArray[np.int64],
          hold) -> float:
    """Give the ``hold`` pairs (all in the start ``index``) :func:`held_weight` in ``bw``, in
    place; returns what that adds to F (0 without pairs to hold)."""
    if hold is None or not len(hold):
        return 0.0
    hold = np.unique(np.asarray(hold, dtype=np.int64))
    if not np.isin(hold, index).all():
        raise InvalidParameterError("the start of a refinement must hold every pair it is to keep", param="hold")
    big = held_weight(prod, bw, s_max)
    bw[hold] += big
    return big * len(hold)


#: F and the Frank-Wolfe arithmetic add a few sums of beta * w~ over the candidates: beta is
#: refused when such a sum, times this margin, would not be a finite float
_BETA_MARGIN = 16.0


def _check_beta_scale(beta: float, wn: npt.NDArray[np.float64]) -> None:
    """Refuse a beta so large that beta times the summed normalised weights overflows (every
    objective value would be inf or nan, and the assignment solvers refuse such weights)."""
    total = float(wn.sum()) if len(wn) else 0.0
    if total > 0 and not np.isfinite(beta * total * _BETA_MARGIN):
        limit = np.finfo(np.float64).max / (total * _BETA_MARGIN)
        raise bad_parameter("beta", f"a number in [0, {limit:.3g}] for these scores (beta times the summed "
                            "normalised diffusion scores must stay a finite number)", beta)


def refine_matching(prod: ProductGraph, cand: CandidateSet, w: npt.ArrayLike, index: npt.ArrayLike, *,
                    beta: float = DEFAULT_BETA, max_iter: int = DEFAULT_MAX_ITER, step: str = "line",
                    patience: int = DEFAULT_PATIENCE, rounds: int = 1, local_sweeps: int = 50,
                    rotations: bool = True, method: str = "auto",
                    edge_weights: npt.ArrayLike | None = None, hold: npt.ArrayLike | None = None) -> RefineResult:
    """Raise beta * W~(M) + C(M) over one-to-one matchings of candidate pairs, from a start.

    Frank–Wolfe rounds then a local search; the method is described in :mod:`aligner.core.refine`.

    Parameters
    ----------
    prod : ProductGraph
        The restricted product graph S over the candidate pairs.
    cand : CandidateSet
        The candidate pairs.
    w : array_like of float, shape (m,)
        Weight of each candidate (the diffusion scores); finite and >= 0. It is divided by its
        mean over the candidates with w > 0 (W~), so only its shape matters.
    index : array_like of int
        Candidate indices of the start matching, one-to-one (e.g. ``round_matching(cand, w).index``).
    beta : float >= 0, default :data:`DEFAULT_BETA`
        Weight of the normalised matched weight against one conserved edge.
    max_iter : int >= 0, default :data:`DEFAULT_MAX_ITER`
        Cap on Frank–Wolfe iterations over all rounds; 0 runs the local search only.
    step : {"line", "unit"}, default "line"
        ``line``: exact line search on the continuous relaxation, every assignment's matching
        a candidate for the incumbent; ``unit``: unit steps kept while F rises.
    patience : int >= 1, default :data:`DEFAULT_PATIENCE`
        A Frank–Wolfe round ends after this many iterations without a better matching.
    rounds : int >= 1, default 1
        Rounds of Frank–Wolfe then local search, each from the best matching so far; a round
        that brings no gain ends the run.
    local_sweeps : int >= 0, default 50
        Cap on sweeps of the local search in each round; 0 turns it off.
    rotations : bool, default True
        Let the local search also rotate the partners of three matched nodes.
    method : {"auto", "sparse", "dense", "scipy"}
        Assignment solver, passed to :func:`aligner.core.rounding.round_matching`.
    edge_weights : array_like of float in [0, 1], optional
        One weight per stored entry of ``prod`` (``prod.indices``): C(M) then sums the weights
        of the conserved edge pairs instead of counting them (the agreement of a weighted run,
        :mod:`aligner.core.weights`). The reported ``conserved_*`` still count edges.
    hold : array_like of int, optional
        Candidate indices every matching keeps (fixed seed pairs; the start must hold them):
        each gets a weight in F larger than any move can gain (:func:`held_weight`), so every
        Frank–Wolfe assignment takes them and no local move gives one up. The reported
        ``objective`` leaves that weight out.

    Returns
    -------
    RefineResult
        ``index`` is a one-to-one matching of candidate pairs with F(final) >= F(start).

    Raises
    ------
    InvalidParameterError
        On a bad parameter, a ``w`` of the wrong length or with negative or non-finite
        entries, or an ``index`` that is not a one-to-one matching of candidates.

    Examples
    --------
    Two copies of the path 0-1-2-3 with six candidate pairs (each node with itself, and 1, 2
    with each other), started from the matching 1->2, 2->1 that conserves 1 of the 3 edges:

    >>> import numpy as np
    >>> from aligner.core.network import adjacency
    >>> from aligner.core.candidates import build_candidates
    >>> from aligner.core.product import build_product
    >>> ip, ix = adjacency(np.array([[0, 1], [1, 2], [2, 3]]), 4)
    >>> cand = build_candidates([[0, 0], [1, 1], [1, 2], [2, 1], [2, 2], [3, 3]], np.ones(6), 4, 4)
    >>> prod = build_product(ip, ix, ip, ix, cand)
    >>> res = refine_matching(prod, cand, np.ones(6), [0, 2, 3, 5])
    >>> res.conserved_before, res.conserved_after, cand.pairs[res.index].tolist()
    (1, 3, [[0, 0], [1, 1], [2, 2], [3, 3]])
    """
    t0 = time.perf_counter()
    opts = _check_options(beta, max_iter, step, patience, rounds, local_sweeps, rotations, method)
    opts, w, index, bw, scale, g = _start(prod, cand, w, index, opts, edge_weights)
    held = _hold(prod, bw, opts.s_max, index, hold)
    inc = _Incumbent(index, g, _objective(bw, g, index))
    before = _conserved(g, index)
    del g  # the incumbent's until a better matching is found: not held beside the rounds' arrays
    inc.record()
    iters, moves, n_rounds, hit_cap = _run_rounds(prod, cand, bw, inc, opts)
    if edge_weights is not None:  # the reported figures count edges
        before, inc.g = _conserved(matched_counts(prod, index), index), matched_counts(prod, inc.index)
    return RefineResult(index=inc.index, iterations=iters, objective=[f - held for f in inc.history],
                        conserved_before=before, conserved_after=_conserved(inc.g, inc.index),
                        weight_before=float(w[index].sum()), weight_after=float(w[inc.index].sum()),
                        local_moves=moves, rounds=n_rounds, hit_cap=hit_cap, beta=opts.beta, w_scale=scale,
                        counts="edges" if edge_weights is None else "agreement",
                        seconds=time.perf_counter() - t0, neighbours=inc.g)


def continue_local_search(prod: ProductGraph, cand: CandidateSet, w: npt.ArrayLike, index: npt.ArrayLike,
                          touched: npt.ArrayLike, freed_a: npt.ArrayLike = (), freed_b: npt.ArrayLike = (), *,
                          beta: float = DEFAULT_BETA, local_sweeps: int = 50, rotations: bool = True,
                          edge_weights: npt.ArrayLike | None = None,
                          hold: npt.ArrayLike | None = None) -> tuple[RefineResult, int]:
    """The local search of :func:`refine_matching` from ``index``, examining first only the
    candidates that a change of the problem can have given an improving move.

    ``index`` must have been a local optimum of the search (no 2-exchange or 3-rotation raising
    F) on a problem that differs from this one only in the values bw + g of the pairs
    ``touched`` (their weight, their product-graph rows, or their being new) and in the
    partners of the nodes ``freed_a`` (of A) and ``freed_b`` (of B) (whose matched pair is no
    longer a candidate). The search then marks the candidates whose moves read one of those
    (the work list of :func:`aligner.kernels.refine._local_search`) and examines only them, and
    after each move only what the move changed: the result is the search's from ``index`` over
    every candidate, at a cost that follows the change. No Frank–Wolfe step is made.

    ``hold``: pairs no move gives up, as in :func:`refine_matching` (``index`` must then have
    been a local optimum of the search with them held).

    Returns the result (``iterations`` 0, ``objective`` [F(index), F(result)]) and how many
    candidates were marked at the start.
    """
    t0 = time.perf_counter()
    opts = _check_options(beta, 0, "line", DEFAULT_PATIENCE, 1, local_sweeps, rotations, "auto")
    opts, w, index, bw, scale, g = _start(prod, cand, w, index, opts, edge_weights)
    held = _hold(prod, bw, opts.s_max, index, hold)
    f0 = _objective(bw, g, index)
    lookup = _lookup(cand)
    mate_a, mate_b = _mates(cand, index)
    dirty = np.zeros(cand.m, dtype=np.uint8)

    def ids(v):
        return np.ascontiguousarray(v, dtype=np.int64).reshape(-1)

    mark_changes(cand.a_indptr, lookup.col_ptr, lookup.col_idx, lookup.pair_a, lookup.pair_b, mate_a, mate_b, dirty,
                 ids(touched), ids(freed_a), ids(freed_b))
    marked = int(np.count_nonzero(dirty))
    # the reported figures count edges
    c0 = _conserved(g if edge_weights is None else matched_counts(prod, index), index)
    moves = 0
    if marked and opts.local_sweeps:  # g follows the matching in place
        moves, _, _ = _local_search(prod.indptr, prod.indices, opts.s_w, cand.a_indptr, lookup.col_ptr,
                                    lookup.col_idx, lookup.pair_a, lookup.pair_b, bw, g, mate_a, mate_b,
                                    opts.local_sweeps, opts.rotations, RISE_TOL, opts.s_max, dirty)
    final = np.sort(mate_a[mate_a >= 0]) if moves else index
    f1 = _objective(bw, g, final) if moves else f0
    c1 = _conserved(g if edge_weights is None else matched_counts(prod, final), final)
    res = RefineResult(index=final, iterations=0, objective=[f0 - held, f1 - held], conserved_before=c0,
                       conserved_after=c1, weight_before=float(w[index].sum()),
                       weight_after=float(w[final].sum()), local_moves=int(moves), rounds=1, hit_cap=False,
                       beta=opts.beta, w_scale=scale, counts="edges" if edge_weights is None else "agreement",
                       seconds=time.perf_counter() - t0, neighbours=g if edge_weights is None else None)
    return res, marked


#: Other results of several starts that conserve at least (1 - NEAR_TIE) times the edges of the
#: best are near-optima: matchings the wiring can hardly tell from the one kept (see
#: :func:`aligner.core.ambiguity.find_ambiguity`).
NEAR_TIE = 0.005
#: Spread (standard deviation of the log) of the multiplicative noise of a perturbed start.
PERTURBATION = 0.05


def perturbed_scores(w: npt.ArrayLike, count: int, seed: int = 0):
    """``count`` copies of ``w``, each entry multiplied by independent log-normal noise
    (median 1, log standard deviation :data:`PERTURBATION`): the scores whose assignments are
    the perturbed starts of :func:`refine_from_starts`. Seeded, so runs repeat."""
    w = np.asarray(w, dtype=np.float64)
    rng = np.random.default_rng(seed)
    for _ in range(count):
        yield w * rng.lognormal(0.0, PERTURBATION, len(w))


def refine_from_starts(prod: ProductGraph, cand: CandidateSet, w: npt.ArrayLike, starts, *,
                       keep: npt.ArrayLike | None = None, **options) -> RefineResult | None:
    """:func:`refine_matching` from each of several starts; the result of highest F.

    The refinement is a local method: from different starts it stops at different local
    optima of F (on real networks, conserved-edge counts several per cent apart). Running it
    from a few starts and keeping the best makes the result depend much less on the start.

    Parameters
    ----------
    starts : sequence of (str, array_like of int)
        Labelled start matchings (candidate indices, one-to-one); the first one is the
        reference (ties in F keep the earliest start).
    keep : array_like of int, optional
        Candidate indices every accepted result must hold (fixed seed pairs); a result that
        drops one is not accepted. When none is, the starts that hold them all are refined again
        with them held (:func:`refine_matching`'s ``hold``; their records say ``seeds_held``).
        None when no start holds them all.
    options
        As for :func:`refine_matching`.

    Returns
    -------
    RefineResult or None
        The accepted result of highest F (the earliest on ties). Its ``conserved_before`` and
        ``weight_before`` are those of the first start (the matching the refinement improves
        on), its ``starts`` one record per start (label, conserved edges before and after, F
        after, accepted), its ``near_optima`` the other accepted results within
        :data:`NEAR_TIE` of its conserved edges, and its ``seconds`` the time of all starts.
    """
    t0 = time.perf_counter()
    keep = None if keep is None else np.asarray(keep, dtype=np.int64)
    starts = list(starts)
    first = None
    records, accepted = [], []
    for label, index in starts:
        res = refine_matching(prod, cand, w, index, **options)
        ok = keep is None or bool(np.isin(keep, res.index).all())
        records.append(start_record(label, res, ok))
        if ok:
            accepted.append(res)
        if first is None:
            first = res
    if not accepted and keep is not None and len(keep):
        # every result gave up a seed pair (one the wiring contradicts, say): again from the
        # starts that hold them all, with the seed pairs held, so the rest is still refined
        first = None
        for label, index in starts:
            if not np.isin(keep, index).all():
                continue
            res = refine_matching(prod, cand, w, index, hold=keep, **options)
            records.append(start_record(label, res, True, seeds_held=True))
            accepted.append(res)
            if first is None:
                first = res
    if not accepted:
        return None
    best = accepted[0]
    for res in accepted[1:]:
        if _rises(res.objective[-1], best.objective[-1]):
            best = res
    near = _near_optima(best, accepted)
    return dataclasses.replace(best, conserved_before=first.conserved_before, weight_before=first.weight_before,
                               starts=tuple(records), near_optima=near, seconds=time.perf_counter() - t0)


def start_record(label: str, res: RefineResult, accepted: bool, *, seeds_held: bool = False) -> dict:
    """One start's record in :attr:`RefineResult.starts` (``seeds_held`` only when true)."""
    rec = {"start": label, "conserved_before": res.conserved_before, "conserved_after": res.conserved_after,
           "objective_after": res.objective[-1], "accepted": accepted}
    return rec | ({"seeds_held": True} if seeds_held else {})


def _near_optima(best: RefineResult, results: list) -> tuple:
    """The other matchings among ``results`` that conserve at least (1 - NEAR_TIE) times the
    edges of ``best``, each once (candidate indices)."""
    out, seen = [], {best.index.tobytes()}
    for res in results:
        key = res.index.tobytes()
        if key not in seen and res.conserved_after >= (1.0 - NEAR_TIE) * best.conserved_after:
            seen.add(key)
            out.append(res.index)
    return tuple(out)
