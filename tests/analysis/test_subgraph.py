"""The report's conserved subgraph against networkx."""

import networkx as nx
import numpy as np
import pandas as pd
import pytest

from aligner.analysis.subgraph import conserved_ball


@pytest.mark.parametrize("seed", range(4))
def test_conserved_subgraph_is_networkx_ball_of_the_largest_component(seed):
    # Reference: networkx on the same edges (connected_components; bfs_edges from the hub with
    # neighbours in name order). The drawing's graph is the first `cap` nodes a breadth-first
    # search reaches from the highest-degree node of the largest component, with their edges.
    rng = np.random.default_rng(seed)
    g = nx.union(nx.gnm_random_graph(120, 200, seed=seed), nx.gnm_random_graph(40, 60, seed=seed + 9),
                 rename=("x", "y"))
    edges = [(str(a), str(b)) for a, b in g.edges()]
    rng.shuffle(edges)
    cons = pd.DataFrame(edges, columns=["node_a1", "node_a2"])
    ref = nx.Graph(edges)
    comps = sorted(nx.connected_components(ref), key=lambda c: (-len(c), min(c)))
    comp = ref.subgraph(comps[0])
    for cap in (10, 60, 1000):
        sub, full_n, full_e = conserved_ball(cons, cap)
        assert (full_n, full_e) == (comp.number_of_nodes(), comp.number_of_edges())
        if cap >= full_n:
            assert set(sub.nodes) == set(comp.nodes) and {frozenset(e) for e in sub.edges} == {
                frozenset(e) for e in comp.edges}
            continue
        hub = max(comp.degree, key=lambda t: (t[1], t[0]))[0]
        order = [hub] + [v for _, v in nx.bfs_edges(comp, hub, sort_neighbors=sorted)]
        assert set(sub.nodes) == set(order[:cap])
        assert {frozenset(e) for e in sub.edges} == {frozenset(e) for e in comp.subgraph(order[:cap]).edges}
    empty, n0, e0 = conserved_ball(pd.DataFrame({"node_a1": [], "node_a2": []}), 5)
    assert (empty.number_of_nodes(), n0, e0) == (0, 0, 0)


def test_the_drawn_component_is_the_scores_largest_common_connected_subgraph():
    # The scores' LCCS takes, of components of as many nodes, the one with most edges
    # (aligner.core.scoring.largest_common_component); the drawing must show that one. Hand-worked:
    # a path a-b-c (names first in order) and a triangle x-y-z: the triangle is drawn.
    cons = pd.DataFrame([("a", "b"), ("b", "c"), ("x", "y"), ("y", "z"), ("x", "z")], columns=["node_a1", "node_a2"])
    sub, full_n, full_e = conserved_ball(cons, 10)
    assert (full_n, full_e) == (3, 3) and set(sub.nodes) == {"x", "y", "z"}
