"""The canonical in-memory form of an undirected network: interned names and CSR adjacency."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

__all__ = ["Network", "network_from_edges", "canonical_edges"]

INDEX = np.int32  # node and pair indices; indptr arrays are int64


@dataclass(frozen=True, eq=False)
class Network:
    """An undirected simple network.

    Attributes
    ----------
    names : ndarray of object, shape (n,)
        Node identifiers; node ``i`` is ``names[i]``. Sorted, so the order of lines in a file
        does not change node numbering.
    edges : ndarray of int32, shape (E, 2)
        Each undirected edge once, ``edges[:, 0] < edges[:, 1]``, sorted.
    weights : ndarray of float64, shape (E,), or None
        Edge weights (duplicates summed), when the input had a weight column.
    indptr, indices : ndarray
        Symmetric CSR adjacency (int64 pointers, int32 sorted neighbour lists).
    n_self_loops, n_duplicate_edges : int
        How many self-loops were dropped and duplicate edges merged on the way in.
    source : str
        Where the network came from (a path or a description).
    """

    names: np.ndarray
    edges: npt.NDArray[np.int32]
    weights: npt.NDArray[np.float64] | None
    indptr: npt.NDArray[np.int64]
    indices: npt.NDArray[np.int32]
    n_self_loops: int = 0
    n_duplicate_edges: int = 0
    source: str = "<memory>"

    @property
    def n(self) -> int:
        return len(self.names)

    @property
    def n_edges(self) -> int:
        return len(self.edges)

    @property
    def degree(self) -> npt.NDArray[np.int64]:
        return np.diff(self.indptr)

    def index_of(self) -> dict:
        """A dict from node identifier to index (built on demand; not used on hot paths)."""
        return {name: i for i, name in enumerate(self.names)}


def canonical_edges(
    u: npt.NDArray[np.integer], v: npt.NDArray[np.integer], weights: npt.NDArray[np.float64] | None = None
) -> tuple[npt.NDArray[np.int32], npt.NDArray[np.float64] | None, int, int]:
    """Drop self-loops and merge duplicate undirected edges.

    Returns the sorted unique edges with ``u < v``, their summed weights, the number of
    self-loops dropped and the number of duplicate edges merged.
    """
    u = np.asarray(u, dtype=np.int64)
    v = np.asarray(v, dtype=np.int64)
    loop = u == v
    n_loops = int(loop.sum())
    keep = ~loop
    lo = np.minimum(u[keep], v[keep])
    hi = np.maximum(u[keep], v[keep])
    w = None if weights is None else np.asarray(weights, dtype=np.float64)[keep]
    if len(lo) == 0:
        return np.empty((0, 2), dtype=INDEX), (None if w is None else np.empty(0)), n_loops, 0
    span = int(hi.max()) + 1
    key = lo * span + hi
    order = np.argsort(key, kind="stable")
    key = key[order]
    first = np.ones(len(key), dtype=bool)
    first[1:] = key[1:] != key[:-1]
    n_dup = int(len(key) - first.sum())
    uniq = key[first]
    edges = np.empty((len(uniq), 2), dtype=INDEX)
    edges[:, 0] = uniq // span
    edges[:, 1] = uniq % span
    if w is not None:
        group = np.cumsum(first) - 1
        w = np.bincount(group, weights=w[order], minlength=len(uniq))
    return edges, w, n_loops, n_dup


def network_from_edges(
    names: np.ndarray,
    u: npt.NDArray[np.integer],
    v: npt.NDArray[np.integer],
    weights: npt.NDArray[np.float64] | None = None,
    *,
    source: str = "<memory>",
) -> Network:
    """Build a :class:`Network` from endpoint index arrays over ``names``."""
    n = len(names)
    edges, w, n_loops, n_dup = canonical_edges(u, v, weights)
    indptr, indices = adjacency(edges, n)
    return Network(
        names=np.asarray(names, dtype=object),
        edges=edges,
        weights=w,
        indptr=indptr,
        indices=indices,
        n_self_loops=n_loops,
        n_duplicate_edges=n_dup,
        source=source,
    )


def adjacency(edges: npt.NDArray[np.integer], n: int) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.int32]]:
    """Symmetric CSR adjacency (indptr, sorted indices) of undirected ``edges`` over ``n`` nodes."""
    src = np.concatenate([edges[:, 0], edges[:, 1]]).astype(np.int64)
    dst = np.concatenate([edges[:, 1], edges[:, 0]]).astype(np.int64)
    order = np.lexsort((dst, src))
    counts = np.bincount(src, minlength=n)
    indptr = np.zeros(n + 1, dtype=np.int64)
    np.cumsum(counts, out=indptr[1:])
    return indptr, dst[order].astype(INDEX)


def merge_duplicate_pairs(
    pairs: npt.NDArray[np.integer], scores: npt.NDArray[np.float64], n2: int
) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.float64], int]:
    """Unique (node of A, node of B) pairs sorted by (i, i'), each with its highest score.

    Returns the pairs, their scores and the number of duplicate rows merged. One sort.
    """
    pairs = np.asarray(pairs, dtype=np.int64).reshape(-1, 2)
    scores = np.asarray(scores, dtype=np.float64).reshape(-1)
    if len(pairs) == 0:
        return pairs, scores, 0
    key = pairs[:, 0] * n2 + pairs[:, 1]
    order = np.argsort(key)
    ks = key[order]
    first = np.ones(len(ks), dtype=bool)
    first[1:] = ks[1:] != ks[:-1]
    starts = np.flatnonzero(first)
    best = np.maximum.reduceat(scores[order], starts)
    ks = ks[starts]
    return np.stack([ks // n2, ks % n2], axis=1), best, int(len(key) - len(starts))
