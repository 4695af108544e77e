"""aligner.core.arrays against numpy's own np.unique and np.searchsorted (the reference)."""

import numpy as np
import pytest

from aligner.core.arrays import TABLE_SPAN, components, positions, unique


@pytest.mark.parametrize("dtype", [np.int64, np.int32, np.uint16, bool])
@pytest.mark.parametrize("size", [0, 1, 2, 1000])
@pytest.mark.parametrize("span", [50, 60_000])  # a mask over the span, and a sort (span above TABLE_SPAN * size)
def test_unique_is_numpys(rng, dtype, size, span):
    # reference: numpy.unique (plain, and with return_inverse)
    a = (rng.integers(0, span, size=size) - span // 3).astype(dtype)
    assert np.array_equal(unique(a), np.unique(a)) and unique(a).dtype == np.unique(a).dtype
    u, inv = unique(a, return_inverse=True)
    ref_u, ref_inv = np.unique(a, return_inverse=True)
    assert np.array_equal(u, ref_u) and np.array_equal(inv, ref_inv.reshape(-1))


def test_unique_of_other_kinds_is_numpys():
    # reference: numpy.unique, which collapses NaN (equal_nan=True); a sort and compare would not
    a = np.array([2.0, np.nan, 1.0, np.nan, 2.0])
    assert np.array_equal(unique(a), np.unique(a), equal_nan=True)
    assert unique(np.array(["b", "a", "b"], dtype=object)).tolist() == ["a", "b"]


@pytest.mark.parametrize("span", [10, 10**9])  # a table, then binary search (span far above TABLE_SPAN * size)
def test_positions_are_searchsorteds(rng, span):
    # reference: numpy.searchsorted on values in the set; outside it, numpy.isin says which
    s = np.unique(rng.integers(0, span, size=200))
    v = rng.choice(s, size=500)
    assert np.array_equal(positions(s, v), np.searchsorted(s, v))
    w = rng.integers(-5, span + 5, size=500)
    got = positions(s, w, missing=-1)
    inside = np.isin(w, s)
    assert np.array_equal(got[inside], np.searchsorted(s, w[inside])) and np.all(got[~inside] == -1)
    assert (span - 1 <= TABLE_SPAN * 700) == (span == 10)  # both paths are exercised


def test_positions_of_nothing():
    assert positions(np.array([1, 2]), np.empty(0, dtype=np.int64)).tolist() == []
    assert positions(np.empty(0, dtype=np.int64), np.array([3]), missing=-1).tolist() == [-1]


@pytest.mark.parametrize("kind", ["sparse", "paths", "stars", "none"])
def test_components_are_scipys(rng, kind):
    # Reference: scipy.sparse.csgraph.connected_components (undirected), whose components come in
    # the order of their smallest node: numbering components's labels in increasing order must
    # give the same array. Graphs: random sparse ones, long paths and stars through randomly
    # numbered nodes (the worst orders for hooking), and no edge at all.
    import scipy.sparse as sp
    from scipy.sparse.csgraph import connected_components

    for _ in range(20):
        n = int(rng.integers(1, 3000))
        if kind == "sparse":
            e = int(rng.integers(0, 2 * n))
            u, v = rng.integers(0, n, e), rng.integers(0, n, e)
        elif kind == "paths":
            order = rng.permutation(n)
            cut = rng.random(n - 1) < 0.01  # a few breaks: several long paths
            u, v = order[:-1][~cut], order[1:][~cut]
        elif kind == "stars":
            hubs = rng.choice(n, max(1, n // 100))
            u, v = hubs[rng.integers(0, len(hubs), n)], rng.permutation(n)
        else:
            u = v = np.zeros(0, dtype=np.int64)
        graph = sp.coo_matrix((np.ones(len(u)), (u, v)), shape=(n, n)).tocsr()
        count, want = connected_components(graph, directed=False)
        got = components(u, v, n)
        assert (got <= np.arange(n)).all() and (got[got] == got).all()  # each labelled by a node of its own
        assert unique(got, return_inverse=True)[1].tolist() == want.tolist()
