import numpy as np
import pandas as pd

from aligner.pipeline import align
from aligner.core.candidates import build_candidates
from aligner.core.confidence import best_competitor, pair_confidence
from aligner.core.rounding import round_matching


def _brute(cand, x, index):
    # reference: the documented definition, evaluated pair by pair with plain Python loops
    out = []
    for k in index:
        i, j = cand.pairs[k]
        comp = [x[l] for l in range(cand.m) if l != k and (cand.pairs[l, 0] == i or cand.pairs[l, 1] == j)]
        c = max(comp) if comp else 0.0
        c = max(c, 0.0)
        out.append(0.0 if x[k] <= 0 else min(max((x[k] - c) / x[k], 0.0), 1.0))
    return np.array(out)


def test_confidence_matches_definition_on_random_instances(rng):
    for _ in range(20):
        n1, n2 = rng.integers(2, 12, size=2)
        K = int(rng.integers(1, n1 * n2 + 1))
        flat = rng.choice(n1 * n2, size=K, replace=False)
        pairs = np.stack([flat // n2, flat % n2], 1)
        cand = build_candidates(pairs, rng.random(K) + 0.01, n1, n2, top_k=None)
        x = rng.random(cand.m)
        x[rng.random(cand.m) < 0.1] = 0.0  # some zero scores
        match = round_matching(cand, x)
        got = pair_confidence(cand, x, match.index)
        np.testing.assert_allclose(got, _brute(cand, x, match.index), atol=1e-12)
        assert ((got >= 0) & (got <= 1)).all()


def test_lone_candidate_is_fully_confident_and_tie_is_zero():
    # common practice: no competitor -> margin 1; an equal competitor -> margin 0
    cand = build_candidates([[0, 0], [1, 1], [1, 2]], [1.0, 1.0, 1.0], 2, 3, top_k=None)
    x = np.array([0.5, 0.3, 0.3])
    np.testing.assert_allclose(pair_confidence(cand, x, np.array([0, 1])), [1.0, 0.0])
    assert best_competitor(cand, x, np.array([0]))[0] == -np.inf


def test_align_reports_confidence_column():
    # reference: the documented output table (docs/formats.md, "alignment.tsv")
    import networkx as nx

    g = nx.cycle_graph(6)
    prior = pd.DataFrame({"a": [str(i) for i in range(6)], "b": [str(i) for i in range(6)], "s": [1.0] * 6})
    res = align(g, g, prior)
    assert "confidence" in res.pairs and "conserved" in res.pairs
    assert res.pairs["confidence"].between(0, 1).all()


def test_best_two_per_group_against_a_sort(rng):
    # Reference: numpy.lexsort by group, then by value descending (stable, so the first of equal
    # values comes first): each group's first entry is its best and the holder, the next its
    # second. Small integer values force ties, including ties for the best.
    from aligner.core.confidence import _best_two

    for _ in range(30):
        n, m = int(rng.integers(1, 10)), int(rng.integers(0, 40))
        group = rng.integers(0, n, m)
        x = rng.integers(0, 4, m).astype(float)
        best, arg, second = _best_two(group, x, n)
        order = np.lexsort((-x, group))
        for g in range(n):
            rows = order[group[order] == g]
            assert best[g] == (x[rows[0]] if len(rows) else -np.inf)
            assert arg[g] == (rows[0] if len(rows) else -1)
            assert second[g] == (x[rows[1]] if len(rows) > 1 else -np.inf)
