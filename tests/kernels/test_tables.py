"""Counting sorts, merging of repeated rows and the CSR fill against numpy and scipy."""

import numpy as np
import pytest
import scipy.sparse as sp

from aligner.kernels.tables import _SHORT, carry_rows, fill_symmetric, merge_sorted, sort_rows


@pytest.mark.parametrize("n1, n2, m", [(5, 4, 60), (50, 1000, 3000), (3, 7, 500), (1, 1, 0)])
def test_sort_rows_is_the_stable_lexsort(n1, n2, m):
    # reference: numpy's stable np.lexsort; runs longer than _SHORT take the two-pass radix branch
    rng = np.random.default_rng(n1 + m)
    k1 = rng.integers(0, n1, m).astype(np.int64)
    k2 = rng.integers(0, n2, m).astype(np.int64)
    assert np.array_equal(sort_rows(k1, k2, n1), np.lexsort((k2, k1)))


def test_sort_rows_both_branches_and_left_out_rows():
    # short runs (insertion) and one long run (radix) must both equal np.lexsort on the kept rows
    rng = np.random.default_rng(1)
    for long_run in (0, _SHORT + 1, 5 * _SHORT):
        k1 = np.concatenate([rng.integers(0, 40, 60), np.full(long_run, 7)]).astype(np.int64)
        k2 = rng.integers(0, 9, len(k1)).astype(np.int64)
        k1[rng.random(len(k1)) < 0.2] = -1  # left out
        keep = np.flatnonzero(k1 >= 0)
        want = keep[np.lexsort((k2[keep], k1[keep]))]
        assert np.array_equal(sort_rows(k1, k2, 40), want), long_run


def test_merge_sorted_sums_like_bincount_and_keeps_the_largest():
    rng = np.random.default_rng(2)
    k1 = rng.integers(0, 6, 400).astype(np.int64)
    k2 = rng.integers(0, 5, 400).astype(np.int64)
    w = rng.standard_normal(400)
    order = np.lexsort((k2, k1))
    key = k1 * 5 + k2
    uniq, inverse = np.unique(key, return_inverse=True)
    rows, summed, dup = merge_sorted(k1, k2, order, w, 1)
    assert np.array_equal(rows, np.stack([uniq // 5, uniq % 5], axis=1)) and rows.dtype == np.int32
    # np.bincount adds in row order, as the kernel does: equal bit for bit
    assert np.array_equal(summed, np.bincount(inverse, weights=w)) and dup == 400 - len(uniq)
    _, largest, _ = merge_sorted(k1, k2, order, w, 2)
    assert np.array_equal(largest, [w[key == u].max() for u in uniq])
    rows0, none, _ = merge_sorted(k1, k2, order, w, 0)
    assert np.array_equal(rows0, rows) and len(none) == 0


def test_largest_of_zeros_and_nan():
    # hand-worked: 0.0 wins over -0.0 in either order (IEEE total order), NaN propagates as np.maximum
    k = np.zeros(2, np.int64)
    for w in ([0.0, -0.0], [-0.0, 0.0]):
        _, v, _ = merge_sorted(k, k, np.arange(2), np.array(w), 2)
        assert v[0] == 0 and np.copysign(1, v[0]) == 1
    for w in ([np.nan, 1.0], [1.0, np.nan]):
        _, v, _ = merge_sorted(k, k, np.arange(2), np.array(w), 2)
        assert np.isnan(v[0]) and np.isnan(np.maximum.reduce(w))


def test_fill_symmetric_equals_scipy_csr():
    # reference: scipy.sparse (coo -> csr sums nothing here: edges are unique; sorted indices)
    rng = np.random.default_rng(3)
    n = 30
    key = np.unique(rng.integers(0, n * n, 120))
    a, b = key // n, key % n
    keep = a < b
    a, b = a[keep].astype(np.int64), b[keep].astype(np.int64)
    w = rng.random(len(a))
    ip, ix, ew = fill_symmetric(a, b, n, w, True)
    ref = sp.coo_matrix((np.concatenate([w, w]), (np.concatenate([a, b]), np.concatenate([b, a]))), shape=(n, n)).tocsr()
    ref.sort_indices()
    assert np.array_equal(ip, ref.indptr) and np.array_equal(ix, ref.indices) and np.array_equal(ew, ref.data)
    assert ix.dtype == np.int32 and ip.dtype == np.int64


@pytest.mark.parametrize("seed", range(6))
def test_carry_rows_equals_a_look_up_by_keys(seed):
    # Reference: a dictionary look-up of each renumbered old row among the new rows (common
    # practice). Old and new rows are sorted distinct (node, node) pairs; the maps drop some
    # nodes and shift the others, keeping their order (as renumbering by sorted names does)
    rng = np.random.default_rng(seed)
    n1, n2 = 40, 30

    def rows(k):
        keys = np.unique(rng.integers(0, n1 * n2, k))
        return np.stack([keys // n2, keys % n2], axis=1).astype(np.int32)

    old = rows(300)
    to_a = np.where(rng.random(n1) < 0.9, 0, -1)
    to_a[to_a >= 0] = np.cumsum(rng.integers(1, 3, (to_a >= 0).sum())) - 1  # increasing, with gaps
    to_b = np.where(rng.random(n2) < 0.9, 0, -1)
    to_b[to_b >= 0] = np.cumsum(rng.integers(1, 3, (to_b >= 0).sum())) - 1
    n1n, n2n = int(to_a.max()) + 1, int(to_b.max()) + 1
    mapped = np.stack([to_a[old[:, 0]], to_b[old[:, 1]]], axis=1)
    alive = (mapped >= 0).all(axis=1)
    keep_old = mapped[alive][rng.random(alive.sum()) < 0.8]  # most old rows stay, some go
    new_keys = np.unique(np.concatenate([keep_old[:, 0] * n2n + keep_old[:, 1],
                                         rng.integers(0, n1n * n2n, 60)]))  # and new ones come
    new = np.stack([new_keys // n2n, new_keys % n2n], axis=1).astype(np.int32)
    old_x = rng.random(len(old)).astype(np.float32)
    old_prior = rng.random(len(old)) + 0.1
    new_prior = rng.random(len(new)) + 0.1
    x0, kept, same = np.zeros(len(new)), np.zeros(len(new), bool), np.zeros(len(new), bool)
    carry_rows(old[:, 0].copy(), old[:, 1].copy(), to_a.astype(np.int64), to_b.astype(np.int64),
               new[:, 0].copy(), new[:, 1].copy(), old_x, old_prior, new_prior, x0, kept, same)
    # the reference, pair by pair through a dictionary of the new keys
    where = {int(k): j for j, k in enumerate(new_keys)}
    want_x, want_kept, want_same = np.zeros(len(new)), np.zeros(len(new), bool), np.zeros(len(new), bool)
    for i in np.flatnonzero(alive):
        j = where.get(int(mapped[i, 0] * n2n + mapped[i, 1]))
        if j is not None:
            want_x[j], want_kept[j] = old_x[i], True
            want_same[j] = abs(new_prior[j] - old_prior[i]) <= 1e-6 * abs(old_prior[i])
    assert want_kept.sum() > 100  # most old rows land
    np.testing.assert_array_equal(x0, want_x)
    np.testing.assert_array_equal(kept, want_kept)
    np.testing.assert_array_equal(same, want_same)
