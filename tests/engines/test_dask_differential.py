"""Findings of differential testing of the dask engine against the single-machine pipeline: each
test pins one difference that was a defect, against the single machine's behaviour as reference.

The cluster tests run on one 2-worker LocalCluster (threads, so it starts in a second; the
`client` fixture of tests/conftest.py).
"""

import numpy as np
import pytest

pytest.importorskip("distributed")

import aligner  # noqa: E402
from aligner.datasets.instances import as_frames, noisy_relabelled  # noqa: E402
from aligner.engines.dask.engine import align as dask_align  # noqa: E402
from aligner.errors import ConvergenceError  # noqa: E402


@pytest.fixture(scope="module")
def small():
    return as_frames(noisy_relabelled(60, seed=5))


def test_a_tolerance_out_of_reach_says_what_to_change_as_on_one_machine(client, small):
    # Reference: the single machine's ConvergenceError (docs/errors.md: the message names the
    # keywords from Python and the options on the command line). The dask engine said "raise the
    # tolerance or lower alpha" whatever the caller typed, and counted its rounds twice.
    ea, eb, prior, _ = small
    with pytest.raises(ConvergenceError) as theirs:
        aligner.align(ea, eb, prior, tol=1e-18, refine=False)
    with pytest.raises(ConvergenceError) as mine:
        dask_align(ea, eb, prior, client=client, partitions=1, tol=1e-18, refine=False)
    flags = {"tol": "--tol", "alpha": "--alpha", "solver": "--solver"}
    for err in (theirs.value, mine.value):
        assert "raise tol" in str(err) and "lower alpha" in str(err) and "--" not in str(err)
        assert "raise --tol" in err.shown(flags) and "lower --alpha" in err.shown(flags)
    assert str(mine.value).count("stopped after") == 1
    assert mine.value.iterations >= 1 and mine.value.residual > 1e-18


def test_every_block_holds_a_node_with_candidates_when_one_node_has_most_of_the_work(client):
    # docs/engine.md: "A block holds at least one node of A with candidate pairs". A star's hub with
    # a candidate pair to every node of B carried most of the work, and the cut by cumulative work
    # left the blocks after it empty (pairs_per_block [41, 0, 0, 4] at K = 4 with 5 such nodes).
    # Reference: the single-machine run on the same star (the same matching, x within the bound).
    import pandas as pd

    n = 40
    ea = pd.DataFrame({"u": ["h"] * n, "v": [f"l{i:02d}" for i in range(n)]})
    eb = pd.DataFrame({"u": ["H"] * n, "v": [f"L{i:02d}" for i in range(n)]})
    prior = pd.DataFrame([("h", "H", 2.0)] + [("h", f"L{i:02d}", 1.0) for i in range(n)]
                         + [(f"l{i:02d}", f"L{i:02d}", 1.0) for i in range(4)], columns=["a", "b", "s"])
    single = aligner.align(ea, eb, prior, top_k=None, refine=False)
    for k in (2, 4, 5):
        res = dask_align(ea, eb, prior, client=client, partitions=k, top_k=None, refine=False)
        eng = res.summary["engine"]
        assert eng["partitions"] == k and len(eng["pairs_per_block"]) == k
        assert min(eng["pairs_per_block"]) > 0, (k, eng["pairs_per_block"])
        assert np.abs(res.diffusion.x - single.diffusion.x).sum() <= 2 * 1e-6 / (1 - 0.9)
        assert np.array_equal(res.matching.index, single.matching.index)


def test_cut_by_cost_leaves_no_range_without_work_when_it_can():
    # The property the engine's blocks rely on (common practice for a balanced contiguous cut):
    # with at most as many parts as nodes of positive cost, every range gets one, and no range
    # costs more than the mean plus the costliest node. Costs drawn with numpy's generator, half
    # of them zero and the rest heavy-tailed (Pareto).
    from aligner.engines.dask.blocks import cut_by_cost

    assert cut_by_cost(np.array([100.0, 1, 1, 1, 1]), 4).tolist() == [0, 1, 2, 3, 5]
    rng = np.random.default_rng(1)
    for _ in range(500):
        n = int(rng.integers(1, 30))
        cost = np.where(rng.random(n) < 0.5, 0.0, np.floor(rng.pareto(1.0, size=n) * 10) + 1)
        k = int(rng.integers(1, n + 2))
        bounds = cut_by_cost(cost, k)
        assert bounds[0] == 0 and bounds[-1] == n and (np.diff(bounds) >= 0).all()
        per = np.array([cost[bounds[b]:bounds[b + 1]].sum() for b in range(k)])
        if k <= np.count_nonzero(cost):
            assert (per > 0).all(), (cost.tolist(), k)
        assert per.max() <= cost.sum() / k + cost.max()


def test_a_scatter_to_a_worker_lost_a_moment_before_is_tried_again(monkeypatch):
    # docs/engine.md: a worker lost while the inputs are read on the cluster is dask's to recover.
    # A worker killed (SIGKILL) just before the reading sends the numbering to the cluster was still
    # listed by the scheduler and chosen for the scatter, whose connection closed: the run stopped
    # with "lost a worker during the reading on the cluster" where a moment later it recovers. The
    # scatter is now tried again. Reference: dask's own retry of a lost worker's tasks elsewhere;
    # here a stand-in client whose first scatter fails as distributed's does (CommClosedError).
    from distributed.comm.core import CommClosedError

    from aligner.engines.dask import reading

    class Client:
        calls = 0

        def scatter(self, value, hash=True):
            Client.calls += 1
            if Client.calls == 1:
                raise CommClosedError("in <TCP (closed) ConnectionPool.scatter>: Stream is closed")
            return ("future", value)

    monkeypatch.setattr(reading.time, "sleep", lambda s: None)
    assert reading._share(Client(), "names") == ("future", "names") and Client.calls == 2

    class Dead:
        def scatter(self, value, hash=True):
            raise CommClosedError("in <TCP (closed) ConnectionPool.scatter>: Stream is closed")

    with pytest.raises(CommClosedError):  # lost for good: raised, for the engine to report the lost worker
        reading._share(Dead(), "names")


def test_more_partitions_than_nodes_with_candidates_warns_in_plain_words(client):
    # docs/engine.md: K above the nodes of A with candidate pairs is cut down to them, with a
    # warning. With one such node it read "only 1 nodes of A have candidate pairs: the blocks are
    # 1". Reference: the single-machine run on the same inputs (the same matching).
    import pandas as pd

    ea, eb = pd.DataFrame({"u": ["p1", "p2"], "v": ["p2", "p3"]}), pd.DataFrame({"u": ["r1", "r2"], "v": ["r2", "r3"]})
    for a, k, text in ((["p2", "p2"], 4, "only 1 node of A has candidate pairs: the run uses 1 block"),
                       (["p2", "p3"], 5, "only 2 nodes of A have candidate pairs: the run uses 2 blocks")):
        prior = pd.DataFrame({"a": a, "b": ["r2", "r3"], "s": [2.0, 1.0]})
        single = aligner.align(ea, eb, prior, refine=False)
        with pytest.warns(aligner.AlignerWarning) as seen:
            res = dask_align(ea, eb, prior, client=client, partitions=k, refine=False)
        assert [str(w.message) for w in seen] == [f"{k} partitions asked for, but {text}, one node or more each"]
        assert res.summary["engine"]["partitions"] == len(set(a))
        assert np.array_equal(res.matching.index, single.matching.index)
