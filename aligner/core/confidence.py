"""Per-pair confidence of a matching.

:func:`matching_confidence` (the ``confidence`` column of alignment.tsv) asks how much the final
matching would lose if the pair were given up for its best alternative;
:func:`pair_confidence` is the earlier margin of the pair's diffusion score over its best
competing candidate (kept for comparison: ``scripts/bench/calibration.py``).
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor

import numpy as np
import numpy.typing as npt

from aligner.core.candidates import CandidateSet
from aligner.core.product import ProductGraph
from aligner.core.refine import matched_counts, normalise_weights
from aligner.kernels.product import thread_count
from aligner.kernels.refine import exchange_losses
from aligner.kernels.scoring import best_two

#: from this many candidate pairs on, the exchange losses run on two threads
PARALLEL_PAIRS = 500_000

__all__ = ["best_competitor", "pair_confidence", "exchange_loss", "matching_confidence"]


def _best_two(group: npt.NDArray[np.integer], x: npt.NDArray[np.float64], n: int):
    """Per group id in ``0..n-1``: the largest value, the candidate holding it (the first, on a
    tie), and the second largest (equal to the largest on a tie), in one compiled pass.

    Groups with no entry get -inf; groups with one entry get -inf as second largest.
    """
    return best_two(np.ascontiguousarray(group, dtype=np.int64), np.ascontiguousarray(x, dtype=np.float64), n)


def best_competitor(cand: CandidateSet, x: npt.ArrayLike, index: npt.ArrayLike) -> npt.NDArray[np.float64]:
    """For each matched candidate ``index[t] = k = (i, i')``: the largest score x among the other
    candidates of node i of A and of node i' of B (``-inf`` when there is none)."""
    x = np.asarray(x, dtype=np.float64)
    index = np.asarray(index, dtype=np.int64)
    pa, pb = cand.ends
    best_a, arg_a, sec_a = _best_two(pa, x, cand.n1)
    best_b, arg_b, sec_b = _best_two(pb, x, cand.n2)
    i, j = pa[index], pb[index]
    comp_a = np.where(arg_a[i] == index, sec_a[i], best_a[i])
    comp_b = np.where(arg_b[j] == index, sec_b[j], best_b[j])
    return np.maximum(comp_a, comp_b)


def pair_confidence(cand: CandidateSet, x: npt.ArrayLike, index: npt.ArrayLike) -> npt.NDArray[np.float64]:
    """Confidence of each matched pair, in [0, 1].

    For a matched candidate k = (i, i') with diffusion score x_k, let c_k be the largest score of
    any *other* candidate that shares a node with it: (i, j') for j' != i', or (j, i') for
    j != i. Then

        confidence_k = max(0, (x_k - c_k) / x_k)

    1 means no competitor at all (or competitors of score 0), 0 means some competitor scores at
    least as high (the matching preferred k for the sake of the other nodes), and 0.5 means the
    best competitor has half the pair's score. A pair with x_k <= 0 gets 0. It is a relative
    margin over the two rows of the score matrix that the pair sits on, computed from the
    scores alone in O(m) for m candidates.
    """
    x = np.asarray(x, dtype=np.float64)
    index = np.asarray(index, dtype=np.int64)
    xk = x[index]
    comp = np.maximum(best_competitor(cand, x, index), 0.0)  # no competitor counts as score 0
    out = np.zeros(len(index))
    pos = xk > 0
    out[pos] = np.clip((xk[pos] - comp[pos]) / xk[pos], 0.0, 1.0)
    return out


def exchange_loss(prod: ProductGraph, cand: CandidateSet, w: npt.ArrayLike, index: npt.ArrayLike, *,
                  beta: float, edge_weights: npt.ArrayLike | None = None,
                  counts: npt.NDArray[np.float64] | None = None) -> npt.NDArray[np.float64]:
    r"""For each matched pair, the least the refinement's objective falls by a 2-exchange that
    removes it (``inf`` when no such move exists).

    F(M) = beta * w~(M) + C(M) is the objective of :mod:`aligner.core.refine` (w~ = w divided
    by its mean over positive entries; C = conserved edges counted over candidate pairs). The
    moves are those of its local search: for a candidate p = (i, j') not in M, with
    k = (i, i') and l = (j, j') the pairs of M at i and j' (either may be absent), replace k, l
    by p and, when it is a candidate, q = (j, i'). With g = S 1_M (matched product-graph
    neighbours of every candidate) and f = beta * w~ + g,

    .. math:: \Delta F = f_p + f_q - f_k - f_l + S_{kl} + S_{pq}

    (terms of absent pairs dropped; S between pairs that share a node is 0, so no other cross
    term). The loss of a matched pair r is min(-Delta F) over the moves with r in {k, l}. At a
    local optimum of the local search every loss is >= 0; a loss of 0 means an exchange that
    costs nothing (an interchangeable pair), a large loss means every alternative gives up
    many conserved edges or much weight.

    For directed networks ``prod`` is the symmetrised product graph
    (:meth:`ProductGraph.symmetrised`), whose S_kl counts both directions, as in the refinement.
    ``edge_weights`` (one per entry of ``prod``): C counts each conserved edge pair by its entry
    weight, as the refinement does under the agreement weight model; None counts each 1.
    One compiled pass over the m candidates (:func:`aligner.kernels.refine.exchange_losses`):
    O(m log d) with d the largest row of the product graph or of the candidates, and no array
    of m entries beyond f. ``counts``: g = S 1_M (with the ``edge_weights``) when the caller
    has it already (computed here otherwise).
    """
    index = np.asarray(index, dtype=np.int64)
    if not len(index):
        return np.zeros(0)
    s_w = np.empty(0) if edge_weights is None else np.ascontiguousarray(edge_weights, dtype=np.float64)
    f = normalise_weights(w)[0]
    f *= beta  # in place: no second array of m entries
    f += matched_counts(prod, index, s_w) if counts is None else counts
    pa, pb = cand.ends
    mate_a = np.full(cand.n1, -1, dtype=np.int64)
    mate_b = np.full(cand.n2, -1, dtype=np.int64)
    mate_a[pa[index]] = index
    mate_b[pb[index]] = index
    args = (prod.indptr, prod.indices, s_w, cand.a_indptr, pa, pb, f, mate_a, mate_b)

    def losses(i0: int, i1: int) -> np.ndarray:  # by node of A: one matched pair each
        loss = np.full(cand.n1, np.inf)
        exchange_losses(*args, i0, i1, loss)
        return loss

    if thread_count() > 1 and cand.m >= PARALLEL_PAIRS:
        # two halves of the candidates on two threads (the kernel releases the GIL); a minimum
        # does not depend on the order, so the losses are those of one pass
        half = int(np.searchsorted(cand.a_indptr, cand.m // 2))
        with ThreadPoolExecutor(2) as pool:
            loss = np.minimum(*pool.map(losses, (0, half), (half, cand.n1)))
    else:
        loss = losses(0, cand.n1)
    return loss[pa[index]]


def matching_confidence(prod: ProductGraph, cand: CandidateSet, w: npt.ArrayLike, index: npt.ArrayLike, *,
                        beta: float, edge_weights: npt.ArrayLike | None = None,
                        counts: npt.NDArray[np.float64] | None = None) -> npt.NDArray[np.float64]:
    """Confidence of each pair of the final matching, in [0, 1]: L / (1 + L), with L >= 0 the
    pair's :func:`exchange_loss` (clipped at 0; 1 when the pair has no alternative at all).

    L is counted in conserved edges (plus beta times the normalised diffusion weight), so a
    confidence of 0.5 means the best alternative loses one conserved edge, 0.75 three, 0.9
    nine; 0 means an exchange at no loss: the pair is interchangeable with another.

    Why this measure. A pair is wrong when the matching could have taken its true partner
    instead, and then the exchange to the truth costs little: the wiring does not tell the two
    apart. The margin of the diffusion score over the pair's competitors (:func:`pair_confidence`)
    looks at the scores before the refinement moved pairs, and ignores the rest of the
    matching; the loss is measured on the final matching and in the units the refinement
    optimises. It is the local-optimality gap of a 2-exchange neighbourhood, the move set of
    the pairwise-exchange heuristics for quadratic assignment, whose change in objective is
    evaluated per move without re-solving (Taillard 1991), read per pair as a sensitivity, as the
    change in objective when an assignment is forced out measures how firmly it is held
    (the "regret" of Vogel's approximation, Reinfeld & Vogel 1958). Measured on generated pairs
    with errors, the default demo and the connectome pair in docs/results.md
    (``scripts/bench/calibration.py``). Deterministic: a fixed sequence of vector operations.
    """
    loss = exchange_loss(prod, cand, w, index, beta=beta, edge_weights=edge_weights, counts=counts)
    out = np.ones(len(loss))
    fin = np.isfinite(loss)
    lf = np.maximum(loss[fin], 0.0)
    out[fin] = lf / (1.0 + lf)
    return out
