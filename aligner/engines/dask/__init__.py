"""The dask engine (``pip install 'aligner[dask]'``): the product graph, the diffusion and the
matching of an alignment on a dask.distributed cluster, by blocks of nodes of A.

- :mod:`~aligner.engines.dask.blocks`: the partition and each block's rows of the product graph;
- :mod:`~aligner.engines.dask.diffusion`: the diffusion in synchronous rounds (block push or sweeps);
- :mod:`~aligner.engines.dask.auction`: the matching by a Jacobi auction, its tail solved exactly;
- :mod:`~aligner.engines.dask.engine`: the cluster of blocks and :func:`align`.

Design and figures: docs/engine.md. Importing this package imports neither dask nor numpy; the
engine imports them when it runs.
"""

from __future__ import annotations

__all__ = ["align"]


def align(network_a, network_b, prior=None, **options):
    """:func:`aligner.engines.dask.engine.align` (see there)."""
    from aligner.engines.dask.engine import align as run

    return run(network_a, network_b, prior, **options)
