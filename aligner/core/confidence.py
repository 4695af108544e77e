"""Per-pair confidence: how clearly a matched pair beats the other candidates of its two nodes."""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from aligner.core.candidates import CandidateSet
from aligner.kernels.scoring import best_two

__all__ = ["best_competitor", "pair_confidence"]


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
