"""Candidate pairs: which (node of A, node of B) pairs the alignment may use, and their priors."""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np
import numpy.typing as npt

from aligner.errors import InvalidParameterError
from aligner.kernels.candidates import drop_below_top_k, large_groups, pairs_order, row_pointer, sort_merge_pairs

__all__ = ["CandidateSet", "build_candidates"]


@dataclass(frozen=True, eq=False)
class CandidateSet:
    """The candidate set L, sorted by (node of A, node of B).

    Attributes
    ----------
    pairs : ndarray of int32, shape (m, 2)
        Candidate pairs; ``pairs[k] = (i, i')``.
    prior : ndarray of float64, shape (m,)
        Prior similarity of each pair (>= 0).
    a_indptr : ndarray of int64, shape (n1 + 1,)
        Candidates of node ``i`` of A are ``a_indptr[i]:a_indptr[i+1]`` (a CSR row index).
    n1, n2 : int
        Node counts of A and B.
    """

    pairs: npt.NDArray[np.int32]
    prior: npt.NDArray[np.float64]
    a_indptr: npt.NDArray[np.int64]
    n1: int
    n2: int

    @property
    def m(self) -> int:
        return len(self.prior)

    @cached_property
    def ends(self) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.int64]]:
        """``(pair_a, pair_b)``: the node of A and the node of B of every pair, as contiguous
        int64 arrays, made on first use and then shared (the refinement, the confidence and the
        ambiguity each read them: three copies of 16 bytes per pair before)."""
        return (np.ascontiguousarray(self.pairs[:, 0], dtype=np.int64),
                np.ascontiguousarray(self.pairs[:, 1], dtype=np.int64))

    def release_ends(self) -> None:
        """Let go of :attr:`ends` (made again on the next use). The pipeline does once the
        scores are made: the outputs are written from the result without them, and at 10^6
        nodes they hold 176 MB."""
        self.__dict__.pop("ends", None)

    def coverage(self) -> tuple[float, float]:
        """Share of the nodes of A and of B that have at least one candidate."""
        # counts per node, not a sort: the pairs are grouped by node of A already (a_indptr)
        fa = np.count_nonzero(np.diff(self.a_indptr)) / self.n1 if self.n1 else 0.0
        seen = np.zeros(self.n2, dtype=bool)  # a mask over B, not counts: no array of m entries
        seen[self.pairs[:, 1]] = True
        fb = np.count_nonzero(seen) / self.n2 if self.n2 else 0.0
        return fa, fb


def build_candidates(
    pairs: npt.ArrayLike,
    scores: npt.ArrayLike,
    n1: int,
    n2: int,
    *,
    min_score: float = 0.0,
    top_k: int | None = 25,
) -> CandidateSet:
    """Select the candidate pairs from a prior.

    Parameters
    ----------
    pairs : array_like of int, shape (K, 2)
        Prior pairs (node of A, node of B); duplicates keep their highest score.
    scores : array_like of float, shape (K,)
        Prior similarities (higher is better).
    n1, n2 : int
        Node counts of A and B.
    min_score : float
        Pairs scoring below this are never candidates.
    top_k : int or None
        Keep, for every node of A, its ``top_k`` best pairs, and for every node of B its
        ``top_k`` best pairs; the candidate set is the union of the two. ``None`` keeps all.

    Returns
    -------
    CandidateSet

    Notes
    -----
    Ties in the top-k cut are broken by the smaller index of the other node, so the result
    does not depend on the order of the input rows. Cost: a few passes over the K entries (a
    sort only when they are not already sorted by (i, i') without repeats: two counting
    sorts on the integer keys) plus a partial selection in every node holding more than
    ``top_k`` pairs.

    Examples
    --------
    >>> c = build_candidates([[0, 0], [0, 1], [1, 1]], [0.9, 0.2, 0.5], 2, 2, top_k=1)
    >>> c.pairs.tolist()
    [[0, 0], [1, 1]]
    """
    pairs = _as_index_pairs(pairs)
    scores = np.asarray(scores, dtype=np.float64).reshape(-1)
    if len(scores) != len(pairs):
        raise InvalidParameterError(f"scores must hold one score per pair; got {len(scores)} for {len(pairs)} pairs",
                                    param="scores")
    owned = False  # whether pairs and scores are arrays of our own yet
    keep = scores >= min_score
    if not keep.all():
        pairs, scores, owned = pairs[keep], scores[keep], True
    state = pairs_order(pairs, n1, n2)
    if state < 0:
        raise InvalidParameterError(f"pairs must hold node indices in [0, {n1}) x [0, {n2}); got a pair outside",
                                    param="pairs")
    pairs = pairs.astype(np.int32, copy=False)
    if state == 1:  # not sorted, or repeated pairs: counting sorts on the integer keys
        pairs, scores = sort_merge_pairs(pairs, scores, n1, n2)
        owned = True
    a_indptr = row_pointer(pairs, n1)
    if top_k is not None and top_k < len(pairs):
        drop = _outside_top_k(pairs, a_indptr, scores, n2, top_k)
        if drop is not None:
            keep = ~drop
            pairs, scores, owned = pairs[keep], scores[keep], True
            a_indptr = row_pointer(pairs, n1)
    if not owned:
        pairs, scores = pairs.copy(), scores.copy()
    return CandidateSet(pairs=pairs, prior=scores, a_indptr=a_indptr, n1=n1, n2=n2)


def _as_index_pairs(pairs: npt.ArrayLike) -> np.ndarray:
    """A C-ordered (K, 2) array of int32 or int64 (no copy when already so)."""
    arr = np.asarray(pairs)
    if arr.dtype != np.int32:
        arr = arr.astype(np.int64, copy=False)
    return np.ascontiguousarray(arr.reshape(-1, 2))


def _outside_top_k(pairs: np.ndarray, a_indptr: np.ndarray, scores: np.ndarray, n2: int, k: int) -> np.ndarray | None:
    """True where a pair is among neither the ``k`` best pairs of its node of A nor those of its
    node of B (None: no such pair). The pairs are sorted by (i, i'), so within a node of A (a
    row) and within a node of B (its pairs in row order) a tie goes to the smaller index of
    the other node."""
    k = int(k)
    if k <= 0:
        return np.ones(len(pairs), dtype=bool)
    if not (np.diff(a_indptr) > k).any():
        return None  # every pair is among the k best of its node of A
    b_ptr, b_members = large_groups(pairs, 1, n2, k)
    if len(b_ptr) == 1:
        return None  # every pair is among the k best of its node of B
    drop_a = np.zeros(len(pairs), dtype=bool)
    drop_below_top_k(scores, a_indptr, np.empty(0, dtype=np.int64), k, drop_a)
    drop_b = np.zeros(len(pairs), dtype=bool)
    drop_below_top_k(scores, b_ptr, b_members, k, drop_b)
    return drop_a & drop_b
