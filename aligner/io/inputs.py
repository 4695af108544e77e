"""From whatever a caller holds to the canonical objects the stages take.

Every input of the pipeline can be a path, a pandas DataFrame, a networkx graph (networks only),
an iterable of rows, a mapping (key -> value, as two columns), or an object already read.
:func:`as_table` is the one place that turns a path or an object into columns, with the name
of its source for messages; each ``as_*`` function here (and
:func:`aligner.priors.seeds.as_seeds`, :func:`aligner.priors.labels.label_prior`) goes through
it, so the readers only parse and the stages only compute.
"""

from __future__ import annotations

import dataclasses
import os
from collections.abc import Mapping
from typing import Callable

import numpy as np
import pandas as pd

from aligner.checks import warn
from aligner.core.network import Network
from aligner.errors import InputFormatError, InvalidParameterError, NoCandidatesError
from aligner.core.identifiers import PairTable, first_shared_node, lookup, pairs_from_columns
from aligner.io.readers import (FIELD_BLANKS, Columns, Table, check_skipped_header, checked_network, network_from_table,
                                prior_pick, read_network, read_table, score_column_name,
                                warn_score_kind)
from aligner.core.prior import PriorTable, prior_from_columns

__all__ = ["as_table", "as_network", "as_prior", "as_pairs", "as_alignment", "known_pairs", "prior_notes"]


def as_table(obj, *, name: str, layout: str, min_cols: int, max_cols: int, what: str = "table",
             delimiter: str | None = None, header: str = "auto", source: str | None = None,
             read: Callable[[str], object] | None = None, pick: Columns | None = None,
             required: int | None = None, text_cols: int = 2) -> Table:
    """Columns of a table from a path, a DataFrame, a mapping or Series, or an iterable of rows.

    Parameters
    ----------
    obj : path, DataFrame, Mapping, Series or iterable of rows
        A path is read with :func:`aligner.io.readers.read_table` (or ``read``); a DataFrame
        gives its first ``max_cols`` columns; a mapping or Series gives two columns, its keys
        (index) and its values; an iterable gives one row per item (a tuple or list of
        ``min_cols`` to ``max_cols`` values).
    name : str
        The keyword the caller passed ``obj`` as ("prior", "seeds"), for messages.
    layout : str
        The columns expected, for messages ("node_a, node_b, score").
    min_cols, max_cols : int
        The number of columns allowed; a DataFrame's columns beyond ``max_cols`` are ignored.
    what : str
        What the table is ("prior table"), for the messages of the file reader.
    delimiter, header
        How to read a file (see :func:`aligner.io.readers.read_table`).
    source : str, optional
        The name of an object's table in messages; default ``<name>``.
    read : callable, optional
        Reads a path instead of ``read_table``; what it returns is taken as the object, with
        the path as its source.
    pick : Columns, optional
        Take these columns, in this order, by 1-based position or by name (a file's header, a
        DataFrame's column names; rows have no names); ``min_cols`` and ``max_cols`` then do not
        apply. ``required`` and ``text_cols``: see :func:`aligner.io.readers.read_table`.

    Returns
    -------
    Table
        Its ``where(row)`` names a file line or an object's row (1-based) in messages.

    Raises
    ------
    InvalidParameterError
        ``obj`` is of no accepted type, or has too few columns; ``param`` is ``name``.
    InputFormatError
        A file is malformed (see :func:`aligner.io.readers.read_table`).
    """
    if isinstance(obj, (str, os.PathLike)):
        if read is None:
            return read_table(obj, min_cols=min_cols, max_cols=max_cols, delimiter=delimiter, header=header,
                              what=what, pick=pick, required=required, text_cols=text_cols)
        source, obj = os.fspath(obj), read(os.fspath(obj))
    source = source or f"<{name}>"
    if pick is not None:
        return _picked_table(obj, pick, name=name, source=source)
    if isinstance(obj, pd.DataFrame):
        if obj.shape[1] < min_cols:
            raise InvalidParameterError(f"{name} must have at least {min_cols} columns ({layout}); got "
                                        f"{obj.shape[1]}", param=name)
        return Table(tuple(obj.iloc[:, k].to_numpy() for k in range(min(obj.shape[1], max_cols))), source)
    if isinstance(obj, (Mapping, pd.Series)) and min_cols <= 2 <= max_cols:
        s = pd.Series(obj, dtype=object) if not isinstance(obj, pd.Series) else obj
        return Table((s.index.to_numpy(dtype=object), s.to_numpy(dtype=object)), source)
    return _rows_table(obj, name=name, layout=layout, min_cols=min_cols, max_cols=max_cols, source=source)


def _picked_table(obj, pick: Columns, *, name: str, source: str) -> Table:
    """:func:`as_table` for an object with ``pick``: a DataFrame's columns by name or position, rows' by position."""
    if isinstance(obj, pd.DataFrame):
        use = pick.positions([str(c) for c in obj.columns], obj.shape[1], where=f"the DataFrame {name}")
        cols = tuple(obj.iloc[:, k].to_numpy() for k in use)
    else:
        if pick.by_name:
            raise InvalidParameterError(f"{pick.keyword}={pick.text!r} picks columns by name, but the {name} is "
                                        "rows, which have no column names; pick them by position (1-based) or "
                                        "pass a DataFrame", param=pick.keyword)
        need = max(pick.items) + 1
        table = _rows_table(obj, name=name, layout=f"at least {need} values", min_cols=need, max_cols=1 << 16,
                            source=source)
        use = pick.positions(None, len(table.columns), where=f"the {name}")
        cols = tuple(table.columns[k] for k in use)
    return Table(cols, source, picked=tuple(use), pick=pick)


def _rows_table(obj, *, name: str, layout: str, min_cols: int, max_cols: int, source: str) -> Table:
    """:func:`as_table` for an iterable of rows."""
    must = f"a path, a pandas DataFrame or an iterable of rows ({layout})"
    if isinstance(obj, (bytes, Network)):
        raise InvalidParameterError(f"{name} must be {must}; got {type(obj).__name__}", param=name)
    try:
        rows = list(obj)
    except TypeError:
        raise InvalidParameterError(f"{name} must be {must}; got {type(obj).__name__}", param=name) from None
    for r, row in enumerate(rows):
        if isinstance(row, (str, bytes)) or not hasattr(row, "__len__") or not min_cols <= len(row) <= max_cols:
            n = f"{min_cols}" if min_cols == max_cols else f"{min_cols} to {max_cols}"
            raise InvalidParameterError(f"{name} must hold rows of {n} values ({layout}); got {row!r} in row "
                                        f"{r + 1}", param=name)
    ncols = min(len(r) for r in rows) if rows else min_cols
    cols = tuple(np.array([row[k] for row in rows], dtype=object) for k in range(ncols))
    return Table(cols, source)


def as_network(obj, *, delimiter: str | None = None, header: str = "auto", name: str = "network",
               directed: bool = False) -> Network:
    """A :class:`Network` from a path, a networkx graph, an edge table or a Network.

    An edge table is anything :func:`as_table` takes: a DataFrame or rows (node, node[, weight]).
    ``directed``: rows (or a networkx DiGraph's edges) are arcs; a Network given must then be
    a directed one.
    """
    if isinstance(obj, Network):
        if directed and not obj.directed:
            raise InvalidParameterError(f"{name} must be a directed Network when directed=True; got an undirected "
                                        "one (build it with directed=True)", param=name)
        return obj
    if isinstance(obj, (str, os.PathLike)):
        return read_network(obj, delimiter=delimiter, header=header, directed=directed)
    try:
        import networkx as nx
    except ImportError:  # pragma: no cover - networkx is a dependency
        nx = None
    if nx is not None and isinstance(obj, nx.Graph):
        return _from_networkx(obj, name=name, directed=directed)
    source = f"<DataFrame {name}>" if isinstance(obj, pd.DataFrame) else f"<{name}>"
    table = as_table(obj, name=name, layout="node, node[, weight]", min_cols=2, max_cols=3, source=source)
    return network_from_table(table, directed=directed)


def _from_networkx(graph, *, name: str, directed: bool) -> Network:
    """A :class:`Network` from a networkx graph; weights when every edge has one."""
    if graph.is_directed() != directed:
        raise InvalidParameterError(
            f"{name} must be an undirected graph; got a directed one (pass directed=True to align by "
            "direction, or use graph.to_undirected())" if not directed else
            f"{name} must be a directed graph when directed=True; got an undirected one (use "
            "graph.to_directed(), which gives each edge both directions)", param=name)
    # a node's name is its string form with spaces and tabs around it trimmed, as a file's field
    # and a DataFrame's entry are, so that it means the same node once written and read back
    def key(v) -> str:
        return str(v).strip(FIELD_BLANKS)

    own = {key(v): v for v in graph.nodes()}
    if "" in own:
        raise InvalidParameterError(f"{name} has a node whose name is empty or only spaces ({own['']!r}); "
                                    "rename it", param=name)
    if len(own) != graph.number_of_nodes():
        raise InvalidParameterError(f"{name} must have nodes whose string forms differ (spaces and tabs around "
                                    "them not counted); got two that clash", param=name)
    names = np.array(sorted(own), dtype=object)
    pos = {v: i for i, v in enumerate(names)}
    e = np.array([(pos[key(u)], pos[key(v)]) for u, v in graph.edges()], dtype=np.int64).reshape(-1, 2)
    w = None
    if graph.number_of_edges() and all("weight" in d for _, _, d in graph.edges(data=True)):
        w = _graph_weights(graph, name)
    net = checked_network(names, e[:, 0], e[:, 1], w, source=f"<networkx {name}>", directed=directed)
    if all(isinstance(v, str) for v in own.values()):
        return net
    # the graph's own node objects (integers, say) come back in the output tables; numpy infers
    # one dtype for them when it can (int64 for integers), else keeps objects, one per node (a
    # tuple, as a grid graph's nodes are, stays one object, not a row of a 2-D array)
    values = [own[s] for s in names]
    labels = np.array(values or [], dtype=None if len({type(v) for v in values}) == 1 else object)
    if labels.ndim != 1:
        labels = np.empty(len(values), dtype=object)
        for i, v in enumerate(values):
            labels[i] = v
    return dataclasses.replace(net, labels=labels)


def _graph_weights(graph, name: str) -> np.ndarray:
    """The ``weight`` attribute of every edge of a networkx graph, in edge order, each a finite
    number >= 0 (as a table's weight column must hold), else an error naming the edge."""
    out = np.empty(graph.number_of_edges())
    for k, (u, v, d) in enumerate(graph.edges(data=True)):
        value = d["weight"]
        try:
            out[k] = float(value) if not isinstance(value, (str, bytes, bool, np.bool_)) else np.nan
        except (TypeError, ValueError, OverflowError):
            out[k] = np.nan
        if not np.isfinite(out[k]) or out[k] < 0:
            raise InvalidParameterError(f"{name}: the edge {u!r} - {v!r} has the weight {value!r}; a weight must be a "
                                        "finite number >= 0", param=name)
    return out


def as_prior(obj, net_a: Network, net_b: Network, kind: str, delimiter, header,
             columns: str | None = None) -> PriorTable:
    """A :class:`PriorTable` from a path, a DataFrame or rows (node_a, node_b, score), or one already made.

    The scores are read as ``kind`` says (:func:`aligner.core.prior.prior_from_columns`);
    repeated pairs and rows dropped by the score kind are warned about. ``columns`` (the
    ``prior_columns`` option) picks node_a, node_b and score from a wider table, a file's or a
    DataFrame's, by 1-based position or by name (a file's header, a DataFrame's columns); a
    pair on several rows then keeps its best row, as any repeated pair does.

    Raises
    ------
    NoCandidatesError
        Every row naming known nodes was dropped by the score kind (E-values above 1).
    """
    if isinstance(obj, PriorTable):
        return obj
    table = as_table(obj, name="prior", layout="node_a, node_b, score", min_cols=3, max_cols=3,
                     what="prior table", delimiter=delimiter, header=header,
                     source="<DataFrame prior>" if isinstance(obj, pd.DataFrame) else None, pick=prior_pick(columns))
    check_skipped_header(table, net_a, net_b, header)
    names = obj.columns if isinstance(obj, pd.DataFrame) else None  # a DataFrame's own column names
    warn_score_kind(table.source, score_column_name(table, names), kind)
    # a prior no file holds (a DataFrame, rows): the table keeps its rows, for the run's state,
    # so that an update can take them from there (a file is read again instead)
    return prior_notes(prior_from_columns(table.names(0), table.names(1), table.numeric(2, "score"), net_a, net_b,
                                           kind=kind, source=table.source, origin=table.origin,
                                           keep_rows=not isinstance(obj, (str, os.PathLike))))


def prior_notes(t: PriorTable) -> PriorTable:
    """Warn about merged duplicate pairs and rows dropped by the score kind; refuse a prior they empty."""
    if t.n_duplicates:
        warn(f"{t.source}: {t.n_duplicates} prior rows repeat a pair given on another row; each pair "
             "keeps its highest score")
    if t.n_dropped_kind:
        known = t.n_rows - t.n_unknown
        if t.n_pairs == 0 and t.n_dropped_kind == known:
            raise NoCandidatesError(f"{t.source}: every one of the {known} prior rows naming known nodes has an "
                                    "E-value above 1, and --score-kind evalue drops such rows as no evidence of "
                                    "similarity; if the third column is a similarity score, use --score-kind "
                                    "similarity")
        warn(f"{t.source}: {t.n_dropped_kind} of {t.n_rows} prior rows have an E-value above 1 and were "
             "dropped as no evidence of similarity")
    return t


def known_pairs(t: PairTable, what: str) -> PairTable:
    """Refuse a pair table none of whose rows names a node of A and a node of B."""
    if t.n_rows and len(t.pairs) == 0:
        raise InputFormatError(f"none of its {t.n_rows} rows names a node of network A in the first column and "
                               f"a node of network B in the second, so the {what} is of no use; are the columns "
                               "swapped, or are these the wrong networks?", path=str(t.source))
    return t


def as_alignment(obj, net_a: Network, net_b: Network, delimiter, header) -> PairTable:
    """The alignment ``aligner score`` scores: a path, a DataFrame (first two columns), rows or a mapping a -> b.

    Refuses a table none of whose rows names known nodes (:func:`known_pairs`), and a node in two
    pairs, naming the file and both lines (an object's rows), as the seed reader does; rows naming
    an unknown node are left out (counted in the PairTable).
    """
    if isinstance(obj, PairTable):
        return _one_to_one(known_pairs(obj, "alignment"), net_a, net_b, None)
    table = as_table(obj, name="alignment", layout="node_a, node_b", min_cols=2, max_cols=64, what="alignment",
                     delimiter=delimiter, header=header, source="<alignment>")
    check_skipped_header(table, net_a, net_b, header)
    t = known_pairs(pairs_from_columns(table.names(0), table.names(1), net_a, net_b, source=table.source), "alignment")
    return _one_to_one(t, net_a, net_b, table)


def _one_to_one(t: PairTable, net_a: Network, net_b: Network, table: Table | None) -> PairTable:
    """Refuse a node in two pairs of ``t``: the earliest row that repeats a node, and the row before it
    with that node, named in ``table`` (None: no rows to name)."""
    found = first_shared_node(t.pairs)  # (row among the known pairs, the earlier row, side)
    if found is None:
        return t
    r2, r1, side = found
    net, name = (net_a, "A") if side == 0 else (net_b, "B")
    node = net.names[t.pairs[r2, side]]
    if table is None:
        raise InputFormatError(f"node {node!r} of network {name} is in more than one pair; an alignment must be "
                               "one-to-one", path=str(t.source))
    # the known pairs are the rows naming a node of A and a node of B, in row order
    rows = np.flatnonzero((lookup(net_a.names, table.names(0)) >= 0) & (lookup(net_b.names, table.names(1)) >= 0))
    row2, row1 = int(rows[r2]), int(rows[r1])
    keep = "keep one of the two " + ("lines" if table.first_line is not None else "rows")
    if (t.pairs[r2] == t.pairs[r1]).all():
        pair = (str(net_a.names[t.pairs[r2, 0]]), str(net_b.names[t.pairs[r2, 1]]))
        raise table.error(row2, f"repeats the pair {pair!r} of {table.where(row1)}; an alignment lists each pair "
                                f"once: {keep}")
    raise table.error(row2, f"node {node!r} of network {name} is already in the pair of {table.where(row1)}; an "
                            f"alignment must be one-to-one (a node in one pair only): {keep}")


def as_pairs(obj, net_a: Network, net_b: Network, what: str, delimiter, header) -> PairTable:
    """A :class:`PairTable` from a path, a DataFrame (first two columns), rows or a mapping a -> b.

    ``what`` ("truth", "alignment") names the table in messages and is its source when it is
    not a file.
    """
    if isinstance(obj, PairTable):
        return obj
    table = as_table(obj, name=what.split()[0], layout="node_a, node_b", min_cols=2, max_cols=64, what=what,
                     delimiter=delimiter, header=header, source=f"<{what}>")
    check_skipped_header(table, net_a, net_b, header)
    return pairs_from_columns(table.names(0), table.names(1), net_a, net_b, source=table.source)
