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


def _instance(seed, directed):
    rng = np.random.default_rng(seed)
    n = 14
    ea = np.array([(u, v) for u, v in itertools.combinations(range(n), 2) if rng.random() < 0.3])
    eb = np.array([(u, v) for u, v in itertools.combinations(range(n), 2) if rng.random() < 0.3])
    if directed:  # random orientation, some arcs both ways
        flip = rng.random(len(ea)) < 0.5
        ea[flip] = ea[flip][:, ::-1]
        both = eb[rng.random(len(eb)) < 0.3][:, ::-1]
        eb = np.vstack([eb, both])
    pairs = np.array([(i, j) for i in range(n) for j in range(n) if rng.random() < 0.35 or i == j])
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
    # a poor start: a random one-to-one matching of candidates
    start, used_b = [], set()
    for i in rng.permutation(cand.n1):
        rows = [t for t in range(cand.a_indptr[i], cand.a_indptr[i + 1]) if int(cand.pairs[t, 1]) not in used_b]
        if rows:
            t = int(rng.choice(rows))
            start.append(t)
            used_b.add(int(cand.pairs[t, 1]))
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
