"""Findings of differential testing of the dask engine against the single-machine pipeline: each
test pins one difference that was a defect, against the single machine's behaviour as reference.

The cluster tests run on one 2-worker LocalCluster (threads, so it starts in a second).
"""

import numpy as np
import pytest

pytest.importorskip("distributed")

import aligner  # noqa: E402
from aligner.datasets.instances import as_frames, noisy_relabelled  # noqa: E402
from aligner.engines.dask.engine import align as dask_align  # noqa: E402
from aligner.errors import ConvergenceError  # noqa: E402


@pytest.fixture(scope="module")
def client():
    from dask.distributed import Client, LocalCluster

    cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=False, dashboard_address=":0")
    c = Client(cluster)
    yield c
    c.close()
    cluster.close()


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
