"""Anchor pairs (seeds): known corresponding nodes that fix part of the map and guide the rest.

A seed table lists pairs (node of A, node of B) known to correspond. Seeds

* are **fixed** in the final matching: their nodes take no part in the assignment
  (:func:`round_with_fixed`);
* are **extra diffusion sources**: the personalization h gains mass on the seed pairs
  (:func:`seed_vector`, weight ``seed_weight``);
* may **replace the prior**: without a prior, the candidate pairs are grown outward from the
  seeds through the wiring alone (:func:`expand_from_seeds`);
* are **reported apart**: the edges among seed nodes are conserved by construction, so the
  summary gives the scores without them as well (:func:`seed_summary`).
"""

from __future__ import annotations

import os
import time
from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np
import numpy.typing as npt

from aligner.kernels.query import witness_rows
from aligner.checks import check_int, check_real
from aligner.config import AlignConfig
from aligner.core.candidates import CandidateSet, build_candidates
from aligner.errors import InputFormatError, InvalidParameterError
from aligner.core.network import Network, adjacency
from aligner.core.identifiers import first_shared_node, lookup, text_at
from aligner.io.inputs import as_table
from aligner.io.readers import Table, check_skipped_header, data_lines, read_table
from aligner.core.rounding import Matching, round_matching
from aligner.core.scoring import score_matching

__all__ = ["SeedTable", "SeedExpansion", "read_seeds", "as_seeds", "add_seed_pairs", "seed_index",
           "seed_vector", "expand_from_seeds", "round_with_fixed", "seed_summary", "DEFAULT_SEED_WEIGHT"]

#: Default total mass of the seed pairs in h, relative to the prior's (which sums to 1): the
#: seeds together weigh as much as the whole prior.
DEFAULT_SEED_WEIGHT: float = AlignConfig.seed_weight  # declared once, in aligner.config
#: Default cap on the rounds of :func:`expand_from_seeds`.
DEFAULT_MAX_ROUNDS = 100


@dataclass(frozen=True)
class SeedTable:
    """Seed pairs mapped onto two networks: one-to-one, sorted by node of A.

    Attributes
    ----------
    pairs : ndarray of int32, shape (s, 2)
        The seed pairs (node of A, node of B).
    n_rows : int
        Data rows read (repeated identical rows are merged).
    n_repeated : int
        Rows that repeated an earlier row exactly.
    source : str
        Where the seeds came from.
    """

    pairs: npt.NDArray[np.int32]
    n_rows: int
    n_repeated: int = 0
    source: str = "<memory>"

    @property
    def n(self) -> int:
        return len(self.pairs)


# --------------------------------------------------------------------------- reading

def _check_seed_columns(table: Table, net_a: Network, net_b: Network) -> SeedTable:
    """Map a table's first two columns onto node indices; refuse unknown nodes and nodes in two pairs.

    A message names the file and line of the row at fault (``seeds.tsv, line 7: ...``), or an
    object's row (``<seeds>: row 3: ...``).
    """
    a, b, source, where = table.names(0), table.names(1), table.source, table.where
    hint = "fix or remove it (every seed must name a node of A, then a node of B)"
    if len(a) == 0:
        raise InputFormatError("holds no seed pairs; give a table of known pairs node_a, node_b (one pair per "
                               "line), or leave out the seeds", path=source)
    ia = lookup(net_a.names, a)
    ib = lookup(net_b.names, b)
    for col, idx, net, name in ((0, ia, net_a, "A"), (1, ib, net_b, "B")):
        if (idx < 0).any():
            r = int(np.argmax(idx < 0))
            value = text_at(a if col == 0 else b, r)
            extra = ""
            other = net_b if col == 0 else net_a
            if lookup(other.names, np.array([value], dtype=object))[0] >= 0:
                extra = f"; it is a node of network {'B' if col == 0 else 'A'}: are the columns swapped?"
            elif r == 0:
                extra = "; if this line is a header, give --header yes"
            raise table.error(r, f"{value!r} in column {col + 1} is not a node of network {name}{extra}; {hint}")
    pairs = np.stack([ia, ib], axis=1).astype(np.int64)
    # repeated identical rows are merged; a node in two different pairs is an error
    key = pairs[:, 0] * max(net_b.n, 1) + pairs[:, 1]
    _, first = np.unique(key, return_index=True)
    rows = np.sort(first)
    n_rep = len(pairs) - len(rows)
    found = first_shared_node(pairs[rows])
    if found is not None:
        k2, k1, col = found
        r1, r2 = int(rows[k1]), int(rows[k2])
        name = "A" if col == 0 else "B"
        node = (net_a if col == 0 else net_b).names[pairs[r2, col]]
        raise table.error(r2, f"node {node!r} of network {name} is already in the seed pair of {where(r1)}; "
                          "a node can be in one seed pair only (seeds are one-to-one): keep one of the two "
                          + ("lines" if table.first_line is not None else "rows"))
    pairs = pairs[rows]
    pairs = pairs[np.lexsort((pairs[:, 1], pairs[:, 0]))].astype(np.int32)
    return SeedTable(pairs=pairs, n_rows=len(a), n_repeated=int(n_rep), source=source)


def read_seeds(path: str | os.PathLike, net_a: Network, net_b: Network, *, delimiter: str | None = None,
               header: str = "auto") -> SeedTable:
    """Read a seed table: first column a node of A, second its known counterpart in B.

    Further columns are ignored. Lines starting with ``#`` and blank lines are skipped.

    Raises
    ------
    InputFormatError
        The file is missing, empty or malformed, names a node missing from its network, or
        puts a node in two different pairs; the message names the file and line.
    """
    path = os.fspath(path)
    try:
        empty = next(data_lines(path), None) is None
    except (OSError, UnicodeDecodeError, EOFError):
        empty = False  # let the reader give its message
    if empty:
        raise InputFormatError("is empty: it holds no seed pairs; give a table of known pairs node_a, node_b "
                               "(one pair per line), or leave out --seeds", path=path)
    table = read_table(path, min_cols=2, max_cols=64, delimiter=delimiter, header=header, what="seed table")
    check_skipped_header(table, net_a, net_b, header)
    return _check_seed_columns(table, net_a, net_b)


def as_seeds(obj, net_a: Network, net_b: Network, *, delimiter: str | None = None,
             header: str = "auto") -> SeedTable:
    """A :class:`SeedTable` from a path, a DataFrame (first two columns), rows or a mapping a -> b.

    Objects go through :func:`aligner.io.inputs.as_table`; a message names their rows
    ("row 2", 1-based) as it names a file's lines.
    """
    if isinstance(obj, SeedTable):
        return obj
    if isinstance(obj, (str, os.PathLike)):
        return read_seeds(obj, net_a, net_b, delimiter=delimiter, header=header)
    table = as_table(obj, name="seeds", layout="node_a, node_b", min_cols=2, max_cols=64, source="<seeds>")
    check_skipped_header(table, net_a, net_b, header)
    return _check_seed_columns(table, net_a, net_b)


# --------------------------------------------------------------------------- candidates and h

def _keys(pairs: np.ndarray, n2: int) -> np.ndarray:
    return pairs[:, 0].astype(np.int64) * max(n2, 1) + pairs[:, 1].astype(np.int64)


def seed_index(cand: CandidateSet, seeds: SeedTable) -> npt.NDArray[np.int64]:
    """Candidate index of every seed pair (all must be candidates; see :func:`add_seed_pairs`)."""
    if seeds.n == 0:
        return np.empty(0, dtype=np.int64)
    key = _keys(cand.pairs, cand.n2)
    want = _keys(seeds.pairs, cand.n2)
    pos = np.minimum(np.searchsorted(key, want), max(len(key) - 1, 0))
    if len(key) == 0 or (key[pos] != want).any():
        raise InvalidParameterError("a seed pair is not among the candidate pairs; add them with add_seed_pairs")
    return pos.astype(np.int64)


def _among(key: npt.NDArray[np.int64], want: npt.NDArray[np.int64]) -> npt.NDArray[np.bool_]:
    """Whether each of ``want`` is in ``key`` (sorted, as a candidate set's keys are)."""
    if len(key) == 0:
        return np.zeros(len(want), dtype=bool)
    return key[np.minimum(np.searchsorted(key, want), len(key) - 1)] == want


def add_seed_pairs(cand: CandidateSet, seeds: SeedTable, *, added: bool = False):
    """The candidate set with the seed pairs added (a seed pair missing from it gets prior 0);
    with ``added``, also the indices of the added pairs in the new set (sorted)."""
    none = np.empty(0, dtype=np.int64)
    if seeds.n == 0:
        return (cand, none) if added else cand
    key = _keys(cand.pairs, cand.n2)
    want = _keys(seeds.pairs, cand.n2)
    new = ~_among(key, want)
    if not new.any():
        return (cand, none) if added else cand
    pairs = np.concatenate([cand.pairs.astype(np.int64), seeds.pairs[new].astype(np.int64)])
    prior = np.concatenate([cand.prior, np.zeros(int(new.sum()))])
    keys = _keys(pairs, cand.n2)
    order = np.argsort(keys, kind="stable")
    pairs, prior = pairs[order].astype(np.int32), prior[order]
    a_indptr = np.zeros(cand.n1 + 1, dtype=np.int64)
    np.cumsum(np.bincount(pairs[:, 0], minlength=cand.n1), out=a_indptr[1:])
    out = CandidateSet(pairs=pairs, prior=prior, a_indptr=a_indptr, n1=cand.n1, n2=cand.n2)
    if not added:
        return out
    return out, np.unique(np.searchsorted(keys[order], want[new]))


def seed_vector(prior: npt.ArrayLike, seed_idx: npt.ArrayLike, weight: float = DEFAULT_SEED_WEIGHT
                ) -> npt.NDArray[np.float64]:
    """h = (prior / sum(prior) + weight * 1_S / |S|) / (1 + weight), over the candidate pairs.

    The prior part sums to 1 (uniform when every prior score is 0), the seed part to
    ``weight``, spread evenly over the seed pairs S; h sums to 1. Without seeds, or with
    ``weight = 0``, this is :func:`aligner.core.diffusion.prior_vector`.
    """
    from aligner.core.diffusion import prior_vector

    h = prior_vector(np.asarray(prior, dtype=np.float64))
    seed_idx = np.asarray(seed_idx, dtype=np.int64)
    if len(seed_idx) == 0 or weight == 0 or len(h) == 0:
        return h
    if not np.any(np.asarray(prior) > 0):  # no prior evidence at all (scores are >= 0): the seeds alone
        h = np.zeros(len(h))
        h[seed_idx] = 1.0 / len(seed_idx)
        return h
    h = h.copy()
    np.add.at(h, seed_idx, weight / len(seed_idx))
    return h / (1.0 + weight)


# --------------------------------------------------------------------------- growing from the seeds

@dataclass(frozen=True, eq=False)
class SeedExpansion:
    """Candidate pairs grown from the seeds through the wiring, with the provisional matching.

    Attributes
    ----------
    candidates : CandidateSet
        The candidate pairs; ``prior`` holds their derived score (witness count plus half
        the degree similarity, see :func:`expand_from_seeds`). Seed pairs are included.
    provisional : ndarray of int64, shape (k, 2)
        The provisional one-to-one matching the rounds grew (seeds included).
    rounds : int
        Rounds run.
    accepted : list of int
        Pairs accepted in each round.
    seconds : float
    """

    candidates: CandidateSet
    provisional: npt.NDArray[np.int64]
    rounds: int
    accepted: list = field(default_factory=list)
    seconds: float = 0.0

    def report(self) -> dict:
        return {"rounds": self.rounds, "provisional_pairs": int(len(self.provisional)),
                "accepted_per_round": [int(v) for v in self.accepted], "candidates": self.candidates.m,
                "seconds": round(self.seconds, 4)}


class _Wiring(NamedTuple):
    """A network as the witness counts read it (:func:`_wiring`). Its links are numbered as
    *channels*: undirected, channel a is the edge to node a; directed, channel a is an arc to
    a (a successor) and channel a + n an arc from a (a predecessor)."""

    rows_ptr: np.ndarray  # for each node j, its links as channels (sorted)
    rows_idx: np.ndarray
    ends_ptr: np.ndarray  # for each channel of a node a', the nodes j' linked to a' that way
    ends_idx: np.ndarray
    degree: np.ndarray  # links per node (int64): edges, or arcs out and in
    n: int
    directed: bool


def _wiring(net: Network, directed: bool) -> _Wiring:
    """The witness counts' view of ``net``: its undirected adjacency, or with ``directed`` its
    arcs split by direction, so that an anchor (a, a') witnesses (j, j') only where the arc
    between j and a points as the arc between j' and a' does."""
    if not directed:
        return _Wiring(net.indptr, net.indices, net.indptr, net.indices, net.degree.astype(np.int64), net.n, False)
    if not net.directed:
        raise ValueError("an undirected network has no arcs")
    n = net.n
    u, v = net.arcs[:, 0].astype(np.int64), net.arcs[:, 1].astype(np.int64)
    # node j's row: its successors a (channel a), then its predecessors a (channel a + n)
    rows_ptr, rows_idx = adjacency(np.concatenate([np.stack([u, v], axis=1), np.stack([v, u + n], axis=1)]),
                                   2 * n, symmetric=False)
    rows_ptr = rows_ptr[:n + 1]
    # channel a' (< n): the nodes j' with an arc j' -> a'; channel a' + n: those with a' -> j'
    ends_ptr, ends_idx = adjacency(np.concatenate([np.stack([v, u], axis=1), np.stack([u + n, v], axis=1)]),
                                   2 * n, symmetric=False)
    return _Wiring(rows_ptr, rows_idx, ends_ptr, ends_idx, np.diff(rows_ptr), n, True)


def _channel_mates(mate: np.ndarray, other: _Wiring) -> np.ndarray:
    """Each channel of one network mapped through the anchors ``mate`` onto the channel of the
    ``other`` network that runs the same way (-1 where the node is not anchored)."""
    if not other.directed:
        return mate
    return np.concatenate([mate, np.where(mate >= 0, mate + other.n, -1)])


def _witnesses(wa: _Wiring, wb: _Wiring, mate_a: np.ndarray, mate_b: np.ndarray, rows: np.ndarray, kcap: int,
               skip_matched: bool):
    """:func:`aligner.kernels.query.witness_rows` on the wiring ``wa`` (the nodes ``rows``)
    against ``wb``, anchors ``mate_a`` (and ``mate_b`` back)."""
    return witness_rows(wa.rows_ptr, wa.rows_idx, wb.ends_ptr, wb.ends_idx, _channel_mates(mate_a, wb), mate_b,
                        rows.astype(np.int64), kcap, wa.degree, wb.degree, skip_matched)


def _frontier(net_a: Network, anchored: np.ndarray) -> np.ndarray:
    """Nodes of A that are not anchored and have an anchored neighbour."""
    src = np.repeat(np.arange(net_a.n), np.diff(net_a.indptr))
    near = np.zeros(net_a.n, dtype=bool)
    near[src[anchored[net_a.indices]]] = True
    return np.flatnonzero(near & ~anchored)


def expand_from_seeds(net_a: Network, net_b: Network, seeds: SeedTable, *, top_k: int | None = 25,
                      max_rounds: int = DEFAULT_MAX_ROUNDS, directed: bool = False) -> SeedExpansion:
    """Candidate pairs without a prior: grown outward from the seeds through the wiring.

    Parameters
    ----------
    net_a, net_b : Network
    seeds : SeedTable
        At least one seed pair.
    top_k : int or None
        Candidates per node on each side in the final set (as for a prior); None keeps 50.
    max_rounds : int
        Cap on the growing rounds.
    directed : bool
        Count arcs (both networks directed): an anchor (a, a') witnesses (j, j') where j -> a
        and j' -> a', or a -> j and a' -> j', and the degree similarity compares arcs in and out.

    Returns
    -------
    SeedExpansion

    Notes
    -----
    The **witness count** of a pair (j, j') against a one-to-one set of anchor pairs M is
    the number of anchors (a, a') with a in N_A(j) and a' in N_B(j'): the edges at j that
    matching j to j' would conserve with the anchors (with ``directed``, the arcs: a
    successor a of j counts where a' is a successor of j', a predecessor where a' is a
    predecessor of j'). Starting from M = the seeds, each round

    1. takes every unanchored node j of A next to an anchor, and its best 2 top_k
       unanchored partners j' by witness count (ties: degree similarity
       min(d, d') / max(d, d'), then the smaller index) -- only pairs (j, j') with j in
       N(a), j' in N(a') for some anchor, so the work is the sum over anchors of
       deg_A(a) deg_B(a'), never n_A n_B;
    2. keeps the pairs whose count reaches the floor (2 at first; 1 once no pair reaches 2);
    3. solves a maximum-weight one-to-one matching of them, weight = count + 0.5 degree
       similarity (:func:`aligner.core.rounding.round_matching`), and
    4. accepts the matched pairs whose count is at least half the round's highest count:
       the best-supported pairs go first, so early mistakes are rare and later rounds have
       more anchors to count with.

    Rounds stop when no pair can be accepted. The final candidates are, for every node of A,
    its best ``top_k`` partners by witness count against the provisional matching (anchored
    partners included), united with each node of B's best ``top_k`` (as
    :func:`aligner.core.candidates.build_candidates` does for a prior), with the provisional
    pairs and the seeds; their score (count + 0.5 degree similarity) serves as the prior.
    Growing a matching from seeds by counting such witnesses follows the idea of percolation
    graph matching (the reference is in ``docs/method.md``); the matching per round and the
    half-the-best acceptance rule are this package's.
    """
    max_rounds = check_int(max_rounds, "max_rounds", low=0)
    if seeds.n == 0:
        raise InvalidParameterError("seeds must hold at least one seed pair to grow candidates from; got none",
                                    param="seeds")
    t0 = time.perf_counter()
    wa, wb = _wiring(net_a, directed), _wiring(net_b, directed)
    mate_a = np.full(net_a.n, -1, dtype=np.int64)
    mate_b = np.full(net_b.n, -1, dtype=np.int64)
    mate_a[seeds.pairs[:, 0]] = seeds.pairs[:, 1]
    mate_b[seeds.pairs[:, 1]] = seeds.pairs[:, 0]
    rounds, accepted = _grow(net_a, wa, wb, mate_a, mate_b, kcap=2 * (top_k if top_k is not None else 25),
                             max_rounds=max_rounds)
    cand, prov = _final_candidates(wa, wb, mate_a, mate_b, seeds, top_k)
    return SeedExpansion(cand, prov, rounds, accepted, time.perf_counter() - t0)


def _grow(net_a: Network, wa: _Wiring, wb: _Wiring, mate_a: np.ndarray, mate_b: np.ndarray, *, kcap: int,
          max_rounds: int) -> tuple[int, list[int]]:
    """The rounds of :func:`expand_from_seeds`: extend the matching ``mate_a``/``mate_b`` in place
    (the frontier on A's undirected adjacency, the witnesses on the wirings ``wa``, ``wb``).

    Returns the rounds run and the pairs accepted in each.
    """
    floor = 2
    accepted: list[int] = []
    rounds = 0
    while rounds < max_rounds:
        rows = _frontier(net_a, mate_a >= 0)
        if len(rows) == 0:
            break
        p, c, d = _witnesses(wa, wb, mate_a, mate_b, rows, kcap, True)
        keep = c >= floor
        if not keep.any():
            if floor > 1:
                floor -= 1
                continue
            break
        rounds += 1
        p, c, d = p[keep], c[keep], d[keep]
        cs = build_candidates(p, c + 0.5 * d, wa.n, wb.n, top_k=None)
        match = round_matching(cs, cs.prior)
        got = cs.pairs[match.index].astype(np.int64)
        count = np.floor(cs.prior[match.index])
        got = got[count >= max(floor, np.ceil(0.5 * c.max()))]
        mate_a[got[:, 0]] = got[:, 1]
        mate_b[got[:, 1]] = got[:, 0]
        accepted.append(len(got))
    return rounds, accepted


def _final_candidates(wa: _Wiring, wb: _Wiring, mate_a: np.ndarray, mate_b: np.ndarray,
                      seeds: SeedTable, top_k: int | None) -> tuple[CandidateSet, np.ndarray]:
    """Candidates by witness count against the provisional matching, with its pairs and the seeds.

    Returns the candidate set and the provisional pairs.
    """
    n1, n2 = wa.n, wb.n
    k_final = top_k if top_k is not None else 50
    # each side's best k_final (the witness count is symmetric): a node of B must get its own
    # best partners, not only those that some node of A ranked among its best
    p, c, d = _witnesses(wa, wb, mate_a, mate_b, np.arange(n1, dtype=np.int64), k_final, False)
    q, cq, dq = _witnesses(wb, wa, mate_b, mate_a, np.arange(n2, dtype=np.int64), k_final, False)
    prov_a = np.flatnonzero(mate_a >= 0)
    prov = np.stack([prov_a, mate_a[prov_a]], axis=1)
    prov_score = _witness_scores(wa, wb, mate_a, prov)
    pairs = np.concatenate([p, q[:, ::-1], prov])
    score = np.concatenate([c + 0.5 * d, cq + 0.5 * dq, prov_score])  # merging keeps a pair's best score
    cand = build_candidates(pairs, score, n1, n2, top_k=top_k)
    missing = ~np.isin(_keys(prov, n2), _keys(cand.pairs, n2))
    if missing.any():  # a provisional pair cut by the top-k of both its nodes: keep it, with its own score
        cand = add_seed_pairs(cand, SeedTable(prov[missing].astype(np.int32), int(missing.sum())))
        prior = cand.prior.copy()
        prior[np.searchsorted(_keys(cand.pairs, n2), _keys(prov[missing], n2))] = prov_score[missing]
        cand = CandidateSet(pairs=cand.pairs, prior=prior, a_indptr=cand.a_indptr, n1=n1, n2=n2)
    return add_seed_pairs(cand, seeds), prov


def _witness_scores(wa: _Wiring, wb: _Wiring, mate_a: np.ndarray, pairs: np.ndarray) -> np.ndarray:
    """Witness count + 0.5 degree similarity of each pair (j, j') against the anchors ``mate_a``
    (0 for a pair without witnesses), as :func:`witness_rows` scores the pairs it ranks."""
    if len(pairs) == 0:
        return np.zeros(0)
    j, jp = pairs[:, 0].astype(np.int64), pairs[:, 1].astype(np.int64)
    deg_a, deg_b = wa.degree, wb.degree
    row = np.repeat(np.arange(len(pairs)), deg_a[j])  # one entry per link (channel) of j
    starts = np.repeat(wa.rows_ptr[j] - np.cumsum(np.r_[0, deg_a[j][:-1]]), deg_a[j])
    ap = _channel_mates(mate_a, wb)[wa.rows_idx[starts + np.arange(len(row))]]
    row, ap = row[ap >= 0], ap[ap >= 0]
    # is the anchor's partner a' linked to j' the same way? (the rows of B's wiring are sorted)
    width = max(2 * wb.n if wb.directed else wb.n, 1)  # channels of B
    b_keys = np.repeat(np.arange(wb.n, dtype=np.int64), deg_b) * width + wb.rows_idx
    want = jp[row] * width + ap
    pos = np.minimum(np.searchsorted(b_keys, want), max(len(b_keys) - 1, 0))
    hit = b_keys[pos] == want if len(b_keys) else np.zeros(len(want), dtype=bool)
    count = np.bincount(row[hit], minlength=len(pairs)).astype(np.float64)
    da, db = deg_a[j].astype(np.float64), deg_b[jp].astype(np.float64)
    hi = np.maximum(da, db)
    sim = np.divide(np.minimum(da, db), hi, out=np.ones(len(pairs)), where=hi > 0)
    return np.where(count > 0, count + 0.5 * sim, 0.0)


# --------------------------------------------------------------------------- rounding and scores

def round_with_fixed(cand: CandidateSet, w: npt.ArrayLike, fixed_idx: npt.ArrayLike, *,
                     method: str = "auto") -> Matching:
    """Maximum-weight one-to-one matching that contains the pairs ``fixed_idx``.

    The nodes of the fixed pairs are removed from competition: every other candidate that
    touches one of them gets weight 0 (so is never used), the rest is solved optimally by
    :func:`aligner.core.rounding.round_matching`, and the fixed pairs are added. ``weight`` is the
    total of ``w`` over the final matching, fixed pairs included.
    """
    t0 = time.perf_counter()
    w = np.asarray(w, dtype=np.float64)
    fixed_idx = np.asarray(fixed_idx, dtype=np.int64)
    if len(fixed_idx) == 0:
        return round_matching(cand, w, method=method)
    busy_a = np.zeros(cand.n1, dtype=bool)
    busy_b = np.zeros(cand.n2, dtype=bool)
    busy_a[cand.pairs[fixed_idx, 0]] = True
    busy_b[cand.pairs[fixed_idx, 1]] = True
    free = w.copy()
    free[busy_a[cand.pairs[:, 0]] | busy_b[cand.pairs[:, 1]]] = 0.0
    m = round_matching(cand, free, method=method)
    index = np.sort(np.concatenate([m.index, fixed_idx]))
    with np.errstate(over="ignore"):  # scores whose sum passes the largest float (a prior near 1e308): inf
        weight = float(w[index].sum())
    return Matching(index=index, method=m.method, weight=weight, seconds=time.perf_counter() - t0)


def seed_summary(net_a: Network, net_b: Network, matched: npt.ArrayLike, seeds: SeedTable, *,
                 truth: npt.ArrayLike | None = None, weighted: bool = False) -> dict:
    """The seed figures of a run, and its scores with the edges among seed nodes left out.

    ``seed_edges_a`` / ``seed_edges_b`` count the edges of A among seed nodes of A and of B
    among their images; ``conserved_among_seeds`` the edges of A among seed nodes that the
    seeds carry onto edges of B. These are conserved whatever the aligner does, so
    ``scores_without_seed_edges`` recomputes every score on A and B with those edges
    removed (EC, ICS and S3 over the remaining edges), and NC over the truth nodes that are
    not seeds. Networks read as directed are counted in arcs, as the run's own scores are; a
    ``weighted`` run's scores also give the conserved weight and the weighted EC, as its own do.
    """
    matched = np.asarray(matched, dtype=np.int64).reshape(-1, 2)
    sa = np.zeros(net_a.n, dtype=bool)
    sb = np.zeros(net_b.n, dtype=bool)
    sa[seeds.pairs[:, 0]] = True
    sb[seeds.pairs[:, 1]] = True
    directed = net_a.directed and net_b.directed
    (ea, wa), (eb, wb) = net_a.scored_edges(directed), net_b.scored_edges(directed)
    in_a = sa[ea[:, 0]] & sa[ea[:, 1]]
    in_b = sb[eb[:, 0]] & sb[eb[:, 1]]
    f = seeds.pairs.astype(np.int64)
    sc_seed, _ = score_matching(ea[in_a], eb[in_b], f, net_a.n, net_b.n, directed=directed)
    t = None
    if truth is not None:
        t = np.asarray(truth, dtype=np.int64).reshape(-1, 2)
        t = t[~sa[t[:, 0]]]
    weights = {}
    if weighted and wa is not None and wb is not None:
        weights = {"weights_a": np.asarray(wa, dtype=np.float64)[~in_a],
                   "weights_b": np.asarray(wb, dtype=np.float64)[~in_b]}
    sc, _ = score_matching(ea[~in_a], eb[~in_b], matched, net_a.n, net_b.n, truth=t, directed=directed, **weights)
    out = {"source": str(seeds.source), "rows": seeds.n_rows, "pairs": seeds.n,
           "repeated_rows_merged": seeds.n_repeated, "seed_edges_a": int(in_a.sum()),
           "seed_edges_b": int(in_b.sum()), "conserved_among_seeds": sc_seed.conserved_edges,
           "scores_without_seed_edges": sc.as_dict()}
    if sc.nc_detail:
        out["scores_without_seed_edges"]["nc_detail"] = sc.nc_detail
    return out


def _check_seed_weight(weight, where: str) -> float:
    return check_real(weight, "seed_weight", low=0.0)
