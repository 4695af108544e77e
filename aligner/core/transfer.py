"""Interactions carried across an alignment: the edges of one network whose image through the
matching is not an edge of the other, each with a support score.

Carrying an interaction from one species to another through a map of corresponding nodes is the
"interolog" idea of [1]_, made systematic in [2]_: when u ~ u' and v ~ v' and u, v interact in
one network, u', v' are predicted to interact in the other. :func:`transferred_edges` lists
every such prediction a one-to-one matching makes in both directions (A to B and B to A) and
ranks them by how much of the evidence the alignment already holds agrees with them:

    support = confidence_1 * confidence_2 * (1 + triangles)

``confidence_1`` and ``confidence_2`` are the confidences of the two end pairs
(:func:`aligner.core.confidence.matching_confidence`, in [0, 1]: how much the matching would lose
by giving the pair up; the product discounts the prediction by how firmly both end pairs are
held, since it is wrong as soon as either end is); ``triangles`` counts the matched pairs (w, w') with w a common neighbour of the
two ends in A and w' a common neighbour of the two ends in B, i.e. the conserved triangles the
carried edge would close. The edge itself is one line of evidence, each conserved two-step path
between the same two pairs another. Ties are broken by the conserved triangles (more first: a
support of 0, from an end pair exchangeable at no loss, says nothing of the wiring), then by
the smaller diffusion score of the two end pairs (higher first), then the direction (A to B
first) and the node numbers (which follow the names' sorted order).

All of it is vectorised numpy over the integer edge arrays, plus the compiled look-up of
:mod:`aligner.kernels.scoring`; common neighbours are counted by walking the neighbour list of the
lower-degree end of each row, in chunks of bounded size.

References
----------
.. [1] A. J. M. Walhout et al., "Protein interaction mapping in C. elegans using proteins
   involved in vulval development", Science 287 (2000) 116-122. doi:10.1126/science.287.5450.116
.. [2] H. Yu et al., "Annotation transfer between genomes: protein-protein interologs and
   protein-DNA regulogs", Genome Research 14 (2004) 1107-1118. doi:10.1101/gr.1774904
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from aligner.core.scoring import conserved_image, partner_map
from aligner.kernels.scoring import mapped_edge_rows

__all__ = ["A_TO_B", "B_TO_A", "DIRECTIONS", "Transfer", "transferred_edges", "common_neighbours", "transfer_counts"]

#: direction codes of :attr:`Transfer.direction` and their names in the output table
A_TO_B, B_TO_A = 0, 1
DIRECTIONS = ("A->B", "B->A")
#: neighbour entries walked at once when counting common neighbours (bounds the work arrays)
_CHUNK = 1 << 21

I64 = npt.NDArray[np.int64]
F64 = npt.NDArray[np.float64]


@dataclass(frozen=True, eq=False)
class Transfer:
    """The carried edges, best first, one entry per edge in every array.

    Attributes
    ----------
    direction : ndarray of int8
        :data:`A_TO_B` (an edge of A whose image is not an edge of B) or :data:`B_TO_A`.
    a1, a2, b1, b2 : ndarray of int64
        The two matched pairs (a1, b1) and (a2, b2). A to B: (a1, a2) is the edge of A as
        listed (the arc a1 -> a2 when directed); B to A: (b1, b2) is the edge of B.
    edge_row : ndarray of int64
        Row of the carried edge in the edge list it comes from (A's or B's), for its weight.
    confidence_1, confidence_2, score_1, score_2 : ndarray of float64
        Confidence and diffusion score of the pairs (a1, b1) and (a2, b2).
    triangles : ndarray of int64
        Matched pairs (w, w') with w adjacent to a1 and a2 in A and w' adjacent to b1 and b2 in
        B (undirected views of directed networks).
    common_neighbours : ndarray of int64
        Matched nodes adjacent to both ends on the receiving side (b1, b2 in B for A to B; a1,
        a2 in A for B to A), whatever their partners' wiring.
    support : ndarray of float64
        ``confidence_1 * confidence_2 * (1 + triangles)``.
    """

    direction: npt.NDArray[np.int8]
    a1: I64
    a2: I64
    b1: I64
    b2: I64
    edge_row: I64
    confidence_1: F64
    confidence_2: F64
    score_1: F64
    score_2: F64
    triangles: I64
    common_neighbours: I64
    support: F64

    def __len__(self) -> int:
        return len(self.direction)

    def counts(self) -> dict[str, int]:
        """Rows per direction: ``{"a_to_b": ..., "b_to_a": ...}``."""
        n_ab = int(np.count_nonzero(self.direction == A_TO_B))
        return {"a_to_b": n_ab, "b_to_a": len(self) - n_ab}


def _i64(a) -> I64:
    return np.ascontiguousarray(a, dtype=np.int64)


def _adjacent(indptr: I64, col: I64, f: I64, x: I64, y: I64) -> npt.NDArray[np.bool_]:
    """Whether (f(x), f(y)) is an entry of the CSR (indptr, col) with sorted rows (f = -1: no)."""
    return mapped_edge_rows(_i64(x), _i64(y), f, indptr, col, True) >= 0


def _walk(indptr: I64, col: I64, s: I64):
    """For chunks of rows lo..hi-1: (lo, hi, q, w), every neighbour w of s[q] once."""
    deg = indptr[s + 1] - indptr[s]
    cum = np.cumsum(deg)
    lo = 0
    while lo < len(s):
        base = int(cum[lo - 1]) if lo else 0
        hi = max(lo + 1, int(np.searchsorted(cum, base + _CHUNK, side="right")))
        c = deg[lo:hi]
        total = int(cum[hi - 1]) - base
        q = np.repeat(np.arange(lo, hi, dtype=np.int64), c)
        start = np.repeat(indptr[s[lo:hi]] - (np.cumsum(c) - c), c)  # entry k of row q sits at start + k
        yield lo, hi, q, col[start + np.arange(total, dtype=np.int64)]
        lo = hi


def common_neighbours(indptr: npt.ArrayLike, indices: npt.ArrayLike, x: npt.ArrayLike, y: npt.ArrayLike,
                      keep: npt.NDArray[np.bool_] | None = None) -> I64:
    """For each row, the nodes w with ``keep[w]`` adjacent to both x and y in the symmetric CSR
    adjacency (indptr, indices) with sorted neighbour lists (``keep`` None: every node)."""
    indptr, col = _i64(indptr), _i64(indices)
    x, y = _i64(x), _i64(y)
    deg = np.diff(indptr)
    s = np.where(deg[x] <= deg[y], x, y)  # walk the shorter list, look up in the other
    o = x + y - s
    ident = np.arange(len(deg), dtype=np.int64)
    out = np.zeros(len(x), dtype=np.int64)
    for lo, hi, q, w in _walk(indptr, col, s):
        if keep is not None:
            ok = keep[w]
            q, w = q[ok], w[ok]
        hit = _adjacent(indptr, col, ident, o[q], w)
        out[lo:hi] = np.bincount(q[hit] - lo, minlength=hi - lo)
    return out


def _triangles(adj_a: tuple[I64, I64], adj_b: tuple[I64, I64], f: I64, a1: I64, a2: I64) -> I64:
    """For each row, the nodes w of A adjacent to a1 and a2 with f(w) adjacent to f(a1) and f(a2) in B."""
    (ip_a, col_a), (ip_b, col_b) = adj_a, adj_b
    deg = np.diff(ip_a)
    s = np.where(deg[a1] <= deg[a2], a1, a2)
    o = a1 + a2 - s
    ident = np.arange(len(deg), dtype=np.int64)
    out = np.zeros(len(a1), dtype=np.int64)
    for lo, hi, q, w in _walk(ip_a, col_a, s):
        ok = f[w] >= 0
        q, w = q[ok], w[ok]
        ok = _adjacent(ip_a, col_a, ident, o[q], w)  # w is a common neighbour in A
        q, w = q[ok], w[ok]
        ok = _adjacent(ip_b, col_b, f, s[q], w)
        q, w = q[ok], w[ok]
        ok = _adjacent(ip_b, col_b, f, o[q], w)  # and its partner one in B
        out[lo:hi] = np.bincount(q[ok] - lo, minlength=hi - lo)
    return out


def _carried(ea: I64, eb: I64, f: I64, g: I64, n2: int, directed: bool, image: I64 | None) -> tuple[I64, I64]:
    """Rows of ``ea`` with both ends mapped by f whose image is not an edge of ``eb``, and rows
    of ``eb`` with both ends mapped by g = f^-1 whose preimage is not an edge of ``ea``.

    One look-up serves both: f is one-to-one, so an edge of B between matched nodes has an edge
    of A as preimage exactly when that edge of A is carried onto it.
    """
    if image is None:
        image = conserved_image(ea, eb, f, n2, directed)
    rows_a = np.flatnonzero((f[ea[:, 0]] >= 0) & (f[ea[:, 1]] >= 0) & (image < 0))
    reached = np.zeros(len(eb), dtype=bool)
    reached[image[image >= 0]] = True
    rows_b = np.flatnonzero((g[eb[:, 0]] >= 0) & (g[eb[:, 1]] >= 0) & ~reached)
    return rows_a, rows_b


def transfer_counts(edges_a: npt.ArrayLike, edges_b: npt.ArrayLike, matched: npt.ArrayLike, n1: int, n2: int,
                    conserved: int) -> dict[str, int]:
    """Rows per direction of :func:`transferred_edges` without listing them: the edges among the
    matched nodes of each network less the conserved ones (a one-to-one map carries the conserved
    edges of A onto exactly the edges of B whose preimage is an edge of A)."""
    matched = np.asarray(matched, dtype=np.int64).reshape(-1, 2)
    out = {}
    for key, edges, side, n in (("a_to_b", edges_a, 0, n1), ("b_to_a", edges_b, 1, n2)):
        e = np.asarray(edges).reshape(-1, 2)
        inside = np.zeros(n, dtype=bool)
        inside[matched[:, side]] = True
        out[key] = int(np.count_nonzero(inside[e[:, 0]] & inside[e[:, 1]])) - int(conserved)
    return out


#: supports that agree to this many significant bits (relative 1.5e-11) are ties in the order:
#: confidences equal in exact arithmetic come out of sums in different orders a few units in
#: the last place apart, and rows written with the same support were otherwise ordered by that
TIE_BITS = 36


def _significant(v: np.ndarray) -> np.ndarray:
    """``v`` (finite) rounded to :data:`TIE_BITS` significant bits."""
    m, e = np.frexp(v)
    return np.ldexp(np.round(m * 2.0 ** TIE_BITS), e - TIE_BITS)


def transferred_edges(
    edges_a: npt.ArrayLike, edges_b: npt.ArrayLike, adj_a: tuple, adj_b: tuple, matched: npt.ArrayLike,
    confidence: npt.ArrayLike, score: npt.ArrayLike, n1: int, n2: int, *, directed: bool = False,
    image: npt.ArrayLike | None = None,
) -> Transfer:
    """The edges each network has and the other lacks under a one-to-one matching, best first.

    Parameters
    ----------
    edges_a, edges_b : ndarray of int, shape (E, 2)
        The edges the scores count (arcs when ``directed``), each once.
    adj_a, adj_b : (indptr, indices)
        Symmetric CSR adjacency of each network's undirected view, neighbour lists sorted: where
        triangles and common neighbours are counted.
    matched : ndarray of int, shape (k, 2)
        Matched pairs (node of A, node of B), one-to-one.
    confidence, score : ndarray of float, shape (k,)
        Each matched pair's confidence and diffusion score, in the order of ``matched``.
    n1, n2 : int
        Node counts.
    directed : bool
        Arcs keep their direction: an arc of A is carried when the arc (f(u), f(v)) is missing
        from B, even if (f(v), f(u)) is there.
    image : ndarray of int, shape (|E_A|,), optional
        :func:`aligner.core.scoring.conserved_image` of ``edges_a`` under this matching, when the
        caller has it from scoring (looked up here otherwise).

    Returns
    -------
    Transfer
        Ordered by support (highest first; compared rounded to :data:`TIE_BITS` significant bits,
        so that two supports apart by rounding alone tie), then conserved triangles
        (more first: among rows of equal support, more evidence), then the smaller diffusion
        score of the two pairs (highest first), then direction, a1, a2, b1, b2 (ascending).

    Examples
    --------
    >>> import numpy as np
    >>> from aligner.core.network import adjacency
    >>> ea = np.array([[0, 1], [0, 2], [1, 2]]); eb = np.array([[0, 1], [0, 2]])
    >>> t = transferred_edges(ea, eb, adjacency(ea, 3)[:2], adjacency(eb, 3)[:2], np.array([[0, 0], [1, 1], [2, 2]]),
    ...                       np.ones(3), np.ones(3), 3, 3)
    >>> t.a1.tolist(), t.a2.tolist(), t.triangles.tolist(), t.support.tolist()
    ([1], [2], [1], [2.0])
    """
    ea = np.asarray(edges_a, dtype=np.int64).reshape(-1, 2)
    eb = np.asarray(edges_b, dtype=np.int64).reshape(-1, 2)
    matched = np.asarray(matched, dtype=np.int64).reshape(-1, 2)
    adj_a, adj_b = (_i64(adj_a[0]), _i64(adj_a[1])), (_i64(adj_b[0]), _i64(adj_b[1]))
    f, g = partner_map(matched, n1), partner_map(matched[:, ::-1], n2)  # A -> B and B -> A
    rows_a, rows_b = _carried(ea, eb, f, g, n2, directed, None if image is None else _i64(image))
    a1 = np.concatenate([ea[rows_a, 0], g[eb[rows_b, 0]]])
    a2 = np.concatenate([ea[rows_a, 1], g[eb[rows_b, 1]]])
    b1, b2 = f[a1], f[a2]
    direction = np.repeat(np.array([A_TO_B, B_TO_A], dtype=np.int8), [len(rows_a), len(rows_b)])
    conf_at = np.zeros(n1)
    conf_at[matched[:, 0]] = np.asarray(confidence, dtype=np.float64)
    x_at = np.zeros(n1)
    x_at[matched[:, 0]] = np.asarray(score, dtype=np.float64)
    c1, c2, x1, x2 = conf_at[a1], conf_at[a2], x_at[a1], x_at[a2]
    tri = _triangles(adj_a, adj_b, f, a1, a2)
    ab = direction == A_TO_B
    common = np.empty(len(a1), dtype=np.int64)
    common[ab] = common_neighbours(*adj_b, b1[ab], b2[ab], keep=g >= 0)
    common[~ab] = common_neighbours(*adj_a, a1[~ab], a2[~ab], keep=f >= 0)
    support = c1 * c2 * (1 + tri)
    order = np.lexsort((b2, b1, a2, a1, direction, -np.minimum(x1, x2), -tri, -_significant(support)))
    return Transfer(direction[order], a1[order], a2[order], b1[order], b2[order],
                    np.concatenate([rows_a, rows_b])[order], c1[order], c2[order], x1[order], x2[order],
                    tri[order], common[order], support[order])
