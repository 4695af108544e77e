import numpy as np
import pytest

from aligner.core.candidates import build_candidates
from aligner.errors import InvalidParameterError


def test_top_k_union_by_hand():
    # Worked by hand: A node 0 prefers B0 (0.9) then B1 (0.8); A node 1 prefers B1 (0.5).
    # top_k = 1 on the A side keeps (0,0), (1,1); on the B side B0 keeps (0,0), B1 keeps (0,1).
    c = build_candidates([[0, 0], [0, 1], [1, 1]], [0.9, 0.8, 0.5], 2, 2, top_k=1)
    assert c.pairs.tolist() == [[0, 0], [0, 1], [1, 1]]
    c = build_candidates([[0, 0], [0, 1], [1, 1]], [0.9, 0.3, 0.5], 2, 2, top_k=1)
    assert c.pairs.tolist() == [[0, 0], [1, 1]]


def test_min_score_and_duplicates_keep_highest():
    c = build_candidates([[0, 0], [0, 0], [1, 0]], [0.2, 0.7, 0.1], 2, 1, min_score=0.15, top_k=None)
    assert c.pairs.tolist() == [[0, 0]]
    assert c.prior.tolist() == [0.7]


def test_order_of_rows_does_not_matter(rng):
    pairs = rng.integers(0, 30, size=(300, 2))
    scores = rng.integers(0, 5, size=300).astype(float)  # many ties
    a = build_candidates(pairs, scores, 30, 30, top_k=3)
    perm = rng.permutation(300)
    b = build_candidates(pairs[perm], scores[perm], 30, 30, top_k=3)
    assert np.array_equal(a.pairs, b.pairs) and np.array_equal(a.prior, b.prior)


def test_index_and_coverage():
    c = build_candidates([[2, 1], [0, 0]], [1.0, 1.0], 4, 2, top_k=None)
    assert c.a_indptr.tolist() == [0, 1, 1, 2, 2]
    assert c.coverage() == (0.5, 1.0)
    # on random pairs, against the distinct nodes numpy's unique counts
    rng = np.random.default_rng(7)
    pairs = np.stack([rng.integers(0, 50, 200), rng.integers(0, 80, 200)], axis=1)
    r = build_candidates(pairs, rng.random(200), 60, 90, top_k=None)
    assert r.coverage() == (len(np.unique(pairs[:, 0])) / 60, len(np.unique(pairs[:, 1])) / 90)


def test_empty():
    c = build_candidates(np.empty((0, 2)), np.empty(0), 3, 3)
    assert c.m == 0 and c.a_indptr.tolist() == [0, 0, 0, 0]


def test_top_k_ties_go_to_the_smaller_index_on_an_all_ties_grid():
    # The documented rule (build_candidates, Notes): ties in the top-k cut are broken by the
    # smaller index of the other node. Worked by hand on a full n1 x n2 grid where every score
    # is equal: node i of A keeps (i, 0..k-1), node j of B keeps (0..k-1, j), so the union is
    # exactly the pairs with j < k or i < k.
    n1, n2, k = 6, 5, 2
    grid = np.array([(i, j) for i in range(n1) for j in range(n2)])
    want = [[i, j] for i in range(n1) for j in range(n2) if j < k or i < k]
    for perm in (np.arange(len(grid)), np.random.default_rng(0).permutation(len(grid)), np.arange(len(grid))[::-1]):
        c = build_candidates(grid[perm], np.full(len(grid), 0.5), n1, n2, top_k=k)
        assert c.pairs.tolist() == want
    # a strictly better score still beats the index: B node 4 is node 5's best
    scores = np.full(len(grid), 0.5)
    scores[(grid[:, 0] == 5) & (grid[:, 1] == 4)] = 0.9
    c = build_candidates(grid, scores, n1, n2, top_k=1)
    want = {(i, 0) for i in range(n1) if i != 5} | {(0, j) for j in range(n2 - 1)} | {(5, 4)}
    assert c.pairs.tolist() == [list(p) for p in sorted(want)]


def test_ties_on_a_large_grid_follow_the_rule_too():
    # The same rule where an unstable sort would show: numpy's default sort is not stable
    # (numpy.argsort documentation), and on many equal keys it does reorder them.
    n1, n2, k = 45, 40, 3
    grid = np.array([(i, j) for i in range(n1) for j in range(n2)])
    c = build_candidates(grid, np.full(len(grid), 2.0), n1, n2, top_k=k)
    assert c.pairs.tolist() == [[i, j] for i in range(n1) for j in range(n2) if j < k or i < k]
    # ties below a strict winner (worked by hand): pair (10, 39) scores 3.0, the rest 2.0. A node 10
    # keeps (10, 39), (10, 0), (10, 1), so (10, 2) is lost; B node 39 keeps (10, 39), (0, 39),
    # (1, 39), so (2, 39), which A node 2 does not keep either, is lost.
    scores = np.full(len(grid), 2.0)
    scores[10 * n2 + 39] = 3.0
    c = build_candidates(grid, scores, n1, n2, top_k=k)
    want = {(i, j) for i in range(n1) for j in range(n2) if j < k or i < k}
    want = (want - {(10, 2), (2, 39)}) | {(10, 39)}
    assert c.pairs.tolist() == [list(p) for p in sorted(want)]


def test_defaults_bounds_and_types():
    # the documented default top_k is 25: on an all-ties 30 x 30 grid, pair (i, j) is kept when
    # j < 25 (A side) or i < 25 (B side): all but the 5 x 5 corner
    grid = np.array([(i, j) for i in range(30) for j in range(30)])
    c = build_candidates(grid, np.ones(900), 30, 30)
    assert c.pairs.tolist() == [[i, j] for i in range(30) for j in range(30) if i < 25 or j < 25]
    # min_score is inclusive: "pairs scoring below this are never candidates"
    c = build_candidates([[0, 0], [1, 1]], [0.5, 0.49], 2, 2, min_score=0.5, top_k=None)
    assert c.pairs.tolist() == [[0, 0]]
    # documented dtypes, whatever the input's
    c = build_candidates([[0, 1], [1, 0]], [1, 2], 2, 2, top_k=None)
    assert c.prior.dtype == np.float64 and c.a_indptr.dtype == np.int64 and c.pairs.dtype == np.int32
    assert c.prior.tolist() == [1.0, 2.0]
    # no nodes at all: coverage is 0, not a division by zero
    assert build_candidates(np.empty((0, 2)), np.empty(0), 0, 0).coverage() == (0.0, 0.0)
    assert build_candidates(np.empty((0, 2)), np.empty(0), 0, 3).coverage() == (0.0, 0.0)


def _reference_candidates(pairs, scores, n1, n2, min_score, top_k):
    """The documented rule written out plainly (Python sorting, one pair at a time): repeated
    pairs keep their highest score; a pair stays when it is among the ``top_k`` best of its
    node of A (ties to the smaller node of B) or of its node of B (ties to the smaller node of
    A); the result is sorted by (i, i')."""
    best = {}
    for (i, j), s in zip(pairs.tolist(), scores.tolist()):
        if s >= min_score and ((i, j) not in best or s > best[(i, j)]):
            best[(i, j)] = s
    keep = set(best)
    if top_k is not None:
        by_a, by_b = {}, {}
        for (i, j), s in best.items():
            by_a.setdefault(i, []).append((-s, j, (i, j)))
            by_b.setdefault(j, []).append((-s, i, (i, j)))
        keep = {p for group in (*by_a.values(), *by_b.values()) for _, _, p in sorted(group)[:max(top_k, 0)]}
    out = sorted(keep)
    return np.array(out, dtype=np.int32).reshape(-1, 2), np.array([best[p] for p in out], dtype=np.float64)


@pytest.mark.parametrize("seed", range(6))
def test_matches_the_rule_written_out_on_random_priors(seed):
    # Reference: _reference_candidates above (plain Python sorting of every node's pairs).
    # Unsorted rows, repeats, ties (integer scores), rows already sorted, int32 and int64 input.
    rng = np.random.default_rng(seed)
    n1, n2 = int(rng.integers(1, 40)), int(rng.integers(1, 40))
    K = int(rng.integers(0, 4 * n1 * n2))
    pairs = np.stack([rng.integers(0, n1, K), rng.integers(0, n2, K)], axis=1)
    scores = rng.integers(0, 4, K).astype(float) if seed % 2 else rng.random(K)
    if seed % 3 == 0:
        pairs, idx = np.unique(pairs, axis=0, return_index=True)  # sorted, no repeat: the fast path
        scores = scores[idx]
    dtype = np.int32 if seed % 2 else np.int64
    for top_k in (None, 0, 1, 2, 5, 50):
        for min_score in (0.0, 0.5):
            want_p, want_s = _reference_candidates(pairs, scores, n1, n2, min_score, top_k)
            c = build_candidates(pairs.astype(dtype), scores, n1, n2, min_score=min_score, top_k=top_k)
            assert c.pairs.dtype == np.int32 and c.pairs.flags.c_contiguous
            np.testing.assert_array_equal(c.pairs, want_p)
            np.testing.assert_array_equal(c.prior, want_s)
            want_ptr = np.concatenate([[0], np.cumsum(np.bincount(want_p[:, 0], minlength=n1))])
            np.testing.assert_array_equal(c.a_indptr, want_ptr)


def test_the_result_owns_its_arrays():
    # a sorted prior with nothing to drop is the fast path: the candidate set must still not
    # share memory with the caller's arrays (writing to one must not change the other)
    pairs = np.array([[0, 0], [1, 1]], dtype=np.int32)
    scores = np.array([0.5, 0.7])
    c = build_candidates(pairs, scores, 2, 2)
    assert not np.shares_memory(c.pairs, pairs) and not np.shares_memory(c.prior, scores)


def test_pairs_outside_the_networks_are_refused():
    for bad in ([[0, 2]], [[2, 0]], [[-1, 0]], [[0, 2**40]]):
        with pytest.raises(InvalidParameterError, match=r"^pairs must hold node indices in \[0, 2\) x \[0, 2\); "
                                                        r"got a pair outside$") as info:
            build_candidates(bad, [1.0], 2, 2)
        assert info.value.param == "pairs"


def test_one_score_per_pair():
    with pytest.raises(InvalidParameterError, match=r"^scores must hold one score per pair; got 1 for 2 pairs$"):
        build_candidates([[0, 0], [1, 1]], [1.0], 2, 2)


def test_shared_end_columns_survive_a_whole_run(monkeypatch):
    # CandidateSet.ends is one pair of arrays read by the refinement, the confidence, the ambiguity
    # and the query kernels; none may write into it. Reference: the pairs' own columns, after a
    # run that uses all of them (common practice: inputs of a stage are left unchanged). The run
    # lets go of them after the scoring (taken here as it does), and they are made again on use.
    from aligner.core.candidates import CandidateSet
    from aligner.datasets.instances import as_frames, noisy_relabelled
    from aligner.pipeline import align

    held, release = [], CandidateSet.release_ends
    monkeypatch.setattr(CandidateSet, "release_ends",
                        lambda self: held.append(self.__dict__.get("ends")) or release(self))
    a, b, prior, truth = as_frames(noisy_relabelled(300, seed=5))
    res = align(a, b, prior, truth=truth)
    cand = res.candidates
    assert len(held) == 1 and held[0] is not None and "ends" not in cand.__dict__
    pa, pb = held[0]
    assert pa.dtype == pb.dtype == np.int64 and pa.flags.c_contiguous and pb.flags.c_contiguous
    assert np.array_equal(pa, cand.pairs[:, 0]) and np.array_equal(pb, cand.pairs[:, 1])
    again = cand.ends
    assert np.array_equal(again[0], pa) and np.array_equal(again[1], pb) and cand.ends[0] is again[0]  # made once
