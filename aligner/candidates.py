"""Candidate pairs: which (node of A, node of B) pairs the alignment may use, and their priors."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

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

    def coverage(self) -> tuple[float, float]:
        """Share of the nodes of A and of B that have at least one candidate."""
        fa = len(np.unique(self.pairs[:, 0])) / self.n1 if self.n1 else 0.0
        fb = len(np.unique(self.pairs[:, 1])) / self.n2 if self.n2 else 0.0
        return fa, fb


def _top_k_mask(group: np.ndarray, other: np.ndarray, score: np.ndarray, k: int) -> np.ndarray:
    """True for the ``k`` best-scoring entries of every group (ties: smaller ``other`` first)."""
    order = np.lexsort((other, -score, group))
    g = group[order]
    start = np.ones(len(g), dtype=bool)
    start[1:] = g[1:] != g[:-1]
    idx = np.arange(len(g))
    first = np.maximum.accumulate(np.where(start, idx, 0))
    rank = idx - first
    mask = np.zeros(len(g), dtype=bool)
    mask[order] = rank < k
    return mask


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
    does not depend on the order of the input rows. Cost: O(K log K).

    Examples
    --------
    >>> c = build_candidates([[0, 0], [0, 1], [1, 1]], [0.9, 0.2, 0.5], 2, 2, top_k=1)
    >>> c.pairs.tolist()
    [[0, 0], [1, 1]]
    """
    pairs = np.asarray(pairs, dtype=np.int64).reshape(-1, 2)
    scores = np.asarray(scores, dtype=np.float64).reshape(-1)
    keep = scores >= min_score
    pairs, scores = pairs[keep], scores[keep]
    if len(pairs):
        key = pairs[:, 0] * n2 + pairs[:, 1]
        order = np.lexsort((-scores, key))
        ks = key[order]
        first = np.ones(len(ks), dtype=bool)
        first[1:] = ks[1:] != ks[:-1]
        sel = order[first]
        pairs, scores = pairs[sel], scores[sel]
    if top_k is not None and len(pairs):
        mask = _top_k_mask(pairs[:, 0], pairs[:, 1], scores, top_k)
        mask |= _top_k_mask(pairs[:, 1], pairs[:, 0], scores, top_k)
        pairs, scores = pairs[mask], scores[mask]
    order = np.lexsort((pairs[:, 1], pairs[:, 0]))
    pairs = pairs[order].astype(np.int32)
    scores = scores[order]
    counts = np.bincount(pairs[:, 0], minlength=n1) if len(pairs) else np.zeros(n1, dtype=np.int64)
    a_indptr = np.zeros(n1 + 1, dtype=np.int64)
    np.cumsum(counts, out=a_indptr[1:])
    return CandidateSet(pairs=pairs.reshape(-1, 2), prior=scores, a_indptr=a_indptr, n1=n1, n2=n2)
