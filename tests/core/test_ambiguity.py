"""Interchangeable nodes: colour classes, neutral exchanges, groups and NC up to ambiguity."""

import networkx as nx
import numpy as np
import pandas as pd
import pytest

import aligner
from aligner.core.ambiguity import colour_classes
from aligner.datasets.synthetic import powerlaw_graph


def _partition(labels):
    groups = {}
    for node, lab in enumerate(labels):
        groups.setdefault(lab, set()).add(node)
    return {frozenset(g) for g in groups.values()}


@pytest.mark.parametrize("seed", range(4))
def test_colour_classes_match_networkx_weisfeiler_lehman(seed):
    # Reference: networkx.weisfeiler_lehman_subgraph_hashes (Weisfeiler & Leman 1968; Shervashidze et
    # al. 2011): nodes share a colour of the stable refinement iff their depth-n subtree hashes agree.
    rng = np.random.default_rng(seed)
    g = nx.gnm_random_graph(40, 55, seed=seed) if seed % 2 else nx.circular_ladder_graph(12)
    g = nx.disjoint_union(g, nx.path_graph(5 + int(rng.integers(0, 4))))
    n = g.number_of_nodes()
    adj = nx.to_scipy_sparse_array(g, nodelist=range(n), format="csr")
    ours = colour_classes(adj.indptr, adj.indices, n)
    hashes = nx.weisfeiler_lehman_subgraph_hashes(g, iterations=n)
    ref = [hashes[v][-1] for v in range(n)]
    assert _partition(ours) == _partition(ref)


def _mirror_pair(n=150, seed=4):
    """A graph joined with its copy (every third node linked to its mirror), B a relabelled copy,
    and a class prior: each node of A scores 1 with the partners of itself and of its mirror."""
    e = powerlaw_graph(n, m=3, p=0.3, seed=seed)
    edges = np.vstack([e, e + n, np.stack([np.arange(0, n, 3), np.arange(0, n, 3) + n], axis=1)])
    N = 2 * n
    perm = np.random.default_rng(seed).permutation(N)
    na = np.array([f"a{i:04d}" for i in range(N)])
    nb = np.array([f"b{i:04d}" for i in range(N)])
    mirror = (np.arange(N) + n) % N
    a = pd.DataFrame({"u": na[edges[:, 0]], "v": na[edges[:, 1]]})
    b = pd.DataFrame({"u": nb[perm[edges[:, 0]]], "v": nb[perm[edges[:, 1]]]})
    prior = pd.DataFrame({"a": np.r_[na, na], "b": np.r_[nb[perm], nb[perm[mirror]]], "s": 1.0})
    truth = pd.DataFrame({"a": na, "b": nb[perm]})
    mirrored = pd.DataFrame({"a": na, "b": nb[perm[mirror]]})
    return a, b, prior, truth, mirrored


def test_a_mirror_symmetric_pair_is_right_up_to_ambiguity_whichever_side_is_true():
    # Target of the issue: nc_up_to_ambiguity >= 0.99 on a mirror-symmetric generated pair. The
    # truth and its mirror image are equally good maps (an automorphism of the pair), so NC
    # against one of them is chance; NC up to ambiguity must be ~1 against both.
    a, b, prior, truth, mirrored = _mirror_pair()
    for t in (truth, mirrored):
        res = aligner.align(a, b, prior, truth=t)
        amb = res.summary["ambiguity"]
        assert res.summary["scores"]["nc_up_to_ambiguity"] >= 0.99
        assert amb["nc_up_to_ambiguity"] == res.summary["scores"]["nc_up_to_ambiguity"]
        assert amb["groups"] >= 100 and amb["largest_group"] == 2
        assert (res.pairs["alternatives"] != "").mean() >= 0.95
    # against one of the two, NC itself is low: the map chose the other
    ncs = [aligner.align(a, b, prior, truth=t).scores.nc for t in (truth, mirrored)]
    assert min(ncs) < 0.5 < max(ncs)


def test_twin_leaves_are_a_group_by_a_neutral_exchange():
    # Common practice: two leaves on the same hub, with equal priors to two leaves on the partner
    # hub, can be swapped without losing a conserved edge.
    g = nx.star_graph(6)  # hub 0, leaves 1..6
    g.add_edges_from([(1, 7), (7, 8), (2, 9)])  # leaves 3 and 4 stay twins
    a = pd.DataFrame([(f"a{u}", f"a{v}") for u, v in g.edges()])
    b = pd.DataFrame([(f"b{u}", f"b{v}") for u, v in g.edges()])
    rows = [(f"a{i}", f"b{i}", 1.0) for i in g.nodes()] + [("a3", "b4", 1.0), ("a4", "b3", 1.0)]
    prior = pd.DataFrame(rows)
    res = aligner.align(a, b, prior, truth=pd.DataFrame([(f"a{i}", f"b{i}") for i in g.nodes()]))
    alt = dict(zip(res.pairs["node_a"], res.pairs["alternatives"]))
    assert set(alt["a3"].split(";")) | set(alt["a4"].split(";")) >= {"b3", "b4"} - {res.pairs.set_index("node_a")
                                                                                      .loc["a3", "node_b"]}
    assert res.summary["ambiguity"]["groups"] >= 1
    assert res.summary["scores"]["nc_up_to_ambiguity"] == 1.0


def test_distinct_priors_make_no_alternatives():
    # With priors more than the tolerance apart, no swap is neutral (common practice).
    a, b, prior, truth, _ = _mirror_pair(n=60, seed=2)
    prior = prior.copy()
    prior.loc[len(prior) // 2:, "s"] = 0.5  # the mirror's rows score half
    res = aligner.align(a, b, prior, truth=truth)
    assert res.summary["ambiguity"]["indistinguishable_pairs"] == 0
    assert res.scores.nc == 1.0


def _rotation_case(far: float):
    """A 4-cycle 0-1-2-3 in A and B, every pair a candidate. Kept matching: identity at prior 1;
    a near-optimal one: the rotation i -> i + 1, its pairs at prior 1 for nodes 0, 1 and ``far``
    for nodes 2, 3 (the other pairs 0.2). Returns each node's alternatives with the near-optimal
    matching and without it, and the ambiguity found with it."""
    from aligner.core.ambiguity import find_ambiguity
    from aligner.core.candidates import build_candidates
    from aligner.core.network import adjacency
    from aligner.core.product import build_product

    ip, ix = adjacency(np.array([[0, 1], [1, 2], [2, 3], [0, 3]]), 4)
    pairs = np.array([(i, j) for i in range(4) for j in range(4)])
    prior = np.where(pairs[:, 0] == pairs[:, 1], 1.0, 0.2)
    rotated = (pairs[:, 1] == (pairs[:, 0] + 1) % 4)
    prior[rotated & (pairs[:, 0] >= 2)] = far
    prior[rotated & (pairs[:, 0] < 2)] = 1.0
    cand = build_candidates(pairs, prior, 4, 4)
    prod = build_product(ip, ix, ip, ix, cand)
    at = {tuple(p): k for k, p in enumerate(cand.pairs.tolist())}
    kept = np.array([at[(i, i)] for i in range(4)])
    other = np.array([at[(i, (i + 1) % 4)] for i in range(4)])
    amb = find_ambiguity(prod, cand, kept, walk_a=(ip, ix), walk_b=(ip, ix), optima=[other])
    none = find_ambiguity(prod, cand, kept, walk_a=(ip, ix), walk_b=(ip, ix))
    alts = {int(cand.pairs[kept[t], 0]): set(amb.alternatives(t).tolist()) for t in range(4)}
    base = {int(cand.pairs[kept[t], 0]): set(none.alternatives(t).tolist()) for t in range(4)}
    return alts, base, amb, none


def test_near_optimal_matchings_add_their_partners_within_the_prior_tolerance():
    # Hand-worked (_rotation_case): the rotation's pairs of nodes 2, 3 score 0.5, more than
    # PRIOR_TOL below the kept pair's prior, so only 0 and 1 get the rotation's partner as an
    # alternative.
    from aligner.core.ambiguity import PRIOR_TOL

    assert 0.5 < (1 - PRIOR_TOL) * 1.0
    alts, base, amb, none = _rotation_case(0.5)
    # the other kinds (neutral exchanges, colour classes) may name some alternatives already;
    # the near-optimal matching adds exactly its partners of nodes 0 and 1
    assert alts == {0: base[0] | {1}, 1: base[1] | {2}, 2: base[2], 3: base[3]}
    assert amb.near_optima == 1 and none.near_optima == 0
    assert amb.near_optimum_nodes == 2 and none.near_optimum_nodes == 0


def test_near_optimal_partners_with_a_much_higher_prior_are_not_alternatives():
    # Hand-worked from the documented rule (docs/method.md, "Interchangeable nodes": a partner
    # from a near-optimal matching is an alternative when its prior is within 5 % of the kept
    # pair's, the same two-sided test as a neutral exchange's). In _rotation_case the rotation's
    # pairs of nodes 2, 3 score 2 (twice the kept pair's, far outside the tolerance): only 0 and 1
    # gain the rotation's partner; before the fix a higher prior always passed (prior >= 0.95 x kept).
    from aligner.core.ambiguity import PRIOR_TOL

    assert 2.0 > (1 + PRIOR_TOL) * 1.0
    alts, base, amb, _ = _rotation_case(2.0)
    assert alts == {0: base[0] | {1}, 1: base[1] | {2}, 2: base[2], 3: base[3]}
    assert 3 not in alts[2] and 0 not in alts[3]
    assert amb.near_optimum_nodes == 2


def test_a_noisy_mirror_is_named_by_the_near_optimal_matchings():
    # The adult connectome pair (Witvliet et al. 2021) with B's synapse counts Poisson-noised
    # (seed 18) and the class prior: the best matching found is the left-right mirror image of
    # the truth (it conserves more edges; NC about 0.12), which colour refinement cannot call
    # interchangeable since the noise breaks the symmetry. The refinement's other near-optimal
    # matchings name the true partners as alternatives (measured: NC up to ambiguity 0.97).
    from pathlib import Path

    from aligner.datasets.instances import hidden_connectome, perturb_weights, read_connectome

    a, b, classes = read_connectome(Path(__file__).resolve().parents[1] / "data")
    ea, eb, prior, truth = hidden_connectome(a, perturb_weights(b, "poisson", seed=18), classes, "class", seed=0)
    res = aligner.align(ea, eb, prior, truth=truth, top_k=None)
    amb = res.summary["ambiguity"]
    assert amb["near_optima"] >= 1 and amb["near_optimum_nodes"] >= 100
    # whichever side was kept, the true partners are matched or named (measured NC 0.12 here)
    assert res.summary["scores"]["nc_up_to_ambiguity"] >= 0.95
    one = aligner.align(ea, eb, prior, truth=truth, top_k=None, refine_starts=1)
    assert one.summary["ambiguity"]["near_optima"] == 0
