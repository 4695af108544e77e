import networkx as nx
import numpy as np
import pytest

from aligner.core.candidates import build_candidates
from aligner.core.product import build_product, estimate_product_edges
from conftest import csr, random_edges


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_matches_networkx_tensor_product_restricted(seed):
    # Reference: networkx.tensor_product (the Kronecker product graph), restricted to the candidates.
    rng = np.random.default_rng(seed)
    n1, n2 = 9, 11
    ea, ia, xa = csr(random_edges(n1, 0.35, rng), n1)
    eb, ib, xb = csr(random_edges(n2, 0.3, rng), n2)
    pairs = np.array([(i, j) for i in range(n1) for j in range(n2) if rng.random() < 0.4])
    cand = build_candidates(pairs, np.ones(len(pairs)), n1, n2, top_k=None)
    prod = build_product(ia, xa, ib, xb, cand)
    ga = nx.Graph(); ga.add_nodes_from(range(n1)); ga.add_edges_from(ea.tolist())
    gb = nx.Graph(); gb.add_nodes_from(range(n2)); gb.add_edges_from(eb.tolist())
    ref = nx.tensor_product(ga, gb).subgraph([tuple(p) for p in cand.pairs.tolist()])
    pos = {tuple(p): k for k, p in enumerate(cand.pairs.tolist())}
    want = sorted(tuple(sorted((pos[u], pos[v]))) for u, v in ref.edges())
    got = set()
    for k in range(prod.m):
        for l in prod.indices[prod.indptr[k]:prod.indptr[k + 1]]:
            got.add(tuple(sorted((k, int(l)))))
    assert sorted(got) == want
    assert prod.n_edges == len(want)
    # neighbour lists sorted, pattern symmetric
    S = prod.to_csr()
    assert (S != S.T).nnz == 0
    for k in range(prod.m):
        row = prod.indices[prod.indptr[k]:prod.indptr[k + 1]]
        assert np.all(np.diff(row) > 0)
    assert estimate_product_edges(ia, xa, ib, cand) >= 2 * prod.n_edges


def test_empty_candidates():
    ia = np.array([0, 1, 2]); xa = np.array([1, 0], dtype=np.int32)
    cand = build_candidates(np.empty((0, 2)), np.empty(0), 2, 2)
    prod = build_product(ia, xa, ia, xa, cand)
    assert prod.m == 0 and prod.n_edges == 0


def test_inputs_unchanged(rng):
    ea, ia, xa = csr(random_edges(8, 0.4, rng), 8)
    cand = build_candidates([(i, j) for i in range(8) for j in range(8)], np.ones(64), 8, 8, top_k=None)
    before = [a.copy() for a in (ia, xa, cand.pairs, cand.a_indptr)]
    build_product(ia, xa, ia, xa, cand)
    for a, b in zip(before, (ia, xa, cand.pairs, cand.a_indptr)):
        assert np.array_equal(a, b)
