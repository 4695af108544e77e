"""Edge-conservation and coverage measures of a one-to-one map between two networks.

One function per measure (edge correctness [1]_, induced conserved structure [2]_, the
symmetric substructure score [3]_, the largest common connected subgraph, node correctness
and the weighted variants); :func:`score_matching` computes them all.

References
----------
.. [1] O. Kuchaiev, T. Milenković, V. Memišević, W. Hayes, N. Pržulj, "Topological network
   alignment uncovers biological function and phylogeny", J. R. Soc. Interface 7 (2010)
   1341-1354. doi:10.1098/rsif.2010.0063
.. [2] R. Patro, C. Kingsford, "Global network alignment using multiscale spectral
   signatures", Bioinformatics 28 (2012) 3105-3114. doi:10.1093/bioinformatics/bts592
.. [3] V. Saraph, T. Milenković, Bioinformatics 30 (2014) 2931-2940 (the symmetric
   substructure score). doi:10.1093/bioinformatics/btu409
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field

import numpy as np
import numpy.typing as npt

from aligner.errors import InvalidParameterError
from aligner.kernels.product import thread_count
from aligner.kernels.scoring import largest_component, mapped_edge_rows

__all__ = ["Scores", "score_matching", "node_correctness", "share_correct", "edge_correctness",
           "induced_conserved_structure", "symmetric_substructure", "induced_edges", "largest_common_component", "conserved_weight"]


@dataclass(frozen=True)
class Scores:
    """Scores of a map f from nodes of A to nodes of B.

    Attributes
    ----------
    conserved_edges : int
        Edges (u, v) of A with both ends mapped and (f(u), f(v)) an edge of B.
    ec : float
        Edge correctness, conserved / min(|E_A|, |E_B|) (Kuchaiev et al. 2010).
    ics : float
        Induced conserved structure, conserved / |E(B[f(V_A)])|, the edges of B among the
        image of the mapped nodes (Patro & Kingsford 2012).
    s3 : float
        Symmetric substructure score, conserved / (|E_A| + |E(B[f(V_A)])| - conserved)
        (Saraph & Milenković 2014).
    lccs_nodes, lccs_edges : int
        Nodes and edges of the largest connected component of the conserved subgraph.
    nc : float or None
        Node correctness against a truth table, when one is given.
    conserved_weight, weighted_ec : float or None
        Weighted networks: the summed conserved weight, sum over conserved edges e of
        min(w_A(e), w_B(f(e))) (the weight both networks agree on), and weighted edge
        correctness, conserved_weight / min(W_A, W_B) with W the total edge weights. With
        unit weights they are the conserved edges and EC.
    directed : bool
        Whether edges were counted as arcs: (u, v) conserved only onto the arc (f(u), f(v)).
    n_matched : int
        Number of mapped nodes.
    induced_edges_b : int
        |E(B[f(V_A)])|.
    """

    conserved_edges: int
    ec: float
    ics: float
    s3: float
    lccs_nodes: int
    lccs_edges: int
    n_matched: int
    induced_edges_b: int
    n_edges_a: int
    n_edges_b: int
    nc: float | None = None
    nc_detail: dict = field(default_factory=dict)
    conserved_weight: float | None = None
    weighted_ec: float | None = None
    directed: bool = False

    def as_dict(self) -> dict:
        return {
            "conserved_edges": self.conserved_edges,
            "ec": self.ec,
            "ics": self.ics,
            "s3": self.s3,
            "lccs_nodes": self.lccs_nodes,
            "lccs_edges": self.lccs_edges,
            "nc": self.nc,
            "n_matched": self.n_matched,
            "induced_edges_b": self.induced_edges_b,
            "edges_a": self.n_edges_a,
            "edges_b": self.n_edges_b,
        } | ({"directed": True} if self.directed else {}) | (
            {} if self.conserved_weight is None else {"conserved_weight": self.conserved_weight,
                                                       "weighted_ec": self.weighted_ec})


def _ends(edges: npt.ArrayLike) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.int64]]:
    """The two end columns of an edge list, each a contiguous int64 array (what the kernels take)."""
    e = np.asarray(edges, dtype=np.int64).reshape(-1, 2)
    return np.ascontiguousarray(e[:, 0]), np.ascontiguousarray(e[:, 1])


def _key_order(edges_b: npt.NDArray[np.int64], directed: bool):
    """B's edges as keys (first end, second end), undirected ones as (min, max), in key order
    (ties in row order), and the rows in that order (None when already in it, as canonical
    edge lists are)."""
    u, v = _ends(edges_b)
    lo, hi = (u, v) if directed else (np.minimum(u, v), np.maximum(u, v))
    step = np.diff(lo)
    if (step >= 0).all() and (np.diff(hi)[step == 0] >= 0).all():
        return lo, hi, None
    order = np.lexsort((hi, lo))  # stable: ties keep their row order
    return lo[order], hi[order], order


#: from this many edges of A on, :func:`conserved_image` looks them up on two threads
PARALLEL_EDGES = 500_000


def _mapped_rows(u, v, f, indptr, col, directed: bool) -> npt.NDArray[np.int64]:
    """:func:`aligner.kernels.scoring.mapped_edge_rows`, the two halves of the edges on two
    threads when there are many (the kernel releases the GIL; each edge's answer is its own, so
    the result is that of one pass)."""
    if thread_count() < 2 or len(u) < PARALLEL_EDGES:
        return mapped_edge_rows(u, v, f, indptr, col, directed)
    half = len(u) // 2
    with ThreadPoolExecutor(2) as pool:
        parts = pool.map(lambda lo, hi: mapped_edge_rows(u[lo:hi], v[lo:hi], f, indptr, col, directed),
                         (0, half), (half, len(u)))
        return np.concatenate(list(parts))


def conserved_image(
    edges_a: npt.NDArray[np.integer], edges_b: npt.NDArray[np.integer], f: npt.NDArray[np.int64], n2: int,
    directed: bool = False,
) -> npt.NDArray[np.int64]:
    """For every edge of A, the row of ``edges_b`` it is carried onto by ``f``, or -1.

    ``f`` maps nodes of A to nodes of B (-1 = unmapped). Directed: (u, v) is conserved only
    onto the arc (f(u), f(v)). Should ``edges_b`` repeat an edge, the first row holding it is
    named. B's edges are put in key order (a check only, for a canonical edge list) and each
    edge of A is looked up by binary search: in one compiled pass among B's edges grouped by
    first end (O(|E_A| log d + |E_B| + n2)), or, when n2 is far larger than the edge and
    node arrays (so no array of n2 entries is made), among all keys (O(|E_A| log |E_B|)).
    """
    out = np.full(len(edges_a), -1, dtype=np.int64)
    if len(edges_a) == 0 or len(edges_b) == 0:
        return out
    ea = np.asarray(edges_a, dtype=np.int64).reshape(-1, 2)
    f = np.ascontiguousarray(f, dtype=np.int64)
    lo, hi, order = _key_order(np.asarray(edges_b, dtype=np.int64).reshape(-1, 2), directed)
    if n2 <= 2 * (len(lo) + len(f)):
        indptr = np.zeros(n2 + 1, dtype=np.int64)
        np.cumsum(np.bincount(lo, minlength=n2), out=indptr[1:])
        pos = _mapped_rows(*_ends(ea), f, indptr, np.ascontiguousarray(hi), directed)
    else:
        keys, pos = lo * n2 + hi, out.copy()
        fu, fv = f[ea[:, 0]], f[ea[:, 1]]
        both = np.flatnonzero((fu >= 0) & (fv >= 0))
        a, b = (fu[both], fv[both]) if directed else (np.minimum(fu[both], fv[both]), np.maximum(fu[both], fv[both]))
        at = np.minimum(np.searchsorted(keys, a * n2 + b), len(keys) - 1)
        hit = keys[at] == a * n2 + b
        pos[both[hit]] = at[hit]
    return pos if order is None else np.where(pos >= 0, order[np.maximum(pos, 0)], -1)


def image_after_moves(
    edges_a: npt.NDArray[np.integer], edges_b: npt.NDArray[np.integer], image: npt.NDArray[np.int64],
    f_from: npt.NDArray[np.int64], f_to: npt.NDArray[np.int64], n2: int, directed: bool = False,
) -> npt.NDArray[np.int64]:
    """:func:`conserved_image` of ``edges_a`` under the map ``f_to``, from ``image``, the same
    edges' image under ``f_from``: an edge's image depends only on its ends' partners, so only
    the edges with an end whose partner differs are looked up again (a matching and its refined
    or updated successor differ at few nodes). Both maps are arrays over the nodes of A
    (-1 = unmapped)."""
    ea = np.asarray(edges_a, dtype=np.int64).reshape(-1, 2)
    moved = np.asarray(f_from) != np.asarray(f_to)
    out = np.array(image, dtype=np.int64)
    if not moved.any() or len(ea) == 0:
        return out
    rows = np.flatnonzero(moved[ea[:, 0]] | moved[ea[:, 1]])
    out[rows] = conserved_image(ea[rows], edges_b, f_to, n2, directed)
    return out


def conserved_mask(
    edges_a: npt.NDArray[np.integer], edges_b: npt.NDArray[np.integer], f: npt.NDArray[np.int64], n2: int,
    directed: bool = False,
) -> npt.NDArray[np.bool_]:
    """For every edge of A, whether the map ``f`` (``-1`` = unmapped) carries it onto an edge of B."""
    return conserved_image(edges_a, edges_b, f, n2, directed) >= 0


def partner_map(matched: npt.NDArray[np.int64], n1: int) -> npt.NDArray[np.int64]:
    """The map f as an array over the nodes of A: f[i] = partner of i, -1 when unmatched."""
    f = np.full(n1, -1, dtype=np.int64)
    f[matched[:, 0]] = matched[:, 1]
    return f


def _ratio(num: float, den: float) -> float:
    """``num / den``, or 0.0 when the denominator is not positive."""
    return num / den if den > 0 else 0.0


def node_correctness(matched: npt.NDArray[np.integer], truth: npt.NDArray[np.integer], n1: int) -> tuple[float, dict]:
    """Share of the nodes of A named in the truth table that are mapped to a true partner.

    A node may have several true partners (after gene duplications, say); it counts as
    correct when its image is any of them. With a one-to-one truth table this is the usual
    node correctness: correctly mapped nodes / nodes with a known partner.
    """
    truth = np.asarray(truth, dtype=np.int64).reshape(-1, 2)
    if len(truth) == 0:
        return float("nan"), {"truth_nodes": 0, "correct": 0}
    f = partner_map(np.asarray(matched, dtype=np.int64).reshape(-1, 2), n1)
    return share_correct(truth, f[truth[:, 0]] == truth[:, 1], n1)


def share_correct(truth: npt.NDArray[np.int64], hit: npt.NDArray[np.bool_], n1: int) -> tuple[float, dict]:
    """The share of the nodes of A named in ``truth`` (rows node of A, node of B) with at least
    one row ``hit``: node correctness, however a row's hit was decided."""
    named = np.zeros(n1, dtype=bool)  # distinct nodes by marking: no sort
    named[truth[:, 0]] = True
    right = np.zeros(n1, dtype=bool)
    right[truth[hit, 0]] = True
    nodes, correct = int(np.count_nonzero(named)), int(np.count_nonzero(right))
    return correct / nodes, {"truth_nodes": nodes, "correct": correct}


def edge_correctness(conserved: int, n_edges_a: int, n_edges_b: int) -> float:
    """EC: conserved edges over the smaller edge count, min(|E_A|, |E_B|) (reference 1 of the module)."""
    return _ratio(conserved, min(n_edges_a, n_edges_b))


def induced_conserved_structure(conserved: int, induced_edges_b: int) -> float:
    """ICS: conserved edges over |E(B[f(V_A)])|, the edges of B among the image (reference 2)."""
    return _ratio(conserved, induced_edges_b)


def symmetric_substructure(conserved: int, n_edges_a: int, induced_edges_b: int) -> float:
    """S3: conserved / (|E_A| + |E(B[f(V_A)])| - conserved) (reference 3)."""
    return _ratio(conserved, n_edges_a + induced_edges_b - conserved)


def induced_edges(edges_b: npt.NDArray[np.int64], image: npt.NDArray[np.int64], n2: int) -> int:
    """|E(B[image])|: the edges of B with both ends among the nodes ``image``."""
    if len(edges_b) == 0:
        return 0
    inside = np.zeros(n2, dtype=bool)
    inside[image] = True
    return int((inside[edges_b[:, 0]] & inside[edges_b[:, 1]]).sum())


def largest_common_component(edges_a: npt.NDArray[np.int64], cons: npt.NDArray[np.bool_], n1: int) -> tuple[int, int]:
    """Nodes and edges of the largest (weakly) connected component of the conserved edges of A.

    Of components of as many nodes, the one with the most edges is taken (the subgraph is the
    largest by nodes, then by edges); of those, the one holding the lowest-numbered node.
    """
    nodes, edges = largest_component(*_ends(edges_a), np.ascontiguousarray(cons, dtype=np.bool_), n1)
    return int(nodes), int(edges)


def conserved_weight(weights_a: npt.ArrayLike, weights_b: npt.ArrayLike,
                     image_row: npt.NDArray[np.int64]) -> tuple[float, float]:
    """Summed conserved weight, sum of min(w_A(e), w_B(f(e))) over conserved edges e, and
    weighted EC, that sum over min(W_A, W_B); ``image_row`` is :func:`conserved_image`'s."""
    wa = np.asarray(weights_a, dtype=np.float64)
    wb = np.asarray(weights_b, dtype=np.float64)
    cons = image_row >= 0
    cw = float(np.minimum(wa[cons], wb[image_row[cons]]).sum())
    return cw, _ratio(cw, min(float(wa.sum()), float(wb.sum())))


def score_matching(
    edges_a: npt.NDArray[np.integer],
    edges_b: npt.NDArray[np.integer],
    matched: npt.NDArray[np.integer],
    n1: int,
    n2: int,
    *,
    truth: npt.NDArray[np.integer] | None = None,
    directed: bool = False,
    weights_a: npt.NDArray[np.float64] | None = None,
    weights_b: npt.NDArray[np.float64] | None = None,
    image: npt.NDArray[np.int64] | None = None,
) -> tuple[Scores, npt.NDArray[np.bool_]]:
    """Score a one-to-one map given as matched pairs.

    Parameters
    ----------
    edges_a, edges_b : ndarray of int, shape (E, 2)
        The undirected simple edge lists of A and B, each edge once.
    matched : ndarray of int, shape (k, 2)
        Matched pairs (node of A, node of B), one-to-one.
    n1, n2 : int
        Node counts.
    truth : ndarray of int, shape (T, 2), optional
        Known true pairs, for node correctness.
    directed : bool
        The edge lists are arcs (u, v): an arc is conserved only onto the arc (f(u), f(v)),
        and EC, ICS and S3 count arcs. The largest common connected subgraph is then weakly
        connected.
    weights_a, weights_b : ndarray, optional
        Edge weights (both or neither), for the weighted variants (conserved weight,
        weighted EC; see :class:`Scores`).
    image : ndarray of int64, shape (|E_A|,), optional
        :func:`conserved_image` of these edges under this map, when the caller has it already
        (computed here otherwise).

    Returns
    -------
    scores : Scores
    conserved : ndarray of bool, shape (|E_A|,)
        Which edges of A are conserved.

    Notes
    -----
    Cost O((|E_A| + |E_B|) log |E_B|). The ratios are 0 when their denominator is 0. The
    measures and their sources are listed in :mod:`aligner.core.scoring`.

    Examples
    --------
    >>> import numpy as np
    >>> e = np.array([[0, 1], [1, 2]])
    >>> s, _ = score_matching(e, e, np.array([[0, 0], [1, 1], [2, 2]]), 3, 3)
    >>> s.conserved_edges, s.ec, s.s3
    (2, 1.0, 1.0)
    """
    if (weights_a is None) != (weights_b is None):
        given = "weights_a" if weights_b is None else "weights_b"
        raise InvalidParameterError("weights_a and weights_b must be given together or not at all; "
                                    f"got {given} only", param=given)
    edges_a = np.asarray(edges_a, dtype=np.int64).reshape(-1, 2)
    edges_b = np.asarray(edges_b, dtype=np.int64).reshape(-1, 2)
    matched = np.asarray(matched, dtype=np.int64).reshape(-1, 2)
    image_row = conserved_image(edges_a, edges_b, partner_map(matched, n1), n2, directed) if image is None else image
    cons = image_row >= 0
    c = int(cons.sum())
    cw, wec = (None, None) if weights_a is None else conserved_weight(weights_a, weights_b, image_row)
    induced = induced_edges(edges_b, matched[:, 1], n2)
    ea, eb = len(edges_a), len(edges_b)
    lccs_nodes, lccs_edges = largest_common_component(edges_a, cons, n1)
    nc, detail = (None, {}) if truth is None else node_correctness(matched, truth, n1)
    return Scores(
        conserved_edges=c, ec=edge_correctness(c, ea, eb), ics=induced_conserved_structure(c, induced),
        s3=symmetric_substructure(c, ea, induced), lccs_nodes=lccs_nodes, lccs_edges=lccs_edges,
        n_matched=len(matched), induced_edges_b=induced, n_edges_a=ea, n_edges_b=eb, nc=nc, nc_detail=detail,
        conserved_weight=cw, weighted_ec=wec, directed=directed,
    ), cons


def conserved_per_node(edges_a: npt.NDArray[np.integer], cons: npt.NDArray[np.bool_], n1: int) -> npt.NDArray[np.int64]:
    """Number of conserved edges at each node of A."""
    ce = np.asarray(edges_a)[cons]
    return np.bincount(ce.ravel(), minlength=n1) if len(ce) else np.zeros(n1, dtype=np.int64)
