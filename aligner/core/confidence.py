"""Per-pair confidence of a matching.

:func:`matching_confidence` (the ``confidence`` column of alignment.tsv) asks how much the final
matching would lose if the pair were given up for its best alternative;
:func:`pair_confidence` is the earlier margin of the pair's diffusion score over its best
competing candidate (kept for comparison: ``scripts/bench/calibration.py``).
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from aligner.core.candidates import CandidateSet
from aligner.core.product import ProductGraph
from aligner.core.refine import _matched_counts, normalise_weights
from aligner.kernels.scoring import best_two
from aligner.kernels.utils import stable_order

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
    pa = cand.pairs[:, 0].astype(np.int64)
    pb = cand.pairs[:, 1].astype(np.int64)
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


def _edge_keys(indptr: npt.NDArray[np.integer], indices: npt.NDArray[np.integer], n: int) -> npt.NDArray[np.int64]:
    """``u * n + v`` for every stored entry (u, v) of a CSR adjacency with sorted rows: sorted."""
    rows = np.repeat(np.arange(len(indptr) - 1, dtype=np.int64), np.diff(indptr))
    return rows * n + np.asarray(indices, dtype=np.int64)


def _search(keys: npt.NDArray[np.int64], q: npt.NDArray[np.int64], rows: npt.NDArray[np.int64], n_rows: int):
    """``np.searchsorted(keys, q)`` clipped to a valid position, with the queries taken in the
    order of ``rows`` (``q // n`` for keys ``row * n + column``): a counting sort, then searches
    that walk the sorted keys row by row (several times faster than in random order)."""
    order = stable_order(rows, n_rows)
    pos = np.empty(len(q), dtype=np.int64)
    pos[order] = np.searchsorted(keys, q[order])
    np.minimum(pos, len(keys) - 1, out=pos)
    return pos


def _has(keys: npt.NDArray[np.int64], u: npt.NDArray[np.int64], v: npt.NDArray[np.int64], n: int):
    """Whether (u[t], v[t]) is stored, for sorted ``keys`` from :func:`_edge_keys` (0/1 floats)."""
    if not len(keys):
        return np.zeros(len(u))
    q = u * n + v
    return (keys[_search(keys, q, u, n)] == q).astype(np.float64)


def exchange_loss(prod: ProductGraph, cand: CandidateSet, w: npt.ArrayLike, index: npt.ArrayLike, *,
                  beta: float, adjacency_a: tuple, adjacency_b: tuple, directed: bool = False
                  ) -> npt.NDArray[np.float64]:
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

    ``adjacency_a``, ``adjacency_b``: (indptr, indices) with sorted rows, the symmetric
    adjacency, or with ``directed`` the out-adjacency (``prod`` is then the symmetrised product
    graph, :meth:`ProductGraph.symmetrised`, whose S_kl counts both directions).
    O(m log m) vector work over the m candidates plus one pass over the matched pairs'
    product-graph rows.
    """
    index = np.asarray(index, dtype=np.int64)
    m, n1, n2 = cand.m, cand.n1, cand.n2
    if not len(index):
        return np.zeros(0)
    bw = beta * normalise_weights(w)[0]
    f = bw + _matched_counts(prod, index)
    pa = cand.pairs[:, 0].astype(np.int64)
    pb = cand.pairs[:, 1].astype(np.int64)
    mate_a = np.full(n1, -1, dtype=np.int64)
    mate_b = np.full(n2, -1, dtype=np.int64)
    mate_a[pa[index]] = index
    mate_b[pb[index]] = index
    out = np.zeros(m, dtype=bool)
    out[index] = True
    p = np.flatnonzero(~out)
    del out
    ka_all, la_all = mate_a[pa[p]], mate_b[pb[p]]  # k and l of every move (-1: absent)
    hk, hl = ka_all >= 0, la_all >= 0
    delta = f[p]
    delta[hk] -= f[ka_all[hk]]
    delta[hl] -= f[la_all[hl]]
    # the moves that swap two partners: q = (j, i') and the terms S_kl, S_pq
    t = np.flatnonzero(hk & hl)
    i, jp, k, l = pa[p[t]], pb[p[t]], ka_all[t], la_all[t]
    j, ip = pa[l], pb[k]
    ckeys = pa * n2 + pb  # candidates are sorted by (node of A, node of B)
    qkey = j * n2 + ip
    qpos = _search(ckeys, qkey, j, n1)
    hq = ckeys[qpos] == qkey
    ka = _edge_keys(*adjacency_a, n1)
    kb = _edge_keys(*adjacency_b, n2)
    if directed:  # S counts the arcs of both directions (symmetrised product graph)
        a_ij, a_ji = _has(ka, i, j, n1), _has(ka, j, i, n1)
        s_kl = a_ij * _has(kb, ip, jp, n2) + a_ji * _has(kb, jp, ip, n2)
        s_pq = a_ij * _has(kb, jp, ip, n2) + a_ji * _has(kb, ip, jp, n2)
    else:
        s_kl = s_pq = _has(ka, i, j, n1) * _has(kb, ip, jp, n2)
    delta[t] += s_kl + np.where(hq, f[qpos] + s_pq, 0.0)
    loss = np.full(m, np.inf)
    np.minimum.at(loss, ka_all[hk], -delta[hk])
    np.minimum.at(loss, la_all[hl], -delta[hl])
    return loss[index]


def matching_confidence(prod: ProductGraph, cand: CandidateSet, w: npt.ArrayLike, index: npt.ArrayLike, *,
                        beta: float, adjacency_a: tuple, adjacency_b: tuple, directed: bool = False
                        ) -> npt.NDArray[np.float64]:
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
    loss = exchange_loss(prod, cand, w, index, beta=beta, adjacency_a=adjacency_a, adjacency_b=adjacency_b,
                         directed=directed)
    out = np.ones(len(loss))
    fin = np.isfinite(loss)
    lf = np.maximum(loss[fin], 0.0)
    out[fin] = lf / (1.0 + lf)
    return out
