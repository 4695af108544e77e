"""Node identifiers as columns of strings: look-up, numbering and single entries.

Identifier columns come as numpy object arrays (from a DataFrame or a list of rows) or as
pyarrow string arrays (from the fast file reader); every function here takes either, so the
readers, the coercion of inputs and the priors share one way of naming nodes.
:func:`pairs_from_columns` maps two identifier columns onto two networks (a truth table, an
alignment).
"""

from __future__ import annotations

import weakref
from dataclasses import dataclass, field

import numpy as np
import pyarrow as pa
import pyarrow.compute as pac

__all__ = ["as_arrow_strings", "intern", "names_from_arrow", "lookup", "text_at", "PairTable", "pairs_from_columns",
           "first_shared_node"]


def as_arrow_strings(values) -> pa.Array:
    """A column of identifiers as one pyarrow string array (chunks combined, no copy if already one).

    Parameters
    ----------
    values : pyarrow.Array, pyarrow.ChunkedArray or array-like of str

    Returns
    -------
    pyarrow.Array
    """
    if isinstance(values, pa.ChunkedArray):
        return values.combine_chunks()
    if isinstance(values, pa.Array):
        return values
    if isinstance(values, np.ndarray) and values.dtype.kind == "U":
        # fixed-width text (names kept in a run's state): converted by pyarrow directly, without
        # making a Python string per entry first (10^6 names: about 0.09 s against 0.3 s)
        return pa.array(values, type=pa.string())
    return pa.array(np.asarray(values, dtype=object), type=pa.string())


#: id(names array) -> (weak reference to it, the same identifiers as a pyarrow array)
_ARROW_NAMES: dict[int, tuple[weakref.ref, pa.Array]] = {}


def _remember(names: np.ndarray, arrow: pa.Array) -> None:
    """Keep the pyarrow form of a network's ``names`` while that array lives (not copied again)."""
    key = id(names)
    _ARROW_NAMES[key] = (weakref.ref(names, lambda _, key=key: _ARROW_NAMES.pop(key, None)), arrow)


def _arrow_names(names: np.ndarray) -> pa.Array:
    """``names`` as a pyarrow string array: the one :func:`intern` made with it, else converted."""
    hit = _ARROW_NAMES.get(id(names))
    if hit is not None and hit[0]() is names:
        return hit[1]
    return as_arrow_strings(names)


def intern(a, b) -> tuple[np.ndarray, np.ndarray]:
    """Sorted unique identifiers of two columns and the index of every entry among them.

    Identifiers sort by code point (UTF-8 byte order), the same order as Python's ``sorted``.

    Parameters
    ----------
    a, b : column of str (see :func:`as_arrow_strings`)

    Returns
    -------
    names : ndarray of object
        The sorted unique identifiers of ``a`` and ``b`` together.
    codes : ndarray of int64
        Index in ``names`` of every entry of ``a`` followed by every entry of ``b``.
    """
    both = pa.concat_arrays([as_arrow_strings(a), as_arrow_strings(b)])
    if len(both) == 0:
        return np.empty(0, dtype=object), np.empty(0, dtype=np.int64)
    # one hash pass gives every entry's index among the identifiers in order of first
    # appearance; sorting those identifiers (few) renumbers the entries by rank
    enc = pac.dictionary_encode(both)
    order = pac.array_sort_indices(enc.dictionary).to_numpy(zero_copy_only=False)
    rank = np.empty(len(order), dtype=np.int64)
    rank[order] = np.arange(len(order), dtype=np.int64)
    codes = rank[enc.indices.to_numpy(zero_copy_only=False)]
    return names_from_arrow(enc.dictionary.take(order)), codes


def names_from_arrow(arrow: pa.Array) -> np.ndarray:
    """A network's identifiers (sorted, each once) as the numpy object array ``Network.names``
    holds, the pyarrow form kept beside it for later look-ups (:func:`lookup`)."""
    names = arrow.to_numpy(zero_copy_only=False).astype(object)
    _remember(names, arrow)
    return names


def lookup(names: np.ndarray, query) -> np.ndarray:
    """Index of each query identifier in ``names``, -1 where absent (a hash look-up).

    Parameters
    ----------
    names : ndarray of object
        The identifiers of a network (``Network.names``), each once.
    query : column of str (see :func:`as_arrow_strings`)

    Returns
    -------
    ndarray of int64, one entry per query identifier

    Examples
    --------
    >>> lookup(np.array(["a", "b"], dtype=object), ["b", "z"]).tolist()
    [1, -1]
    """
    if len(names) == 0:
        return np.full(len(query), -1, dtype=np.int64)
    idx = pac.index_in(as_arrow_strings(query), value_set=_arrow_names(names))
    return pac.fill_null(idx, -1).to_numpy(zero_copy_only=False).astype(np.int64)


def text_at(values, row: int) -> str:
    """Entry ``row`` of a column of identifiers (numpy or pyarrow) as a Python string."""
    v = values[int(row)]
    return v.as_py() if isinstance(v, pa.Scalar) else str(v)


@dataclass(frozen=True)
class PairTable:
    """Two columns of node pairs (a truth table or an alignment), mapped onto two networks.

    Attributes
    ----------
    pairs : ndarray of int32, shape (k, 2)
        The rows naming a node of A and a node of B, as (index in A, index in B), in row order.
    n_rows : int
        Rows given.
    n_unknown : int
        Rows naming a node missing from its network (left out of ``pairs``).
    unknown_examples : list of str
        Up to three of those rows, as ``"a / b"``.
    source : str
        Where the table came from.
    """

    pairs: np.ndarray
    n_rows: int
    n_unknown: int
    unknown_examples: list[str] = field(default_factory=list)
    source: str = "<memory>"


def first_shared_node(pairs: np.ndarray) -> tuple[int, int, int] | None:
    """Where a one-to-one table of pairs (k x 2 node indices, in row order) first breaks: the
    earliest row whose node of A (side 0) or of B (side 1) an earlier row already has, as (that
    row, the earlier row, side); None when every node is in one row only."""
    found = None
    for side in (0, 1):
        v = pairs[:, side]
        order = np.argsort(v, kind="stable")
        dup = np.flatnonzero(v[order][1:] == v[order][:-1]) + 1
        if len(dup):
            k = dup[np.argmin(order[dup])]  # the stable sort puts the earlier row with that node just before
            if found is None or order[k] < found[0]:
                found = (int(order[k]), int(order[k - 1]), side)
    return found


def pairs_from_columns(a, b, net_a, net_b, *, source: str = "<memory>") -> PairTable:
    """Map two identifier columns onto the nodes of two networks; rows naming an unknown node are counted.

    Parameters
    ----------
    a, b : column of str (see :func:`as_arrow_strings`)
        Identifiers of nodes of A and of B, row by row.
    net_a, net_b : Network
    source : str
        Where the columns came from, kept as ``PairTable.source``.

    Returns
    -------
    PairTable
    """
    ia = lookup(net_a.names, a)
    ib = lookup(net_b.names, b)
    known = (ia >= 0) & (ib >= 0)
    examples = [f"{text_at(a, r)} / {text_at(b, r)}" for r in np.flatnonzero(~known)[:3]]
    pairs = np.stack([ia[known], ib[known]], axis=1).astype(np.int32) if known.any() else np.empty((0, 2), np.int32)
    return PairTable(pairs=pairs, n_rows=len(a), n_unknown=int((~known).sum()), unknown_examples=examples,
                     source=source)
