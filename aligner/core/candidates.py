"""Candidate pairs: which (node of A, node of B) pairs the alignment may use, and their priors."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from aligner.core.network import merge_duplicate_pairs

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


def _top_k_mask(group: np.ndarray, srank: np.ndarray, k: int) -> np.ndarray:
    """True for the ``k`` entries of best score rank ``srank`` (0 = best) within every group."""
    m = len(srank)
    order = np.argsort(group.astype(np.int64) * m + srank)
    g = group[order]
    start = np.ones(m, dtype=bool)
    start[1:] = g[1:] != g[:-1]
    idx = np.arange(m)
    first = np.maximum.accumulate(np.where(start, idx, 0))
    mask = np.zeros(m, dtype=bool)
    mask[order] = (idx - first) < k
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
    does not depend on the order of the input rows. Cost: four sorts of K entries.

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
    pairs, scores, _ = merge_duplicate_pairs(pairs, scores, n2)
    if top_k is not None and len(pairs):
        # score ranks, ties broken by the (i, i') order: input-order independent
        by_score = np.argsort(-scores)
        ordered = scores[by_score]
        if (ordered[1:] == ordered[:-1]).any():  # ties: the stable sort keeps (i, i') order
            by_score = np.argsort(-scores, kind="stable")
        srank = np.empty(len(scores), dtype=np.int64)
        srank[by_score] = np.arange(len(scores))
        mask = _top_k_mask(pairs[:, 0], srank, top_k) | _top_k_mask(pairs[:, 1], srank, top_k)
        pairs, scores = pairs[mask], scores[mask]
    pairs = pairs.astype(np.int32)
    counts = np.bincount(pairs[:, 0], minlength=n1) if len(pairs) else np.zeros(n1, dtype=np.int64)
    a_indptr = np.zeros(n1 + 1, dtype=np.int64)
    np.cumsum(counts, out=a_indptr[1:])
    return CandidateSet(pairs=pairs.reshape(-1, 2), prior=scores, a_indptr=a_indptr, n1=n1, n2=n2)
