"""Canonical edges, CSR adjacency and merged prior pairs against networkx, scipy, pandas and numpy."""

import networkx as nx
import numpy as np
import pandas as pd
import pytest
import scipy.sparse as sp

from aligner.core.network import (_in_order, adjacency, canonical_arcs, canonical_edges, merge_duplicate_pairs,
                                  network_from_edges, unique_sorted)


def _rows(rng, n, m):
    return rng.integers(0, n, m), rng.integers(0, n, m)


@pytest.mark.parametrize("n, m", [(6, 40), (200, 600), (3, 300)])
def test_canonical_edges_against_networkx_and_bincount(n, m):
    rng = np.random.default_rng(n)
    u, v = _rows(rng, n, m)
    w = rng.random(m)
    edges, ew, loops, dup = canonical_edges(u, v, w)
    g = nx.Graph()
    g.add_edges_from((a, b) for a, b in zip(u, v) if a != b)  # networkx merges repeats
    assert edges.dtype == np.int32 and (edges[:, 0] < edges[:, 1]).all()
    assert sorted(edges.tolist()) == edges.tolist() and len(edges) == len(g.edges)
    assert {tuple(e) for e in edges.tolist()} == {(min(a, b), max(a, b)) for a, b in g.edges}
    assert loops == int((u == v).sum()) and dup == int((u != v).sum()) - len(edges)
    # weights: summed in row order, bit for bit as np.bincount over the stable order
    keep = u != v
    key = np.minimum(u, v)[keep] * n + np.maximum(u, v)[keep]
    uniq, inverse = np.unique(key, return_inverse=True)
    assert np.array_equal(ew, np.bincount(inverse, weights=w[keep]))


def test_canonical_arcs_against_networkx_digraph():
    rng = np.random.default_rng(5)
    u, v = _rows(rng, 20, 300)
    arcs, _, loops, dup = canonical_arcs(u, v)
    g = nx.DiGraph()
    g.add_edges_from((a, b) for a, b in zip(u, v) if a != b)
    assert arcs.tolist() == sorted(map(list, g.edges)) and loops == int((u == v).sum())
    assert dup == int((u != v).sum()) - g.number_of_edges()


def test_only_self_loops_and_empty():
    edges, w, loops, dup = canonical_edges(np.array([2, 3]), np.array([2, 3]), np.array([1.0, 2.0]))
    assert edges.shape == (0, 2) and edges.dtype == np.int32 and w.shape == (0,) and (loops, dup) == (2, 0)
    edges, w, loops, dup = canonical_edges(np.array([], int), np.array([], int))
    assert edges.shape == (0, 2) and w is None and (loops, dup) == (0, 0)
    with pytest.raises(ValueError):
        canonical_edges(np.array([-1]), np.array([0]))


def _lexsort_adjacency(edges, n, weights, symmetric):
    """The former implementation, the reference: np.lexsort over both directions."""
    src = np.concatenate([edges[:, 0], edges[:, 1]]) if symmetric else edges[:, 0]
    dst = np.concatenate([edges[:, 1], edges[:, 0]]) if symmetric else edges[:, 1]
    order = np.lexsort((dst, src))
    indptr = np.zeros(n + 1, np.int64)
    np.cumsum(np.bincount(src, minlength=n), out=indptr[1:])
    w = np.concatenate([weights, weights]) if symmetric else weights
    return indptr, dst[order], w[order]


@pytest.mark.parametrize("symmetric", [True, False])
@pytest.mark.parametrize("canonical", [True, False])
def test_adjacency_against_lexsort_and_scipy(symmetric, canonical):
    rng = np.random.default_rng(7)
    n = 40
    u, v = _rows(rng, n, 500)
    edges = canonical_edges(u, v)[0] if canonical else np.stack([u, v], axis=1)  # raw: repeats, loops, any order
    w = rng.random(len(edges))
    ip, ix, ew = adjacency(edges, n, w, symmetric=symmetric)
    rip, rix, rw = _lexsort_adjacency(edges, n, w, symmetric)
    assert np.array_equal(ip, rip) and np.array_equal(ix, rix) and np.array_equal(ew, rw)
    assert ix.dtype == np.int32 and ip.dtype == np.int64
    if canonical and symmetric:  # scipy.sparse: the symmetric matrix with sorted indices
        m = sp.coo_matrix((np.ones(2 * len(edges)), (np.r_[edges[:, 0], edges[:, 1]], np.r_[edges[:, 1], edges[:, 0]])),
                          shape=(n, n)).tocsr()
        m.sort_indices()
        assert np.array_equal(ip, m.indptr) and np.array_equal(ix, m.indices)
    ip2, ix2 = adjacency(edges, n, symmetric=symmetric)
    assert np.array_equal(ip2, ip) and np.array_equal(ix2, ix)


def test_adjacency_refuses_endpoints_out_of_range():
    with pytest.raises(ValueError, match=r"\[0, 3\)"):
        adjacency(np.array([[0, 3]]), 3)


def test_network_from_edges_hand_worked():
    # a triangle 0-1-2, edge 0-1 given twice in both directions (weights 1 + 2), a self-loop 3-3
    names = np.array(["a", "b", "c", "d"], dtype=object)
    net = network_from_edges(names, np.array([1, 0, 2, 1, 3]), np.array([0, 2, 1, 0, 3]),
                             np.array([1.0, 4.0, 5.0, 2.0, 9.0]))
    assert net.edges.tolist() == [[0, 1], [0, 2], [1, 2]] and net.weights.tolist() == [3.0, 4.0, 5.0]
    assert net.indptr.tolist() == [0, 2, 4, 6, 6] and net.indices.tolist() == [1, 2, 0, 2, 0, 1]
    assert net.adj_weights.tolist() == [3.0, 4.0, 3.0, 5.0, 4.0, 5.0]
    assert (net.n_self_loops, net.n_duplicate_edges) == (1, 1)


def test_merge_duplicate_pairs_against_pandas():
    rng = np.random.default_rng(9)
    pairs = np.stack(_rows(rng, 30, 2000), axis=1)
    scores = rng.random(2000).round(2)  # many equal scores
    got, best, dup = merge_duplicate_pairs(pairs, scores, 30)
    ref = pd.DataFrame({"a": pairs[:, 0], "b": pairs[:, 1], "s": scores}).groupby(["a", "b"])["s"].max()
    assert got.dtype == np.int64 and got.tolist() == [list(k) for k in ref.index]
    assert np.array_equal(best, ref.to_numpy()) and dup == 2000 - len(ref)


def test_merged_zero_scores_do_not_depend_on_row_order():
    # 0.0 and -0.0 compare equal; the merged score is 0.0 whichever row comes first
    for s in ([0.0, -0.0], [-0.0, 0.0]):
        _, best, dup = merge_duplicate_pairs(np.array([[1, 2], [1, 2]]), np.array(s), 3)
        assert dup == 1 and np.copysign(1.0, best[0]) == 1.0


@pytest.mark.parametrize("a, b, strict, want", [
    ([0, 0, 1], [1, 2, 2], True, True),
    ([0, 0, 1], [1, 1, 2], True, False),   # a repeat
    ([0, 1, 0], [1, 2, 2], True, False),   # out of order
    ([1], [0], True, False),               # not a < b
    ([1, 1, 2], [0, 0, 1], False, True),   # arcs: repeats and a > b allowed
    ([1, 0], [0, 1], False, False),
    ([], [], True, True),
])
def test_in_order_hand_worked(a, b, strict, want):
    assert _in_order(np.array(a, np.int64), np.array(b, np.int64), strict) is want


@pytest.mark.parametrize("case", ["sorted", "a repeat", "out of order", "a row left out", "arcs both ways", "long, sorted",
                                  "long, out of order at the end"])
def test_rows_already_in_order_are_taken_as_they_are(case):
    # Reference: numpy.unique over the rows (axis=0) with weights summed per row (np.bincount),
    # rows with a negative first entry left out. Sorted unique rows skip the sort and the merge;
    # any other input takes the sorting path and gets the same answer as numpy.
    rng = np.random.default_rng(3)
    rows = np.unique(rng.integers(0, 30 if "long" not in case else 1000, (200 if "long" not in case else 6000, 2)),
                     axis=0)
    if case == "long, out of order at the end":  # past the first rows, which are looked at first
        rows[[-2, -1]] = rows[[-1, -2]]
    if case == "a repeat":
        rows = np.insert(rows, 50, rows[50], axis=0)
    elif case == "out of order":
        rows[[10, 11]] = rows[[11, 10]]
    elif case == "a row left out":
        rows[0, 0] = -1
    elif case == "arcs both ways":
        rows = np.unique(np.concatenate([rows, rows[:, ::-1]]), axis=0)
    w = rng.random(len(rows))
    w[3] = -0.0  # a sum from 0.0 (np.bincount's) makes it 0.0; the largest keeps it
    got, got_w, n_dup = unique_sorted(rows[:, 0], rows[:, 1], w)
    keep = rows[:, 0] >= 0
    want, inverse = np.unique(rows[keep], axis=0, return_inverse=True)
    np.testing.assert_array_equal(got, want)
    assert got.dtype == np.int32 and n_dup == int(keep.sum()) - len(want)
    want_w = np.bincount(inverse.ravel(), weights=w[keep])
    np.testing.assert_allclose(got_w, want_w, rtol=0, atol=1e-15)
    assert np.array_equal(np.signbit(got_w), np.signbit(want_w)) and got_w is not w
    if case == "sorted":  # the largest of each row: the row's own value, its sign kept
        top = unique_sorted(rows[:, 0], rows[:, 1], w, largest=True)[1]
        assert np.array_equal(top, w) and np.signbit(top[3])
