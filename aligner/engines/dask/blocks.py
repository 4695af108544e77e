"""Blocks of nodes of A: the partition, what the client ships for each block, and the block's rows
of the product graph built on a worker.

A block owns a contiguous range of nodes of A, hence (candidates being sorted by node of A) a
contiguous range of candidate pairs, their rows of the product graph, and their entries of the
diffusion's x and residual. A product edge leaves the block exactly when its edge of A does, so
partitioning A is enough. Inside a block the pairs have local ``int32`` ids: the owned pairs
``0 .. m_own - 1``, then the ghost pairs (pairs of other blocks that owned rows point to),
with a table ``glob`` of global ``int64`` ids.

The rows are built by :func:`aligner.core.product.build_product` on the block's data alone: its
rows of A, the candidate rows of its nodes and of their neighbours held by other blocks (the
ghost nodes), and the rows of B of its partners, renumbered locally in increasing order of
the global ids. Renumbering in that order keeps every neighbour list sorted, so the union of
the blocks' rows, read through ``glob``, is the single-machine product graph entry for entry.
"""

from __future__ import annotations

import time
from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from aligner.core.arrays import positions, unique
from aligner.core.candidates import CandidateSet
from aligner.core.diffusion import column_scale
from aligner.core.product import ProductGraph, build_product, product_row_lengths
from aligner.core.weights import AGREEMENT_FLOOR, walk_degree, walk_weights

__all__ = ["BlockInput", "Block", "node_costs", "partition", "cut_by_cost", "block_inputs", "block_sizes",
           "build_block", "gather_rows"]


def node_costs(a_indptr, a_indices, b_indptr, b_indices, cand: CandidateSet) -> np.ndarray:
    """Work of each node of A: its candidate pairs plus their stored product entries, counted
    exactly (:func:`aligner.core.product.product_row_lengths`): what the built blocks hold."""
    per_pair = product_row_lengths(a_indptr, a_indices, b_indptr, b_indices, cand) + 1
    cs = np.concatenate([[0], np.cumsum(per_pair)])
    return cs[cand.a_indptr[1:]] - cs[cand.a_indptr[:-1]]


def partition(a_indptr, a_indices, b_indptr, b_indices, cand: CandidateSet, parts: int) -> npt.NDArray[np.int64]:
    """Bounds ``0 = n_0 <= n_1 <= ... <= n_parts = n1`` of ``parts`` contiguous ranges of nodes of A
    of about equal work (:func:`node_costs`). Every range holds a node with work (candidate pairs)
    unless there are more parts than such nodes."""
    return cut_by_cost(node_costs(a_indptr, a_indices, b_indptr, b_indices, cand), parts)


def cut_by_cost(cost: np.ndarray, parts: int) -> npt.NDArray[np.int64]:
    """Bounds of ``parts`` contiguous ranges of nodes by cumulative ``cost`` (one number per node):
    range b ends at the node where the running sum reaches (b + 1) / parts of the total, so no
    range costs more than the mean plus the costliest single node.

    When at most ``parts`` nodes have a positive cost, every range gets at least one of them: a
    node carrying most of the work would otherwise leave the ranges after it empty (a star's hub:
    blocks of no pair, each still a task of every round). A bound moved for that leaves the range
    that grew with exactly one costly node, so the bound above still holds."""
    cum = np.cumsum(cost)
    total = cum[-1] if len(cum) else 0.0
    cuts = np.searchsorted(cum, total * np.arange(1, parts) / parts, side="left") + 1
    bounds = np.concatenate([[0], np.minimum(cuts, len(cost)), [len(cost)]]).astype(np.int64)
    bounds = np.maximum.accumulate(bounds)
    busy = np.flatnonzero(np.asarray(cost) > 0)
    if parts > len(busy):
        return bounds
    # the costly nodes before each bound, made strictly increasing from 0 to all of them
    held = np.searchsorted(busy, bounds, side="left")
    for b in range(1, parts + 1):
        held[b] = max(held[b], held[b - 1] + 1)
    held[parts] = len(busy)
    for b in range(parts - 1, 0, -1):
        held[b] = min(held[b], held[b + 1] - 1)
    moved = held != np.searchsorted(busy, bounds, side="left")
    bounds[moved] = busy[held[moved]]  # the range starts at its first costly node
    return bounds


def _gather_rows(indptr: np.ndarray, rows: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The CSR rows ``rows`` of a structure: (their indptr from 0, the positions of their entries)."""
    starts, stops = indptr[rows], indptr[rows + 1]
    counts = stops - starts
    ptr = np.zeros(len(rows) + 1, dtype=np.int64)
    np.cumsum(counts, out=ptr[1:])
    pos = np.repeat(starts - ptr[:-1], counts) + np.arange(ptr[-1], dtype=np.int64)
    return ptr, pos


@dataclass(frozen=True, eq=False)
class BlockInput:
    """What the client ships to the worker that builds one block (global ids throughout)."""

    index: int
    pair_bounds: npt.NDArray[np.int64]  # global pair range of every block (to find ghost owners)
    local_nodes: npt.NDArray[np.int64]  # owned and ghost nodes of A, ascending
    own_from: int                        # owned nodes are local_nodes[own_from : own_from + n_own]
    n_own: int
    a_indptr: npt.NDArray[np.int64]      # rows of A of the owned nodes
    a_indices: npt.NDArray[np.int64]
    a_weights: npt.NDArray[np.float64]
    c_indptr: npt.NDArray[np.int64]      # candidate rows of every local node
    c_b: npt.NDArray[np.int64]           # their nodes of B
    c_pair: npt.NDArray[np.int64]        # their global pair ids
    b_nodes: npt.NDArray[np.int64]       # partners of the owned pairs, ascending
    b_indptr: npt.NDArray[np.int64]      # their rows of B
    b_indices: npt.NDArray[np.int64]
    b_weights: npt.NDArray[np.float64]
    h: npt.NDArray[np.float64]           # the source vector on the owned pairs
    pair_deg: npt.NDArray[np.float64] | None  # deg_A(i) deg_B(i') of the owned pairs ("product" walk)
    directed: bool
    weighted: bool
    agreement: float | None = None  # floor of the agreement kernel (weights are levels), None: w_A * w_B

    @property
    def pair_lo(self) -> int:
        return int(self.pair_bounds[self.index])

    @property
    def m_own(self) -> int:
        return int(self.pair_bounds[self.index + 1] - self.pair_bounds[self.index])


def block_inputs(net_a, net_b, cand: CandidateSet, h: np.ndarray, bounds: np.ndarray, *, directed: bool,
                 weighted: bool, normalization: str, weight_model: str = "agreement") -> Iterator[BlockInput]:
    """Slice the client's inputs into one :class:`BlockInput` per range of ``bounds``, in order, one
    at a time (a caller that ships each block before taking the next holds one block's slices)."""
    if weighted:  # the entry weights the product graph is built from (see aligner.core.weights)
        a_ip, a_ix, a_w = walk_weights(net_a, directed, weight_model)
        b_ip, b_ix, b_w = walk_weights(net_b, directed, weight_model)
    else:
        a_ip, a_ix, a_w = net_a.walk_adjacency(directed)
        b_ip, b_ix, b_w = net_b.walk_adjacency(directed)
    agreement = AGREEMENT_FLOOR if weighted and weight_model == "agreement" else None
    pair_bounds = cand.a_indptr[bounds].astype(np.int64)
    deg = None
    if normalization == "product":
        sa = walk_degree(net_a, directed, weighted, weight_model)
        sb = walk_degree(net_b, directed, weighted, weight_model)
        deg = sa[cand.pairs[:, 0]] * sb[cand.pairs[:, 1]]
    for b in range(len(bounds) - 1):
        i0, i1 = int(bounds[b]), int(bounds[b + 1])
        p0, p1 = int(pair_bounds[b]), int(pair_bounds[b + 1])
        e0, e1 = int(a_ip[i0]), int(a_ip[i1])
        nbrs = a_ix[e0:e1].astype(np.int64)
        ghosts = unique(nbrs[(nbrs < i0) | (nbrs >= i1)])
        below = int(np.searchsorted(ghosts, i0))
        local = np.concatenate([ghosts[:below], np.arange(i0, i1, dtype=np.int64), ghosts[below:]])
        c_ptr, c_pos = _gather_rows(cand.a_indptr, local)
        partners = unique(cand.pairs[p0:p1, 1]).astype(np.int64)
        bp, b_pos = _gather_rows(b_ip, partners)
        yield BlockInput(
            index=b, pair_bounds=pair_bounds, local_nodes=local, own_from=below, n_own=i1 - i0,
            a_indptr=(a_ip[i0:i1 + 1] - e0).astype(np.int64), a_indices=nbrs,
            a_weights=a_w[e0:e1] if weighted else np.empty(0), c_indptr=c_ptr,
            c_b=cand.pairs[c_pos, 1].astype(np.int64), c_pair=c_pos, b_nodes=partners, b_indptr=bp,
            b_indices=b_ix[b_pos].astype(np.int64), b_weights=b_w[b_pos] if weighted else np.empty(0),
            h=np.ascontiguousarray(h[p0:p1]), pair_deg=None if deg is None else deg[p0:p1],
            directed=directed, weighted=weighted, agreement=agreement)


def block_sizes(a_indptr: np.ndarray, cand: CandidateSet, bounds: np.ndarray) -> np.ndarray:
    """What each block's inputs hold before they are sliced, roughly: its own candidate pairs plus
    its own entries of A (to deal the largest blocks first)."""
    return np.diff(cand.a_indptr[bounds]) + np.diff(a_indptr[bounds])


@dataclass(frozen=True, eq=False)
class Block:
    """One block on its worker: its rows of the product graph in local ids, and the tables
    between local and global ids.

    ``indptr`` has ``m_own + m_ghost + 1`` entries (ghost rows are empty, so the push kernels run
    on the block's arrays as they are); ``indices`` are local ids; ``glob[k]`` is the global id
    of local pair k. Ghost k (``k >= m_own``) belongs to block ``ghost_owner[k - m_own]`` where
    its local id is ``ghost_slot[k - m_own]``; ``links`` lists ``(owner, start, stop)``: the
    ghosts of one owner are the contiguous local ids ``start .. stop - 1``.
    """

    index: int
    pair_lo: int
    m_own: int
    indptr: npt.NDArray[np.int64]
    indices: npt.NDArray[np.int32]
    weights: npt.NDArray[np.float64]     # empty when unweighted
    glob: npt.NDArray[np.int64]
    ghost_owner: npt.NDArray[np.int32]
    ghost_slot: npt.NDArray[np.int32]
    links: tuple[tuple[int, int, int], ...]
    scale: npt.NDArray[np.float64]       # column scale, 0 on ghosts
    h: npt.NDArray[np.float64]           # source vector on the owned pairs
    degree: npt.NDArray[np.float64]      # stored entries of each owned row
    directed: bool
    seconds: float
    node_lo: int = 0                     # global id of the first owned node of A
    own_ptr: npt.NDArray[np.int64] | None = None   # candidate rows of the owned nodes (local pair ids)
    own_b: npt.NDArray[np.int64] | None = None     # node of B of every owned pair (global id)

    @property
    def m_local(self) -> int:
        return len(self.glob)

    @property
    def entries(self) -> int:
        return int(self.indptr[self.m_own])

    @property
    def cut_entries(self) -> int:
        """Stored entries of owned rows that point to a ghost pair."""
        return int(np.count_nonzero(self.indices >= self.m_own))


def _local_b(inp: BlockInput):
    """Nodes of B renumbered inside the block: the partners of every local candidate, ascending
    (with the local id of every candidate's partner); the partners' rows of B keep only those
    nodes (no other node of B can meet a candidate)."""
    b_set, c_local = unique(inp.c_b, return_inverse=True)
    pos = positions(b_set, inp.b_indices, missing=-1)
    keep = pos >= 0
    rows = np.repeat(np.arange(len(inp.b_nodes)), np.diff(inp.b_indptr))[keep]
    counts = np.zeros(len(b_set), dtype=np.int64)
    counts[positions(b_set, inp.b_nodes)] = np.bincount(rows, minlength=len(inp.b_nodes))
    indptr = np.zeros(len(b_set) + 1, dtype=np.int64)
    np.cumsum(counts, out=indptr[1:])
    weights = inp.b_weights[keep] if inp.weighted else None
    return b_set, c_local, indptr, pos[keep].astype(np.int32), weights


def build_block(inp: BlockInput) -> Block:
    """The block's rows of the product graph (run on a worker)."""
    t0 = time.perf_counter()
    n_local = len(inp.local_nodes)
    counts = np.zeros(n_local, dtype=np.int64)
    counts[inp.own_from:inp.own_from + inp.n_own] = np.diff(inp.a_indptr)
    a_ptr = np.zeros(n_local + 1, dtype=np.int64)
    np.cumsum(counts, out=a_ptr[1:])
    a_idx = positions(inp.local_nodes, inp.a_indices).astype(np.int32)
    b_set, c_local, b_ptr, b_idx, b_w = _local_b(inp)
    c_node = np.repeat(np.arange(n_local, dtype=np.int32), np.diff(inp.c_indptr))
    pairs = np.stack([c_node, c_local.astype(np.int32)], axis=1)
    local = CandidateSet(pairs=pairs, prior=np.zeros(len(pairs)), a_indptr=inp.c_indptr, n1=n_local, n2=len(b_set))
    pg = build_product(a_ptr, a_idx, b_ptr, b_idx, local, a_weights=inp.a_weights if inp.weighted else None,
                       b_weights=b_w, directed=inp.directed, agreement=inp.agreement)
    # local candidate q is global pair: owned ones are contiguous, ghosts read off the other blocks' ranges
    q0 = int(inp.c_indptr[inp.own_from])
    q1 = int(inp.c_indptr[inp.own_from + inp.n_own])
    m_own = q1 - q0
    assert m_own == inp.m_own
    lo, hi = pg.indptr[q0], pg.indptr[q1]
    built = pg.indices[lo:hi]
    outside = (built < q0) | (built >= q1)
    ghost_q, ghost_at = unique(built[outside], return_inverse=True)
    renum = np.empty(len(built), dtype=np.int32)
    renum[~outside] = built[~outside] - q0
    renum[outside] = m_own + ghost_at
    ghost_glob = inp.c_pair[ghost_q]
    owner = (np.searchsorted(inp.pair_bounds, ghost_glob, side="right") - 1).astype(np.int32)
    slot = (ghost_glob - inp.pair_bounds[owner]).astype(np.int32)
    starts = np.flatnonzero(np.diff(owner, prepend=-1)) if len(owner) else np.empty(0, dtype=np.int64)
    stops = np.append(starts[1:], len(owner))
    links = tuple((int(owner[s]), m_own + int(s), m_own + int(e)) for s, e in zip(starts, stops))
    m_local = m_own + len(ghost_q)
    indptr = np.full(m_local + 1, hi - lo, dtype=np.int64)
    indptr[: m_own + 1] = pg.indptr[q0:q1 + 1] - lo
    weights = pg.weights[lo:hi] if pg.weights is not None else np.empty(0)
    own_rows = ProductGraph(indptr[: m_own + 1], renum, directed=inp.directed,
                            weights=weights if inp.weighted else None)
    if inp.pair_deg is None:
        scale = column_scale(own_rows, "restricted")
    else:
        ids = np.arange(m_own)
        scale = column_scale(own_rows, "product", deg_a=inp.pair_deg, deg_b=np.ones(m_own),
                             pairs=np.stack([ids, ids], axis=1))
    glob = np.concatenate([inp.pair_lo + np.arange(m_own, dtype=np.int64), ghost_glob])
    return Block(index=inp.index, pair_lo=inp.pair_lo, m_own=m_own, indptr=indptr, indices=renum,
                 weights=weights, glob=glob, ghost_owner=owner, ghost_slot=slot, links=links,
                 scale=np.concatenate([scale, np.zeros(len(ghost_q))]), h=inp.h,
                 degree=np.diff(indptr[: m_own + 1]).astype(np.float64), directed=inp.directed,
                 seconds=time.perf_counter() - t0, node_lo=int(inp.local_nodes[inp.own_from]) if inp.n_own else 0,
                 own_ptr=inp.c_indptr[inp.own_from:inp.own_from + inp.n_own + 1] - q0, own_b=inp.c_b[q0:q1])


def gather_rows(block: Block) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The block's owned rows with global ids: (row lengths, neighbour ids, weights)."""
    stop = block.indptr[block.m_own]
    return np.diff(block.indptr[: block.m_own + 1]), block.glob[block.indices[:stop]].astype(np.int32), \
        block.weights
