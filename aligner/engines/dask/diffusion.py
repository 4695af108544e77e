"""The diffusion x = alpha P x + (1 - alpha) h in synchronous rounds over the blocks.

Every block keeps x and the residual r of its own pairs, plus a slot of r for every ghost pair
(a pair of another block that one of its rows points to). A round is one task per block:

1. add the mass that arrived for its pairs (sent by the other blocks at the end of the round
   before, summed per pair in the order of the senders, so two runs add in the same order);
2. push locally with the single-machine kernels of :mod:`aligner.kernels.push` on the block's own
   arrays, ghost rows being empty and ghost thresholds infinite, so mass sent to a ghost pair stays
   in its slot: ``block`` push works until every own entry is below its threshold, as the
   single-machine solver does (passes in index order while many entries are active, then the
   work queue; block-structured PageRank: converge inside a block, then exchange); ``sweep`` does one pass in
   index order (one Jacobi step between blocks, Gauss-Seidel inside one: distributed power
   iteration that skips the entries below threshold);
3. hand the ghost slots to their owners (one message per pair of blocks that share a cut edge) and
   zero them.

Push keeps x* = x + (I - alpha P)^{-1} r with r the global residual, and mass in flight is residual
of the pair it is addressed to; so ||r||_1 <= sum over blocks of (own residual + mass sent) is a
certificate, known after every round, and the run stops when it is <= tol. Each own entry is
pushed while |r_l| > (tol / 2) (deg_l + 1) / sum(deg + 1), so the blocks alone never hold more
than tol / 2 of it. The exact residual b - (I - alpha P) x is recomputed at the end with one more
exchange (the kernel :func:`aligner.kernels.push._residual` on each block, contributions to ghost
pairs sent to their owners), and it is the one reported.

The client does not wait for each round's certificate: it keeps rounds in flight
(:data:`aligner.engines.dask.engine.ROUNDS_AHEAD`), each gated by the previous round's
:class:`Tally` (summed on a worker), so a round after the one that reached tol changes nothing
and the rounds are those of stopping at once.

Block push pays off when few product edges are cut (a block then converges on its own and the
rounds are few); when most are cut (power-law graphs split into ranges of node ids), mass leaves
the block at once and a round of queue pushes only re-pushes what a sweep would push once, so
sweeps are used. The choice is made from the measured cut fraction (:func:`choose_mode`) and
reported.

References
----------
.. [1] S. D. Kamvar et al., "Exploiting the block structure of the Web for computing PageRank",
   Stanford technical report 2003-17 (2003).
.. [2] Y. Zhang, Q. Gao, L. Gao, C. Wang, "Maiter: an asynchronous graph processing framework for
   delta-based accumulative iterative computation", IEEE Transactions on Parallel and Distributed
   Systems 25 (2014) 2091-2100 (pushing deltas between workers, mass in flight as residual).
.. [3] D. Chazan, W. Miranker, "Chaotic relaxation", Linear Algebra and its Applications 2 (1969)
   199-222 (block and asynchronous iterations converge when the spectral radius of |alpha P| is
   below 1, as here: P is column sub-stochastic and alpha < 1).
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np

from aligner.core.diffusion import QUEUE_FRACTION, default_work_cap
from aligner.errors import ConvergenceError
from aligner.kernels.exchange import add_messages, take_ghosts
from aligner.kernels.push import _push, _push_pass, _residual

__all__ = ["MODES", "State", "Tally", "choose_mode", "start", "step", "tally", "outbox", "residual_part",
           "residual_finish", "own_x", "run_rounds"]

MODES = ("auto", "block", "sweep")
#: ``auto`` runs block push when at most this share of the product entries is cut, sweeps otherwise
BLOCK_PUSH_MAX_CUT = 0.25


def choose_mode(mode: str, cut_fraction: float) -> str:
    """``block`` or ``sweep``: the one asked for, or under ``auto`` the one the cut fraction calls for."""
    if mode != "auto":
        return mode
    return "block" if cut_fraction <= BLOCK_PUSH_MAX_CUT else "sweep"


@dataclass(frozen=True, eq=False)
class State:
    """One block's x and residual after a round (own entries, then ghost slots), what it sends, and
    what the round cost."""

    x: np.ndarray
    r: np.ndarray
    sent: dict = field(default_factory=dict)  # owner block -> (slots, mass)
    own_residual: float = 0.0
    in_flight: float = 0.0
    pushes: int = 0
    touches: int = 0
    thresh: np.ndarray | None = None  # push thresholds (own entries; infinite on ghosts), set by the first round
    scratch: tuple | None = None      # (own ids in order, a buffer of m_own), kept from round to round


def start(block, alpha: float) -> State:
    r = np.zeros(block.m_local)
    r[: block.m_own] = (1.0 - alpha) * block.h
    return State(np.zeros(block.m_local), r, {}, float(np.abs(r).sum()))


def _thresholds(block, tol: float, total_deg: float, power: bool) -> np.ndarray:
    t = np.full(block.m_local, np.inf)
    t[: block.m_own] = 0.0 if power else 0.5 * tol * (block.degree + 1.0) / total_deg
    return t


def _send(block, r: np.ndarray) -> tuple[dict, float]:
    """The ghost slots as messages to their owners (non-zero entries only); zeroes the slots.

    The non-zero slots are taken in one compiled pass over all ghosts and split by owner (each
    owner's ghosts are one contiguous range, :attr:`Block.links`)."""
    sent = {}
    at, slots, mass = take_ghosts(r, block.m_own, block.ghost_slot)
    if not len(at):
        return sent, 0.0
    starts = np.array([lo for _, lo, _ in block.links], dtype=np.int64) - block.m_own
    cut = np.searchsorted(at, starts)
    ends = np.append(cut[1:], len(at))
    for (owner, _, _), a, b in zip(block.links, cut, ends):
        if b > a:
            sent[owner] = (slots[a:b], mass[a:b])
    return sent, float(np.abs(mass).sum())


def _block_push(block, x: np.ndarray, r: np.ndarray, thresh: np.ndarray, alpha: float) -> tuple[int, int]:
    """Push the block's own entries until each is below its threshold, as the single-machine
    solver does (:func:`aligner.core.diffusion._solve_push`): passes in index order while a pass
    pushes at least ``QUEUE_FRACTION`` of the own entries (streaming through the block's rows),
    then the work queue for the few still active. Returns (pushes, edge touches)."""
    m = block.m_own
    cap = np.int64(2**62)
    pushes = touches = 0
    if m and np.count_nonzero(np.abs(r[:m]) > thresh[:m]) >= QUEUE_FRACTION * m:
        order = np.arange(m, dtype=np.int64)
        done = m
        while done >= QUEUE_FRACTION * m and done > 0:
            done, t = _push_pass(block.indptr, block.indices, block.weights, block.scale, alpha, x, r, thresh,
                                 order, cap)
            pushes += int(done)
            touches += int(t)
    done, t, _ = _push(block.indptr, block.indices, block.weights, block.scale, alpha, x, r, thresh, cap)
    return pushes + int(done), touches + int(t)


def step(block, state: State, mode: str, alpha: float, tol: float, total_deg: float, power: bool,
         inbox: list) -> State:
    """One round of one block (see the module docstring); ``inbox`` in the order of the senders."""
    x, r = state.x, state.r  # updated in place: only the next round reads a round's state
    _receive(block, r, inbox)
    thresh = _thresholds(block, tol, total_deg, power) if state.thresh is None else state.thresh
    scratch = state.scratch or (np.arange(block.m_own, dtype=np.int64), np.empty(block.m_own))
    if mode == "block":
        pushes, touches = _block_push(block, x, r, thresh, alpha)
    else:
        pushes, touches = _push_pass(block.indptr, block.indices, block.weights, block.scale, alpha, x, r, thresh,
                                     scratch[0], np.int64(2**62))
    sent, flight = _send(block, r)
    own = float(np.abs(r[: block.m_own], out=scratch[1]).sum())
    return State(x, r, sent, own, flight, int(pushes), int(touches), thresh, scratch)


def outbox(state: State, owner: int):
    """What ``state``'s block sends to block ``owner``, or None (picked on the sender's worker)."""
    return state.sent.get(owner)


def figures(block, state: State) -> tuple[float, float, int, int, dict]:
    return state.own_residual, state.in_flight, state.pushes, state.touches, \
        {o: len(s) for o, (s, _) in state.sent.items()}


@dataclass(frozen=True)
class Tally:
    """A round's figures summed over the blocks, made on a worker: the certificate (own residuals
    plus mass in flight), the work and the messages; ``ran``: the round did work (the round before
    it said go on); ``go``: the rounds go on (it ran and the certificate is above tol)."""

    ran: bool
    go: bool
    certificate: float
    pushes: int
    touches: int
    messages: int
    message_entries: int


def tally(figs: list, tol: float, before: Tally | None = None) -> Tally:
    """The :class:`Tally` of a round from its blocks' :func:`figures` (``before``: the previous
    round's, None for the first)."""
    ran = before is None or before.go
    cert = sum(f[0] + f[1] for f in figs)
    return Tally(ran, ran and cert > tol, cert, sum(f[2] for f in figs), sum(f[3] for f in figs),
                 sum(len(f[4]) for f in figs), sum(sum(f[4].values()) for f in figs))


def residual_part(block, state: State, alpha: float) -> State:
    """b - (I - alpha P) x over the block's rows: exact on own entries but for what other blocks'
    rows send them; the contributions to ghost pairs go out as messages."""
    b = np.zeros(block.m_local)
    b[: block.m_own] = (1.0 - alpha) * block.h
    out = np.empty(block.m_local)
    _residual(block.indptr, block.indices, block.weights, block.scale, alpha, state.x, b, out)
    sent, flight = _send(block, out)
    return State(state.x, out, sent, 0.0, flight)


def residual_finish(block, part: State, inbox: list) -> float:
    r = part.r.copy()
    _receive(block, r, inbox)
    return float(np.abs(r[: block.m_own]).sum())


def _receive(block, r: np.ndarray, inbox) -> None:
    """Add the messages ``inbox`` (slots, mass) to ``r``, in the order given (that of the senders)."""
    for slots, mass in inbox:
        add_messages(r, slots, mass)


def own_x(block, state: State) -> np.ndarray:
    return state.x[: block.m_own]


@dataclass
class RoundsReport:
    mode: str
    rounds: int = 0
    pushes: int = 0
    edge_touches: int = 0
    messages: int = 0
    message_entries: int = 0
    certificate: float = float("nan")
    residual: float = float("nan")
    seconds: float = 0.0

    def as_dict(self) -> dict:
        return {"mode": self.mode, "rounds": self.rounds, "pushes": self.pushes, "edge_touches": self.edge_touches,
                "messages": self.messages, "message_entries": self.message_entries,
                "certificate_l1": self.certificate, "residual_l1": self.residual, "seconds": round(self.seconds, 4)}


def _rounds(cluster, states, cert: float, rep: RoundsReport, cap: int, params: tuple):
    """The rounds from ``states`` (whose certificate is ``cert``) until the certificate is at most
    tol (or ``cap`` rounds): the blocks' states after the last round that ran, and its certificate.

    The client keeps rounds in flight (:meth:`~aligner.engines.dask.engine.BlockCluster.rounds`):
    each round's :func:`tally` is made on a worker and gates the next round (a round after the
    one whose certificate reached tol changes nothing), so the rounds wait on each other on the
    cluster, not on a round trip to the client, and the result is that of stopping at once.
    """

    def count(t: Tally) -> None:
        rep.rounds += 1
        rep.pushes += t.pushes
        rep.edge_touches += t.touches
        rep.messages += t.messages
        rep.message_entries += t.message_entries

    states, t = cluster.rounds(states, cap, (step, figures, tally, outbox), params, (params[2],), count)
    return states, cert if t is None else t.certificate


def run_rounds(cluster, alpha: float, tol: float, mode: str, power: bool = False,
               max_rounds: int | None = None) -> tuple[np.ndarray, RoundsReport, list]:
    """Run the rounds on ``cluster`` (a :class:`aligner.engines.dask.engine.BlockCluster`) to the
    certificate ``tol``, recompute the exact residual, and gather x in global pair order. Returns
    x, the report, and each block's own x (a group result, left on the workers for the matching).

    Raises ConvergenceError when ``max_rounds`` (default: the power iteration's work cap) pass
    first, or the exact residual is above ``tol`` or not finite.
    """
    t0 = time.perf_counter()
    rep = RoundsReport(mode)
    total_deg = float(sum(cluster.entries) + sum(cluster.m_own))
    cap = max_rounds if max_rounds is not None else default_work_cap("power", 1, alpha, tol)
    states = cluster.run(start, alpha)
    cert = sum(f[0] for f in cluster.collect(cluster.run(figures, states)))
    if cert > tol:
        states, cert = _rounds(cluster, states, cert, rep, cap, (mode, alpha, tol, total_deg, power))
    rep.certificate = cert
    parts = cluster.run(residual_part, states, alpha)
    norms = cluster.collect(cluster.run(residual_finish, parts, mails=cluster.exchange(parts, outbox)))
    rep.residual = float(sum(norms))
    x_parts = cluster.run(own_x, states)
    x = np.concatenate(cluster.collect(x_parts))
    rep.seconds = time.perf_counter() - t0
    if not np.isfinite(rep.residual) or not np.isfinite(x).all():
        raise ConvergenceError("the distributed diffusion produced a score or residual that is not a finite number; "
                               "check the prior and the edge weights for inf or NaN", iterations=rep.rounds,
                               residual=rep.residual)
    if rep.residual > tol:  # the advice names the keywords, or on the command line the options, as one machine's
        raise ConvergenceError(f"the distributed diffusion stopped before the residual tolerance {tol:g}",
                               iterations=rep.rounds, residual=rep.residual,
                               advice=(("raise {}", "tol", None), ("lower {}", "alpha", None)))
    return x, rep, x_parts
