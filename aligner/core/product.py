"""The product graph of A and B restricted to the candidate pairs, as CSR arrays."""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import numpy.typing as npt

from aligner.kernels.product import PRODUCT, product_bound, product_rows, splice_rows, thread_count
from aligner.core.candidates import CandidateSet
from aligner.errors import InvalidParameterError

if TYPE_CHECKING:
    import scipy.sparse as sp

__all__ = ["ProductGraph", "build_product", "patch_product", "estimate_product_edges", "product_row_lengths",
           "COUNT_RANGE"]

#: the work (about the table entries and look-ups) under which build_product runs on one thread
PARALLEL_WORK = 2_000_000


@dataclass(frozen=True, eq=False)
class ProductGraph:
    """Adjacency of the restricted product graph over the m candidate pairs.

    ``indices[indptr[k]:indptr[k+1]]`` are the pairs adjacent to pair k, sorted. Undirected:
    each product edge is stored twice (once from each end). ``directed``: the lists are
    out-lists, pair k = (i, i') pointing to (j, j') when i -> j in A and i' -> j' in B.
    ``weights`` (when the networks are weighted) holds the weight of every entry: the agreement
    of the two edges' levels, or w_A(i, j) * w_B(i', j') (see :mod:`aligner.core.weights`).
    """

    indptr: npt.NDArray[np.int64]
    indices: npt.NDArray[np.int32]
    directed: bool = False
    weights: npt.NDArray[np.float64] | None = None

    @property
    def m(self) -> int:
        return len(self.indptr) - 1

    @property
    def n_edges(self) -> int:
        """Number of product edges (arcs, when directed)."""
        return int(self.indptr[-1]) if self.directed else int(self.indptr[-1]) // 2

    def entry_weights(self) -> npt.NDArray[np.float64]:
        """The weight of every stored entry (ones when unweighted)."""
        return np.ones(len(self.indices)) if self.weights is None else self.weights

    def transition(self, scale: npt.NDArray[np.float64], alpha: float = 1.0) -> sp.csr_array:
        """alpha * P as a sparse matrix: P[k, l] = weight(l -> k) * scale[l] for every stored l -> k."""
        import scipy.sparse as sp  # here, not at import: runs need no scipy matrix

        scale = alpha * np.asarray(scale, dtype=np.float64)
        if not self.directed:  # symmetric pattern and weights: row l holds P[l, k] = w(k, l) scale[k]
            data = scale[self.indices] if self.weights is None else scale[self.indices] * self.weights
            return sp.csr_array((data, self.indices, self.indptr), shape=(self.m, self.m))
        col = np.repeat(scale, self.degree)
        return sp.csc_array((col * self.entry_weights(), self.indices, self.indptr), shape=(self.m, self.m)).tocsr()

    def symmetrised(self) -> "ProductGraph":
        """The undirected pattern S + S^T, with multiplicity (reciprocal arcs give two entries).

        For a directed product graph S, 1/2 x^T (S + S^T) x = x^T S x: on a matching's
        indicator, the conserved arcs (with weights, their summed weights). Neighbour lists
        sorted; each entry keeps its arc's weight when S is weighted. An undirected product graph
        is its own symmetrised pattern.
        """
        if not self.directed:
            return self
        built = self.__dict__.get("_symmetrised")  # made once: refinement and confidence both use it
        if built is not None:
            return built
        m = self.m
        rows = np.repeat(np.arange(m, dtype=np.int64), np.diff(self.indptr))  # (not kept: see release_degree)
        src = np.concatenate([rows, self.indices.astype(np.int64)])
        dst = np.concatenate([self.indices.astype(np.int64), rows])
        order = np.lexsort((dst, src))
        indptr = np.zeros(m + 1, dtype=np.int64)
        np.cumsum(np.bincount(src, minlength=m), out=indptr[1:])
        weights = None if self.weights is None else np.concatenate([self.weights, self.weights])[order]
        built = ProductGraph(indptr, dst[order].astype(np.int32), weights=weights)
        object.__setattr__(self, "_symmetrised", built)
        return built

    @property
    def degree(self) -> npt.NDArray[np.int64]:
        """Stored entries of every row (made once: the diffusion and its scale each ask for it; read-only)."""
        made = self.__dict__.get("_degree")
        if made is None:
            made = np.diff(self.indptr)
            made.flags.writeable = False
            object.__setattr__(self, "_degree", made)
        return made

    def release_degree(self) -> None:
        """Let go of :attr:`degree` (made again on the next use). The pipeline does once the
        diffusion, its reader in a run, is done: 88 MB held through the later stages at 10^6
        nodes (the symmetrised pattern of a directed run counts its rows without keeping them)."""
        self.__dict__.pop("_degree", None)

    def to_csr(self) -> sp.csr_array:
        """The adjacency as a scipy CSR array: row k holds k's (out-)neighbours, with weights."""
        import scipy.sparse as sp

        return sp.csr_array((self.entry_weights(), self.indices, self.indptr), shape=(self.m, self.m))


def build_product(
    a_indptr: npt.NDArray[np.int64],
    a_indices: npt.NDArray[np.int32],
    b_indptr: npt.NDArray[np.int64],
    b_indices: npt.NDArray[np.int32],
    cand: CandidateSet,
    *,
    a_weights: npt.NDArray[np.float64] | None = None,
    b_weights: npt.NDArray[np.float64] | None = None,
    directed: bool = False,
    agreement: float | None = None,
) -> ProductGraph:
    """Build the product graph of A and B restricted to the candidate pairs.

    Parameters
    ----------
    a_indptr, a_indices, b_indptr, b_indices : ndarray
        CSR adjacencies of A and B with sorted neighbour lists: symmetric, or the
        out-adjacencies of directed networks (with ``directed``).
    cand : CandidateSet
        The candidate pairs, sorted by (node of A, node of B).
    a_weights, b_weights : ndarray, optional
        Weights of the adjacency entries (both or neither); the product entry of
        (i, i') -> (j, j') then weighs w_A(i, j) * w_B(i', j').
    directed : bool
        The adjacencies are out-adjacencies; the result holds out-lists.
    agreement : float in [0, 1], optional
        With weights that are levels in [0, 1] (:func:`aligner.core.weights.weight_levels`):
        the entry weighs ``agreement + (1 - agreement) * (1 - |w_A(i, j) - w_B(i', j')|)``
        instead of the product (the agreement kernel, ``agreement`` its floor).

    Returns
    -------
    ProductGraph

    Notes
    -----
    Pairs (i, i') and (j, j') of L are adjacent when (i, j) is an edge of A and (i', j') an
    edge of B: the tensor (Kronecker) product graph restricted to L. One pass over the nodes
    of A (:func:`aligner.kernels.product.product_rows`): for node i, the neighbours of its
    candidate partners are entered in a small hash table keyed by node of B, and the
    candidates (j, j') of its neighbours j look up j' there. Work: sum over i of (sum of
    deg_B(i') over its candidates + sum of c_j over its neighbours j) plus the output, with
    c_j the number of candidates of j; memory O(m + product edges). No n1 x n2 or m x m dense
    object is formed. Large builds are split into ranges of nodes of A built by parallel
    threads and joined in order: the result is the same for any number of threads.

    Examples
    --------
    >>> import numpy as np
    >>> from aligner.core.network import adjacency
    >>> from aligner.core.candidates import build_candidates
    >>> e = np.array([[0, 1], [1, 2]])
    >>> ip, ix = adjacency(e, 3)
    >>> c = build_candidates([[0, 0], [1, 1], [2, 2]], [1.0, 1.0, 1.0], 3, 3)
    >>> build_product(ip, ix, ip, ix, c).n_edges
    2
    """
    weighted = a_weights is not None
    if weighted != (b_weights is not None):
        given = "a_weights" if weighted else "b_weights"
        raise InvalidParameterError(f"a_weights and b_weights must be given together or not at all; got {given} only",
                                    param=given)
    floor = PRODUCT
    if agreement is not None:
        if not 0.0 <= agreement <= 1.0:
            raise InvalidParameterError(f"agreement must be a number in [0, 1]; got {agreement}", param="agreement")
        floor = float(agreement)
    none = np.empty(0, dtype=np.float64)
    a_w = none if not weighted else np.ascontiguousarray(a_weights, dtype=np.float64)
    b_w = none if not weighted else np.ascontiguousarray(b_weights, dtype=np.float64)
    a_indptr, b_indptr = (np.ascontiguousarray(p, dtype=np.int64) for p in (a_indptr, b_indptr))
    a_indices, b_indices = (np.ascontiguousarray(x, dtype=np.int32) for x in (a_indices, b_indices))
    pair_b = np.ascontiguousarray(cand.pairs[:, 1])
    blocks = _blocks(a_indptr, cand, len(b_indices) / max(cand.n2, 1))
    indptr = np.zeros(cand.m + 1, dtype=np.int64)

    def build(i0: int, i1: int) -> tuple[np.ndarray, np.ndarray, int]:  # the rows of nodes i0 .. i1-1 of A
        counts = indptr[cand.a_indptr[i0] + 1: cand.a_indptr[i1] + 1]
        return product_rows(np.arange(i0, i1), a_indptr, a_indices, b_indptr, b_indices, cand.a_indptr, pair_b,
                            cand.a_indptr, pair_b, a_w, b_w, floor, counts)

    if len(blocks) > 2:
        with ThreadPoolExecutor(thread_count()) as pool:  # the kernel releases the GIL
            parts = list(pool.map(build, blocks[:-1], blocks[1:]))
    else:
        parts = [build(blocks[0], blocks[-1])]
    np.cumsum(indptr, out=indptr)
    indices = np.concatenate([p[0] for p in parts]) if len(parts) > 1 else parts[0][0].copy()
    weights = None
    if weighted:
        weights = np.concatenate([p[1] for p in parts]) if len(parts) > 1 else parts[0][1].copy()
    return ProductGraph(indptr=indptr, indices=indices, directed=directed, weights=weights)


def patch_product(
    old: ProductGraph,
    a_indptr: npt.NDArray[np.int64],
    a_indices: npt.NDArray[np.int32],
    b_indptr: npt.NDArray[np.int64],
    b_indices: npt.NDArray[np.int32],
    cand: CandidateSet,
    redo: npt.NDArray[np.bool_],
) -> ProductGraph:
    """The unweighted product graph of new networks A and B over the same candidate pairs, from
    ``old`` (built over those pairs from earlier networks) with the rows of the pairs flagged in
    ``redo`` (one flag per candidate pair) built again; every other row is copied.

    The result is what :func:`build_product` gives on the new networks when ``redo`` flags every
    pair whose row changed. Pair (i, i')'s row (its out-list, when directed) reads the edges of A
    at i and of B at i' only, so an edge (arc) changed in A between i and j reaches the rows of
    the pairs of i and j, and one changed in B between i' and j' those of the pairs whose node of
    B is i' or j' (an update's patch, :mod:`aligner.analysis.update`).

    Work: the rows built again (:func:`aligner.kernels.product.product_rows` on those pairs
    alone) plus one copy of the old entries (:func:`aligner.kernels.product.splice_rows`).
    """
    redo = np.asarray(redo, dtype=bool)
    if old.weights is not None or old.m != cand.m or len(redo) != cand.m:
        raise InvalidParameterError("patch_product takes an unweighted product graph and a flag per pair over the "
                                    "same candidate pairs", param="old")
    a_indptr, b_indptr = (np.ascontiguousarray(p, dtype=np.int64) for p in (a_indptr, b_indptr))
    a_indices, b_indices = (np.ascontiguousarray(x, dtype=np.int32) for x in (a_indices, b_indices))
    # the rows to build, by node of A, in the candidates' order
    picked = cand.pairs[redo]
    per_node = np.bincount(picked[:, 0], minlength=cand.n1)
    r_indptr = np.zeros(cand.n1 + 1, dtype=np.int64)
    np.cumsum(per_node, out=r_indptr[1:])
    r_b = np.ascontiguousarray(picked[:, 1])
    nodes = np.flatnonzero(per_node)
    counts = np.zeros(len(r_b), dtype=np.int64)
    none = np.empty(0, dtype=np.float64)
    rows = product_rows(nodes, a_indptr, a_indices, b_indptr, b_indices, cand.a_indptr,
                        np.ascontiguousarray(cand.pairs[:, 1]), r_indptr, r_b, none, none, PRODUCT, counts)[0]
    indptr, indices = splice_rows(np.ascontiguousarray(old.indptr, dtype=np.int64), old.indices, redo, counts, rows)
    return ProductGraph(indptr=indptr, indices=indices, directed=old.directed)


#: :func:`product_row_lengths` counts ranges of at most about this many candidate pairs at a time
COUNT_RANGE = 1 << 22


def product_row_lengths(
    a_indptr: npt.ArrayLike,
    a_indices: npt.ArrayLike,
    b_indptr: npt.ArrayLike,
    b_indices: npt.ArrayLike,
    cand: CandidateSet,
) -> npt.NDArray[np.int64]:
    """The number of stored entries of every candidate pair's row of the product graph, as
    ``np.diff(build_product(...).indptr)`` gives it, without keeping the rows: the same kernel
    builds ranges of nodes of A (of about :data:`COUNT_RANGE` pairs at most, on parallel
    threads) and each range's rows are dropped once counted, so the memory is O(m) plus the rows
    of one range per thread.

    Examples
    --------
    >>> import numpy as np
    >>> from aligner.core.network import adjacency
    >>> from aligner.core.candidates import build_candidates
    >>> ip, ix = adjacency(np.array([[0, 1], [1, 2]]), 3)
    >>> c = build_candidates([[0, 0], [1, 1], [2, 2]], [1.0, 1.0, 1.0], 3, 3)
    >>> product_row_lengths(ip, ix, ip, ix, c).tolist()
    [1, 2, 1]
    """
    a_indptr, b_indptr = (np.ascontiguousarray(p, dtype=np.int64) for p in (a_indptr, b_indptr))
    a_indices, b_indices = (np.ascontiguousarray(x, dtype=np.int32) for x in (a_indices, b_indices))
    pair_b = np.ascontiguousarray(cand.pairs[:, 1])
    none = np.empty(0, dtype=np.float64)
    lengths = np.zeros(cand.m, dtype=np.int64)
    # ranges of about COUNT_RANGE pairs at most, whatever the threads: one range's rows are in memory at a time
    parts = max(4 * thread_count(), cand.m // COUNT_RANGE + 1)
    bounds = _ranges(_work(a_indptr, cand, len(b_indices) / max(cand.n2, 1)), parts) if cand.m else \
        np.array([0, cand.n1])

    def count(i0: int, i1: int) -> None:  # the rows of nodes i0 .. i1-1 of A, counted then dropped
        product_rows(np.arange(i0, i1), a_indptr, a_indices, b_indptr, b_indices, cand.a_indptr, pair_b, cand.a_indptr,
                     pair_b, none, none, PRODUCT,
                     lengths[cand.a_indptr[i0]: cand.a_indptr[i1]])

    with ThreadPoolExecutor(thread_count()) as pool:  # the kernel releases the GIL
        list(pool.map(count, bounds[:-1], bounds[1:]))
    return lengths


def _blocks(a_indptr: np.ndarray, cand: CandidateSet, deg_b: float) -> np.ndarray:
    """Bounds of ranges of nodes of A of about equal work for the threads of build_product (a
    few per thread, so that a busy core delays little); a single range when the work is small
    or there is one thread."""
    threads = thread_count()
    work = _work(a_indptr, cand, deg_b)
    if threads < 2 or work[-1] < PARALLEL_WORK:
        return np.array([0, cand.n1])
    return _ranges(work, 4 * threads)


def _work(a_indptr: np.ndarray, cand: CandidateSet, deg_b: float) -> np.ndarray:
    """Cumulative work up to each node of A: node i costs about (its candidates) x (mean degree
    of B) + (its neighbours) x (mean candidates per node)."""
    per_node = cand.m / max(cand.n1, 1)
    return cand.a_indptr * deg_b + a_indptr[: cand.n1 + 1] * per_node


def _ranges(work: np.ndarray, parts: int) -> np.ndarray:
    """Bounds of at most ``parts`` ranges of nodes of A of about equal ``work`` (:func:`_work`)."""
    cuts = np.searchsorted(work, work[-1] * np.arange(1, parts) / parts)
    return np.unique(np.concatenate([[0], cuts, [len(work) - 1]]))


def estimate_product_edges(
    a_indptr: npt.NDArray[np.int64],
    a_indices: npt.NDArray[np.int32],
    b_indptr: npt.NDArray[np.int64],
    b_indices: npt.NDArray[np.int32],
    cand: CandidateSet,
) -> int:
    """An upper bound on the stored product-graph entries, from degrees and candidate counts.

    For pair (i, i') the bound is min(sum over neighbours j of i of c_j, sum over neighbours j'
    of i' of c'_j', deg_A(i) * deg_B(i')), with c_j and c'_j' the numbers of candidates of node
    j of A and of node j' of B (the first two count the candidate pairs a row could reach from
    either side, so a hub of either network with many candidates is bounded alike). Cost O(m +
    |E_A| + |E_B|); used to refuse a build that would not fit in memory before any of it is
    allocated.
    """
    if cand.m == 0:
        return 0
    a_indptr = np.ascontiguousarray(a_indptr, dtype=np.int64)
    b_indptr = np.ascontiguousarray(b_indptr, dtype=np.int64)
    a_indices = np.ascontiguousarray(a_indices, dtype=np.int32)
    b_indices = np.ascontiguousarray(b_indices, dtype=np.int32)
    return int(product_bound(a_indptr, a_indices, cand.a_indptr, np.ascontiguousarray(cand.pairs[:, 1]), b_indptr,
                             b_indices))
