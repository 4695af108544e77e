"""Rounding: diffusion scores over the candidate pairs to a one-to-one matching."""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from aligner.checks import check_choice
from aligner.core.candidates import CandidateSet

__all__ = ["Matching", "round_matching", "METHODS"]

METHODS = ("auto", "sparse", "dense", "scipy")
#: ``auto`` uses the sparse kernel: measured on the demo (1,481 x 1,461 nodes, 8,870 candidates),
#: lapjv on the padded matrix took 0.47 s and the sparse kernel 0.006 s, and lapjv has been seen
#: not to terminate on near-tied costs (see aligner.kernels.assign.max_weight_matching_dense).


@dataclass(frozen=True)
class Matching:
    """A one-to-one matching on candidate pairs.

    ``index[t]`` is the candidate index of matched pair t; rows are sorted by node of A.
    """

    index: npt.NDArray[np.int64]
    method: str
    weight: float
    seconds: float

    def pairs(self, cand: CandidateSet) -> npt.NDArray[np.int32]:
        return cand.pairs[self.index]


def _packed(cand: CandidateSet, w: npt.NDArray[np.float64]):
    """Candidate pairs with positive weight, packed by node of A for the sparse solver:
    (use, rstart, ent, nc), :func:`aligner.kernels.assign.pack_positive`.

    The one place where pairs without evidence (weight 0, negative or NaN) are dropped. Nodes
    are renumbered in increasing order (the same numbering as ``np.unique(...,
    return_inverse=True)``) by a compiled pass, O(m + n), no sort.
    """
    from aligner.kernels.assign import pack_positive

    pairs = np.ascontiguousarray(cand.pairs, dtype=np.int32)
    return pack_positive(pairs, np.ascontiguousarray(w, dtype=np.float64), cand.n1, cand.n2)


def round_matching(cand: CandidateSet, w: npt.ArrayLike, *, method: str = "auto") -> Matching:
    """Maximum-weight one-to-one matching on the candidate pairs.

    Parameters
    ----------
    cand : CandidateSet
        The candidate pairs.
    w : array_like, shape (m,)
        Weight of each candidate (the diffusion scores).
    method : {"auto", "sparse", "dense", "scipy"}
        ``sparse``: the package's sparse shortest-augmenting-path kernel (double precision).
        ``dense``: lapjv (Jonker–Volgenant) on the zero-padded square matrix, in double
        precision, after putting the costs on a common integer grid of 2**-40 of the largest
        weight (lapjv can fail to terminate on near-ties and inexact sums otherwise).
        ``scipy``: scipy.sparse.csgraph.min_weight_full_bipartite_matching with a zero-cost dummy
        partner for every node. ``auto``: sparse.

    Returns
    -------
    Matching
        Optimal: no one-to-one matching of candidate pairs has a larger total weight. A node
        may stay unmatched.

    Notes
    -----
    No pair without evidence is matched, by any method: a candidate whose weight is not
    positive (0, negative or NaN) is dropped before the solver sees it, so a node whose only
    candidates weigh 0 stays unmatched even where pairing it would cost nothing. (Without the
    filter a solver may match such a pair on a tie with "unmatched": the scipy path was seen
    to, in 132 of 300 small random instances.)

    With non-negative weights, a maximum-weight matching is a minimum-cost full assignment
    of the zero-padded square matrix of costs -w: a full assignment restricted to the stored
    cells is a matching of the same weight, and any matching extends to a full assignment.

    References
    ----------
    .. [1] R. Jonker, A. Volgenant, "A shortest augmenting path algorithm for dense and sparse
       linear assignment problems", Computing 38 (1987) 325-340. doi:10.1007/BF02278710
    """
    method = check_choice(method, "method", METHODS)
    t0 = time.perf_counter()
    w = np.asarray(w, dtype=np.float64)
    index = _sparse(cand, w) if method in ("auto", "sparse") else _reference(cand, w, method)
    if method == "auto" and len(index):  # (no pair with evidence: no solver ran)
        method = "sparse"
    with np.errstate(over="ignore"):  # scores whose sum passes the largest float (a prior near 1e308): inf
        weight = float(w[index].sum())
    return Matching(index=index, method=method, weight=weight, seconds=time.perf_counter() - t0)


def _sparse(cand: CandidateSet, w: npt.NDArray[np.float64]) -> npt.NDArray[np.int64]:
    """The sparse solver on :func:`_packed`'s entries (no CSR columns and weights in between)."""
    from aligner.kernels.assign import matched_packed, solve_packed

    use, rstart, ent, nc = _packed(cand, w)
    if len(rstart) == 1:
        return np.empty(0, dtype=np.int64)
    return matched_packed(rstart, ent, solve_packed(rstart, ent, int(nc)), use)


def _reference(cand: CandidateSet, w: npt.NDArray[np.float64], method: str) -> npt.NDArray[np.int64]:
    """The dense and scipy paths, on the CSR of :func:`_packed`'s entries."""
    from aligner.kernels.assign import matched_packed

    use, indptr, ent, nc = _packed(cand, w)
    nr = len(indptr) - 1
    if nr == 0:
        return np.empty(0, dtype=np.int64)
    cols, ww = ent[:, 0].astype(np.int64), -ent[:, 1]  # exact: small integers, and a sign
    if method == "dense":
        from aligner.kernels.assign import max_weight_matching_dense

        dense = np.zeros((nr, nc), dtype=np.float64)
        dense[np.repeat(np.arange(nr), np.diff(indptr)), cols] = ww
        row_to_col = max_weight_matching_dense(dense)
    else:
        row_to_col = _scipy_matching(indptr, cols, ww, nr, nc)
    # back from (row, col) to candidate index: the one stored entry of each row at its column
    return matched_packed(indptr, ent, np.ascontiguousarray(row_to_col, dtype=np.int64), use)


def _scipy_matching(indptr, cols, ww, nr, nc):
    """Reference path: scipy's sparse full matching on [W | dummy] with dummies of cost 0."""
    import scipy.sparse as sp
    from scipy.sparse.csgraph import min_weight_full_bipartite_matching

    rows = np.repeat(np.arange(nr), np.diff(indptr))
    # costs must be positive for stored entries: shift every real cost by the same constant
    # is not allowed (it changes the optimum), so use cost = (max w + 1) - w for real entries
    # and max w + 1 for the private dummy of each row: both sides shift by the same constant
    # per row, since every row is matched exactly once.
    top = ww.max() + 1.0
    r = np.concatenate([rows, np.arange(nr)])
    c = np.concatenate([cols, nc + np.arange(nr)])
    d = np.concatenate([top - ww, np.full(nr, top)])
    mat = sp.csr_array((d, (r, c)), shape=(nr, nc + nr))
    row_ind, col_ind = min_weight_full_bipartite_matching(mat)
    out = np.full(nr, -1, dtype=np.int64)
    real = col_ind < nc
    out[row_ind[real]] = col_ind[real]
    return out
