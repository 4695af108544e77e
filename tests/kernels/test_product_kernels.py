import networkx as nx
import numpy as np

from aligner.core.candidates import build_candidates
from aligner.kernels.product import product_rows
from conftest import csr, random_edges


def test_product_rows_by_ranges_equals_networkx_tensor_product():
    # Reference: networkx.tensor_product restricted to the candidates gives every pair's
    # neighbours; product_rows over any split of the nodes of A, joined in order, gives them
    # too, sorted (with weights w_A * w_B when given: all ones here, so every weight is 1).
    rng = np.random.default_rng(11)
    n1, n2 = 16, 14
    ea, ia, xa = csr(random_edges(n1, 0.3, rng), n1)
    eb, ib, xb = csr(random_edges(n2, 0.3, rng), n2)
    pairs = np.argwhere(rng.random((n1, n2)) < 0.35)
    cand = build_candidates(pairs, np.ones(len(pairs)), n1, n2, top_k=None)
    ga = nx.Graph(); ga.add_nodes_from(range(n1)); ga.add_edges_from(ea.tolist())
    gb = nx.Graph(); gb.add_nodes_from(range(n2)); gb.add_edges_from(eb.tolist())
    ref = nx.tensor_product(ga, gb)
    pos = {tuple(p): k for k, p in enumerate(cand.pairs.tolist())}
    want = [sorted(pos[v] for v in ref[tuple(p)] if v in pos) for p in cand.pairs.tolist()]
    pb = np.ascontiguousarray(cand.pairs[:, 1])
    empty = np.empty(0)
    for cuts in ([0, n1], [0, 5, n1], [0, 1, 2, 9, 15, n1], list(range(n1 + 1))):
        for weights, floor in (((empty, empty), -1.0), ((np.ones(len(xa)), np.ones(len(xb))), -1.0),
                               ((np.full(len(xa), 0.3), np.full(len(xb), 0.3)), 0.5)):
            # product of ones, or the agreement of equal levels: every weight is 1
            counts = np.zeros(cand.m, dtype=np.int64)
            parts = [product_rows(np.arange(a, b), ia, xa, ib, xb, cand.a_indptr, pb, cand.a_indptr, pb, *weights, floor,
                                  counts[cand.a_indptr[a]:cand.a_indptr[b]]) for a, b in zip(cuts, cuts[1:])]
            indices = np.concatenate([p[0] for p in parts])
            ptr = np.concatenate([[0], np.cumsum(counts)])
            assert [indices[ptr[k]:ptr[k + 1]].tolist() for k in range(cand.m)] == want
            w = np.concatenate([p[1] for p in parts])
            assert len(w) == (len(indices) if len(weights[0]) else 0) and (w == 1.0).all()
    # any increasing list of nodes: their pairs' rows, one after the other; and any subset of
    # their pairs (an update's patch)
    for nodes in (np.array([3]), np.arange(0, n1, 2), np.array([1, 2, 7, n1 - 1]), np.empty(0, dtype=np.int64)):
        for share in (1.0, 0.5, 0.0):
            pick = np.zeros(cand.m, dtype=bool)
            for i in nodes:
                ks = np.arange(cand.a_indptr[i], cand.a_indptr[i + 1])
                pick[ks[rng.random(len(ks)) < share]] = True
            rows = np.flatnonzero(pick)
            r_indptr = np.concatenate([[0], np.cumsum(np.bincount(cand.pairs[rows, 0], minlength=n1))])
            counts = np.zeros(len(rows), dtype=np.int64)
            indices = product_rows(nodes.astype(np.int64), ia, xa, ib, xb, cand.a_indptr, pb, r_indptr,
                                   np.ascontiguousarray(cand.pairs[rows, 1]), empty, empty, -1.0, counts)[0]
            ptr = np.concatenate([[0], np.cumsum(counts)])
            assert [indices[ptr[t]:ptr[t + 1]].tolist() for t in range(len(rows))] == [want[k] for k in rows]
