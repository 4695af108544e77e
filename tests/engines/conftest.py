"""The dask engine's tests share one kind of cluster: 2 single-threaded workers as threads of the
test process (they start in a second), one cluster per test module."""

import logging

import pytest


@pytest.fixture(scope="module")
def client():
    pytest.importorskip("distributed")
    from dask.distributed import Client, LocalCluster

    logging.getLogger("distributed.shuffle").setLevel(logging.ERROR)  # a note per shuffle
    cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=False, dashboard_address=None)
    c = Client(cluster)
    yield c
    c.close()
    cluster.close()
