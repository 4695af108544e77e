"""The ranking measures of scripts/bench/bench_transfer.py against outside references.

Average precision of a list holding every positive equals scikit-learn's
``average_precision_score``; the expected contribution of a randomly ordered tail equals the
mean over every arrangement of that tail, enumerated.
"""

import importlib.util
import itertools
from pathlib import Path

import numpy as np
import pytest

SCRIPT = Path(__file__).resolve().parents[1] / "scripts" / "bench" / "bench_transfer.py"


@pytest.fixture(scope="module")
def bt():
    spec = importlib.util.spec_from_file_location("bench_transfer_under_test", SCRIPT)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_average_precision_matches_sklearn(bt):
    sklearn_metrics = pytest.importorskip("sklearn.metrics")
    rng = np.random.default_rng(3)
    for _ in range(20):
        hits = rng.random(40) < 0.3
        hits[rng.integers(40)] = True
        scores = np.arange(40, 0, -1)  # the list's order, best first, no ties
        ours = bt.ranking_measures(hits, int(hits.sum()))["aupr"]
        assert ours == pytest.approx(sklearn_metrics.average_precision_score(hits, scores), rel=1e-12)


def test_unretrieved_positives_are_misses(bt):
    # hits at ranks 1 and 3, four positives in all: (1/1 + 2/3) / 4
    m = bt.ranking_measures([True, False, True], 4, ks=(2,))
    assert m["aupr"] == pytest.approx((1 + 2 / 3) / 4)
    assert m["recall"] == 0.5 and m["p_at_2"] == 0.5


@pytest.mark.parametrize("head, r, h_r", [([True, False], 5, 2), ([], 6, 3), ([False, True, True], 4, 1),
                                          ([True], 1, 1)])
def test_expected_tail_matches_enumeration(bt, head, r, h_r):
    n_pos = sum(head) + h_r + 1  # one positive never listed
    got = bt.ranking_measures(head, n_pos, tail_rows=r, tail_hits=h_r, ks=(3, 100))
    runs = []
    for where in itertools.combinations(range(r), h_r):
        tail = np.zeros(r, dtype=bool)
        tail[list(where)] = True
        runs.append(bt.ranking_measures(np.concatenate([np.asarray(head, dtype=bool), tail]), n_pos, ks=(3, 100)))
    for key in ("aupr", "p_at_3", "p_at_100"):
        assert got[key] == pytest.approx(np.mean([x[key] for x in runs]), rel=1e-10)


def test_common_neighbour_ranking(bt):
    # edges 0-1, 1-2, 2-3, 1-3 and a lone node 4: the non-adjacent pairs with a common neighbour
    # are (0, 2) and (0, 3), each through node 1
    edges = np.array([[0, 1], [1, 2], [2, 3], [1, 3]])
    keys, counts = bt.common_neighbour_ranking(edges, 5, np.random.default_rng(0))
    got = dict(zip(keys.tolist(), counts.tolist()))
    assert got == {0 * 5 + 2: 1, 0 * 5 + 3: 1}  # node 4 has no neighbour; adjacent pairs left out
