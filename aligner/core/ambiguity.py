"""Interchangeable nodes: where the final matching could differ at no loss.

Bilateral animals, duplicated genes and near-duplicate records make some nodes interchangeable:
swapping them changes neither the conserved edges nor (within a tolerance) the prior, and the
matching picks one arbitrarily. Two kinds of evidence are collected:

- **Neutral exchanges.** The 2-exchanges of the refinement's local search (a node takes another
  candidate partner, free or held by a node that then takes the first node's partner) that keep
  the conserved edges exactly and replace each pair by one with a prior within ``prior_tol`` of
  it (:func:`aligner.kernels.refine.neutral_exchanges`).
- **Indistinguishable nodes.** Matched pairs (i, i') and (j, j') that could swap partners (both
  (i, j') and (j, i') are candidates, each at a prior within ``prior_tol`` of the pair it would
  replace) where colour refinement (the 1-dimensional Weisfeiler–Lehman test, Weisfeiler & Leman
  1968) gives i and j one colour in A and i' and j' one colour in B. Refinement runs only while
  such a pair is still undecided, so priors that rule out every swap cost nothing. Colour
  refinement cannot tell apart nodes that an automorphism swaps, so this finds the mirror image
  of a bilaterally symmetric network, a swap of many pairs at once that no 2-exchange reaches.
  (Equal colours are necessary for an automorphism, not sufficient; on the graphs where they
  differ, regular graphs for instance, the wiring indeed does not tell the nodes apart locally.)

- **Near-optimal matchings.** When the refinement ran from several starts, the other matchings
  it reached that conserve nearly as many edges (within ``aligner.core.refine.NEAR_TIE``, 0.5 %)
  and differ from the kept one: at every node of A where such a matching gives another partner
  at a prior within ``prior_tol`` of its own pair's, that partner is an alternative. This finds
  mirror images that noise has made inexact (colour refinement then tells the sides apart,
  though the conserved edges barely do), and any other swap of many pairs that the wiring
  hardly prefers.

Nodes of A joined by any kind form *ambiguity groups* (connected components); each matched
node's *alternatives* are the nodes of B it could take.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from aligner.core.arrays import components, unique
from aligner.core.candidates import CandidateSet
from aligner.core.product import ProductGraph
from aligner.core.refine import matched_counts
from aligner.kernels.refine import neutral_exchanges

__all__ = ["Ambiguity", "colour_classes", "find_ambiguity", "PRIOR_TOL", "MAX_ALTERNATIVES"]

#: default tolerance on the prior, relative to that of the pairs a move gives up
PRIOR_TOL = 0.05
#: alternatives listed per node at most (the first by node index)
MAX_ALTERNATIVES = 20


def colour_classes(indptr: npt.NDArray[np.integer], indices: npt.NDArray[np.integer], n: int,
                   initial: npt.ArrayLike | None = None, *, max_rounds: int = 100,
                   watch: tuple | None = None) -> npt.NDArray[np.int64]:
    """Colour refinement: each round, a node's new colour is its colour with the multiset of its
    neighbours' colours; stops when the number of colours stops growing. Returns colours 0..c-1.

    ``watch``: optional arrays (u, v) of node pairs; refinement also stops as soon as every
    watched pair has two colours (only whether they end equal is asked then, and it is settled:
    refinement never merges colours).

    The multiset is summarised by two sums of random 26-bit labels of the neighbours' colours
    (exact in double precision up to 2^27 neighbours), and colour and sums are hashed into one
    64-bit key, so two different multisets share a colour with probability about 2^-50 per pair
    of nodes. Deterministic (a fixed seed). O(edges) per round plus a sort of the n keys.
    """
    indptr = np.asarray(indptr, dtype=np.int64)
    indices = np.asarray(indices, dtype=np.int64)
    colour = np.zeros(n, dtype=np.int64) if initial is None else np.unique(initial, return_inverse=True)[1]
    count = len(np.unique(colour)) if n else 0
    rng = np.random.default_rng(20261203)
    row = np.repeat(np.arange(n), np.diff(indptr[: n + 1]))
    for _ in range(max_rounds):
        labels = rng.integers(1, 1 << 26, size=(2, count)).astype(np.float64)
        s1 = np.bincount(row, weights=labels[0][colour[indices]], minlength=n).astype(np.uint64)
        s2 = np.bincount(row, weights=labels[1][colour[indices]], minlength=n).astype(np.uint64)
        with np.errstate(over="ignore"):
            key = (colour.astype(np.uint64) * np.uint64(0x9E3779B97F4A7C15) + s1 * np.uint64(0xC2B2AE3D27D4EB4F)
                   + s2 * np.uint64(0x165667B19E3779F9))
        _, new = np.unique(key, return_inverse=True)
        new = new.reshape(-1).astype(np.int64)
        new_count = int(new.max()) + 1 if n else 0
        colour = new
        if new_count == count:
            break
        count = new_count
        if watch is not None and not np.any(colour[watch[0]] == colour[watch[1]]):
            break
    return colour


@dataclass(frozen=True, eq=False)
class Ambiguity:
    """The ambiguity of a matching.

    Attributes
    ----------
    alt_ptr, alt_nodes : ndarray of int64
        For matched pair t (in the matching's order), ``alt_nodes[alt_ptr[t]:alt_ptr[t + 1]]``
        are the nodes of B its node of A could take at no loss (sorted, without its own
        partner, at most :data:`MAX_ALTERNATIVES`); :meth:`alternatives` gives one list.
    group : ndarray of int64
        For each matched pair, its group number, or -1 when its node is in no group.
    groups, nodes_in_groups, largest_group : int
    exchanges, indistinguishable : int
        Neutral 2-exchanges found, and pairs of matched nodes found indistinguishable.
    prior_tol : float
    near_optima, near_optimum_nodes : int
        Near-optimal matchings compared, and nodes of A given an alternative by one of them.
    """

    alt_ptr: npt.NDArray[np.int64]
    alt_nodes: npt.NDArray[np.int64]
    group: npt.NDArray[np.int64]
    groups: int
    nodes_in_groups: int
    largest_group: int
    exchanges: int
    indistinguishable: int
    prior_tol: float
    near_optima: int = 0
    near_optimum_nodes: int = 0

    def alternatives(self, t: int) -> npt.NDArray[np.int64]:
        """The alternatives of matched pair ``t``."""
        return self.alt_nodes[self.alt_ptr[t]:self.alt_ptr[t + 1]]

    def report(self) -> dict:
        return {"groups": self.groups, "nodes_in_groups": self.nodes_in_groups, "largest_group": self.largest_group,
                "neutral_exchanges": self.exchanges, "indistinguishable_pairs": self.indistinguishable,
                "near_optima": self.near_optima, "near_optimum_nodes": self.near_optimum_nodes,
                "prior_tolerance": self.prior_tol}


def _indistinguishable(cand: CandidateSet, swaps, walk_a, walk_b):
    """(i, j') alternatives from colour classes: matched pairs (i, i') and (j, j') that could swap
    partners at a close prior (``swaps`` from the exchange kernel), where colour refinement gives i
    and j one colour in A and i' and j' one colour in B (see the module). Refinement runs only
    while some such pair is still undecided."""
    if not len(swaps):
        return np.empty(0, dtype=np.int64), np.empty(0, dtype=np.int64)
    k, l = swaps[:, 1], swaps[:, 2]
    ia, ib = cand.pairs[k, 0].astype(np.int64), cand.pairs[l, 0].astype(np.int64)
    colour_a = colour_classes(*walk_a, cand.n1, watch=(ia, ib))
    same = colour_a[ia] == colour_a[ib]
    k, l = k[same], l[same]
    if not len(k):
        return np.empty(0, dtype=np.int64), np.empty(0, dtype=np.int64)
    ja, jb = cand.pairs[k, 1].astype(np.int64), cand.pairs[l, 1].astype(np.int64)
    colour_b = colour_classes(*walk_b, cand.n2, watch=(ja, jb))
    same = colour_b[ja] == colour_b[jb]
    return cand.pairs[k[same], 0].astype(np.int64), jb[same]


def _from_optima(cand: CandidateSet, index: npt.NDArray[np.int64], optima, prior_tol: float):
    """(i, j') alternatives from near-optimal matchings: every node i of A that another matching
    gives a partner j' != its own, at a prior within ``prior_tol`` of its own pair's."""
    own = np.full(cand.n1, -1, dtype=np.int64)
    own[cand.pairs[index, 0]] = index
    prior = np.asarray(cand.prior, dtype=np.float64)
    alt_i, alt_b = [], []
    for other in optima:
        other = np.asarray(other, dtype=np.int64)
        i = cand.pairs[other, 0].astype(np.int64)
        k = own[i]
        moved = (k >= 0) & (k != other)
        # within the tolerance both ways, as a neutral exchange's pairs are
        moved[moved] &= np.abs(prior[other[moved]] - prior[k[moved]]) <= prior_tol * prior[k[moved]]
        alt_i.append(i[moved])
        alt_b.append(cand.pairs[other[moved], 1].astype(np.int64))
    if not alt_i:
        return np.empty(0, dtype=np.int64), np.empty(0, dtype=np.int64)
    return np.concatenate(alt_i), np.concatenate(alt_b)


def find_ambiguity(prod: ProductGraph, cand: CandidateSet, index: npt.ArrayLike, *, walk_a, walk_b,
                   prior_tol: float = PRIOR_TOL, optima=(), counts: npt.NDArray[np.float64] | None = None
                   ) -> Ambiguity:
    """Alternatives and groups of the matching ``index`` (candidate indices), see the module.

    ``prod`` is the (symmetrised, for directed networks) product graph; ``walk_a``, ``walk_b``
    the (indptr, indices) adjacencies colour refinement runs on; ``optima`` other matchings
    (candidate indices) that conserve nearly as many edges; ``counts`` g = S 1_M (each entry
    counting 1) when the caller has it already.
    """
    index = np.asarray(index, dtype=np.int64)
    n1, n2 = cand.n1, cand.n2
    pa, pb = cand.ends
    mate_a = np.full(n1, -1, dtype=np.int64)
    mate_b = np.full(n2, -1, dtype=np.int64)
    mate_a[pa[index]] = index
    mate_b[pb[index]] = index
    g = counts if counts is not None else matched_counts(prod, index) if len(index) else np.zeros(cand.m)
    rows = neutral_exchanges(prod.indptr, prod.indices, cand.a_indptr, pa, pb, np.ascontiguousarray(g),
                             np.ascontiguousarray(cand.prior, dtype=np.float64), mate_a, mate_b, float(prior_tol))
    rows = rows.reshape(-1, 5)
    moves, swaps = rows[(rows[:, 4] & 1) == 1, :4], rows[(rows[:, 4] & 2) == 2, :4]
    # i takes p's node of B; when l exists and q = (j, i') exists, j takes i'
    alt_i = [pa[moves[:, 0]]]
    alt_b = [pb[moves[:, 0]]]
    link_u = [pa[moves[:, 0]]]
    link_v = [np.where(moves[:, 2] >= 0, pa[np.maximum(moves[:, 2], 0)], pa[moves[:, 0]])]
    with_q = moves[:, 3] >= 0
    alt_i.append(pa[moves[with_q, 3]])
    alt_b.append(pb[moves[with_q, 3]])
    ind_i, ind_b = _indistinguishable(cand, swaps, walk_a, walk_b)
    alt_i.append(ind_i)
    alt_b.append(ind_b)
    holder = np.full(n2, -1, dtype=np.int64)
    holder[pb[index]] = pa[index]
    link_u.append(ind_i)
    link_v.append(np.where(holder[ind_b] >= 0, holder[ind_b], ind_i))
    opt_i, opt_b = _from_optima(cand, index, optima, prior_tol)
    alt_i.append(opt_i)
    alt_b.append(opt_b)
    link_u.append(opt_i)
    link_v.append(np.where(holder[opt_b] >= 0, holder[opt_b], opt_i))
    ai, ab = np.concatenate(alt_i), np.concatenate(alt_b)
    # alternatives per matched node, without its own partner, each once
    matched_a = pa[index]
    own_b = np.full(n1, -1, dtype=np.int64)
    own_b[matched_a] = pb[index]
    keep = ab != own_b[ai]
    ai, ab = ai[keep], ab[keep]
    uniq = unique(ai * n2 + ab)
    ai, ab = uniq // max(n2, 1), uniq % max(n2, 1)
    # per matched pair, in the matching's order, its node's alternatives (by node index, the
    # first MAX_ALTERNATIVES): a CSR over the pairs
    slot = np.full(n1, -1, dtype=np.int64)
    slot[matched_a] = np.arange(len(index))
    owner = slot[ai]
    ai, ab, owner = ai[owner >= 0], ab[owner >= 0], owner[owner >= 0]
    order = np.lexsort((ab, owner))
    owner, ab = owner[order], ab[order]
    rank = np.arange(len(owner)) - np.searchsorted(owner, owner)
    owner, ab = owner[rank < MAX_ALTERNATIVES], ab[rank < MAX_ALTERNATIVES]
    alt_ptr = np.zeros(len(index) + 1, dtype=np.int64)
    np.cumsum(np.bincount(owner, minlength=len(index)), out=alt_ptr[1:])
    # groups: components of the links among nodes of A
    u, v = np.concatenate(link_u), np.concatenate(link_v)
    comp = components(u, v, n1)  # labelled by the smallest node: groups numbered as before
    in_link = np.zeros(n1, dtype=bool)
    in_link[u] = True
    in_link[v] = True
    sizes = np.bincount(comp[in_link], minlength=comp.max() + 1 if n1 else 0)
    real = sizes >= 1  # a node alone with an alternative (a free candidate) is a group of one
    renum = np.full(len(sizes), -1, dtype=np.int64)
    renum[real] = np.arange(int(real.sum()))
    group = np.where(in_link[matched_a], renum[comp[matched_a]], -1)
    return Ambiguity(alt_ptr=alt_ptr, alt_nodes=ab, group=group, groups=int(real.sum()),
                     nodes_in_groups=int(sizes[real].sum()), largest_group=int(sizes.max()) if real.any() else 0,
                     exchanges=int(len(moves)), indistinguishable=int(len(ind_i)), prior_tol=float(prior_tol),
                     near_optima=len(optima), near_optimum_nodes=int(len(np.unique(opt_i))))
