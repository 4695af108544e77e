import numpy as np
import pytest

from aligner.kernels.candidates import drop_below_top_k, large_groups, pairs_order, row_pointer, sort_merge_pairs


@pytest.mark.parametrize("seed", range(4))
def test_sort_merge_pairs_equals_numpy_unique_with_maximum(seed):
    # Reference: numpy.unique on the (i, i') rows, numpy.maximum.at for the best score of each.
    rng = np.random.default_rng(seed)
    n1, n2, K = 7, 60, 500
    pairs = np.stack([rng.integers(0, n1, K), rng.integers(0, n2, K)], axis=1).astype(np.int32)
    scores = rng.integers(0, 5, K).astype(float)
    want, inverse = np.unique(pairs, axis=0, return_inverse=True)
    best = np.full(len(want), -np.inf)
    np.maximum.at(best, inverse.reshape(-1), scores)
    got, got_s = sort_merge_pairs(pairs, scores, n1, n2)
    np.testing.assert_array_equal(got, want)
    np.testing.assert_array_equal(got_s, best)
    assert pairs_order(got, n1, n2) == 0 and pairs_order(pairs, n1, n2) == 1


def test_pairs_order_by_hand():
    ok = np.array([[0, 1], [0, 2], [1, 0]])
    assert pairs_order(ok, 2, 3) == 0
    assert pairs_order(ok[::-1].copy(), 2, 3) == 1          # not sorted
    assert pairs_order(ok[[0, 0, 1]].copy(), 2, 3) == 1     # a repeat
    assert pairs_order(ok, 1, 3) == -1 and pairs_order(ok, 2, 2) == -1
    assert pairs_order(np.array([[0, -1]]), 2, 3) == -1
    assert pairs_order(np.empty((0, 2), dtype=np.int64), 0, 0) == 0
    np.testing.assert_array_equal(row_pointer(ok.astype(np.int32), 3), [0, 2, 3, 3])


@pytest.mark.parametrize("seed", range(4))
def test_top_k_groups_against_lexsort(seed):
    # Reference: numpy.lexsort of every group on (score descending, position ascending); the
    # first k of each group are kept. Groups come from large_groups, checked against a stable
    # numpy.argsort of the keys.
    rng = np.random.default_rng(seed)
    K, n_groups, k = 400, 9, 3
    pairs = np.stack([np.zeros(K, dtype=np.int32), rng.integers(0, n_groups, K).astype(np.int32)], axis=1)
    scores = rng.integers(0, 3, K).astype(float)
    ptr, members = large_groups(pairs, 1, n_groups, k)
    order = np.argsort(pairs[:, 1], kind="stable")
    counts = np.bincount(pairs[:, 1], minlength=n_groups)
    big = counts[pairs[order, 1]] > k
    np.testing.assert_array_equal(members, order[big])
    np.testing.assert_array_equal(ptr, np.concatenate([[0], np.cumsum(counts[counts > k])]))
    drop = np.zeros(K, dtype=bool)
    drop_below_top_k(scores, ptr, members, k, drop)
    want = np.ones(K, dtype=bool)
    for g in range(n_groups):
        pos = np.flatnonzero(pairs[:, 1] == g)
        want[pos[np.lexsort((pos, -scores[pos]))[:k]]] = False
    np.testing.assert_array_equal(drop, want)


def test_top_k_rows_by_hand():
    # rows of a CSR index (empty members): row 0 = scores [1, 2, 2, 0] keeps positions 1, 2
    # (k = 2); row 1 = [5, 5, 5] keeps positions 4, 5 (ties to the first); row 2 = [3] keeps it
    scores = np.array([1.0, 2.0, 2.0, 0.0, 5.0, 5.0, 5.0, 3.0])
    drop = np.zeros(8, dtype=bool)
    drop_below_top_k(scores, np.array([0, 4, 7, 8]), np.empty(0, dtype=np.int64), 2, drop)
    assert np.flatnonzero(drop).tolist() == [0, 3, 6]


def test_kth_highest_equals_numpy_sort():
    # Reference: numpy.sort, read from the top; many ties (small integer values) and no ties.
    from aligner.kernels.candidates import _kth_highest
    rng = np.random.default_rng(5)
    for trial in range(300):
        n = int(rng.integers(1, 30))
        vals = rng.random(n) if trial % 2 else rng.integers(0, 3, n).astype(float)
        k = int(rng.integers(1, n + 1))
        assert _kth_highest(vals.copy(), k) == np.sort(vals)[::-1][k - 1]
