"""The global alignment's answer to a counterpart query, from local work, and how sure it is.

A row of the diffusion solution x does not say which counterpart :func:`aligner.align` gives a
node: the one-to-one assignment resolves a competition for the same nodes that a single row
does not see. A query's *answer* solves that competition on a region around the asked node:

1. **Region.** Rows (nodes of the asked node's side) grown in layers: the asked node, then
   every node with a candidate pair on a column (node of the other side) the region already
   reaches, and so on while a cap on the region's candidate pairs allows.
2. **Scores with bounds.** A push (Andersen, Chung & Lang 2006) of align's own h from the
   region's candidate pairs gives, for every region pair k, a lower bound lo_k <= x*_k (h >= 0,
   so a push never overshoots) and an upper bound hi_k (see :func:`score_bounds`), where x* is
   the exact solution over the whole candidate set that align's diffusion converges to. The
   point estimate used for the assignment adds to lo_k the mass a push from the region cannot
   see, alpha * deg_S(k) * beta, with beta the mean score per product-graph neighbour of the
   whole problem (:class:`AnswerIndex`): a background level, never used by the certificate.
3. **Assignment.** The maximum-weight one-to-one matching of the region's pairs on the point
   estimates (the kernel align's rounding uses); the answer is the asked node's pair in it. A
   *boundary* column (one that a node outside the region also claims) is not free for the
   taking: in the global assignment most of them go to such outside nodes. Each carries a
   reserve price, the estimate of its best outside claim without a push ((1 - alpha) h plus
   :data:`OUTSIDE_SHARE` of the background), and the region's pairs compete for it with their
   estimate minus that price (pairs that do not beat it are left out). On near-decoy pairs this
   raised agreement with the global assignment from about 90 % to 96-98 % (the price is an
   estimate for the assignment only; the certificate below does not use it).
4. **Certificate** (:func:`certify`). The answer is *certified* when every maximum-weight
   matching of the exact scores x* over the whole candidate set gives the asked node the same
   counterpart. The proof is by exchange: any other optimal matching differs from the region's
   matching M_R, at the asked node, along an alternating path or cycle through it, and such a
   path can leave the region only where a node outside takes a boundary column. Its change in
   weight is bounded with lo on the pairs of M_R and hi on the others; it is a path in an
   exchange graph on the region's rows (the reduced-cost graph of the assignment problem,
   Jonker & Volgenant 1987; complementary slackness) whose shortest paths Bellman-Ford
   computes. If every path and cycle through the asked node has positive cost, no optimal
   matching can differ there: certified. The margin is that least cost; a negative one names
   how far from certified the answer is.

The certificate is about the assignment of the exact diffusion scores. align's final matching
also goes through the refinement, which may move a pair; the benchmark
(``scripts/bench/bench_answer.py``) counts agreement with both.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
import scipy.sparse as sp
from scipy.sparse.csgraph import NegativeCycleError, shortest_path

from aligner.kernels.assign import sparse_max_weight_matching
from aligner.core.product import product_row_lengths
from aligner.kernels.query import _local_push, _reset_slots

__all__ = ["AnswerIndex", "Answer", "answer", "certify", "score_bounds", "DEFAULT_MAX_PAIRS"]

#: default cap on the candidate pairs of an answer's region (its push holds few more): about
#: 0.5 % of the candidates of a 10^5-node pair with 11 candidates per node
DEFAULT_MAX_PAIRS = 6_000
#: share of the background level beta deg_S the point estimate adds to what the push reached
#: (measured by scripts/bench/bench_answer.py on both families at 10^5: 0.25 to 0.75 agree as
#: often, 0 and 1.5 less often; the certificate never uses it)
BACKGROUND = 0.5
#: cap on an answer's pushes, per pair the region may hold (a safeguard: the bounds stay valid
#: at the cap, only looser)
PUSHES_PER_PAIR = 256
#: push threshold of an answer, per product-graph neighbour, relative to the background level beta
ANSWER_TOL = 0.5
#: how far the competition that decides an answer is followed: exchange-graph distances up to
#: this multiple of the answer's score (see :func:`answer`)
REACH = 1.0
#: at most this many of those rows, the nearest, open the region's edge at each step
NEAREST = 8
#: and, on each of their columns at the edge, the rows outside with the largest h on it join
TOP_COMPETITORS = 3
#: growth stops when the answer has stayed the same over this many steps
STABLE_STEPS = 1
#: a boundary column's reserve price counts this share of the background level beta deg_S of
#: its best outside claim (besides the claim's own (1 - alpha) h); measured by
#: scripts/bench/bench_answer.py, near decoys, 10^4 and 10^5, 120 to 360 queries per setting:
#: shares 0.1 to 0.25 agree as often (95 to 98 %), 0.5 and 1 less often, no price 88 to 92 %
OUTSIDE_SHARE = 0.15
#: a margin certifies only above this share of the largest bound, times the arcs a path may hold
#: (one per row of the region, plus the source's and the sink's): the exchange costs are sums of
#: differences of floating-point scores, and on an exact tie between two assignments
#: (x* = (1 - alpha) h on pairs without neighbours, scores 3 = 2 + 1) the least cost came out
#: 5.6e-17 instead of 0
ROUNDING = 1e-12


class AnswerIndex:
    """What every answer of an engine shares: deg_S of each candidate pair and two constants.

    Built once per engine in one pass over the product graph's rows (counted, never stored:
    :func:`aligner.core.product.product_row_lengths`, ranges of nodes of A on the kernels'
    threads), O(product edges) time and O(m) memory.

    Attributes
    ----------
    v : ndarray of float64, shape (m,)
        The weight of the bounds, with P v <= v: deg_S (restricted normalisation) or
        deg_A deg_B (product normalisation).
    degree : ndarray of int64, shape (m,)
        deg_S, the pair's neighbours in the product graph restricted to the candidates.
    beta : float
        Background level: sum of h over pairs with a product-graph neighbour, divided by the sum
        of deg_S. For the restricted walk the exact solution carries exactly that mass on those
        pairs (a pair with no neighbour keeps (1 - alpha) h and passes nothing on), so beta is
        the mean of x* per neighbour; it sets the point estimate's background and the push
        threshold, never a bound.
    order : ndarray of int64
        Pairs by h / v, largest first (pairs with v = 0 last): the largest ratio outside a set
        of pairs is found by walking it (:meth:`largest_ratio_outside`).
    """

    def __init__(self, engine):
        net_a, net_b, cand = engine.net_a, engine.net_b, engine.cand
        # deg_S of every pair: the product graph's row lengths, its rows built a range of nodes at
        # a time on the kernels' threads and dropped once counted
        counts = product_row_lengths(net_a.indptr, net_a.indices, net_b.indptr, net_b.indices, cand)
        self.degree = counts
        if engine.normalization == "restricted":
            self.v = counts.astype(np.float64)
        else:
            self.v = (engine._deg_a[engine._c_a] * engine._deg_b[engine._c_b]).astype(np.float64)
        h = engine._h
        linked = counts > 0
        total = float(counts.sum())
        self.beta = float(h[linked].sum()) / total if total > 0 else 0.0
        ratio = np.zeros(cand.m)
        np.divide(h, self.v, out=ratio, where=linked & (self.v > 0))
        self.ratio = ratio
        # np.argsort(-ratio, kind="stable"), sorting only the positive ratios (pairs with a
        # neighbour; most candidates have none): the zeros follow in index order, as there
        some = np.flatnonzero(ratio > 0)
        self.order = np.concatenate([some[np.argsort(-ratio[some], kind="stable")], np.flatnonzero(ratio <= 0)])

    def largest_ratio_outside(self, inside: npt.NDArray[np.int64]) -> float:
        """max h_l / v_l over the pairs l with a neighbour that are not in ``inside`` (sorted
        candidate indices); 0 if none. Walks :attr:`order` past the pairs inside only."""
        for l in self.order:
            if self.ratio[l] <= 0:
                return 0.0
            t = np.searchsorted(inside, l)
            if t == len(inside) or inside[t] != l:
                return float(self.ratio[l])
        return 0.0


def score_bounds(x, r, v, alpha: float, outside_ratio: float, seeded: bool = False):
    """Lower and upper bounds on x* at the pairs a push held.

    With r = (1 - alpha) h_S - (I - alpha P) x >= 0 the push's residual (h_S: h on the pairs it
    started from) and G = (I - alpha P)^-1 >= 0, x* - x = G r + (1 - alpha) G h_out, where
    h_out is h on every other pair. Since P v <= v, G v <= v / (1 - alpha), and
    h_out <= H v with H the largest h / v outside (pairs with v = 0 pass nothing on, so only
    their own entry matters). Hence, entry-wise,

        x_k <= x*_k <= x_k + [v_k = 0] r_k + v_k (max_{v_l > 0} r_l / v_l / (1 - alpha) + H).

    ``seeded``: the pairs asked about are among those the push started from, where h_out is 0;
    the first term of (1 - alpha) G h_out = (1 - alpha) sum_t alpha^t P^t h_out is then 0 there,
    and the bound on it becomes alpha H v_k.
    """
    x = np.asarray(x, dtype=np.float64)
    r = np.maximum(np.asarray(r, dtype=np.float64), 0.0)
    v = np.asarray(v, dtype=np.float64)
    pos = v > 0
    rv = float((r[pos] / v[pos]).max()) if pos.any() else 0.0
    far = outside_ratio * (alpha if seeded else 1.0)
    hi = x + np.where(pos, v * (rv / (1.0 - alpha) + far), r)
    return x, hi


def _exchange_graph(rows, cols, lo, hi, boundary, n_rows, mate_row, mate_col):
    """The exchange graph of matching ``mate_row`` over the region's pairs (see :func:`certify`)."""
    start_w = np.zeros(n_rows)
    m = mate_row >= 0
    if m.any():
        matched = mate_col[cols] == rows
        lo_m = np.zeros(n_rows)
        lo_m[rows[matched]] = lo[matched]
        start_w[m] = np.where(boundary[mate_row[m]], 0.0, lo_m[m])
    source, sink = n_rows, n_rows + 1
    holder = mate_col[cols]
    new = holder != rows
    displace = new & (holder >= 0)
    free = new & (holder < 0)
    lo_at_holder = np.zeros(len(rows))
    if displace.any():  # lo of the pair (holder, column) each displacing move breaks
        key_m = rows[~new] * (mate_col.shape[0] + 1) + cols[~new]
        key_h = holder[displace] * (mate_col.shape[0] + 1) + cols[displace]
        order = np.argsort(key_m)
        lo_at_holder[displace] = lo[~new][order][np.searchsorted(key_m[order], key_h)]
    all_rows = np.arange(n_rows)
    src = np.concatenate([rows[displace], rows[free], all_rows, np.full(n_rows, source)])
    dst = np.concatenate([holder[displace], np.full(int(free.sum()), sink), np.full(n_rows, sink), all_rows])
    w = np.concatenate([lo_at_holder[displace] - hi[displace], -hi[free], np.zeros(n_rows), start_w])
    # parallel edges: keep the cheapest (a sparse matrix would add them up)
    key = src * (n_rows + 2) + dst
    order = np.lexsort((w, key))
    key, src, dst, w = key[order], src[order], dst[order], w[order]
    first = np.r_[True, key[1:] != key[:-1]] if len(key) else np.zeros(0, dtype=bool)
    src, dst, w = src[first], dst[first], w[first]
    graph = sp.csr_matrix((w, (src, dst)), shape=(n_rows + 2, n_rows + 2))
    return graph, src, dst, w


def _near_rows(rows, cols, estimate, boundary, n_rows, mate_row, mate_col, asked, radius):
    """Rows whose exchange-graph distance from or to the asked row, on the point estimates, is at
    most ``radius``: where a change of the scores would reach the asked row's pair."""
    graph = _exchange_graph(rows, cols, estimate, estimate, boundary, n_rows, mate_row, mate_col)[0]
    graph = graph[:n_rows, :n_rows]  # rows only: no source, no sink
    try:
        out = shortest_path(graph, method="BF", directed=True, indices=asked)
        back = shortest_path(graph.T.tocsr(), method="BF", directed=True, indices=asked)
    except NegativeCycleError:  # the estimates' matching is optimal; ties in float only
        return np.arange(n_rows)
    dist = np.minimum(out, back)
    near = np.flatnonzero(dist <= radius)
    return near[np.argsort(dist[near], kind="stable")[:NEAREST]]


def certify(rows, cols, lo, hi, boundary, asked: int, mate_row, mate_col) -> tuple[bool, float]:
    """Whether every maximum-weight matching of the exact weights keeps the asked row's pair.

    Parameters
    ----------
    rows, cols : ndarray of int64
        The region's pairs, by local row (0 .. R-1) and local column (0 .. C-1). Every candidate
        pair of a region row is a region pair.
    lo, hi : ndarray of float64
        Bounds on each pair's exact weight: lo <= w <= hi. Pairs outside the region are unknown.
    boundary : ndarray of bool, shape (C,)
        Columns with a candidate pair whose row is outside the region.
    asked : int
        The asked row; it must be matched in ``mate_row``.
    mate_row, mate_col : ndarray of int64
        A matching of the region (``mate_row[i]`` the column of row i or -1; ``mate_col`` the
        reverse), usually the maximum-weight one on point estimates.

    Returns
    -------
    (certified, margin)
        ``margin`` is the least cost of an alternating path or cycle through the asked row (see
        Notes); certified when it is > 0 by more than the rounding of the sums, :data:`ROUNDING`
        times the largest bound per row of the region (-inf with a negative cycle).

    Notes
    -----
    Let M* be any maximum-weight matching of the whole problem, and T the boundary columns that
    rows outside the region hold in M*. M* restricted to the region's rows is a maximum-weight
    matching of the region without T (rows of the region have all their pairs in it). In
    M_R xor M*, the asked row a with M_R(a) = b either keeps b or lies on an alternating path or
    cycle. Write its cost as the weight of its M_R edges minus that of its M* edges. A path or
    cycle that avoids T has cost <= 0 (M* is optimal); one that starts at a column t of T (held
    in M_R by row i0) has cost <= w(i0, t) (else drop i0 instead). With lo on M_R's edges and hi
    on the others the cost is bounded below by a path in the exchange graph on the region's
    rows: an arc i -> i' of cost lo(i', j) - hi(i, j) when row i takes column j from its holder
    i', an arc i -> sink of cost -hi(i, j) when i takes a column j that M_R leaves free (or 0
    when i drops out), and arcs from a source: 0 into a row with no column or with a boundary
    column (it may lose it to the outside, whose w(i0, t) cancels), lo(i, M_R(i)) into any
    other row (its column left empty). If every source -> a -> sink path and every cycle
    through a cost > 0, no optimal M* can move a: the answer is that of every maximum-weight
    matching. Shortest paths with negative arcs: Bellman-Ford (scipy.sparse.csgraph), on the
    region's rows only.
    """
    n_rows = len(mate_row)
    if mate_row[asked] < 0:
        return False, -np.inf
    graph, src, dst, w = _exchange_graph(rows, cols, lo, hi, boundary, n_rows, mate_row, mate_col)
    try:
        dist = shortest_path(graph, method="BF", directed=True, indices=[n_rows, asked])
    except NegativeCycleError:
        return False, -np.inf
    through = dist[0, asked] + dist[1, n_rows + 1]
    into = dst == asked
    cycle = float(np.min(dist[1, src[into]] + w[into])) if into.any() else np.inf
    margin = float(min(through, cycle))
    scale = float(max(np.abs(lo).max(), np.abs(hi).max())) if len(lo) else 0.0
    return bool(margin > ROUNDING * (n_rows + 2) * scale), margin


@dataclass(frozen=True)
class Answer:
    """The global alignment's counterpart of one asked node, as a query finds it.

    ``counterpart`` is a node index of the other network (-1: unmatched); ``certified`` whether
    every maximum-weight matching of the exact scores agrees (see :func:`certify`), ``margin``
    the certificate's least cost (> 0 when certified); ``score`` the point estimate of the
    pair's diffusion score; ``runner_up`` the asked node's best other counterpart and ``rival``
    the best other claimant of the counterpart (node indices, -1 for none), by point estimate;
    work: region rows and pairs, layers, pairs the push held, pushes, seconds.
    """

    counterpart: int
    certified: bool
    margin: float
    score: float
    runner_up: int
    rival: int
    fixed: bool
    rows: int
    pairs: int
    layers: int
    pairs_touched: int
    pushes: int
    seconds: float


class _Sides:
    """Candidate pairs by row and by column, for queries asked from side a or side b."""

    def __init__(self, engine, side: str):
        cand = engine.cand
        if side == "a":
            self.row_of, self.col_of = engine._c_a, engine._c_b
            self.row_ptr, self.row_pairs = cand.a_indptr, None
            self.col_ptr, self.col_pairs = engine._b_indptr, engine._b_order
            self.busy_row, self.busy_col = engine._mate_a, engine._mate_b
        else:
            self.row_of, self.col_of = engine._c_b, engine._c_a
            self.row_ptr, self.row_pairs = engine._b_indptr, engine._b_order
            self.col_ptr, self.col_pairs = cand.a_indptr, None
            self.busy_row, self.busy_col = engine._mate_b, engine._mate_a

    @staticmethod
    def _gather(ptr, perm, nodes):
        starts, ends = ptr[nodes], ptr[nodes + 1]
        lens = ends - starts
        if not lens.sum():
            return np.empty(0, dtype=np.int64)
        idx = np.repeat(starts - np.r_[0, np.cumsum(lens)[:-1]], lens) + np.arange(lens.sum())
        return idx if perm is None else perm[idx]

    def pairs_of_rows(self, rows):
        return self._gather(self.row_ptr, self.row_pairs, rows)

    def pairs_of_cols(self, cols):
        return self._gather(self.col_ptr, self.col_pairs, cols)


def _free_pairs(sides: _Sides, pairs):
    """Pairs whose nodes no seed pair fixes (seeded nodes are out of the competition)."""
    if not len(pairs):
        return pairs
    keep = (sides.busy_row[sides.row_of[pairs]] < 0) & (sides.busy_col[sides.col_of[pairs]] < 0)
    return pairs[keep]


def answer(engine, index: AnswerIndex, node: int, side: str = "a", *,
           max_pairs: int = DEFAULT_MAX_PAIRS, tol: float = ANSWER_TOL, reach: float = REACH) -> Answer:
    """The counterpart the global assignment gives ``node``, from a region around it.

    The region starts as the node and every node with a candidate on one of its columns (for a
    hub, whose claimants would pass ``max_pairs``, the ``TOP_COMPETITORS`` claimants of each column
    with the largest h). It then grows where the competition that decides the node's pair lies:
    the :data:`NEAREST` region rows whose exchange-graph distance to or from the asked row (on the
    point estimates) is at most ``reach`` times the answer's score; for each of their columns at
    the region's edge the ``TOP_COMPETITORS`` outside claimants with the largest h join. It stops
    when the answer is certified, has stayed the same over :data:`STABLE_STEPS` steps, has no
    competition left at the edge, or the next region would hold more than ``max_pairs`` pairs.
    See the module docstring.
    """
    t0 = time.perf_counter()
    sides = _Sides(engine, side)
    mate_self = sides.busy_row[node]
    if mate_self >= 0:  # a seed pair: fixed in align's matching
        other = int(sides.col_of[mate_self])
        return Answer(other, True, np.inf, float("nan"), -1, -1, True, 1, 1, 0, 0, 0, time.perf_counter() - t0)
    own = np.unique(sides.col_of[_free_pairs(sides, sides.pairs_of_rows(np.array([node], dtype=np.int64)))])
    if not len(own):  # no free candidate: no assignment can match the node, certainly
        return Answer(-1, True, np.inf, 0.0, -1, -1, False, 1, 0, 0, 0, 0, time.perf_counter() - t0)
    rows = np.union1d([node], _competitors(sides, own))
    pairs = _free_pairs(sides, sides.pairs_of_rows(rows))
    if len(pairs) > max_pairs:  # a hub's columns: their strongest claimants only
        rows = np.union1d([node], _competitors(sides, own, engine._h, np.array([node]), TOP_COMPETITORS))
        pairs = _free_pairs(sides, sides.pairs_of_rows(rows))
    pairs = np.sort(pairs)
    steps, touched, pushes, previous, same = 0, 0, 0, None, 0
    while True:
        steps += 1
        result, edge_cols = _solve_region(engine, index, sides, node, rows, pairs, tol, max_pairs, reach)
        touched = max(touched, result["pairs_touched"])
        pushes += result["pushes"]
        same = same + 1 if result["counterpart"] == previous else 0
        if result["certified"] or not len(edge_cols) or same >= STABLE_STEPS:
            break
        previous = result["counterpart"]
        grown = np.union1d(rows, _competitors(sides, edge_cols, engine._h, rows, TOP_COMPETITORS))
        more = _free_pairs(sides, sides.pairs_of_rows(grown))
        if len(grown) == len(rows) or len(more) > max_pairs:
            break
        rows, pairs = grown, np.sort(more)
    result |= {"layers": steps, "pairs_touched": touched, "pushes": pushes}
    return Answer(fixed=False, seconds=time.perf_counter() - t0, **result)


def _competitors(sides: _Sides, cols, h=None, exclude=None, top: int | None = None):
    """Rows with a free candidate pair on one of ``cols``: all of them, or for each column the
    ``top`` rows outside ``exclude`` with the largest h on it."""
    pairs = _free_pairs(sides, sides.pairs_of_cols(np.asarray(cols, dtype=np.int64)))
    if top is None:
        return np.unique(sides.row_of[pairs])
    pairs = pairs[~np.isin(sides.row_of[pairs], exclude)]
    order = np.lexsort((-h[pairs], sides.col_of[pairs]))  # by column, largest h first
    pairs = pairs[order]
    col = sides.col_of[pairs]
    first = np.r_[0, np.flatnonzero(col[1:] != col[:-1]) + 1] if len(col) else np.zeros(0, dtype=np.int64)
    rank = np.arange(len(col)) - np.repeat(first, np.diff(np.r_[first, len(col)]))
    return np.unique(sides.row_of[pairs[rank < top]])


def _push_cap(max_pairs: int) -> int:
    """The push cap of a region of at most ``max_pairs`` pairs, held to the largest int64 (the compiled
    push's counter): a cap past it is never reached."""
    return int(min(PUSHES_PER_PAIR * int(max_pairs), np.iinfo(np.int64).max))


def _solve_region(engine, index: AnswerIndex, sides: _Sides, node, rows, pairs, tol, max_pairs, reach):
    alpha = engine.alpha
    if not len(pairs):
        return {"counterpart": -1, "certified": False, "margin": -np.inf, "score": 0.0, "runner_up": -1,
                "rival": -1, "rows": len(rows), "pairs": 0, "pairs_touched": 0, "pushes": 0}, np.empty(0, np.int64)
    h = engine._h
    eps = tol * index.beta if index.beta > 0 else engine.tol
    none_i = np.empty(0, dtype=np.int64)
    ints, floats, _, pushes, *_rest = _local_push(
        engine.net_a.indptr, engine.net_a.indices, engine.net_b.indptr, engine.net_b.indices, engine.cand.a_indptr,
        engine._c_a, engine._c_b, engine._deg_a, engine._deg_b, engine.normalization == "restricted", engine._slot,
        pairs, np.ascontiguousarray(h[pairs]), none_i, alpha, eps, _push_cap(max_pairs), False)
    _reset_slots(engine._slot, ints[:, 0])
    held = ints[:, 0]
    outside_ratio = index.largest_ratio_outside(pairs)  # pairs are sorted
    order = np.argsort(held)
    loc = order[np.searchsorted(held[order], pairs)]
    # the bound's max r / v runs over every pair the push held; the region's pairs were its sources
    lo, hi = score_bounds(floats[:, 0], floats[:, 1], index.v[held], alpha, outside_ratio, seeded=True)
    lo, hi = lo[loc], hi[loc]
    # the point estimate: what the push reached, the residual it left where it stopped (mass that
    # has arrived but not been passed on) and the background the region cannot see
    estimate = lo + np.maximum(floats[loc, 1], 0.0) + BACKGROUND * index.degree[pairs] * index.beta
    # local numbering: rows, columns
    r_loc = np.searchsorted(rows, sides.row_of[pairs])
    col_nodes, c_loc = np.unique(sides.col_of[pairs], return_inverse=True)
    n_rows, n_cols = len(rows), len(col_nodes)
    by_row = np.lexsort((c_loc, r_loc))
    # boundary columns: some candidate pair of theirs has a row outside the region
    col_pairs = _free_pairs(sides, sides.pairs_of_cols(col_nodes))
    in_region = np.isin(sides.row_of[col_pairs], rows)
    col_of_pair = np.searchsorted(col_nodes, sides.col_of[col_pairs])
    boundary = np.zeros(n_cols, dtype=bool)
    boundary[col_of_pair[~in_region]] = True
    # a boundary column costs the region the best claim on it from outside (the reserve price an
    # outside row would bid): that claim's own share (1 - alpha) h plus OUTSIDE_SHARE of the
    # background its product-graph neighbours would bring it; pairs that do not beat it are out
    outside = col_pairs[~in_region]
    price = np.zeros(n_cols)
    np.maximum.at(price, col_of_pair[~in_region],
                  (1.0 - alpha) * h[outside] + OUTSIDE_SHARE * index.degree[outside] * index.beta)
    net = estimate - price[c_loc]
    bids = by_row[net[by_row] > 0]
    indptr = np.zeros(n_rows + 1, dtype=np.int64)
    np.cumsum(np.bincount(r_loc[bids], minlength=n_rows), out=indptr[1:])
    mate_row = sparse_max_weight_matching(indptr, c_loc[bids].astype(np.int64), net[bids], n_cols)
    mate_col = np.full(n_cols, -1, dtype=np.int64)
    matched = mate_row >= 0
    mate_col[mate_row[matched]] = np.flatnonzero(matched)
    asked = int(np.searchsorted(rows, node))
    certified, margin = certify(r_loc, c_loc, lo, hi, boundary, asked, mate_row, mate_col)
    counterpart = int(col_nodes[mate_row[asked]]) if mate_row[asked] >= 0 else -1
    mine = r_loc == asked
    score = float(estimate[mine & (c_loc == mate_row[asked])][0]) if counterpart >= 0 else 0.0
    others = mine & (c_loc != mate_row[asked])
    runner_up = int(col_nodes[c_loc[others][np.argmax(estimate[others])]]) if others.any() else -1
    rival = -1
    if counterpart >= 0:
        claim = (c_loc == mate_row[asked]) & ~mine
        if claim.any():
            rival = int(rows[r_loc[claim][np.argmax(estimate[claim])]])
    edge_cols = np.empty(0, dtype=np.int64)
    if not certified and counterpart >= 0 and boundary.any():
        near = _near_rows(r_loc, c_loc, estimate, boundary, n_rows, mate_row, mate_col, asked, reach * score)
        hot = np.isin(r_loc, near) & boundary[c_loc]
        edge_cols = col_nodes[np.unique(c_loc[hot])]
    elif counterpart < 0 and boundary.any():  # outbid on every column: follow the rows that hold them
        holders = mate_col[c_loc[mine]]
        hot = np.isin(r_loc, holders[holders >= 0]) & boundary[c_loc]
        edge_cols = col_nodes[np.unique(c_loc[hot])]
    return {"counterpart": counterpart, "certified": certified and counterpart >= 0, "margin": margin,
            "score": score, "runner_up": runner_up, "rival": rival, "rows": n_rows, "pairs": len(pairs),
            "pairs_touched": len(held), "pushes": int(pushes)}, edge_cols
