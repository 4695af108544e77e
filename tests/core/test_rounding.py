import time

import numpy as np
import pytest
from scipy.optimize import linear_sum_assignment

from aligner.core.candidates import build_candidates
from aligner.core.rounding import round_matching
from aligner.errors import InvalidParameterError


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
    # dense puts costs on a grid of 2**-40 of the largest weight (lapjv may not terminate on
    # last-bit ties), so it resolves differences above that only
    w = np.array([1.0, 1.0 + 1e-9, 1.0 + 1e-9, 1.0 - 1e-9])
    assert sorted(round_matching(cand, w, method="dense").index.tolist()) == [1, 2]


def test_empty_and_all_zero():
    cand = build_candidates([[0, 0]], [1.0], 1, 1, top_k=None)
    assert len(round_matching(cand, np.zeros(1)).index) == 0


# --------------------------------------------------------------------------- no pair without evidence

VARIANTS = ["sparse", "dense", "scipy", "auto", "sparse, shortest paths only"]


def _round(cand, w, variant, monkeypatch):
    """round_matching with ``variant``; the last one runs the sparse kernel with its warm-start
    phase (augmenting row reduction) switched off, so the shortest-path phase does all the work."""
    if variant == "sparse, shortest paths only":
        import aligner.kernels.assign as assign

        monkeypatch.setattr(assign, "sparse_max_weight_matching",
                            lambda indptr, indices, weights, n_cols: assign._solve(
                                indptr.astype(np.int64), indices.astype(np.int64), weights, n_cols, 0.0))
        return round_matching(cand, w, method="sparse")
    return round_matching(cand, w, method=variant)


def _zero_rows_instance(seed):
    """Random candidates where some rows and columns have only zero-weight candidates."""
    rng = np.random.default_rng([seed, 21])
    n1, n2 = int(rng.integers(3, 9)), int(rng.integers(3, 9))
    pairs = np.array([(i, j) for i in range(n1) for j in range(n2) if rng.random() < 0.6] or [(0, 0)])
    cand = build_candidates(pairs, np.ones(len(pairs)), n1, n2, top_k=None)
    w = rng.random(cand.m)
    w[rng.random(cand.m) < 0.4] = 0.0
    w[np.isin(cand.pairs[:, 0], rng.choice(n1, n1 // 2, replace=False))] = 0.0  # rows without evidence
    w[cand.pairs[:, 1] == rng.integers(n2)] = 0.0  # a column without evidence
    return cand, w


@pytest.mark.parametrize("variant", VARIANTS)
def test_zero_weight_candidates_are_never_matched(variant, monkeypatch):
    # Decision (round_matching docstring): no pair without evidence is matched. Hand-worked:
    # node 0 of A has only a zero-weight candidate, so it stays unmatched even though matching
    # it would cost nothing; node 1 takes its only positive candidate.
    cand = build_candidates([[0, 0], [1, 1], [1, 0]], np.ones(3), 2, 2, top_k=None)
    w = np.array([0.0, 0.0, 0.5])  # sorted pairs: (0,0), (1,0), (1,1)
    m = _round(cand, w, variant, monkeypatch)
    assert cand.pairs[m.index].tolist() == [[1, 1]] and m.weight == 0.5
    # random instances: every matched pair has positive weight and the total is the optimum
    # (reference: scipy.optimize.linear_sum_assignment, see _optimum)
    for seed in range(60):
        cand, w = _zero_rows_instance(seed)
        m = _round(cand, w, variant, monkeypatch)
        assert np.all(w[m.index] > 0), (seed, cand.pairs[m.index][w[m.index] <= 0])
        assert m.weight == pytest.approx(_optimum(cand, w), rel=1e-12, abs=1e-12)


@pytest.mark.parametrize("variant", VARIANTS)
def test_all_zero_and_nan_weights_match_nothing(variant, monkeypatch):
    cand = build_candidates([[i, j] for i in range(3) for j in range(3)], np.ones(9), 3, 3, top_k=None)
    for w in (np.zeros(9), np.full(9, np.nan), np.where(np.arange(9) % 2, np.nan, 0.0)):
        m = _round(cand, w, variant, monkeypatch)
        assert len(m.index) == 0 and m.weight == 0.0


@pytest.mark.parametrize("shape", [(12, 12), (9, 15), (15, 9), (40, 40)])
@pytest.mark.parametrize("density", [1.0, 0.3])
def test_shortest_path_phase_alone_is_optimal(shape, density, monkeypatch):
    # The assignment kernel with its warm-start phase switched off, through round_matching.
    # Reference: scipy.optimize.linear_sum_assignment (see _optimum).
    rng = np.random.default_rng([shape[0], shape[1], int(density * 10)])
    n1, n2 = shape
    pairs = np.array([(i, j) for i in range(n1) for j in range(n2) if rng.random() < density])
    cand = build_candidates(pairs, np.ones(len(pairs)), n1, n2, top_k=None)
    w = np.round(rng.random(cand.m) * 8) / 8  # few distinct values: many ties for the heap
    m = _round(cand, w, "sparse, shortest paths only", monkeypatch)
    got = cand.pairs[m.index]
    assert len(np.unique(got[:, 0])) == len(got) and len(np.unique(got[:, 1])) == len(got)
    assert m.weight == pytest.approx(_optimum(cand, w), rel=1e-12, abs=1e-12)


# --------------------------------------------------------------------------- which solver, what is reported

@pytest.mark.parametrize("method, solver", [("auto", "sparse"), ("sparse", "sparse"), ("dense", "dense"),
                                            ("scipy", "scipy")])
def test_method_selects_the_solver_and_is_reported(method, solver, monkeypatch):
    # documented: auto = sparse; each method runs its own solver and no other
    import aligner.core.rounding as rounding
    import aligner.kernels.assign as assign

    ran = []
    for mod, name, tag in ((assign, "solve_packed", "sparse"),
                           (assign, "max_weight_matching_dense", "dense"), (rounding, "_scipy_matching", "scipy")):
        real = getattr(mod, name)
        monkeypatch.setattr(mod, name, lambda *a, _real=real, _tag=tag: ran.append(_tag) or _real(*a))
    cand = build_candidates([[0, 0], [0, 1], [1, 0]], np.ones(3), 2, 2, top_k=None)
    w = np.array([3.0, 2.0, 2.0])
    before = time.perf_counter()
    m = round_matching(cand, w, method=method)
    elapsed = time.perf_counter() - before
    assert ran == [solver]
    assert m.method == solver and m.weight == 4.0 and sorted(m.index.tolist()) == [1, 2]
    assert 0.0 <= m.seconds <= elapsed  # the time of the call, measured inside it
    empty = round_matching(cand, np.zeros(3), method=method)
    assert empty.method == method and empty.weight == 0.0 and 0.0 <= empty.seconds <= time.perf_counter() - before


def test_unknown_method_is_refused():
    cand = build_candidates([[0, 0]], [1.0], 1, 1, top_k=None)
    with pytest.raises(InvalidParameterError, match=r"^method must be one of auto, sparse, dense, scipy; "
                                                    r"got 'hungarian'$") as info:
        round_matching(cand, np.ones(1), method="hungarian")
    assert info.value.param == "method"


def test_scipy_path_keeps_a_weight_one_below_the_largest():
    # hand-worked: (0,0) = 3, (0,1) = 2, (1,0) = 2; the optimum takes (0,1) and (1,0), total 4.
    # The scipy path turns weights into costs (max w + 1) - w; a weight of exactly max w - 1
    # must stay a stored entry of positive cost (a cost of 0 may be taken for "no entry").
    cand = build_candidates([[0, 0], [0, 1], [1, 0]], np.ones(3), 2, 2, top_k=None)
    for w in (np.array([3.0, 2.0, 2.0]), np.array([1.0, 0.5, 0.75]), np.array([5.0, 4.0, 4.0])):
        m = round_matching(cand, w, method="scipy")
        assert m.weight == pytest.approx(_optimum(cand, w), rel=1e-15)


def test_dense_ends_on_a_matrix_of_exact_ties():
    # Found by differential testing (structural candidates, --rounding dense): lapjv 1.3.29 looped
    # for ever on this 146 x 146 matrix (1,431 distinct weights, many exact ties among weights of
    # different magnitudes). Run in a child process with a time limit, so that a regression fails
    # instead of hanging the suite. Reference: scipy.optimize.linear_sum_assignment's total.
    import subprocess
    import sys
    from pathlib import Path

    data = Path(__file__).parents[1] / "data" / "dense_ties" / "weights.npz"
    w = np.load(data)["weights"]
    code = ("import numpy as np, sys; from aligner.kernels.assign import max_weight_matching_dense; "
            f"w = np.load({str(data)!r})['weights']; x = max_weight_matching_dense(w); "
            "r = np.flatnonzero(x >= 0); print(repr(float(w[r, x[r]].sum())))")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    rows, cols = linear_sum_assignment(-np.where(w > 0, w, 0.0))
    best = float(np.where(w > 0, w, 0.0)[rows, cols].sum())
    assert float(done.stdout) == pytest.approx(best, rel=1e-9)
