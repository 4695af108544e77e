import numpy as np
import pytest
from scipy.optimize import linear_sum_assignment

from aligner.core.candidates import build_candidates
from aligner.core.rounding import round_matching


def _optimum(cand, w):
    # Reference: scipy.optimize.linear_sum_assignment on the dense weight matrix (non-candidates 0).
    n1, n2 = cand.n1, cand.n2
    W = np.zeros((n1, n2))
    W[cand.pairs[:, 0], cand.pairs[:, 1]] = np.maximum(w, 0)
    r, c = linear_sum_assignment(W, maximize=True)
    return W[r, c].sum()


@pytest.mark.parametrize("shape", [(12, 12), (9, 15), (15, 9), (40, 40)])
@pytest.mark.parametrize("density", [1.0, 0.3])
@pytest.mark.parametrize("method", ["sparse", "dense", "scipy", "auto"])
def test_optimal_against_linear_sum_assignment(shape, density, method):
    rng = np.random.default_rng(hash((shape, density)) % 2**32)
    n1, n2 = shape
    pairs = np.array([(i, j) for i in range(n1) for j in range(n2) if rng.random() < density])
    cand = build_candidates(pairs, np.ones(len(pairs)), n1, n2, top_k=None)
    w = rng.random(cand.m)
    w[rng.random(cand.m) < 0.1] = 0.0  # zero-weight candidates are never needed
    m = round_matching(cand, w, method=method)
    got = cand.pairs[m.index]
    assert len(np.unique(got[:, 0])) == len(got) and len(np.unique(got[:, 1])) == len(got)
    assert np.all(w[m.index] > 0)
    assert m.weight == pytest.approx(_optimum(cand, w), rel=1e-12, abs=1e-12)


def test_ties_and_near_ties_in_double_precision():
    # Weights that differ below single precision: the optimum must still be found
    # (lapjv computes in float32 unless asked for doubles).
    cand = build_candidates([[0, 0], [0, 1], [1, 0], [1, 1]], np.ones(4), 2, 2, top_k=None)
    w = np.array([1.0, 1.0 + 1e-12, 1.0 + 1e-12, 1.0 - 1e-12])
    for method in ("sparse", "scipy"):
        m = round_matching(cand, w, method=method)
        assert sorted(m.index.tolist()) == [1, 2], method
    # dense rounds costs to 36 significant bits (lapjv may not terminate on last-bit ties), so
    # it resolves differences above 2**-36 relative only
    w = np.array([1.0, 1.0 + 1e-9, 1.0 + 1e-9, 1.0 - 1e-9])
    assert sorted(round_matching(cand, w, method="dense").index.tolist()) == [1, 2]


def test_empty_and_all_zero():
    cand = build_candidates([[0, 0]], [1.0], 1, 1, top_k=None)
    assert len(round_matching(cand, np.zeros(1)).index) == 0
