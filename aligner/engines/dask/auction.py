"""The one-to-one matching of the diffusion scores by a Jacobi auction over the blocks.

Persons are the nodes of A, held by the blocks of the diffusion (each with its candidate pairs
and their scores w = x, pairs with w <= 0 left out as the single-machine rounding does). Objects
are the nodes of B, held in contiguous ranges, one per block, with their prices. Every person may
also stay unmatched, at value 0 (a private dummy object whose price stays 0), so the auction
solves the same problem as :func:`aligner.core.rounding.round_matching`: the maximum-weight
matching that may leave nodes unmatched.

One round is one task per block and one exchange (Jacobi: every free person bids at once):

- the block's objects take the bids that arrived: an object goes to its highest bid (a tie to
  the smaller node of A) when the bid is above its price, which becomes the bid; the winner, the
  person it displaces and the other bidders get a reply with the new price;
- the block's persons read their replies (won, rejected or displaced) and raise their belief of
  each price they hear of; then every free person i whose bid is not pending finds its best value
  v1 = max_j (w_ij - p_j) and its second best v2 (or 0, the dummy), and bids
  p_j + v1 - v2 + eps for the best object j; when v1 <= 0 it stays unmatched for good (prices
  only rise).

A person's beliefs are never above the true prices, so its bid keeps eps-complementary slackness
with the true prices (its value at the bid is within eps of its best); a bid below the true
price is rejected with the true price, which the person learns. So the auction is the
asynchronous auction of Bertsekas & Castanon with synchronous rounds, and at the end every
assigned person is within eps of its best: the matching is within n * eps of the optimum
(n persons), and optimal when the weights are integers and eps < 1/n. ``eps`` is a share of
the mean positive weight (:data:`EPS_RELATIVE`).

The client keeps several rounds in flight, each gated by the previous round's :class:`Tally`
(made on a worker), as the diffusion does; a round after the last changes nothing.

The tail: when few persons are still free and their count has stopped falling (a price war
between near ties moves by eps a round), the last free rows, the rows holding the objects they
want, the rows holding the objects those want (``TAIL_HOPS`` hops), are gathered to one worker
and matched exactly by :func:`aligner.core.rounding.round_matching` among the objects not held
by other rows. The result is optimal among the matchings that change only those rows. Its
distance to the optimum is bounded a posteriori by weak duality: for prices p >= 0 and
profits pi_i = max(0, max_j w_ij - p_j), every matching weighs at most sum pi + sum p, and the
report gives that bound minus the matching's weight (``gap_bound``).

The tail's rows are matched among themselves only, so on weights full of exact ties (a prior
used as it is, alpha 0) the result can fall short of the optimum. When ``gap_bound`` is above
the diffusion's own certified error (what the scores resolve at all), the engine matches exactly
on the client instead, which holds the candidates and x (:func:`certified_or_exact`).

References
----------
.. [1] D. P. Bertsekas, "A distributed algorithm for the assignment problem", Lab. for Information
   and Decision Systems working paper, MIT (1979).
.. [2] D. P. Bertsekas, "The auction algorithm: a distributed relaxation method for the
   assignment problem", Annals of Operations Research 14 (1988) 105-123.
.. [3] D. P. Bertsekas, D. A. Castanon, "Parallel synchronous and asynchronous implementations of
   the auction algorithm", Parallel Computing 17 (1991) 707-732.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np

from aligner.core.arrays import unique
from aligner.core.candidates import CandidateSet
from aligner.core.rounding import round_matching

__all__ = ["EPS_RELATIVE", "TAIL_ROWS", "TAIL_HOPS", "AuctionState", "Tally", "start", "step", "outbox", "figures",
           "tally", "assignment", "prices", "tail_match", "run_auction", "dual_gap", "certified_or_exact"]

#: eps as a share of the mean positive weight
EPS_RELATIVE = 1e-9
#: the tail is gathered when at most this many persons are free (or this share of them, if more)
TAIL_ROWS = 64
TAIL_SHARE = 1e-3
#: ... and their count has not fallen for this many rounds
TAIL_STALL = 6
#: hops of the tail: free rows, the rows holding what they want, and so on
TAIL_HOPS = 3
#: a price war whatever the count of free persons: over this many rounds their count fell by less
#: than a tenth (tied weights raise prices by eps a round: an 80-node path of ties ran for minutes)
SLOW_ROUNDS = 30
SLOW_SHARE = 0.9

_NO_BIDS = (np.empty(0, dtype=np.int64), np.empty(0, dtype=np.int64), np.empty(0))
_NO_REPLIES = (np.empty(0, dtype=np.int64), np.empty(0, dtype=np.int64), np.empty(0), np.empty(0, dtype=bool))


@dataclass(frozen=True, eq=False)
class AuctionState:
    """One block's persons (assignment, pending bid, out of the running, beliefs of the prices of
    its candidates' objects) and objects (price and holder of each node of B of its range)."""

    w: np.ndarray            # score of each own pair (<= 0: not a candidate)
    obj: np.ndarray          # each own pair's object, as an index into ``known``
    known: np.ndarray        # the objects the block's persons know of (global nodes of B, ascending)
    belief: np.ndarray       # the believed price of each known object
    assigned: np.ndarray     # each own person's object (global node of B) or -1
    pending: np.ndarray      # the object a person's bid waits on, or -1
    done: np.ndarray         # out of the running (unmatched for good)
    obj_lo: int
    price: np.ndarray        # objects obj_lo .. obj_lo + len - 1
    holder: np.ndarray       # global node of A or -1
    sent: dict = field(default_factory=dict)
    bids: int = 0


def start(block, x_own: np.ndarray, obj_bounds: np.ndarray) -> AuctionState:
    n_own = len(block.own_ptr) - 1
    known = unique(block.own_b)
    k = block.index
    size = int(obj_bounds[k + 1] - obj_bounds[k])
    w = np.where(x_own > 0, x_own, 0.0)
    row = np.repeat(np.arange(n_own), np.diff(block.own_ptr))
    has = np.bincount(row[w > 0], minlength=n_own) > 0
    return AuctionState(w=w, obj=np.searchsorted(known, block.own_b), known=known, belief=np.zeros(len(known)),
                        assigned=np.full(n_own, -1, dtype=np.int64), pending=np.full(n_own, -1, dtype=np.int64),
                        done=~has, obj_lo=int(obj_bounds[k]), price=np.zeros(size),
                        holder=np.full(size, -1, dtype=np.int64))


def without_fixed(block, x_own: np.ndarray, busy_a: np.ndarray, busy_b: np.ndarray) -> np.ndarray:
    """The block's scores with 0 on every pair touching a node of a seed pair (seed pairs
    included: they are added to the matching afterwards)."""
    rows = np.repeat(np.arange(len(block.own_ptr) - 1), np.diff(block.own_ptr))
    return np.where(busy_a[block.node_lo + rows] | busy_b[block.own_b], 0.0, x_own)


def _owner(bounds: np.ndarray, ids: np.ndarray) -> np.ndarray:
    return np.searchsorted(bounds, ids, side="right") - 1


def _take_bids(st: AuctionState, bids):
    """Objects side: award every object to its best bid when that is above its price (a tie to the
    smaller node of A). Returns the new prices and holders and the replies (person, object, price
    after the awards, won), the displaced holders' among them."""
    obj, person, amount = bids
    price, holder = st.price.copy(), st.holder.copy()
    order = np.lexsort((person, -amount, obj))
    obj, person, amount = obj[order], person[order], amount[order]
    top = np.zeros(len(obj), dtype=bool)
    top[np.flatnonzero(np.diff(obj, prepend=-1))] = True
    slot = obj - st.obj_lo
    win = top & (amount > price[slot])
    w_slot = slot[win]
    displaced = holder[w_slot]
    holder[w_slot] = person[win]
    price[w_slot] = amount[win]
    lost = displaced >= 0
    replies = (np.concatenate([person, displaced[lost]]), np.concatenate([obj, obj[win][lost]]),
               np.concatenate([price[slot], price[w_slot][lost]]),
               np.concatenate([win, np.zeros(int(lost.sum()), dtype=bool)]))
    return price, holder, replies


def step(block, st: AuctionState, eps: float, node_bounds: np.ndarray, obj_bounds: np.ndarray,
         inbox: list) -> AuctionState:
    """One round of one block: take the bids for its objects, read the replies to its persons, bid."""
    bids = [m[0] for m in inbox]
    replies = [m[1] for m in inbox]
    cat = [np.concatenate([b[i] for b in bids]) if bids else _NO_BIDS[i] for i in range(3)]
    price, holder, out_replies = st.price, st.holder, None
    if len(cat[0]):
        price, holder, out_replies = _take_bids(st, tuple(cat))
    assigned, pending, belief = st.assigned.copy(), st.pending.copy(), st.belief.copy()
    rep = [np.concatenate([r[i] for r in replies]) if replies else _NO_REPLIES[i] for i in range(4)]
    if len(rep[0]):
        p, o, pr, won = rep
        loc = p - block.node_lo
        kn = np.searchsorted(st.known, o)
        np.maximum.at(belief, kn, pr)
        # a reply concerns a pending bid (won or rejected) or a held object (displaced)
        was_pending = pending[loc] == o
        pending[loc[was_pending]] = -1
        assigned[loc[won]] = o[won]
        lost = ~won & (assigned[loc] == o)
        assigned[loc[lost]] = -1
    done = st.done.copy()
    sent, n_bids = _bid(block, st, belief, assigned, pending, done, eps, obj_bounds)
    if out_replies is not None:
        to = _owner(node_bounds, out_replies[0])
        order = np.argsort(to, kind="stable")
        for b in unique(to):
            sel = order[to[order] == b]
            bids_b = sent.get(int(b), (_NO_BIDS, None))[0]
            sent[int(b)] = (bids_b, tuple(a[sel] for a in out_replies))
    sent = {b: (v[0], _NO_REPLIES if v[1] is None else v[1]) for b, v in sent.items()}
    return AuctionState(st.w, st.obj, st.known, belief, assigned, pending, done, st.obj_lo, price, holder, sent,
                        n_bids)


def _bid(block, st, belief, assigned, pending, done, eps, obj_bounds):
    """Every free person without a pending bid bids for its best object (or leaves the running)."""
    free = np.flatnonzero((assigned < 0) & (pending < 0) & ~done)
    if not len(free):
        return {}, 0
    ptr = block.own_ptr
    counts = ptr[free + 1] - ptr[free]
    seg = np.zeros(len(free) + 1, dtype=np.int64)
    np.cumsum(counts, out=seg[1:])
    pos = np.repeat(ptr[free] - seg[:-1], counts) + np.arange(seg[-1])
    val = np.where(st.w[pos] > 0, st.w[pos] - belief[st.obj[pos]], -np.inf)
    starts = seg[:-1]
    v1 = np.maximum.reduceat(val, starts)
    # the first position of each segment's maximum: the smallest node of B among ties
    is_best = val == np.repeat(v1, counts)
    idx = np.arange(len(val))
    best = np.minimum.reduceat(np.where(is_best, idx, len(val)), starts)
    val2 = val.copy()
    val2[best] = -np.inf
    v2 = np.maximum(np.maximum.reduceat(val2, starts), 0.0)
    gives_up = v1 <= 0
    done[free[gives_up]] = True
    bidders, best, v1, v2 = free[~gives_up], best[~gives_up], v1[~gives_up], v2[~gives_up]
    target = block.own_b[pos[best]]
    amount = belief[st.obj[pos[best]]] + (v1 - v2) + eps
    pending[bidders] = target
    persons = block.node_lo + bidders
    to = _owner(obj_bounds, target)
    sent = {}
    for b in unique(to):
        sel = to == b
        sent[int(b)] = ((target[sel], persons[sel], amount[sel]), None)
    return sent, len(bidders)


def outbox(st: AuctionState, to: int):
    """What the block sends to block ``to`` (bids and replies) or None, picked on its worker."""
    return st.sent.get(to)


def figures(block, st: AuctionState) -> tuple[int, int, int, dict]:
    """(free persons, pending bids, bids made this round, messages by receiver)."""
    free = int(np.count_nonzero((st.assigned < 0) & ~st.done))
    return free, int(np.count_nonzero(st.pending >= 0)), st.bids, \
        {b: len(v[0][0]) + len(v[1][0]) for b, v in st.sent.items()}


@dataclass(frozen=True)
class Tally:
    """A round's :func:`figures` summed over the blocks, made on a worker, with the free persons
    after every round that ran (``history``); ``ran``: the round did work; ``go``: the rounds go on
    (see :func:`tally`)."""

    ran: bool
    go: bool
    free: int
    bids: int
    messages: int
    message_entries: int
    history: tuple


def tally(figs: list, tail_limit: float, before: Tally | None = None) -> Tally:
    """The :class:`Tally` of a round (``before``: the previous round's, None for the first). The
    rounds stop when no person is free and nothing is pending or in flight, when at most
    ``tail_limit`` persons are free and their count has not fallen for :data:`TAIL_STALL` rounds,
    or, however many are free, when their count fell by less than a tenth over :data:`SLOW_ROUNDS`
    rounds (a price war among tied weights); the free rows are then matched exactly (the tail, and
    the client's exact matching when the duality bound is above the scores' certified error)."""
    ran = before is None or before.go
    free = sum(f[0] for f in figs)
    pending = sum(f[1] for f in figs)
    in_flight = sum(sum(f[3].values()) for f in figs)
    history = (() if before is None else before.history) + ((free,) if ran else ())
    stalled = len(history) > TAIL_STALL and history[-1] >= history[-1 - TAIL_STALL]
    slow = len(history) > SLOW_ROUNDS and history[-1] > SLOW_SHARE * history[-1 - SLOW_ROUNDS]
    finished = (free == 0 and pending == 0 and in_flight == 0) or (free <= tail_limit and stalled) or slow
    return Tally(ran, ran and not finished, free, sum(f[2] for f in figs), sum(len(f[3]) for f in figs), in_flight,
                 history)


def assignment(block, st: AuctionState) -> tuple[np.ndarray, np.ndarray]:
    """(global node of A, global node of B) of every assigned own person."""
    who = np.flatnonzero(st.assigned >= 0)
    return block.node_lo + who, st.assigned[who]


def prices(block, st: AuctionState) -> tuple[np.ndarray, np.ndarray]:
    return st.price, st.holder


def dual_gap(cand: CandidateSet, w: np.ndarray, price: np.ndarray, index: np.ndarray) -> float:
    """sum_i max(0, max_j w_ij - p_j) + sum_j p_j - w(matching): by weak duality, at least the
    distance of the matching ``index`` to the optimum (any p >= 0)."""
    w = np.where(w > 0, w, 0.0)
    val = np.where(w > 0, w - price[cand.pairs[:, 1]], 0.0)
    rows = np.flatnonzero(np.diff(cand.a_indptr))
    prof = np.maximum(np.maximum.reduceat(val, cand.a_indptr[rows]), 0.0) if len(rows) else np.zeros(0)
    return float(prof.sum() + price.sum() - w[index].sum())


def tail_rows(cand: CandidateSet, w: np.ndarray, free: np.ndarray, holder_of_b: np.ndarray,
              hops: int = TAIL_HOPS) -> np.ndarray:
    """The free rows, the rows holding the objects they want, and so on for ``hops`` hops."""
    rows = np.unique(free)
    for _ in range(hops):
        pos = np.concatenate([np.arange(cand.a_indptr[i], cand.a_indptr[i + 1]) for i in rows]) if len(rows) else \
            np.empty(0, dtype=np.int64)
        pos = pos[w[pos] > 0]
        held = holder_of_b[cand.pairs[pos, 1]]
        grown = np.union1d(rows, held[held >= 0])
        if len(grown) == len(rows):
            break
        rows = grown
    return rows


def tail_match(cand: CandidateSet, w: np.ndarray, rows: np.ndarray, holder_of_b: np.ndarray,
               method: str) -> np.ndarray:
    """Exact matching of ``rows`` among the objects not held by other rows (run on one worker):
    the candidate indices of the pairs it matches."""
    keep = np.zeros(cand.n1, dtype=bool)
    keep[rows] = True
    outside = (holder_of_b >= 0) & ~keep[np.maximum(holder_of_b, 0)]
    sub_w = np.where(keep[cand.pairs[:, 0]] & ~outside[cand.pairs[:, 1]], w, 0.0)
    return round_matching(cand, sub_w, method=method).index


@dataclass
class AuctionReport:
    rounds: int = 0
    bids: int = 0
    messages: int = 0
    message_entries: int = 0
    eps: float = 0.0
    tail_free: int = 0
    tail_rows: int = 0
    gap_bound: float = float("nan")
    exact_on_client: bool = False
    seconds: float = 0.0

    def as_dict(self) -> dict:
        return {"rounds": self.rounds, "bids": self.bids, "messages": self.messages,
                "message_entries": self.message_entries, "eps": self.eps, "tail_free_rows": self.tail_free,
                "tail_rows": self.tail_rows, "gap_bound": self.gap_bound, "exact_on_client": self.exact_on_client,
                "seconds": round(self.seconds, 4)}


def run_auction(cluster, x_parts, cand: CandidateSet, x: np.ndarray, *, method: str = "auto",
                eps_relative: float = EPS_RELATIVE, max_rounds: int = 10_000):
    """Match on ``cluster`` from each block's scores ``x_parts`` (futures on the workers); ``cand``
    and the gathered ``x`` serve the tail and the duality bound on the client. Returns the
    candidate indices of the matching, sorted, and the report."""
    t0 = time.perf_counter()
    k = cluster.k
    node_bounds = cluster.node_bounds
    load = np.cumsum(np.bincount(cand.pairs[:, 1], minlength=cand.n2))
    cuts = np.searchsorted(load, load[-1] * np.arange(1, k) / k, side="left") + 1 if len(load) else np.zeros(k - 1)
    obj_bounds = np.maximum.accumulate(np.concatenate([[0], np.minimum(cuts, cand.n2), [cand.n2]])).astype(np.int64)
    pos = x[x > 0]
    eps = eps_relative * (float(pos.mean()) if len(pos) else 1.0)
    rep = AuctionReport(eps=eps)
    states = _rounds(cluster, cluster.run(start, x_parts, obj_bounds), rep, max_rounds,
                     (eps, node_bounds, obj_bounds), _partners(cand, node_bounds, obj_bounds),
                     max(TAIL_ROWS, TAIL_SHARE * cand.n1))
    pairs = cluster.collect(cluster.run(assignment, states))
    obj = cluster.collect(cluster.run(prices, states))
    price = np.concatenate([p for p, _ in obj])
    holder = np.concatenate([h for _, h in obj])
    a_nodes = np.concatenate([p[0] for p in pairs]).astype(np.int64)
    b_nodes = np.concatenate([p[1] for p in pairs]).astype(np.int64)
    index = _pair_index(cand, a_nodes, b_nodes)
    free = _free_rows(cand, x, a_nodes, states, cluster)
    if len(free):
        holder_of_b = np.full(cand.n2, -1, dtype=np.int64)
        holder_of_b[b_nodes] = a_nodes
        rows = tail_rows(cand, x, free, holder_of_b)
        sub = cluster.on_block(0, tail_match, cand, x, rows, holder_of_b, method)
        keep = ~np.isin(cand.pairs[index, 0], rows)
        index = np.sort(np.concatenate([index[keep], sub]))
        rep.tail_free, rep.tail_rows = len(free), len(rows)
    rep.gap_bound = dual_gap(cand, x, price, index)
    rep.seconds = time.perf_counter() - t0
    return index, rep


def certified_or_exact(cand: CandidateSet, w: np.ndarray, index: np.ndarray, rep: AuctionReport, resolved: float,
                       method: str = "auto") -> np.ndarray:
    """The auction's matching ``index`` when its duality gap is at most ``resolved`` (the scores'
    own certified error: no matching closer to the optimum can be told apart), else the exact
    maximum-weight matching of ``w`` (:func:`aligner.core.rounding.round_matching`, the single
    machine's), computed here; ``rep`` records which."""
    if rep.gap_bound <= resolved:
        return index
    t0 = time.perf_counter()
    exact = round_matching(cand, w, method=method).index
    rep.exact_on_client = True
    rep.seconds += time.perf_counter() - t0
    return np.sort(exact)


def _rounds(cluster, states, rep: AuctionReport, max_rounds: int, params: tuple, talk, tail_limit: float):
    """The auction's rounds from ``states``, with rounds in flight as the diffusion's
    (:meth:`~aligner.engines.dask.engine.BlockCluster.rounds`); the blocks' states after the last
    round that ran."""

    def count(t: Tally) -> None:
        rep.rounds += 1
        rep.bids += t.bids
        rep.messages += t.messages
        rep.message_entries += t.message_entries

    return cluster.rounds(states, max_rounds, (step, figures, tally, outbox), params, (tail_limit,), count,
                          senders=talk)[0]


def _partners(cand: CandidateSet, node_bounds: np.ndarray, obj_bounds: np.ndarray) -> list[list[int]]:
    """For each block, the blocks that may send it something: bids go from the block of a node of A
    to the block of each of its candidates' nodes of B, replies come back the same way."""
    k = len(node_bounds) - 1
    pb = _owner(cand.a_indptr[node_bounds], np.arange(cand.m))
    ob = _owner(obj_bounds, cand.pairs[:, 1])
    link = np.zeros((k, k), dtype=bool)
    link[pb, ob] = True
    link |= link.T
    return [np.flatnonzero(link[:, r]).tolist() for r in range(k)]


def _pair_index(cand: CandidateSet, a_nodes: np.ndarray, b_nodes: np.ndarray) -> np.ndarray:
    """Candidate indices of the pairs (a_nodes[t], b_nodes[t]) (each a candidate), ascending."""
    key = cand.pairs[:, 0].astype(np.int64) * cand.n2 + cand.pairs[:, 1]
    return np.sort(np.searchsorted(key, a_nodes * cand.n2 + b_nodes))


def _done(block, st: AuctionState) -> np.ndarray:
    return st.done


def _free_rows(cand, x, a_nodes, states, cluster) -> np.ndarray:
    """Nodes of A left free by the auction that still have a candidate of positive score."""
    has = np.zeros(cand.n1, dtype=bool)
    has[cand.pairs[x > 0, 0]] = True
    has[a_nodes] = False
    done = np.concatenate(cluster.collect(cluster.run(_done, states)))
    has[np.flatnonzero(done)] = False
    return np.flatnonzero(has)
