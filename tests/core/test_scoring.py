import networkx as nx
import numpy as np
import pytest

from aligner.core.scoring import (conserved_image, conserved_mask, conserved_per_node, image_after_moves,
                                   largest_common_component, node_correctness, score_matching)
from aligner.errors import InvalidParameterError


def test_hand_worked_example_from_published_definitions():
    # A: triangle 0-1-2 plus pendant 2-3 (4 edges). B: square 0-1-2-3 plus chord 0-2 and 3-4 (6 edges).
    # Map f: 0->0, 1->1, 2->2, 3->4.
    # Conserved: (0,1)->(0,1) yes, (1,2)->(1,2) yes, (0,2)->(0,2) yes, (2,3)->(2,4) no  => 3.
    # EC (Kuchaiev et al. 2010) = conserved / min(|E_A|, |E_B|) = 3 / 4.
    # Induced edges of B on the image {0,1,2,4}: (0,1), (1,2), (0,2) => 3 (2-3, 3-0, 3-4 touch 3).
    # ICS (Patro & Kingsford 2012) = conserved / induced = 3 / 3 = 1.
    # S3 (Saraph & Milenković 2014) = conserved / (|E_A| + induced - conserved) = 3 / (4 + 3 - 3) = 3/4.
    # Largest connected conserved subgraph: the triangle, 3 nodes and 3 edges.
    ea = np.array([[0, 1], [1, 2], [0, 2], [2, 3]])
    eb = np.array([[0, 1], [1, 2], [2, 3], [0, 3], [0, 2], [3, 4]])
    m = np.array([[0, 0], [1, 1], [2, 2], [3, 4]])
    s, cons = score_matching(ea, eb, m, 4, 5, truth=np.array([[0, 0], [1, 1], [2, 2], [3, 3]]))
    assert s.conserved_edges == 3
    assert s.ec == 3 / 4
    assert s.induced_edges_b == 3
    assert s.ics == 1.0
    assert s.s3 == 3 / 4
    assert (s.lccs_nodes, s.lccs_edges) == (3, 3)
    assert s.nc == 3 / 4
    assert cons.tolist() == [True, True, True, False]


def test_partial_map_and_empty():
    ea = np.array([[0, 1], [1, 2]])
    s, _ = score_matching(ea, ea, np.array([[0, 0], [1, 1]]), 3, 3)
    # one edge conserved; image {0,1} induces one edge of B; S3 = 1 / (2 + 1 - 1)
    assert (s.conserved_edges, s.ec, s.ics, s.s3) == (1, 0.5, 1.0, 0.5)
    s, _ = score_matching(ea, ea, np.empty((0, 2), int), 3, 3)
    assert (s.conserved_edges, s.ec, s.ics, s.s3, s.lccs_nodes) == (0, 0.0, 0.0, 0.0, 0)
    s, _ = score_matching(np.empty((0, 2), int), np.empty((0, 2), int), np.empty((0, 2), int), 0, 0)
    assert s.ec == 0.0


def test_lccs_against_networkx(rng):
    # Reference: networkx.connected_components on the conserved subgraph.
    n = 60
    g = nx.gnm_random_graph(n, 150, seed=3)
    h = nx.gnm_random_graph(n, 150, seed=4)
    ea, eb = np.array(g.edges()), np.array(h.edges())
    perm = rng.permutation(n)
    m = np.stack([np.arange(n), perm], 1)
    s, cons = score_matching(ea, eb, m, n, n)
    sub = nx.Graph([tuple(e) for e in ea[cons]])
    want = max(nx.connected_components(sub), key=len) if sub.number_of_nodes() else set()
    assert s.lccs_nodes == len(want)
    assert s.lccs_edges == sub.subgraph(want).number_of_edges()
    # conserved count against a direct set check (common practice definition)
    eset = {frozenset(e) for e in eb.tolist()}
    assert s.conserved_edges == sum(frozenset((perm[u], perm[v])) in eset for u, v in ea.tolist())


def test_node_correctness_with_several_true_partners():
    # node 0 has true partners {0, 1}; node 1 has {2}; node 2 has {2} (not matched there)
    truth = np.array([[0, 0], [0, 1], [1, 2], [2, 2]])
    nc, d = node_correctness(np.array([[0, 1], [1, 2], [2, 0]]), truth, 3)
    assert nc == pytest.approx(2 / 3) and d == {"truth_nodes": 3, "correct": 2}


def test_hand_worked_example_with_more_edges_in_a_than_in_b():
    # |E_A| > |E_B|, so EC's denominator min(|E_A|, |E_B|) is |E_B| (Kuchaiev et al. 2010).
    # A: triangle 0-1-2 plus 2-3 and 3-0 (5 edges). B: path 0-1-4-5 (3 edges), nodes 2, 3 bare.
    # Map f: identity on 0..3.
    # Conserved: (0,1) yes; (1,2), (0,2), (2,3), (3,0) land on non-edges  => 1.
    # EC = 1 / min(5, 3) = 1/3 (dividing by |E_A| would give 1/5).
    # Induced edges of B on the image {0,1,2,3}: only (0,1) => 1; ICS = 1 / 1 = 1.
    # S3 = 1 / (|E_A| + induced - conserved) = 1 / (5 + 1 - 1) = 1/5.
    # Largest connected conserved subgraph: the edge 0-1, 2 nodes and 1 edge.
    ea = np.array([[0, 1], [1, 2], [0, 2], [2, 3], [0, 3]])
    eb = np.array([[0, 1], [1, 4], [4, 5]])
    m = np.array([[0, 0], [1, 1], [2, 2], [3, 3]])
    s, cons = score_matching(ea, eb, m, 4, 6)
    assert (s.conserved_edges, s.n_edges_a, s.n_edges_b) == (1, 5, 3)
    assert s.ec == pytest.approx(1 / 3, rel=1e-15)
    assert (s.induced_edges_b, s.ics) == (1, 1.0)
    assert s.s3 == pytest.approx(1 / 5, rel=1e-15)
    assert (s.lccs_nodes, s.lccs_edges) == (2, 1)
    assert cons.tolist() == [True, False, False, False, False]
    # the same map read from B's side: swap the roles, EC is symmetric in the two edge counts
    s2, _ = score_matching(eb, ea, m[:, ::-1], 6, 4)
    assert s2.ec == s.ec and s2.conserved_edges == 1


def test_conserved_image_rows_and_defaults():
    # hand-worked: A edges (0,1), (1,2), (2,3); f = identity on 0..2, 3 unmapped;
    # B edges, in this order: (2,1), (0,1). (0,1) -> row 1 of B; (1,2) -> row 0 of B (written the
    # other way round: the same undirected edge); (2,3) has an unmapped end -> -1.
    ea = np.array([[0, 1], [1, 2], [2, 3]])
    eb = np.array([[2, 1], [0, 1]])
    f = np.array([0, 1, 2, -1])
    assert conserved_image(ea, eb, f, 3).tolist() == [1, 0, -1]  # undirected unless asked
    assert conserved_image(ea, eb, f, 3, directed=True).tolist() == [1, -1, -1]  # arcs keep their way
    assert conserved_mask(ea, eb, f, 3).tolist() == [True, True, False]
    # B without edges: nothing is conserved (and nothing is looked up in an empty list)
    assert conserved_image(ea, np.empty((0, 2), np.int64), f, 3).tolist() == [-1, -1, -1]


def test_conserved_image_with_node_numbers_near_two_to_the_31():
    # common practice: edge keys must be exact integers. B has 2**31 nodes (only numbers: no
    # array of that size is made); its edges (N-3, N-1) and (N-2, N-1) differ by one in the first
    # end, far below double-precision resolution at that magnitude, so float keys would collide.
    n2 = 2**31
    eb = np.array([[n2 - 3, n2 - 1]])
    ea = np.array([[0, 1], [1, 2]])
    f = np.array([n2 - 2, n2 - 1, n2 - 3])  # (0,1) -> (N-2, N-1): not in B; (1,2) -> (N-1, N-3): in B
    assert conserved_image(ea, eb, f, n2).tolist() == [-1, 0]
    assert conserved_image(ea, eb, f, n2, directed=True).tolist() == [-1, -1]
    assert conserved_image(ea[::-1, ::-1], eb, f, n2, directed=True).tolist() == [0, -1]


def test_empty_b_empty_truth_and_empty_map():
    # hand-worked: B has no edge, so nothing is conserved and no edge of B is induced.
    ea = np.array([[0, 1], [1, 2]])
    s, cons = score_matching(ea, np.empty((0, 2), np.int64), np.array([[0, 0], [1, 1]]), 3, 2)
    assert (s.conserved_edges, s.induced_edges_b, s.ec, s.ics, s.s3) == (0, 0, 0.0, 0.0, 0.0)
    assert cons.tolist() == [False, False] and s.n_edges_b == 0
    # an empty truth table: node correctness is undefined (nan), with zero counts
    nc, detail = node_correctness(np.array([[0, 0]]), np.empty((0, 2), np.int64), 3)
    assert np.isnan(nc) and detail == {"truth_nodes": 0, "correct": 0}
    s, _ = score_matching(ea, ea, np.array([[0, 0]]), 3, 3, truth=[])
    assert np.isnan(s.nc) and s.nc_detail == {"truth_nodes": 0, "correct": 0}
    # an empty map given as a plain list
    s, cons = score_matching(ea, ea, [], 3, 3, truth=[[0, 0]])
    assert (s.conserved_edges, s.n_matched, s.nc) == (0, 0, 0.0) and not cons.any()


def test_scores_record_what_was_counted():
    # the hand-worked example above, read through as_dict (the keys summary.json carries)
    ea = np.array([[0, 1], [1, 2], [0, 2], [2, 3]])
    eb = np.array([[0, 1], [1, 2], [2, 3], [0, 3], [0, 2], [3, 4]])
    m = np.array([[0, 0], [1, 1], [2, 2], [3, 4]])
    s, _ = score_matching(ea, eb, m, 4, 5, truth=np.array([[0, 0], [1, 1], [2, 2], [3, 3]]))
    assert s.as_dict() == {"conserved_edges": 3, "ec": 0.75, "ics": 1.0, "s3": 0.75, "lccs_nodes": 3,
                           "lccs_edges": 3, "nc": 0.75, "n_matched": 4, "induced_edges_b": 3,
                           "edges_a": 4, "edges_b": 6}
    assert s.nc_detail == {"truth_nodes": 4, "correct": 3} and s.directed is False
    # directed and weighted runs add their keys
    d, _ = score_matching(ea, eb, m, 4, 5, directed=True, weights_a=np.ones(4), weights_b=np.full(6, 2.0))
    got = d.as_dict()
    assert got["directed"] is True and d.directed is True and got["nc"] is None
    # arcs (0,1), (1,2), (0,2) land on arcs of B; unit weights in A, 2 in B: min is 1 each
    assert (got["conserved_edges"], got["conserved_weight"], got["weighted_ec"]) == (3, 3.0, 3 / 4)


@pytest.mark.parametrize("given", ["weights_a", "weights_b"])
def test_weights_of_one_network_only_is_an_error(given):
    ea = np.array([[0, 1]])
    with pytest.raises(InvalidParameterError, match=rf"^weights_a and weights_b must be given together "
                                                    rf"or not at all; got {given} only$") as info:
        score_matching(ea, ea, [[0, 0], [1, 1]], 2, 2, **{given: np.ones(1)})
    assert info.value.param == given


def test_conserved_per_node_against_networkx(rng):
    # Reference: networkx degrees in the conserved subgraph (edges counted at both ends).
    g = nx.gnm_random_graph(30, 80, seed=5)
    h = nx.gnm_random_graph(30, 80, seed=6)
    ea, eb = np.array(g.edges()), np.array(h.edges())
    m = np.stack([np.arange(30), rng.permutation(30)], 1)
    _, cons = score_matching(ea, eb, m, 30, 30)
    sub = nx.Graph()
    sub.add_nodes_from(range(31))
    sub.add_edges_from(ea[cons].tolist())
    assert conserved_per_node(ea, cons, 31).tolist() == [sub.degree(v) for v in range(31)]
    assert conserved_per_node(ea, np.zeros(len(ea), bool), 4).tolist() == [0, 0, 0, 0]


def test_conserved_mask_passes_the_node_count_and_direction_on():
    # hand-worked: A edge (0,2); B edge (1,2); identity map: (0,2) is not an edge of B. (Keys
    # that ignore the node count would make (0,2) and (1,2) look alike.)
    assert conserved_mask(np.array([[0, 2]]), np.array([[1, 2]]), np.array([0, 1, 2]), 3).tolist() == [False]
    ea = np.array([[0, 1], [1, 2]])
    eb = np.array([[0, 1], [2, 1]])
    f = np.array([0, 1, 2])
    assert conserved_mask(ea, eb, f, 3).tolist() == [True, True]
    assert conserved_mask(ea, eb, f, 3, directed=True).tolist() == [True, False]
    # conserved_per_node counts whole edges: integers, also when nothing is conserved
    assert conserved_per_node(ea, np.zeros(2, bool), 3).dtype.kind == "i"


@pytest.mark.parametrize("threads", ["one", "two"])
@pytest.mark.parametrize("directed", [False, True])
def test_conserved_image_on_unsorted_edges_with_repeats(rng, directed, threads, monkeypatch):
    import aligner.core.scoring as scoring
    if threads == "two":  # the halves of A's edges on two threads, as from PARALLEL_EDGES edges on
        monkeypatch.setattr(scoring, "PARALLEL_EDGES", 1)
        monkeypatch.setattr(scoring, "thread_count", lambda: 2)
    # Reference: a Python dict from each edge key of B to the first row holding it (the row the
    # lookup names when B repeats an edge), and the map applied edge by edge. B's rows are
    # shuffled, written either way round and repeated, so the edges are not in key order.
    n = 40
    g = nx.gnm_random_graph(n, 200, seed=7, directed=directed)
    h = nx.gnm_random_graph(n, 200, seed=8, directed=directed)
    ea = np.array(g.edges())
    eb = np.array(h.edges())
    eb = np.concatenate([eb, eb[rng.choice(len(eb), 30)]])[rng.permutation(len(eb) + 30)]
    if not directed:
        flip = rng.random(len(eb)) < 0.5
        eb[flip] = eb[flip][:, ::-1]
    f = rng.permutation(n)
    f[rng.choice(n, 5, replace=False)] = -1

    def key(u, v):
        return (u, v) if directed else (min(u, v), max(u, v))

    first = {}
    for row, (u, v) in enumerate(eb.tolist()):
        first.setdefault(key(u, v), row)
    want = [-1 if f[u] < 0 or f[v] < 0 else first.get(key(f[u], f[v]), -1) for u, v in ea.tolist()]
    assert conserved_image(ea, eb, f, n, directed).tolist() == want
    # the same B in key order (as a canonical edge list comes) names the same edges
    order = np.lexsort((eb.max(1), eb.min(1))) if not directed else np.lexsort((eb[:, 1], eb[:, 0]))
    got = conserved_image(ea, eb[order], f, n, directed)
    assert [order[r] if r >= 0 else -1 for r in got.tolist()] == want


@pytest.mark.parametrize("directed", [False, True])
def test_image_after_moves_against_networkx(rng, directed):
    # Reference: networkx's has_edge on B for every edge of A under the second map (conserved
    # when both ends are mapped and the image is an edge of B: the published definition of a
    # conserved edge). The image is carried from a first map that differs at a few nodes
    # (swapped partners, nodes unmapped and mapped again) and must equal the one computed whole.
    n = 60
    g = nx.gnm_random_graph(n, 240, seed=11, directed=directed)
    h = nx.gnm_random_graph(n, 240, seed=12, directed=directed)
    ea, eb = np.array(g.edges()), np.array(h.edges())
    f_from = rng.permutation(n)
    f_from[rng.choice(n, 6, replace=False)] = -1
    image = conserved_image(ea, eb, f_from, n, directed)
    for moved in (0, 1, 2, 7, n):
        f_to = f_from.copy()
        at = rng.choice(n, moved, replace=False)
        f_to[at] = f_from[rng.permutation(at)] if moved > 1 else -1
        got = image_after_moves(ea, eb, image, f_from, f_to, n, directed)
        assert got.tolist() == conserved_image(ea, eb, f_to, n, directed).tolist()
        want = [f_to[u] >= 0 and f_to[v] >= 0 and h.has_edge(f_to[u], f_to[v]) for u, v in ea.tolist()]
        assert (got >= 0).tolist() == want


def test_of_components_of_as_many_nodes_the_one_with_more_edges_is_the_largest():
    # Found by recomputing the scores independently: a path 0-1-2 and a triangle 3-4-5, both
    # conserved, gave LCCS (3 nodes, 2 edges) by the lowest node, though a common connected
    # subgraph of 3 nodes and 3 edges exists, and renaming the nodes changed the count. Reference:
    # the largest by nodes, then by edges (the subgraph of most nodes and, of those, most edges),
    # from networkx.connected_components on the conserved subgraph.
    rng = np.random.default_rng(11)
    ea = np.array([[0, 1], [1, 2], [3, 4], [4, 5], [3, 5]])
    for order in ([0, 1, 2, 3, 4, 5], [3, 4, 5, 0, 1, 2]):  # the triangle on the low nodes, then the high
        relabel = np.array(order)[ea]
        assert largest_common_component(relabel, np.ones(len(ea), bool), 6) == (3, 3)
    for _ in range(30):  # many ties: small random forests with chords
        n = 24
        g = nx.gnm_random_graph(n, 22, seed=int(rng.integers(1 << 30)))
        e = np.array(g.edges()).reshape(-1, 2)
        cons = rng.random(len(e)) < 0.7
        sub = nx.Graph([tuple(x) for x in e[cons]])
        comps = list(nx.connected_components(sub)) if sub.number_of_nodes() else []
        want = max(((len(c), sub.subgraph(c).number_of_edges()) for c in comps), default=(0, 0))
        assert largest_common_component(e, cons, n) == want


def test_largest_component_ties_go_to_the_lowest_node():
    # hand-worked: conserved edges form two triangles, {5, 6, 7} (listed first) and {1, 2, 3}
    # plus a path 8-9. Both triangles have 3 nodes and 3 edges; the one holding node 1 is taken.
    # Then a pendant edge 7-0 makes the first larger: 4 nodes, 4 edges.
    ea = np.array([[5, 6], [6, 7], [5, 7], [1, 2], [2, 3], [1, 3], [8, 9], [0, 7]])
    cons = np.array([True] * 7 + [False])
    assert largest_common_component(ea, cons, 10) == (3, 3)
    cons[-1] = True
    assert largest_common_component(ea, cons, 10) == (4, 4)
    assert largest_common_component(ea, np.zeros(len(ea), bool), 10) == (0, 0)


def test_largest_component_against_scipy_labels(rng):
    # Reference: scipy.sparse.csgraph.connected_components on the conserved edges, the largest
    # component by nodes (numpy argmax: on a tie, the first label, i.e. the component of the
    # lowest node), then its edges counted. Sparse random graphs give many small components.
    import scipy.sparse as sp
    from scipy.sparse.csgraph import connected_components

    for trial in range(20):
        n = int(rng.integers(5, 80))
        ea = np.array(nx.gnm_random_graph(n, int(rng.integers(1, 2 * n)), seed=trial).edges()).reshape(-1, 2)
        cons = rng.random(len(ea)) < 0.5
        ce = ea[cons]
        if len(ce) == 0:
            assert largest_common_component(ea, cons, n) == (0, 0)
            continue
        g = sp.coo_array((np.ones(len(ce)), (ce[:, 0], ce[:, 1])), shape=(n, n)).tocsr()
        _, label = connected_components(g, directed=False)
        in_sub = np.zeros(n, bool)
        in_sub[ce.ravel()] = True
        sizes = np.bincount(label[in_sub], minlength=label.max() + 1)
        best = int(np.argmax(sizes))
        assert largest_common_component(ea, cons, n) == (int(sizes[best]), int((label[ce[:, 0]] == best).sum()))


def test_node_correctness_counts_against_python_sets(rng):
    # Reference: Python sets of the truth nodes and of those mapped to one of their partners.
    n = 50
    truth = rng.integers(0, n, size=(80, 2))
    matched = np.stack([np.arange(n), rng.permutation(n)], 1)[rng.random(n) < 0.7]
    f = dict(matched.tolist())
    nodes = {u for u, _ in truth.tolist()}
    correct = {u for u, v in truth.tolist() if f.get(u) == v}
    nc, detail = node_correctness(matched, truth, n)
    assert detail == {"truth_nodes": len(nodes), "correct": len(correct)} and nc == len(correct) / len(nodes)
