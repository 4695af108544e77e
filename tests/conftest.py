import numpy as np
import pytest

from aligner.core.candidates import build_candidates
from aligner.core.network import adjacency, canonical_edges


def random_edges(n, p, rng):
    """Edges of a G(n, p) random graph, each once with u < v."""
    iu, ju = np.triu_indices(n, 1)
    keep = rng.random(len(iu)) < p
    return np.stack([iu[keep], ju[keep]], axis=1)


def csr(edges, n):
    edges, _, _, _ = canonical_edges(edges[:, 0], edges[:, 1])
    return edges, *adjacency(edges, n)


def all_pairs_candidates(n1, n2, rng):
    pairs = np.array([(i, j) for i in range(n1) for j in range(n2)])
    return build_candidates(pairs, rng.random(len(pairs)) + 0.1, n1, n2, top_k=None)


@pytest.fixture
def rng():
    return np.random.default_rng(12345)


@pytest.fixture(scope="module")
def client():
    """A dask client on 2 single-threaded workers as threads of the test process (they start in a
    second), one cluster per test module that asks for it (the dask engine's tests)."""
    pytest.importorskip("distributed")
    import logging

    from dask.distributed import Client, LocalCluster

    logging.getLogger("distributed.shuffle").setLevel(logging.ERROR)  # a note per shuffle
    cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=False, dashboard_address=None)
    c = Client(cluster)
    yield c
    c.close()
    cluster.close()
