"""The refinement's local search ends where no move it searches can raise the objective.

The kernel prunes moves with upper bounds before it evaluates them exactly. A bound that is
too low would skip an improving move and leave the matching short of a local optimum, so each
case here checks the definition of the end state by brute force: every 2-exchange and every
3-rotation of the final matching is built explicitly and F = sum of beta * w~ over the matched
pairs + the conserved edges is recomputed from a dense product matrix (the objective of
:mod:`aligner.core.refine`), with no part of the kernel's bookkeeping.
"""

import itertools

import numpy as np
import pytest

from aligner.core.candidates import build_candidates
from aligner.core.network import adjacency
from aligner.core.product import build_product
from aligner.core.refine import normalise_weights, refine_matching

EPS = 1e-9  # the kernel's move threshold (RISE_TOL) is below this


def _instance(seed, directed, n=14, p_edge=0.3, p_cand=0.35):
    rng = np.random.default_rng(seed)
    ea = np.array([(u, v) for u, v in itertools.combinations(range(n), 2) if rng.random() < p_edge])
    eb = np.array([(u, v) for u, v in itertools.combinations(range(n), 2) if rng.random() < p_edge])
    if directed:  # random orientation, some arcs both ways
        flip = rng.random(len(ea)) < 0.5
        ea[flip] = ea[flip][:, ::-1]
        both = eb[rng.random(len(eb)) < 0.3][:, ::-1]
        eb = np.vstack([eb, both])
    pairs = np.array([(i, j) for i in range(n) for j in range(n) if rng.random() < p_cand or i == j])
    cand = build_candidates(pairs, rng.random(len(pairs)), n, n)
    ipa, ixa = adjacency(ea, n, symmetric=not directed)
    ipb, ixb = adjacency(eb, n, symmetric=not directed)
    prod = build_product(ipa, ixa, ipb, ixb, cand, directed=directed)
    if directed:
        prod = prod.symmetrised()
    return cand, prod, rng


def _objective(index, bw, S):
    idx = np.asarray(sorted(index), dtype=np.int64)
    return bw[idx].sum() + 0.5 * S[np.ix_(idx, idx)].sum()


def _best_move_gain(cand, S, bw, index):
    """The largest change of F over every 2-exchange and 3-rotation of the matching ``index``."""
    pairs = cand.pairs
    at = {(int(a), int(b)): t for t, (a, b) in enumerate(pairs)}
    mate_a = {int(pairs[t, 0]): int(t) for t in index}
    mate_b = {int(pairs[t, 1]): int(t) for t in index}
    f0 = _objective(index, bw, S)
    best = -np.inf
    cur = set(int(t) for t in index)
    for p, (i, jb) in enumerate(pairs):
        i, jb = int(i), int(jb)
        if p in cur:
            continue
        k, l = mate_a.get(i), mate_b.get(jb)
        removed = {t for t in (k, l) if t is not None}
        added = {p}
        if k is not None and l is not None:
            j, ib = int(pairs[l, 0]), int(pairs[k, 1])
            q = at.get((j, ib))
            if q is not None:
                added.add(q)
        best = max(best, _objective((cur - removed) | added, bw, S) - f0)
        if k is None or l is None:
            continue
        j, ib = int(pairs[l, 0]), int(pairs[k, 1])
        for r in cur:  # rotation i -> j', j -> h', h -> i'
            h, hb = int(pairs[r, 0]), int(pairs[r, 1])
            if r in (k, l):
                continue
            q, s = at.get((j, hb)), at.get((h, ib))
            if q is None or s is None:
                continue
            best = max(best, _objective((cur - {k, l, r}) | {p, q, s}, bw, S) - f0)
    return best


@pytest.mark.parametrize("directed", [False, True])
@pytest.mark.parametrize("seed", range(6))
def test_local_search_stops_at_a_local_optimum(seed, directed):
    cand, prod, rng = _instance(seed, directed)
    w = rng.random(cand.m)
    start = _random_start(cand, rng)  # a poor start: a random one-to-one matching of candidates
    res = refine_matching(prod, cand, w, start, max_iter=0, local_sweeps=10_000, rotations=True, beta=0.5)
    S = np.zeros((cand.m, cand.m))
    for k in range(cand.m):
        for t in range(prod.indptr[k], prod.indptr[k + 1]):
            S[k, prod.indices[t]] += 1.0
    bw = 0.5 * normalise_weights(w)[0]
    assert res.local_moves > 0  # a guard on the case: the search had work to do
    assert _best_move_gain(cand, S, bw, res.index) <= EPS
    # and the objective it reports is the recomputed one
    assert res.objective[-1] == pytest.approx(_objective(res.index, bw, S), abs=1e-9)


# --- the work list ---------------------------------------------------------------------------
# The kernel can examine only the candidates marked in ``dirty`` (those whose moves read a value
# that changed). The reference is the same kernel with ``dirty=None``, which examines every
# candidate in every sweep (the search as first written; its end state is checked by brute force
# above): with the work list the moves, sweeps and gain must be the same, not just as good.

def _kernel_args(cand, prod, bw, index):
    from aligner.core.refine import _lookup, matched_counts, _mates
    lk = _lookup(cand)
    mate_a, mate_b = _mates(cand, np.asarray(index, dtype=np.int64))
    g = matched_counts(prod, np.asarray(index, dtype=np.int64))
    return lk, mate_a, mate_b, g


def _search(cand, prod, bw, lk, mate_a, mate_b, g, dirty, rotations=True, sweeps=10_000):
    from aligner.kernels.refine import _local_search, _max_entry
    mate_a, mate_b, g = mate_a.copy(), mate_b.copy(), g.copy()
    out = _local_search(prod.indptr, prod.indices, np.empty(0), cand.a_indptr, lk.col_ptr, lk.col_idx, lk.pair_a,
                        lk.pair_b, bw, g, mate_a, mate_b, sweeps, rotations, EPS,
                        _max_entry(prod.indptr, prod.indices), dirty)
    return out, mate_a, g


def _random_start(cand, rng):
    """A random one-to-one matching of candidates (sorted candidate indices)."""
    start, used_b = [], set()
    for i in rng.permutation(cand.n1):
        rows = [t for t in range(cand.a_indptr[i], cand.a_indptr[i + 1]) if int(cand.pairs[t, 1]) not in used_b]
        if rows:
            t = int(rng.choice(rows))
            start.append(t)
            used_b.add(int(cand.pairs[t, 1]))
    return np.sort(np.array(start, dtype=np.int64))


@pytest.mark.parametrize("rotations", [True, False])
@pytest.mark.parametrize("directed", [False, True])
@pytest.mark.parametrize("seed", range(8))
def test_work_list_makes_the_moves_of_the_full_search(seed, directed, rotations):
    cand, prod, rng = _instance(100 + seed, directed, n=120, p_edge=0.06, p_cand=0.08)
    bw = 0.5 * normalise_weights(rng.random(cand.m))[0]
    lk, mate_a, mate_b, g = _kernel_args(cand, prod, bw, _random_start(cand, rng))
    full, fa, fg = _search(cand, prod, bw, lk, mate_a, mate_b, g, None, rotations)
    listed, la, lg = _search(cand, prod, bw, lk, mate_a, mate_b, g, np.full(cand.m, 3, dtype=np.uint8), rotations)
    assert full[0] > 0 and full[1] > 2  # a guard on the case: several sweeps with moves
    assert listed[:2] == full[:2]  # the same moves and sweeps
    assert listed[2] == pytest.approx(full[2], abs=1e-12)
    np.testing.assert_array_equal(la, fa)
    np.testing.assert_array_equal(lg, fg)


def _local_optimum(seed, directed, scale):
    """A generated instance, weights bw (``scale`` times w~) and a local optimum of the search
    from a random start: (cand, prod, rng, bw, lk, mate_a, mate_b, g) at the optimum."""
    cand, prod, rng = _instance(seed, directed, n=60, p_edge=0.1, p_cand=0.12)
    bw = scale * normalise_weights(rng.random(cand.m))[0]
    lk, mate_a, mate_b, g = _kernel_args(cand, prod, bw, _random_start(cand, rng))
    _, opt_a, opt_g = _search(cand, prod, bw, lk, mate_a, mate_b, g, None)
    opt_b = np.full(cand.n2, -1, dtype=np.int64)
    opt_b[lk.pair_b[opt_a[opt_a >= 0]]] = opt_a[opt_a >= 0]
    return cand, prod, rng, bw, lk, opt_a, opt_b, opt_g


def _continue_both_ways(cand, prod, lk, opt, bw2, changed):
    """The search from the optimum ``opt`` under the new weights ``bw2``, over every candidate
    and over those ``mark_pair`` marks for the ``changed`` pairs; asserts they agree and returns
    the full search's (moves, sweeps, gain) and matching."""
    from aligner.kernels.refine import mark_pair
    opt_a, opt_b, opt_g = opt
    dirty = np.zeros(cand.m, dtype=np.uint8)
    for t in changed:
        mark_pair(cand.a_indptr, lk.col_ptr, lk.col_idx, lk.pair_a, lk.pair_b, opt_a, opt_b, dirty, t)
    assert (dirty > 0).sum() < cand.m  # a guard: not everything is marked
    full, fa, _ = _search(cand, prod, bw2, lk, opt_a, opt_b, opt_g, None)
    listed, la, _ = _search(cand, prod, bw2, lk, opt_a, opt_b, opt_g, dirty)
    assert listed[:2] == full[:2]
    np.testing.assert_array_equal(la, fa)
    return full, fa


@pytest.mark.parametrize("directed", [False, True])
@pytest.mark.parametrize("seed", range(6))
def test_work_list_continues_after_values_change(seed, directed):
    """From a local optimum, change the values (bw) of one to three candidates and mark them
    with ``mark_pair``: the search over the marked ones alone makes the moves of a full search
    (many draws per instance, so that each way a value enters a move is met)."""
    cand, prod, rng, bw, lk, *opt = _local_optimum(200 + seed, directed, 0.5)
    moving = 0
    for _ in range(150):
        changed = rng.choice(cand.m, rng.integers(1, 4), replace=False)
        bw2 = bw.copy()
        bw2[changed] = bw2[changed] * rng.uniform(0.0, 3.0, len(changed)) + rng.uniform(0, 2.0, len(changed))
        full, _ = _continue_both_ways(cand, prod, lk, opt, bw2, changed)
        moving += full[0] > 0
    assert moving >= 10  # a guard: many of the draws had moves to make


@pytest.mark.parametrize("directed", [False, True])
@pytest.mark.parametrize("seed", range(4))
def test_work_list_continues_after_matched_values_fall(seed, directed):
    """As above, with the values of matched pairs lowered (moves that give them up, 3-rotations
    among them, become the improving ones) and weights large against the conserved edges."""
    cand, prod, rng, bw, lk, *opt = _local_optimum(300 + seed, directed, 3.0)
    opt_a, opt_b, opt_g = opt
    matched = opt_a[opt_a >= 0]
    rotating = 0
    for _ in range(300):
        changed = rng.choice(matched, rng.integers(1, 3), replace=False)
        bw2 = bw.copy()
        bw2[changed] *= rng.uniform(0.0, 0.7, len(changed))
        _, fa = _continue_both_ways(cand, prod, lk, opt, bw2, changed)
        _, two_a, _ = _search(cand, prod, bw2, lk, opt_a, opt_b, opt_g, None, rotations=False)
        rotating += not np.array_equal(two_a, fa)
    assert rotating >= 5  # a guard: in some draws the rotations changed the result
