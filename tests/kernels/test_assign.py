"""Tests of the assignment kernels in aligner.kernels.assign against outside references."""

import numpy as np
import pytest
import scipy.sparse as sp
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import linear_sum_assignment

from aligner.kernels.assign import _solve, max_weight_matching_dense, sparse_max_weight_matching

# Work budgets of the row reduction phase: 0 = shortest augmenting paths alone,
# 0.3 = both phases, 1e9 = row reduction until it stops by itself.
BUDGETS = [0.0, 0.3, 1e9]


def _instance(rng, n_rows, n_cols, density, *, negative=False, ties=False, empty_rows=0):
    """Random CSR instance as (indptr, indices, weights, mask, W) with W[mask] the stored weights."""
    mask = rng.random((n_rows, n_cols)) < density
    if empty_rows:
        mask[rng.choice(n_rows, size=min(empty_rows, n_rows), replace=False)] = False
    W = rng.normal(0.6, 0.5, size=(n_rows, n_cols)) if negative else rng.random((n_rows, n_cols)) + 0.05
    if ties:
        W = np.round(W * 4) / 4  # few distinct values, exact zeros included when negative
    r, c = np.nonzero(mask)
    A = sp.csr_matrix((W[r, c], (r, c)), shape=(n_rows, n_cols))
    A.sort_indices()
    return A.indptr.astype(np.int64), A.indices.astype(np.int64), A.data.astype(np.float64), mask, W


def _gain(mask, W):
    """Weight of each (row, column) pair in the equivalent dense problem."""
    return np.where(mask & (W > 0), W, 0.0)


def _optimum(gain):
    # Reference: scipy.optimize.linear_sum_assignment on the dense problem padded to a
    # square with zeros (non-entries and non-positive entries weight 0), maximize=True.
    n = max(gain.shape)
    if n == 0:
        return 0.0
    P = np.zeros((n, n))
    P[: gain.shape[0], : gain.shape[1]] = gain
    r, c = linear_sum_assignment(P, maximize=True)
    return float(P[r, c].sum())


def _check(row_to_col, mask, W, opt):
    """One-to-one, only stored positive entries, total equal to the optimum."""
    n_rows, n_cols = mask.shape
    assert row_to_col.dtype == np.int64 and row_to_col.shape == (n_rows,)
    rows = np.flatnonzero(row_to_col >= 0)
    cols = row_to_col[rows]
    assert np.all(row_to_col >= -1) and np.all(cols < n_cols)
    assert len(np.unique(cols)) == len(cols)
    assert np.all(mask[rows, cols]) and np.all(W[rows, cols] > 0)
    total = float(W[rows, cols].sum())
    assert total == pytest.approx(opt, rel=1e-9, abs=1e-12)


CASES = {
    "square dense": dict(n_rows=30, n_cols=30, density=1.0),
    "square sparse": dict(n_rows=60, n_cols=60, density=0.1),
    "more rows": dict(n_rows=50, n_cols=20, density=0.3),
    "more columns": dict(n_rows=20, n_cols=50, density=0.3),
    "very sparse": dict(n_rows=80, n_cols=80, density=0.02),
    "empty rows": dict(n_rows=40, n_cols=40, density=0.2, empty_rows=10),
    "ties": dict(n_rows=40, n_cols=40, density=0.3, ties=True),
    "negative weights": dict(n_rows=40, n_cols=30, density=0.4, negative=True),
    "negative weights and ties": dict(n_rows=30, n_cols=40, density=0.4, negative=True, ties=True),
}


@pytest.mark.parametrize("name", list(CASES))
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_sparse_kernel_matches_linear_sum_assignment(name, seed):
    # Reference: scipy.optimize.linear_sum_assignment (see _optimum).
    rng = np.random.default_rng([seed, len(name)])
    indptr, indices, weights, mask, W = _instance(rng, **CASES[name])
    opt = _optimum(_gain(mask, W))
    _check(sparse_max_weight_matching(indptr, indices, weights, mask.shape[1]), mask, W, opt)
    for budget in BUDGETS:
        _check(_solve(indptr, indices, weights, mask.shape[1], budget), mask, W, opt)


@pytest.mark.parametrize("name", list(CASES))
def test_dense_lapjv_wrapper_matches_linear_sum_assignment(name):
    # Reference: scipy.optimize.linear_sum_assignment (see _optimum).
    rng = np.random.default_rng([7, len(name)])
    _, _, _, mask, W = _instance(rng, **CASES[name])
    dense = np.where(mask, W, -1.0)  # non-entries: a non-positive weight, never used
    _check(max_weight_matching_dense(dense), mask, W, _optimum(_gain(mask, W)))


def test_near_permutation_instance():
    # Reference: scipy.optimize.linear_sum_assignment. Instance shaped like the intended
    # use: a hidden partner per row plus random decoys, some columns never a partner.
    rng = np.random.default_rng(11)
    n, decoys = 1500, 10
    partner = rng.permutation(n)
    rows = np.repeat(np.arange(n), decoys + 1)
    cols = np.concatenate([partner[:, None], rng.integers(0, n, (n, decoys))], axis=1).ravel()
    w = np.concatenate(
        [rng.normal(1.0, 0.3, (n, 1)), rng.normal(0.6, 0.3, (n, decoys))], axis=1
    ).ravel()
    keep = rng.random(len(rows)) > 0.05
    A = sp.coo_matrix((w[keep], (rows[keep], cols[keep])), shape=(n, n)).tocsr()
    A.sum_duplicates()
    A.sort_indices()
    mask = A.toarray() != 0
    W = A.toarray()
    opt = _optimum(_gain(mask, W))
    for idx_dtype in (np.int32, np.int64):
        x = sparse_max_weight_matching(A.indptr.astype(idx_dtype), A.indices.astype(idx_dtype), A.data, n)
        _check(x, mask, W, opt)
    _check(_solve(A.indptr.astype(np.int64), A.indices.astype(np.int64), A.data, n, 0.0), mask, W, opt)


def test_double_precision_near_ties():
    # Reference: hand-computed optimum; the weights differ far below float32 resolution.
    indptr = np.array([0, 2, 4])
    indices = np.array([0, 1, 0, 1])
    weights = np.array([1.0, 1.0 + 1e-12, 1.0 + 1e-12, 1.0 - 1e-12])
    for budget in BUDGETS:
        assert _solve(indptr, indices, weights, 2, budget).tolist() == [1, 0]
    assert max_weight_matching_dense([[1.0, 1.0 + 1e-12], [1.0 + 1e-12, 1.0 - 1e-12]]).tolist() == [1, 0]


def test_weight_beats_cardinality():
    # Reference: hand-computed optimum. Matching both rows (1 + 1) loses to one heavy pair (3).
    indptr = np.array([0, 2, 3])
    indices = np.array([0, 1, 0])
    weights = np.array([3.0, 1.0, 1.0])
    for budget in BUDGETS:
        assert _solve(indptr, indices, weights, 2, budget).tolist() == [0, -1]
    # A later row evicts an earlier one, which then has no better use than moving over ...
    indptr = np.array([0, 2, 3])
    indices = np.array([0, 1, 0])
    weights = np.array([3.0, 0.5, 3.5])
    for budget in BUDGETS:
        assert _solve(indptr, indices, weights, 2, budget).tolist() == [1, 0]
    # ... or than dropping out.
    indptr = np.array([0, 1, 2])
    indices = np.array([0, 0])
    weights = np.array([3.0, 3.5])
    for budget in BUDGETS:
        assert _solve(indptr, indices, weights, 1, budget).tolist() == [-1, 0]


def test_edge_cases():
    # Reference: hand-computed optima.
    empty = np.zeros(0, dtype=np.int64)
    assert sparse_max_weight_matching(np.zeros(1, dtype=np.int64), empty, np.zeros(0), 5).shape == (0,)
    x = sparse_max_weight_matching(np.zeros(4, dtype=np.int64), empty, np.zeros(0), 0)
    assert x.tolist() == [-1, -1, -1]
    # only non-positive and NaN weights: nothing is matched
    x = sparse_max_weight_matching(np.array([0, 2, 3]), np.array([0, 1, 1]), np.array([0.0, -1.0, np.nan]), 2)
    assert x.tolist() == [-1, -1]
    # a repeated (row, column) entry acts like its largest weight
    x = sparse_max_weight_matching(np.array([0, 2, 3]), np.array([0, 0, 0]), np.array([1.0, 5.0, 4.0]), 1)
    assert x.tolist() == [0, -1]
    assert max_weight_matching_dense(np.zeros((0, 3))).shape == (0,)
    assert max_weight_matching_dense(np.zeros((2, 0))).tolist() == [-1, -1]
    assert max_weight_matching_dense([[0.5]]).tolist() == [0]
    assert max_weight_matching_dense([[-0.5, np.nan]]).tolist() == [-1]


def test_invalid_input():
    with pytest.raises(ValueError):
        sparse_max_weight_matching(np.array([0, 1]), np.array([3]), np.array([1.0]), 2)
    with pytest.raises(ValueError):
        sparse_max_weight_matching(np.array([0, 1]), np.array([0]), np.array([np.inf]), 2)
    with pytest.raises(ValueError):
        sparse_max_weight_matching(np.array([0, 2]), np.array([0]), np.array([1.0]), 2)
    with pytest.raises(ValueError):
        max_weight_matching_dense(np.ones(3))


@st.composite
def _small_instances(draw):
    """(mask, W): up to 7 x 7, missing cells, ties, zeros, negatives and odd fractions."""
    n_rows = draw(st.integers(0, 7))
    n_cols = draw(st.integers(0, 7))
    codes = draw(st.lists(st.integers(-13, 24), min_size=n_rows * n_cols, max_size=n_rows * n_cols))
    codes = np.array(codes, dtype=float).reshape(n_rows, n_cols)
    mask = codes > -13  # code -13: no entry
    W = np.where(codes % 5 == 1, codes / 7.0, codes / 8.0)
    return mask, W


@settings(max_examples=150, deadline=None)
@given(_small_instances(), st.sampled_from(BUDGETS))
def test_property_small_instances(inst, budget):
    # Reference: scipy.optimize.linear_sum_assignment on the padded dense problem, and the
    # lapjv wrapper against the same optimum.
    mask, W = inst
    n_rows, n_cols = mask.shape
    r, c = np.nonzero(mask)
    order = np.lexsort((c, r))
    indptr = np.searchsorted(r[order], np.arange(n_rows + 1)).astype(np.int64)
    opt = _optimum(_gain(mask, W))
    _check(_solve(indptr, c[order].astype(np.int64), W[r, c][order], n_cols, budget), mask, W, opt)
    _check(max_weight_matching_dense(np.where(mask, W, -1.0)), mask, W, opt)


@pytest.mark.parametrize("seed", range(6))
@pytest.mark.parametrize("drop", [0.0, 0.1])
def test_pack_positive_equals_numpy_unique_layout(seed, drop):
    # Reference: numpy.unique(..., return_inverse=True) renumbering of the pairs with w > 0, a
    # numpy.bincount row pointer, and the (column, -weight) rows the solver's own packing makes of
    # that CSR; with nothing dropped the kept indices are the identity (an empty ``use``).
    from aligner.kernels.assign import _pack, matched_packed, pack_positive

    rng = np.random.default_rng(seed)
    n1, n2 = 30, 25
    pairs = np.unique(np.stack([rng.integers(0, n1, 200), rng.integers(0, n2, 200)], 1), axis=0).astype(np.int32)
    w = rng.random(len(pairs)) + 0.01
    if drop:
        w[rng.random(len(pairs)) < drop] = np.nan
        w[rng.random(len(pairs)) < drop] = -1.0
    use, rstart, ent, nc = pack_positive(np.ascontiguousarray(pairs), w, n1, n2)
    keep = np.flatnonzero(w > 0)
    ru, rows = np.unique(pairs[keep, 0], return_inverse=True)
    cu, cc = np.unique(pairs[keep, 1], return_inverse=True)
    indptr = np.concatenate([[0], np.cumsum(np.bincount(rows, minlength=len(ru)))])
    assert nc == len(cu) and np.array_equal(rstart, indptr)
    assert np.array_equal(use, keep if drop else np.empty(0, dtype=np.int64))
    want_start, want_ent = _pack(indptr.astype(np.int64), cc.astype(np.int64), w[keep], len(cu))
    assert np.array_equal(rstart, want_start) and np.array_equal(ent, want_ent)
    row_to_col = np.full(len(ru), -1, dtype=np.int64)
    for r in np.flatnonzero(rng.random(len(ru)) < 0.7):
        row_to_col[r] = cc[rng.integers(indptr[r], indptr[r + 1])]
    row_of = np.repeat(np.arange(len(ru)), np.diff(indptr))
    assert np.array_equal(matched_packed(rstart, ent, row_to_col, use),
                          keep[np.flatnonzero(row_to_col[row_of] == cc)])


def test_pack_positive_refuses_an_infinite_weight():
    # Common practice: an infinite weight has no optimum to match against; the solver's own
    # packing refuses it with the same message.
    from aligner.kernels.assign import pack_positive

    with pytest.raises(ValueError, match="finite"):
        pack_positive(np.array([[0, 0], [1, 1]], dtype=np.int32), np.array([1.0, np.inf]), 2, 2)
