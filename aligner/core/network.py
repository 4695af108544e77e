"""The canonical in-memory form of a network: interned names, edges and CSR adjacency.

A network is undirected unless built with ``directed=True``; a directed one keeps its arcs and
an out-adjacency beside the undirected view that the direction-blind stages use.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from aligner.kernels.tables import fill_symmetric, merge_sorted, sort_rows

__all__ = ["Network", "network_from_edges", "canonical_edges", "canonical_arcs", "unique_sorted"]

INDEX = np.int32  # node and pair indices; indptr arrays are int64
_EMPTY = np.empty(0, dtype=np.float64)


@dataclass(frozen=True, eq=False)
class Network:
    """A simple network: undirected, or directed with its undirected view alongside.

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
    adj_weights : ndarray of float64 or None
        The weight of every entry of ``indices`` (the symmetric adjacency), when weighted.
    directed : bool
        Whether the edges have a direction.
    arcs : ndarray of int32, shape (E', 2), or None
        Directed networks: each arc (u, v) once, u != v, sorted; (u, v) and (v, u) are two arcs.
        ``edges`` is then the undirected view (reciprocal arcs merged, their weights summed).
    arc_weights : ndarray of float64 or None
        Weights of ``arcs`` (duplicates summed).
    out_indptr, out_indices, out_weights : ndarray or None
        Directed networks: the out-adjacency (sorted successor lists) and its entry weights.
    labels : ndarray or None
        The input's own node objects, aligned with ``names``, when they are not all strings
        (a networkx graph with integer nodes): what the output tables show. None: the names.
    loop_nodes : ndarray of int32 or None
        The nodes named by a self-loop row (the loops are dropped, their nodes kept), sorted;
        None when not known. ``aligner update`` keeps them in its state, so that a node whose
        last edge an edge diff removes stays when the edited file still names it in a loop.
    """

    names: np.ndarray
    edges: npt.NDArray[np.int32]
    weights: npt.NDArray[np.float64] | None
    indptr: npt.NDArray[np.int64]
    indices: npt.NDArray[np.int32]
    n_self_loops: int = 0
    n_duplicate_edges: int = 0
    source: str = "<memory>"
    adj_weights: npt.NDArray[np.float64] | None = None
    directed: bool = False
    arcs: npt.NDArray[np.int32] | None = None
    arc_weights: npt.NDArray[np.float64] | None = None
    out_indptr: npt.NDArray[np.int64] | None = None
    out_indices: npt.NDArray[np.int32] | None = None
    out_weights: npt.NDArray[np.float64] | None = None
    labels: np.ndarray | None = None
    loop_nodes: npt.NDArray[np.int32] | None = None

    @property
    def n(self) -> int:
        return len(self.names)

    @property
    def n_edges(self) -> int:
        return len(self.edges)

    @property
    def degree(self) -> npt.NDArray[np.int64]:
        return np.diff(self.indptr)

    @property
    def weighted(self) -> bool:
        return self.weights is not None

    def scored_edges(self, directed: bool = False) -> tuple[npt.NDArray[np.int32], npt.NDArray[np.float64] | None]:
        """The edges the scores count, with their weights: the arcs when ``directed``, else the edges."""
        if directed:
            if not self.directed:
                raise ValueError("an undirected network has no arcs")
            return self.arcs, self.arc_weights
        return self.edges, self.weights

    def walk_adjacency(self, directed: bool = False, weighted: bool = False):
        """(indptr, indices, weights) of the adjacency the diffusion walks on.

        The out-adjacency when ``directed`` (a directed network only), else the symmetric one;
        ``weights`` is an empty array unless ``weighted``.
        """
        if directed:
            if not self.directed:
                raise ValueError("an undirected network has no out-adjacency")
            ip, ix, w = self.out_indptr, self.out_indices, self.out_weights
        else:
            ip, ix, w = self.indptr, self.indices, self.adj_weights
        if weighted:
            if w is None:
                raise ValueError("the network has no edge weights")
            return ip, ix, w
        return ip, ix, np.empty(0, dtype=np.float64)

    def strength(self, directed: bool = False, weighted: bool = False) -> npt.NDArray[np.float64]:
        """Degree (out-degree when ``directed``), or the summed weights when ``weighted``."""
        ip, ix, w = self.walk_adjacency(directed, weighted)
        return row_sums(ip, w) if weighted else np.diff(ip).astype(np.float64)

    def index_of(self) -> dict:
        """A dict from node identifier to index (built on demand; not used on hot paths)."""
        return {name: i for i, name in enumerate(self.names)}


def row_sums(indptr: npt.NDArray[np.int64], data: npt.NDArray[np.float64]) -> npt.NDArray[np.float64]:
    """The sum of every CSR row's entries (0 for an empty row)."""
    n = len(indptr) - 1
    return np.bincount(np.repeat(np.arange(n), np.diff(indptr)), weights=data, minlength=n)


def _canonical_rows(
    u: npt.NDArray[np.integer], v: npt.NDArray[np.integer], weights: npt.NDArray[np.float64] | None, *,
    undirected: bool,
) -> tuple[npt.NDArray[np.int32], npt.NDArray[np.float64] | None, int, int]:
    """Rows (u, v) without self-loops, unique and sorted (``u < v`` first when ``undirected``).

    Returns the rows, their summed weights (in row order), the self-loops dropped and the
    duplicate rows merged.
    """
    u = np.asarray(u, dtype=np.int64)
    v = np.asarray(v, dtype=np.int64)
    if len(u) and min(int(u.min()), int(v.min())) < 0:
        raise ValueError("node indices must be >= 0")
    loops = u == v
    n_loops = int(np.count_nonzero(loops))
    first, second = (np.minimum(u, v), np.maximum(u, v)) if undirected else (u.copy(), v)
    first[loops] = -1  # left out
    merged = None if weights is None else np.ascontiguousarray(weights, dtype=np.float64)
    rows, merged, n_dup = unique_sorted(first, second, merged)
    return rows, merged, n_loops, n_dup


def unique_sorted(first: npt.NDArray[np.int64], second: npt.NDArray[np.int64],
                  values: npt.NDArray[np.float64] | None = None, *, largest: bool = False):
    """The unique rows (first, second), sorted, with their values merged; rows with ``first < 0`` left out.

    Values are summed in row order (``largest``: the highest kept, 0.0 above -0.0, NaN kept).
    Returns the rows (int32, shape (k, 2)), their values (None without ``values``) and the
    number of repeated rows merged. Sorted by counting (:func:`aligner.kernels.tables.sort_rows`).
    """
    first = np.ascontiguousarray(first, dtype=np.int64)
    second = np.ascontiguousarray(second, dtype=np.int64)
    if not len(first) or (first[0] >= 0 and _sorted_rows(first, second, unique=True)):
        # already unique and sorted (lists a run state keeps): nothing to sort or merge
        rows = np.empty((len(first), 2), dtype=np.int32)
        rows[:, 0], rows[:, 1] = first, second
        if values is None:
            return rows, None, 0
        out = np.array(values, dtype=np.float64)
        if not largest:
            out += 0.0  # as a sum from 0.0 gives it: -0.0 becomes 0.0, every other value stays
        return rows, out, 0
    n1 = int(first.max()) + 1 if len(first) else 0
    order = sort_rows(first, second, max(n1, 0))
    mode = 0 if values is None else (2 if largest else 1)
    rows, merged, n_dup = merge_sorted(first, second, order, _EMPTY if values is None else values, mode)
    return rows, (None if values is None else merged), int(n_dup)


def canonical_edges(
    u: npt.NDArray[np.integer], v: npt.NDArray[np.integer], weights: npt.NDArray[np.float64] | None = None
) -> tuple[npt.NDArray[np.int32], npt.NDArray[np.float64] | None, int, int]:
    """Drop self-loops and merge duplicate undirected edges.

    Returns the sorted unique edges with ``u < v``, their summed weights, the number of
    self-loops dropped and the number of duplicate edges merged.
    """
    return _canonical_rows(u, v, weights, undirected=True)


def canonical_arcs(
    u: npt.NDArray[np.integer], v: npt.NDArray[np.integer], weights: npt.NDArray[np.float64] | None = None
) -> tuple[npt.NDArray[np.int32], npt.NDArray[np.float64] | None, int, int]:
    """Drop self-loops and merge duplicate arcs (u, v), keeping direction.

    Returns the sorted unique arcs, their summed weights, the self-loops dropped and the
    duplicate arcs merged.
    """
    return _canonical_rows(u, v, weights, undirected=False)


def network_from_edges(
    names: np.ndarray,
    u: npt.NDArray[np.integer],
    v: npt.NDArray[np.integer],
    weights: npt.NDArray[np.float64] | None = None,
    *,
    source: str = "<memory>",
    directed: bool = False,
) -> Network:
    """Build a :class:`Network` from endpoint index arrays over ``names``.

    With ``directed`` the rows are arcs u -> v: duplicates of an arc are merged (weights
    summed), while (u, v) and (v, u) stay two arcs; the undirected view merges them.
    """
    n = len(names)
    arcs = arc_w = out_ip = out_ix = out_w = None
    if directed:
        arcs, arc_w, n_loops, n_dup = canonical_arcs(u, v, weights)
        edges, w, _, _ = canonical_edges(arcs[:, 0], arcs[:, 1], arc_w)
        out_ip, out_ix, *rest = _csr(arcs[:, 0].astype(np.int64), arcs[:, 1].astype(np.int64), n, arc_w, False, True)
        out_w = rest[0] if rest else None
    else:
        edges, w, n_loops, n_dup = canonical_edges(u, v, weights)
    if len(edges) and int(edges[:, 1].max()) >= n:
        raise ValueError(f"edge endpoints must be in [0, {n})")
    loop_nodes = np.empty(0, dtype=np.int32)
    if n_loops:
        u, v = np.asarray(u), np.asarray(v)
        loop_nodes = np.unique(u[u == v]).astype(np.int32)
    # canonical edges are sorted, unique, u < v: placed without sorting
    indptr, indices, *rest = _csr(edges[:, 0].astype(np.int64), edges[:, 1].astype(np.int64), n, w, True, True)
    adj_w = rest[0] if rest else None
    return Network(
        names=np.asarray(names, dtype=object),
        edges=edges,
        weights=w,
        indptr=indptr,
        indices=indices,
        n_self_loops=n_loops,
        n_duplicate_edges=n_dup,
        source=source,
        adj_weights=adj_w,
        directed=directed,
        arcs=arcs,
        arc_weights=arc_w,
        out_indptr=out_ip,
        out_indices=out_ix,
        out_weights=out_w,
        loop_nodes=loop_nodes,
    )


def adjacency(edges: npt.NDArray[np.integer], n: int, weights: npt.NDArray[np.float64] | None = None, *,
              symmetric: bool = True):
    """CSR adjacency (indptr, sorted indices[, entry weights]) of ``edges`` over ``n`` nodes.

    ``symmetric``: every edge is stored from both ends (an undirected network); otherwise each
    row (u, v) is the arc u -> v, stored in u's list. With ``weights`` a third array gives the
    weight of every stored entry. Entries of one row keep the order of ``np.lexsort`` (stable).
    Canonical edges (sorted, unique, ``u < v``) are placed in one counting and one fill pass.
    """
    edges = np.asarray(edges)
    src = np.ascontiguousarray(edges[:, 0], dtype=np.int64)
    dst = np.ascontiguousarray(edges[:, 1], dtype=np.int64)
    if len(src) and (min(int(src.min()), int(dst.min())) < 0 or max(int(src.max()), int(dst.max())) >= n):
        raise ValueError(f"edge endpoints must be in [0, {n})")
    return _csr(src, dst, n, weights, symmetric, _in_order(src, dst, symmetric))


def _in_order(a: np.ndarray, b: np.ndarray, strict: bool) -> bool:
    """Whether rows (a, b) are sorted by (a, b); ``strict``: also unique, with ``a < b``."""
    if strict and not (a < b).all():
        return False
    return _sorted_rows(a, b, unique=strict)


def _sorted_rows(a: np.ndarray, b: np.ndarray, *, unique: bool) -> bool:
    """Whether rows (a, b) are sorted by (a, b); ``unique``: in strictly increasing order. The
    first rows are looked at first: rows in file order nearly always fail there, at no cost."""
    def ok(a, b):
        da, db = np.diff(a), np.diff(b)
        return bool(((da > 0) | ((da == 0) & ((db > 0) if unique else (db >= 0)))).all())

    head = min(len(a), 4096)
    return (head == len(a) or ok(a[:head], b[:head])) and ok(a, b)


def _csr(src: np.ndarray, dst: np.ndarray, n: int, weights, symmetric: bool, in_order: bool):
    """:func:`adjacency` of int64 endpoints; ``in_order``: rows already as :func:`_in_order` asks."""
    w = None if weights is None else np.asarray(weights, dtype=np.float64)
    if symmetric and in_order:
        indptr, indices, ew = fill_symmetric(src, dst, n, _EMPTY if w is None else w, w is not None)
        return (indptr, indices) if w is None else (indptr, indices, ew)
    if symmetric:
        src, dst = np.concatenate([src, dst]), np.concatenate([dst, src])
        w = None if w is None else np.concatenate([w, w])
    indptr = np.zeros(n + 1, dtype=np.int64)
    np.cumsum(np.bincount(src, minlength=n), out=indptr[1:])
    order = None if not symmetric and in_order else sort_rows(src, dst, n)
    indices = (dst if order is None else dst[order]).astype(INDEX)
    if w is None:
        return indptr, indices
    return indptr, indices, (w.copy() if order is None else w[order])


def merge_duplicate_pairs(
    pairs: npt.NDArray[np.integer], scores: npt.NDArray[np.float64], n2: int
) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.float64], int]:
    """Unique (node of A, node of B) pairs sorted by (i, i'), each with its highest score.

    Returns the pairs, their scores and the number of duplicate rows merged. Sorted by
    counting (:func:`aligner.kernels.tables.sort_rows`); among repeats of a pair the highest
    score is kept (0.0 above -0.0, so that the order of the rows does not matter).
    """
    pairs = np.asarray(pairs, dtype=np.int64).reshape(-1, 2)
    scores = np.asarray(scores, dtype=np.float64).reshape(-1)
    if len(pairs) == 0:
        return pairs, scores, 0
    if int(pairs.min()) < 0:
        raise ValueError("node indices must be >= 0")
    rows, best, n_dup = unique_sorted(pairs[:, 0], pairs[:, 1], scores, largest=True)
    return rows.astype(np.int64), best, n_dup
