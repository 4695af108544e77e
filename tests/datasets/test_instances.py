"""The shared builder of test instances (aligner.datasets.instances)."""

import networkx as nx
import numpy as np
import pandas as pd
import pytest

from aligner.datasets.instances import (
    as_frames,
    as_networks,
    base_graph,
    in_reader_order,
    node_names,
    noisy_relabelled,
    write_instance,
)
from aligner.datasets.synthetic import duplication_divergence_graph, powerlaw_graph, relabelled_pair
from aligner.errors import InvalidParameterError


def assert_pair_equal(p, q):
    for name in p.__dataclass_fields__:
        x, y = getattr(p, name), getattr(q, name)
        assert np.array_equal(x, y) if isinstance(x, np.ndarray) else x == y, name


def test_noisy_relabelled_is_the_documented_composition():
    # the docstring's definition: base graph from seed, relabelled pair from pair_seed (default seed + 1)
    got = noisy_relabelled(300, graph_options={"m": 3}, noise=0.1, decoys=4, decoy_mode="near", seed=5)
    want = relabelled_pair(powerlaw_graph(300, m=3, seed=5), 300, noise=0.1, decoys=4, decoy_mode="near", seed=6)
    assert_pair_equal(got, want)
    got = noisy_relabelled(300, graph="dupdiv", seed=5, pair_seed=50)
    assert_pair_equal(got, relabelled_pair(duplication_divergence_graph(300, seed=5), 300, seed=50))
    with pytest.raises(InvalidParameterError, match="graph must be one of powerlaw, dupdiv; got 'lattice'"):
        base_graph("lattice", 10, seed=0)


def test_node_names_sort_as_their_numbers():
    names = node_names(1001, "x")
    assert names[0] == "x0000" and names[-1] == "x1000"
    assert sorted(names) == list(names)  # string order = numeric order (Python's str ordering)
    assert list(node_names(11, "a", pad=False)[[2, 10]]) == ["a2", "a10"]


def test_frames_hold_the_same_graphs_and_pairs():
    pair = noisy_relabelled(200, noise=0.05, decoys=3, seed=1)
    ea, eb, prior, truth = as_frames(pair)
    names = node_names(200)
    # networkx as the outside reference: the same edge sets under the names
    ga = nx.from_pandas_edgelist(ea, "node_a", "node_b")
    want = nx.Graph([(names[u], names[v]) for u, v in pair.edges_a])
    assert {frozenset(e) for e in ga.edges()} == {frozenset(e) for e in want.edges()}
    assert len(eb) == len(pair.edges_b)
    assert list(zip(prior.node_a, prior.node_b)) == [(names[a], names[b]) for a, b in pair.prior_pairs]
    np.testing.assert_array_equal(prior.score, pair.prior_scores)
    assert len(truth) == 200


def test_networks_keep_the_node_numbers():
    pair = noisy_relabelled(150, noise=0.0, decoys=2, seed=2)
    net_a, net_b = as_networks(pair)
    assert (net_a.n, net_b.n) == (150, 150)
    np.testing.assert_array_equal(net_a.edges, pair.edges_a)
    np.testing.assert_array_equal(net_b.edges, pair.edges_b)


def test_written_files_read_back(tmp_path):
    pair = noisy_relabelled(120, noise=0.05, decoys=3, seed=3)
    write_instance(pair, tmp_path)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["network_a.tsv", "network_b.tsv", "prior.tsv", "truth.tsv"]
    prior = pd.read_csv(tmp_path / "prior.tsv", sep="\t", dtype={"node_a": str, "node_b": str})
    # six significant digits, as written (relative error at most 5e-6: half a unit in the 6th digit)
    np.testing.assert_allclose(prior.score, pair.prior_scores, rtol=5e-6)
    edges = pd.read_csv(tmp_path / "network_b.tsv", sep="\t", dtype=str)
    assert len(edges) == len(pair.edges_b)


def test_reader_order_renumbers_consistently():
    pair = noisy_relabelled(12, noise=0.1, decoys=2, seed=4)
    labels = node_names(12, pad=False)  # "0", "1", "10", "11", "2", ... in string order
    moved, names_a, names_b = in_reader_order(pair, labels, labels)
    assert list(names_a) == sorted(labels)
    old = {(labels[u], labels[v]) for u, v in pair.edges_a}
    new = {(names_a[u], names_a[v]) for u, v in moved.edges_a}
    assert {tuple(sorted(e)) for e in old} == {tuple(sorted(e)) for e in new}
    assert {(labels[a], labels[b]) for a, b in pair.truth} == {(names_a[a], names_b[b]) for a, b in moved.truth}
    by_name = dict(zip(((labels[a], labels[b]) for a, b in pair.prior_pairs), pair.prior_scores))
    assert by_name == dict(zip(((names_a[a], names_b[b]) for a, b in moved.prior_pairs), moved.prior_scores))
    keys = moved.prior_pairs[:, 0] * 12 + moved.prior_pairs[:, 1]
    assert (np.diff(keys) > 0).all() and (moved.edges_a[:, 0] < moved.edges_a[:, 1]).all()
