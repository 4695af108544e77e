import networkx as nx
import numpy as np
import pytest
import scipy.sparse as sp

from aligner.core.candidates import build_candidates
from aligner.core.product import build_product, estimate_product_edges, patch_product, product_row_lengths
from aligner.errors import InvalidParameterError
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
    assert estimate_product_edges(ia, xa, ib, xb, cand) >= 2 * prod.n_edges


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


def test_weights_of_one_network_only_is_an_error():
    ia = np.array([0, 1, 2]); xa = np.array([1, 0], dtype=np.int32)
    cand = build_candidates([[0, 0]], [1.0], 2, 2, top_k=None)
    for given in ("a_weights", "b_weights"):
        with pytest.raises(InvalidParameterError, match=rf"^a_weights and b_weights must be given together or "
                                                        rf"not at all; got {given} only$") as info:
            build_product(ia, xa, ia, xa, cand, **{given: np.ones(2)})
        assert info.value.param == given


def test_empty_product_has_empty_int32_lists():
    ia = np.array([0, 1, 2]); xa = np.array([1, 0], dtype=np.int32)
    cand = build_candidates(np.empty((0, 2)), np.empty(0), 2, 2)
    for kw in ({}, {"a_weights": np.ones(2), "b_weights": np.ones(2)}):
        prod = build_product(ia, xa, ia, xa, cand, **kw)
        assert prod.indices.shape == (0,) and prod.indices.dtype == np.int32 and prod.indptr.tolist() == [0]
        assert prod.to_csr().shape == (0, 0)
    assert estimate_product_edges(ia, xa, ia, xa, cand) == 0


def _last_pair_isolated(directed):
    """A: edge 0-1 (or arc 0 -> 1), nodes 2, 3 bare; candidates (0,0), (1,1), (3,3): (3,3) has no neighbour."""
    from aligner.core.network import network_from_edges

    net = network_from_edges(np.array(["a", "b", "c", "d"], dtype=object), np.array([0]), np.array([1]),
                             directed=directed)
    ip, ix = (net.out_indptr, net.out_indices) if directed else (net.indptr, net.indices)
    cand = build_candidates([[0, 0], [1, 1], [3, 3]], np.ones(3), 4, 4, top_k=None)
    return ip, ix, cand


@pytest.mark.parametrize("directed", [False, True])
def test_shapes_and_defaults_when_the_last_pair_has_no_neighbour(directed):
    # hand-worked: the product has the one edge (0,0)-(1,1) (the arc (0,0) -> (1,1) when
    # directed); pair (3,3) is in no product edge, yet every matrix is 3 x 3
    ip, ix, cand = _last_pair_isolated(directed)
    prod = build_product(ip, ix, ip, ix, cand, directed=directed)
    assert prod.n_edges == 1 and prod.degree.tolist() == ([1, 0, 0] if directed else [1, 1, 0])
    assert prod.to_csr().shape == (3, 3) and prod.transition(np.ones(3)).shape == (3, 3)
    # transition's default alpha is 1: P itself
    dense = prod.transition(np.array([0.5, 0.25, 1.0])).toarray()
    want = np.zeros((3, 3))
    want[1, 0] = 0.5  # P[k, l] = w(l -> k) scale[l]
    if not directed:
        want[0, 1] = 0.25
    np.testing.assert_array_equal(dense, want)
    sym = prod.symmetrised()
    assert sym.m == 3 and sym.indptr.tolist() == [0, 1, 2, 2] and sym.indices.tolist() == [1, 0]
    assert not sym.directed
    # A's last node (3) has no edge: the estimate must still cover it (bound 0 there)
    assert estimate_product_edges(ip, ix, ip, ix, cand) >= prod.indptr[-1]


def test_empty_product_keeps_direction_and_weights():
    ia = np.array([0, 1, 2]); xa = np.array([1, 0], dtype=np.int32)
    cand = build_candidates(np.empty((0, 2)), np.empty(0), 2, 2)
    prod = build_product(ia, xa, ia, xa, cand, directed=True, a_weights=np.ones(2), b_weights=np.ones(2))
    assert prod.directed is True and prod.weights is not None and prod.weights.shape == (0,)
    prod = build_product(ia, xa, ia, xa, cand)
    assert prod.directed is False and prod.weights is None


def _kron_restricted(n1, ea, wa, n2, eb, wb, cand, directed):
    """Reference: scipy.sparse.kron of the two adjacency matrices, rows and columns restricted to
    the candidates (index i * n2 + i', the order of the sorted candidate pairs)."""
    def matrix(n, e, w):
        w = np.ones(len(e)) if w is None else w
        m = sp.coo_array((w, (e[:, 0], e[:, 1])), shape=(n, n))
        return (m if directed else m + m.T).tocsr()
    keep = cand.pairs[:, 0].astype(np.int64) * n2 + cand.pairs[:, 1]
    K = sp.kron(matrix(n1, ea, wa), matrix(n2, eb, wb), format="csr")[keep][:, keep]
    K = sp.csr_array(K)
    K.sort_indices()
    return K


@pytest.mark.parametrize("directed", [False, True])
@pytest.mark.parametrize("weighted", [False, True])
@pytest.mark.parametrize("seed", [0, 1])
def test_equals_scipy_kron_restricted_to_the_candidates(directed, weighted, seed, monkeypatch):
    # Reference: scipy.sparse.kron(A, B) restricted to L: the same stored entries, row by row in
    # the same (sorted) order, with weights w_A(i, j) * w_B(i', j') to the bit. Then again with
    # the build split into ranges of nodes of A on parallel threads: the same arrays.
    from aligner.core import product as product_module
    from aligner.core.network import adjacency
    rng = np.random.default_rng(seed)
    n1, n2 = 40, 35
    graphs = []
    for n in (n1, n2):
        e = np.argwhere(rng.random((n, n)) < 0.15)
        e = e[e[:, 0] != e[:, 1]] if directed else e[e[:, 0] < e[:, 1]]
        w = rng.random(len(e)) + 0.5 if weighted else None
        graphs.append((e, w, adjacency(e, n, w, symmetric=not directed)))
    (ea, wa, adj_a), (eb, wb, adj_b) = graphs
    pairs = np.argwhere(rng.random((n1, n2)) < 0.3)
    cand = build_candidates(pairs, rng.random(len(pairs)), n1, n2, top_k=6)
    kw = {"directed": directed, "a_weights": adj_a[2] if weighted else None, "b_weights": adj_b[2] if weighted else None}
    want = _kron_restricted(n1, ea, wa, n2, eb, wb, cand, directed)
    one = build_product(adj_a[0], adj_a[1], adj_b[0], adj_b[1], cand, **kw)
    monkeypatch.setattr(product_module, "PARALLEL_WORK", 0)
    assert len(product_module._blocks(adj_a[0], cand, len(adj_b[1]) / n2)) > 2 or product_module.thread_count() < 2
    split = build_product(adj_a[0], adj_a[1], adj_b[0], adj_b[1], cand, **kw)
    assert want.nnz > 0
    for prod in (one, split):
        np.testing.assert_array_equal(prod.indptr, want.indptr)
        np.testing.assert_array_equal(prod.indices, want.indices)
        assert prod.indices.dtype == np.int32 and prod.indptr.dtype == np.int64
        if weighted:
            np.testing.assert_array_equal(prod.weights, want.data)
        else:
            assert prod.weights is None
    # the memory estimate is an upper bound on the stored entries
    assert estimate_product_edges(adj_a[0], adj_a[1], adj_b[0], adj_b[1], cand) >= want.nnz
    # the row lengths counted without keeping the rows: those of the reference, in a few ranges
    # or in about one range per node of A
    np.testing.assert_array_equal(product_row_lengths(adj_a[0], adj_a[1], adj_b[0], adj_b[1], cand), np.diff(want.indptr))
    monkeypatch.setattr(product_module, "COUNT_RANGE", 1)
    np.testing.assert_array_equal(product_row_lengths(adj_a[0], adj_a[1], adj_b[0], adj_b[1], cand), np.diff(want.indptr))


@pytest.mark.parametrize("directed", [False, True])
@pytest.mark.parametrize("weighted", [False, True])
@pytest.mark.parametrize("sides", ["b", "a", "ab"])
def test_hubs_looked_up_by_search_give_the_kron_entries(directed, weighted, sides):
    # Reference: scipy.sparse.kron restricted to the candidates, as above, on a pair whose
    # networks both have hubs (nodes joined to most others) that are candidates of nearly every
    # node of the other network: the kernel searches a hub's sorted lists instead of tabling or
    # scanning them (found by a trial on hub graphs: the product stage grew with hub degree
    # squared, 111 s at degree 30,000 on 10^5 nodes), with the same rows.
    from aligner.core.network import adjacency
    from aligner.kernels.product import _by_search

    rng = np.random.default_rng(7)
    n, hubs = 300, np.array([0, 1, 2])
    nets = []
    for side in ("a", "b"):
        e = np.argwhere(rng.random((n, n)) < 0.01)
        spokes = np.array([(h, v) for h in hubs for v in range(3, n) if rng.random() < 0.9])
        if directed:  # arcs both ways round at the hubs
            spokes = np.concatenate([spokes, spokes[::3, ::-1]])
        if side in sides:
            e = np.concatenate([e, spokes])
        e = np.unique(e[e[:, 0] != e[:, 1]] if directed else np.sort(e[e[:, 0] != e[:, 1]], axis=1), axis=0)
        w = rng.random(len(e)) + 0.5 if weighted else None
        nets.append((e, w, adjacency(e, n, w, symmetric=not directed)))
    (ea, wa, adj_a), (eb, wb, adj_b) = nets
    every = np.arange(n)
    pairs = [np.argwhere(rng.random((n, n)) < 0.01)]
    if "b" in sides:  # the hubs of B: everyone's candidates
        pairs += [np.stack([every, np.full(n, h)], axis=1) for h in hubs]
    if "a" in sides:
        pairs += [np.stack([np.full(n, h), every], axis=1) for h in hubs]
    cand = build_candidates(np.concatenate(pairs), rng.random(sum(map(len, pairs))), n, n, top_k=None)
    # with the hubs on one side, that side's search is reached (else this test would not cover
    # it): a hub of B for a node of A with few look-ups, a hub of A for a neighbour whose table is
    # small (the predicates of aligner.kernels.product.product_rows)
    c, deg_b = np.diff(cand.a_indptr), np.diff(adj_b[0])
    at = [i for i in range(n) if adj_a[0][i + 1] > adj_a[0][i]]
    looks = {i: int(c[adj_a[1][adj_a[0][i]:adj_a[0][i + 1]]].sum()) for i in at}
    table = {i: int(deg_b[cand.pairs[cand.a_indptr[i]:cand.a_indptr[i + 1], 1]].sum()) for i in at}
    if sides == "b":
        assert any(_by_search(int(deg_b[hubs].min()), looks[i]) for i in at)
    if sides == "a":
        near_hub = [i for i in at if np.isin(hubs, adj_a[1][adj_a[0][i]:adj_a[0][i + 1]]).any()]
        assert any(_by_search(int(c[hubs].min()), table[i]) for i in near_hub)
    kw = {"directed": directed, "a_weights": adj_a[2] if weighted else None, "b_weights": adj_b[2] if weighted else None}
    want = _kron_restricted(n, ea, wa, n, eb, wb, cand, directed)
    got = build_product(adj_a[0], adj_a[1], adj_b[0], adj_b[1], cand, **kw)
    assert want.nnz > 0
    np.testing.assert_array_equal(got.indptr, want.indptr)
    np.testing.assert_array_equal(got.indices, want.indices)
    if weighted:
        np.testing.assert_array_equal(got.weights, want.data)
    np.testing.assert_array_equal(product_row_lengths(adj_a[0], adj_a[1], adj_b[0], adj_b[1], cand), np.diff(want.indptr))
    assert estimate_product_edges(adj_a[0], adj_a[1], adj_b[0], adj_b[1], cand) >= want.nnz


@pytest.mark.parametrize("directed", [False, True])
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_a_patched_product_graph_is_the_one_built_on_the_edited_networks(directed, seed):
    # Reference: scipy.sparse.kron of the edited networks' adjacencies restricted to the same
    # candidates (as above). Edges of both networks are removed and added; the rows of the
    # candidates of the nodes of A at a changed edge of A, or with a partner at a changed edge of
    # B, are built again and the rest copied from the product graph of the old networks.
    from aligner.core.network import adjacency
    rng = np.random.default_rng(seed)
    n1, n2 = 40, 35

    def edges(n, p):
        e = np.argwhere(rng.random((n, n)) < p)
        return e[e[:, 0] != e[:, 1]] if directed else e[e[:, 0] < e[:, 1]]

    def edited(e, n):  # two edges out, two in
        keep = np.ones(len(e), dtype=bool)
        keep[rng.choice(len(e), 2, replace=False)] = False
        extra = edges(n, 0.15)
        extra = extra[rng.choice(len(extra), 2, replace=False)]
        both = np.unique(np.concatenate([e[keep], extra]), axis=0)
        key = lambda x: set(map(tuple, x.tolist()))
        moved = np.array(sorted(key(e) ^ key(both))).reshape(-1, 2)
        return both, np.unique(moved)

    ea, eb = edges(n1, 0.15), edges(n2, 0.15)
    pairs = np.argwhere(rng.random((n1, n2)) < 0.3)
    cand = build_candidates(pairs, rng.random(len(pairs)), n1, n2, top_k=6)
    adj = lambda e, n: adjacency(e, n, None, symmetric=not directed)[:2]
    old = build_product(*adj(ea, n1), *adj(eb, n2), cand, directed=directed)
    ea2, ends_a = edited(ea, n1)
    eb2, ends_b = edited(eb, n2)
    assert len(ends_a) and len(ends_b)
    at_a, at_b = np.zeros(n1, dtype=bool), np.zeros(n2, dtype=bool)
    at_a[ends_a] = at_b[ends_b] = True
    redo = at_a[cand.pairs[:, 0]] | at_b[cand.pairs[:, 1]]
    assert 0 < redo.sum() < cand.m  # some rows are copied
    got = patch_product(old, *adj(ea2, n1), *adj(eb2, n2), cand, redo)
    want = _kron_restricted(n1, ea2, None, n2, eb2, None, cand, directed)
    np.testing.assert_array_equal(got.indptr, want.indptr)
    np.testing.assert_array_equal(got.indices, want.indices)
    assert got.indices.dtype == np.int32 and got.directed == directed and got.weights is None
    # no node given: the old graph, copied; every node: the new graph
    same = patch_product(old, *adj(ea2, n1), *adj(eb2, n2), cand, np.zeros(cand.m, dtype=bool))
    np.testing.assert_array_equal(same.indices, old.indices)
    np.testing.assert_array_equal(same.indptr, old.indptr)
    every = patch_product(old, *adj(ea2, n1), *adj(eb2, n2), cand, np.ones(cand.m, dtype=bool))
    np.testing.assert_array_equal(every.indices, want.indices)


def test_patching_a_weighted_product_graph_is_refused():
    rng = np.random.default_rng(0)
    e, ip, ix = csr(random_edges(6, 0.5, rng), 6)
    cand = build_candidates(np.argwhere(np.ones((6, 6))), np.ones(36), 6, 6, top_k=None)
    prod = build_product(ip, ix, ip, ix, cand, a_weights=np.ones(len(ix)), b_weights=np.ones(len(ix)))
    with pytest.raises(InvalidParameterError, match="unweighted"):
        patch_product(prod, ip, ix, ip, ix, cand, np.ones(36, dtype=bool))


def test_estimate_equals_its_formula():
    # Reference: the documented bound computed with numpy: for pair (i, i'), min(sum over
    # neighbours j of i of c_j, sum over neighbours j' of i' of c'_j', deg_A(i) * deg_B(i')),
    # summed over the pairs (c_j, c'_j': candidates of node j of A, of node j' of B).
    rng = np.random.default_rng(3)
    n1, n2 = 30, 25
    _, ia, xa = csr(random_edges(n1, 0.2, rng), n1)
    _, ib, xb = csr(random_edges(n2, 0.2, rng), n2)
    pairs = np.argwhere(rng.random((n1, n2)) < 0.2)
    cand = build_candidates(pairs, np.ones(len(pairs)), n1, n2, top_k=None)
    c = np.diff(cand.a_indptr)
    cb = np.bincount(cand.pairs[:, 1], minlength=n2)
    reach = np.array([c[xa[ia[i]:ia[i + 1]]].sum() for i in range(n1)])
    reach_b = np.array([cb[xb[ib[t]:ib[t + 1]]].sum() for t in range(n2)])
    i, ip = cand.pairs[:, 0], cand.pairs[:, 1]
    want = np.minimum(np.minimum(reach[i], reach_b[ip]), np.diff(ia)[i] * np.diff(ib)[ip]).sum()
    assert estimate_product_edges(ia, xa, ib, xb, cand) == want > 0


def test_the_estimate_of_a_hub_with_many_candidates_is_the_same_either_way_round():
    # Found by a trial on hub graphs: with a hub of A that is a candidate of thousands of nodes
    # of B, the bound counted deg_A * deg_B per pair (7.6e9 entries against 7.4e6 built) and
    # refused a run needing under 1 GB, while the same pair with A and B swapped ran. Reference:
    # the entries built, and the bound of the swapped pair (the product graph of the swapped
    # pair is the same graph).
    from aligner.core.network import adjacency

    rng = np.random.default_rng(5)
    n = 3000
    e = np.argwhere(rng.random((n, n)) < 0.002)
    e = e[e[:, 0] < e[:, 1]]
    e = np.unique(np.concatenate([e, [(0, v) for v in range(1, n)]]), axis=0)  # node 0: a hub
    ip, ix = adjacency(e, n)[:2]
    pairs = np.concatenate([np.stack([np.arange(n), np.arange(n)], axis=1),
                            np.stack([np.zeros(n, dtype=int), np.arange(n)], axis=1)])  # the hub: every node
    cand = build_candidates(pairs, np.ones(len(pairs)), n, n, top_k=None)
    swapped = build_candidates(pairs[:, ::-1], np.ones(len(pairs)), n, n, top_k=None)
    built = build_product(ip, ix, ip, ix, cand).indptr[-1]
    one, other = estimate_product_edges(ip, ix, ip, ix, cand), estimate_product_edges(ip, ix, ip, ix, swapped)
    assert one == other >= built
    assert one < 20 * built  # the pair-by-pair product deg_A * deg_B alone gives about n * n for the hub


def test_symmetrised_pattern_is_built_once():
    import pandas as pd

    import aligner

    # refinement and the confidence both ask a directed product graph for S + S^T: built once,
    # the same object the second time (its entries checked against scipy in the tests above)
    ga, gb = nx.gnp_random_graph(8, 0.4, seed=1, directed=True), nx.gnp_random_graph(8, 0.4, seed=2, directed=True)
    prod = aligner.align(ga, gb, pd.DataFrame({"a": range(8), "b": range(8), "s": 1.0}), directed=True).product
    assert prod.directed and prod.symmetrised() is prod.symmetrised()
