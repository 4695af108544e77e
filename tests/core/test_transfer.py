"""Transferred edges (aligner.core.transfer): a hand-worked pair, ties and order, the shortcut counts.

The definition checked (docs/method.md, "Transferred interactions"): an edge of A whose two ends
are matched and whose image is not an edge of B is carried A->B (and the reverse B->A), with
support = confidence_1 * confidence_2 * (1 + triangles), triangles being the matched pairs (w, w')
with w adjacent to both ends in A and w' adjacent to both ends in B.
"""

import networkx as nx
import numpy as np
import pytest

from aligner.core.network import adjacency, canonical_edges
from aligner.core.transfer import A_TO_B, B_TO_A, common_neighbours, transfer_counts, transferred_edges

# The hand-worked pair. In "shape" numbering both networks have nodes 0..4:
#   A: 0-1, 0-2, 1-2, 1-3, 2-3, 3-4          B: 0-1, 0-2, 0-3, 1-3, 2-3   (node 4 of B has no edge)
# B's nodes are renamed by P (shape node i is node P[i] of B) and the matching is i -> P[i].
P = np.array([2, 0, 4, 1, 3])
A_EDGES = np.array([[0, 1], [0, 2], [1, 2], [1, 3], [2, 3], [3, 4]])
B_SHAPE = np.array([[0, 1], [0, 2], [0, 3], [1, 3], [2, 3]])
CONF = np.array([0.5, 1.0, 0.8, 0.25, 0.9])  # confidence of pair (i, P[i])
SCORE = np.array([0.3, 0.2, 0.2, 0.1, 0.2])  # diffusion score of pair (i, P[i])


def _canon(edges):
    e, _, _, _ = canonical_edges(edges[:, 0], edges[:, 1])
    return e


def _run(ea, eb, matched, conf, score, n1, n2, directed=False):
    ua, ub = _canon(ea), _canon(eb)
    return transferred_edges(ea, eb, adjacency(ua, n1)[:2], adjacency(ub, n2)[:2], matched, conf, score, n1, n2,
                             directed=directed)


def _hand_pair():
    eb = _canon(P[B_SHAPE])
    matched = np.stack([np.arange(5), P], axis=1)
    return A_EDGES, eb, matched


def test_hand_worked_pair():
    # Hand-worked example (worked out in shape numbering, where the matching is the identity):
    # A->B: A's 1-2 (no 1-2 in B) and 3-4 (no 3-4 in B); 0-1, 0-2, 1-3, 2-3 are conserved.
    # B->A: B's 0-3 (no 0-3 in A).
    # 1-2: common neighbours {0, 3} in A and {0, 3} in B -> 2 triangles; support 1.0 * 0.8 * (1 + 2) = 2.4;
    #      matched common neighbours in B: 2.
    # 0-3: common neighbours {1, 2} in A and {1, 2} in B -> 2 triangles; support 0.5 * 0.25 * 3 = 0.375;
    #      matched common neighbours in A: 2.
    # 3-4: node 4 has no other neighbour -> 0 triangles; support 0.25 * 0.9 * 1 = 0.225; 0 common neighbours.
    # Best first: 1-2 (2.4), 0-3 (0.375), 3-4 (0.225).
    ea, eb, matched = _hand_pair()
    t = _run(ea, eb, matched, CONF, SCORE, 5, 5)
    assert t.direction.tolist() == [A_TO_B, B_TO_A, A_TO_B]
    # B's edge 0-3 is the edge P[0]-P[3] = 2-1 of B, listed as (1, 2): pair 1 is (3, 1), pair 2 (0, 2)
    assert t.a1.tolist() == [1, 3, 3] and t.a2.tolist() == [2, 0, 4]
    assert t.b1.tolist() == [P[1], 1, P[3]] and t.b2.tolist() == [P[2], 2, P[4]]
    assert t.triangles.tolist() == [2, 2, 0]
    assert t.common_neighbours.tolist() == [2, 2, 0]
    assert t.support.tolist() == pytest.approx([2.4, 0.375, 0.225], rel=1e-15)
    assert t.confidence_1.tolist() == [1.0, 0.25, 0.25] and t.confidence_2.tolist() == [0.8, 0.5, 0.9]
    assert t.score_1.tolist() == [0.2, 0.1, 0.1] and t.score_2.tolist() == [0.2, 0.3, 0.2]
    # the row of each carried edge in its own edge list: A's 1-2 is row 2, 3-4 row 5; B's edges sorted are
    # 0-1, 0-2, 1-2, 1-4, 2-4, so its 1-2 is row 2
    assert t.edge_row.tolist() == [2, 2, 5]
    assert t.counts() == {"a_to_b": 2, "b_to_a": 1}
    # the shortcut count of summary.json: edges among matched nodes less the 4 conserved ones
    assert transfer_counts(ea, eb, matched, 5, 5, 4) == t.counts()


def test_unmatched_ends_carry_nothing():
    # Hand-worked: unmatch node 4 of A (and P[4] of B): A's 3-4 is no longer carried; the rest stays
    ea, eb, matched = _hand_pair()
    t = _run(ea, eb, matched[:4], CONF[:4], SCORE[:4], 5, 5)
    assert list(zip(t.direction.tolist(), t.a1.tolist(), t.a2.tolist())) == [(A_TO_B, 1, 2), (B_TO_A, 3, 0)]


def test_ties_broken_by_score_then_direction_then_names():
    # Hand-worked: A has 2-3, B has 0-1, the matching is the identity on 4 nodes, all confidences 1, so
    # both carried edges have support 1 * 1 * (1 + 0) = 1.
    ea, eb = np.array([[2, 3]]), np.array([[0, 1]])
    matched = np.stack([np.arange(4), np.arange(4)], axis=1)
    equal = _run(ea, eb, matched, np.ones(4), np.full(4, 0.25), 4, 4)
    assert equal.support.tolist() == [1.0, 1.0]
    assert equal.direction.tolist() == [A_TO_B, B_TO_A]  # equal scores: A->B first
    higher = _run(ea, eb, matched, np.ones(4), np.array([0.4, 0.3, 0.2, 0.2]), 4, 4)
    assert higher.direction.tolist() == [B_TO_A, A_TO_B]  # the pairs of 0-1 score higher (0.3 > 0.2)
    # same direction, same support and scores: by node numbers (the names' sorted order)
    ea = np.array([[4, 5], [0, 3], [0, 1]])
    matched = np.stack([np.arange(6), np.arange(6)], axis=1)
    t = _run(ea, np.empty((0, 2), dtype=np.int64), matched, np.ones(6), np.ones(6), 6, 6)
    assert list(zip(t.a1.tolist(), t.a2.tolist())) == [(0, 1), (0, 3), (4, 5)]


def test_directed_arcs_keep_their_direction():
    # Hand-worked: A has arcs 0->1 and 1->2; B has 1->0 and 1->2; identity matching.
    # 0->1 is carried A->B (B has only 1->0), 1->0 is carried B->A; 1->2 is conserved.
    ea, eb = np.array([[0, 1], [1, 2]]), np.array([[1, 0], [1, 2]])
    matched = np.stack([np.arange(3), np.arange(3)], axis=1)
    t = _run(ea, eb, matched, np.ones(3), np.ones(3), 3, 3, directed=True)
    assert sorted(zip(t.direction.tolist(), t.a1.tolist(), t.a2.tolist())) == [(A_TO_B, 0, 1), (B_TO_A, 1, 0)]
    undirected = _run(ea, eb, matched, np.ones(3), np.ones(3), 3, 3)
    assert len(undirected) == 0  # the same edges without direction are all conserved


def test_common_neighbours_against_networkx(rng):
    # Reference: networkx.common_neighbors, in chunks smaller than the work (the walk is chunked)
    import aligner.core.transfer as transfer

    g = nx.gnp_random_graph(60, 0.15, seed=5)
    e = _canon(np.array(g.edges()))
    ip, ix = adjacency(e, 60)
    x, y = rng.integers(0, 60, 300), rng.integers(0, 60, 300)
    keep = rng.random(60) < 0.7
    want = [sum(keep[w] for w in nx.common_neighbors(g, int(a), int(b))) if a != b else
            sum(keep[w] for w in g[int(a)]) for a, b in zip(x, y)]
    old, transfer._CHUNK = transfer._CHUNK, 7
    try:
        assert common_neighbours(ip, ix, x, y, keep).tolist() == want
    finally:
        transfer._CHUNK = old
    assert common_neighbours(ip, ix, x, y, keep).tolist() == want


def test_random_pair_against_networkx(rng):
    # Reference: networkx, edge by edge: carried edges, triangles and common neighbours
    n = 40
    ga = nx.gnp_random_graph(n, 0.2, seed=1)
    gb = nx.gnp_random_graph(n, 0.2, seed=2)
    perm = rng.permutation(n)
    matched = np.stack([np.arange(n), perm], axis=1)[rng.random(n) < 0.8]
    f = dict(matched.tolist())
    g = {b: a for a, b in f.items()}
    conf, score = rng.random(len(matched)), rng.random(len(matched))
    t = _run(_canon(np.array(ga.edges())), _canon(np.array(gb.edges())), matched, conf, score, n, n)
    want_ab = {frozenset((u, v)) for u, v in ga.edges() if u in f and v in f and not gb.has_edge(f[u], f[v])}
    want_ba = {frozenset((u, v)) for u, v in gb.edges() if u in g and v in g and not ga.has_edge(g[u], g[v])}
    ab = t.direction == A_TO_B
    assert {frozenset(p) for p in zip(t.a1[ab].tolist(), t.a2[ab].tolist())} == want_ab
    assert {frozenset(p) for p in zip(t.b1[~ab].tolist(), t.b2[~ab].tolist())} == want_ba
    c = dict(zip(matched[:, 0].tolist(), conf.tolist()))
    for k in range(len(t)):
        a1, a2, b1, b2 = (int(t.a1[k]), int(t.a2[k]), int(t.b1[k]), int(t.b2[k]))
        assert (f[a1], f[a2]) == (b1, b2)
        tri = sum(1 for w in nx.common_neighbors(ga, a1, a2) if w in f and gb.has_edge(b1, f[w])
                  and gb.has_edge(b2, f[w]))
        assert t.triangles[k] == tri
        side, u, v, m = (gb, b1, b2, g) if ab[k] else (ga, a1, a2, f)
        assert t.common_neighbours[k] == sum(1 for w in nx.common_neighbors(side, u, v) if w in m)
        assert t.support[k] == pytest.approx(c[a1] * c[a2] * (1 + tri), rel=1e-15)
    assert np.all(np.diff(t.support) <= 0)  # best first


def test_equal_support_goes_to_more_conserved_triangles_first():
    # Hand-worked: A has 0-1, 0-2, 1-2 and 3-4; B has 0-2, 1-2 (identity matching on 5 nodes).
    # Carried A->B: 0-1 (closes the triangle through 2, conserved in both: triangles 1) and 3-4
    # (triangles 0). Every confidence is 0, so both supports are 0 * 0 * (1 + t) = 0; the pairs
    # of 3-4 score higher, which alone would put 3-4 first. Among equal supports the row with more
    # conserved triangles, more evidence, comes first.
    ea = np.array([[0, 1], [0, 2], [1, 2], [3, 4]])
    eb = np.array([[0, 2], [1, 2]])
    matched = np.stack([np.arange(5), np.arange(5)], axis=1)
    t = _run(ea, eb, matched, np.zeros(5), np.array([0.1, 0.1, 0.1, 0.5, 0.5]), 5, 5)
    assert t.support.tolist() == [0.0, 0.0] and t.triangles.tolist() == [1, 0]
    assert list(zip(t.a1.tolist(), t.a2.tolist())) == [(0, 1), (3, 4)]


def test_supports_apart_by_rounding_alone_tie():
    # Found by recomputing the outputs independently: two rows written with the same support
    # (0.01424668293) were ordered by a difference of 1e-17 between confidences equal in exact
    # arithmetic, against the documented tie rule (then the smaller diffusion score, higher
    # first). Hand-worked: A's edges 0-1 and 2-3 are carried to an edgeless B (no triangles); the
    # supports are 0.1 * 0.3 and 0.3 * nextafter(0.1), one unit in the last place apart; the
    # first row has the higher smaller score, so it comes first.
    ea = np.array([[0, 1], [2, 3]])
    eb = np.empty((0, 2), dtype=np.int64)
    matched = np.array([[0, 0], [1, 1], [2, 2], [3, 3]])
    conf = np.array([0.1, 0.3, 0.3, np.nextafter(0.1, 1.0)])
    score = np.array([0.5, 0.5, 0.2, 0.2])
    t = transferred_edges(ea, eb, adjacency(ea, 4)[:2], adjacency(eb, 4)[:2], matched, conf, score, 4, 4)
    assert t.support[1] > t.support[0]  # not equal in floating point...
    assert t.a1.tolist() == [0, 2]  # ...but a tie, broken by the smaller diffusion score
    # supports apart by more than rounding keep their order
    conf[3] = 0.1 * (1 + 1e-9)
    t = transferred_edges(ea, eb, adjacency(ea, 4)[:2], adjacency(eb, 4)[:2], matched, conf, score, 4, 4)
    assert t.a1.tolist() == [2, 0]
