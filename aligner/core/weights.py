r"""How edge weights enter the product graph: a model that does not depend on their scale.

Edge weights of two networks are rarely on one scale: synapse counts differ between animals,
stages and reconstructions, interaction confidences between assays, co-occurrence counts
between datasets. Two models are offered (``weight_model`` of :class:`aligner.config.AlignConfig`).

``agreement`` (the default). Each network's weights become *levels*, their mid-distribution
quantiles within that network,

.. math:: q(e) = \frac{\#\{f : w_f < w_e\} + \tfrac12 \#\{f : w_f = w_e\}}{E},

so a level in (0, 1) says where an edge stands among its own network's edges: multiplying the
weights by a constant, or any increasing transform of them (a log, a square root), leaves the
levels unchanged. The product edge of (i, j) in A and (i', j') in B then weighs

.. math:: k = \phi + (1 - \phi)\,(1 - |q_A(i, j) - q_B(i', j')|), \qquad \phi = 1/2,

1 when the two edges stand at the same level, never below phi when they stand at opposite
ends. Every edge pair still counts (weights reweight the unweighted walk by at most a factor
1/phi, so they cannot override the wiring), and pairs of edges of like strength count more.
The walk divides by the summed entry weights of a pair (``restricted``) or by deg_A * deg_B
(``product``: the entries are at most 1, so the walk stays sub-stochastic).

``product`` (the earlier model). The product edge weighs w_A * w_B and the walk divides by
strength (summed weights). It follows the raw weights, so a few heavy edges can dominate the
walk, and a network whose weights are noisier carries its noise into every product entry;
it is kept for comparison (``scripts/bench/bench_weights.py`` measures both).

The refinement counts the same thing as the walk: with ``agreement``, a conserved edge pair
counts k (see :func:`aligner.core.refine.refine_matching`).
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from aligner.config import WEIGHT_MODELS

__all__ = ["WEIGHT_MODELS", "AGREEMENT_FLOOR", "weight_levels", "walk_weights", "walk_degree"]

#: phi: the weight of a product edge whose two edges stand at opposite ends of their networks'
#: weight distributions (the agreement kernel runs from phi to 1)
AGREEMENT_FLOOR = 0.5


def weight_levels(w: npt.ArrayLike) -> npt.NDArray[np.float64]:
    """Mid-distribution quantiles of ``w``: (number below + half the number equal) / len(w).

    In (0, 1); unchanged by any increasing transform of ``w`` (a positive scale factor among
    them) and by repeating every entry the same number of times (so the two stored entries of
    each undirected edge give the edge's own level).

    >>> weight_levels([1.0, 1.0, 2.0, 10.0]).tolist()
    [0.25, 0.25, 0.625, 0.875]
    >>> bool((weight_levels([3.0, 3.0, 6.0, 30.0]) == weight_levels([1.0, 1.0, 2.0, 10.0])).all())
    True
    """
    w = np.asarray(w, dtype=np.float64)
    if len(w) == 0:
        return np.empty(0)
    _, inverse, counts = np.unique(w, return_inverse=True, return_counts=True)
    below = np.concatenate([[0], np.cumsum(counts)[:-1]])
    return ((below + 0.5 * counts) / len(w))[inverse]


def walk_weights(net, directed: bool, model: str):
    """(indptr, indices, entry weights) of the adjacency the product graph is built from.

    ``agreement``: the entries' levels (:func:`weight_levels`); ``product``: the raw weights.
    """
    ip, ix, w = net.walk_adjacency(directed, True)
    return ip, ix, weight_levels(w) if model == "agreement" else w


def walk_degree(net, directed: bool, weighted: bool, model: str) -> npt.NDArray[np.float64]:
    """The per-node divisor of the ``product`` normalisation: degree (out-degree when directed),
    or strength when ``weighted`` under the ``product`` model."""
    return net.strength(directed, weighted and model == "product")
