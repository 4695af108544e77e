"""Priors built from node annotations rather than from a similarity table.

A class table says which nodes *may* correspond: anatomical classes of neurons, cell types, gene
families. :func:`read_classes` reads one (node, class; a node of several classes on several rows
or, with a separator, on one row) and :func:`prior_from_classes` pairs every node of A with every
node of B of a shared class, all with one score (``aligner prior-from-classes`` on the command line).
"""

from __future__ import annotations

import os
import re
from collections.abc import Mapping

import numpy as np
import pandas as pd

from aligner.checks import check_real
from aligner.config import ClassConfig
from aligner.errors import InputFormatError, InvalidParameterError
from aligner.io.inputs import as_table

__all__ = ["prior_from_classes", "read_classes"]

#: Under ``header="auto"``, a first row (node word, class word) such as ``node<TAB>class`` or
#: ``gene<TAB>family`` is a header line (any case).
_NODE_WORDS = {"node", "id", "name", "gene", "protein", "neuron", "cell", "identifier"}
_CLASS_WORDS = {"class", "classes", "type", "cell_type", "celltype", "family", "group", "annotation", "label"}
#: ... also a node word with a suffix such as node_id, node_a, gene_name (``_``, ``-``, a space or
#: nothing between), and class words written with a space or a hyphen (cell type)
_NODE_SUFFIXES = {"id", "ids", "name", "a", "b"}


def _header_words(node: str, cls: str) -> bool:
    """Whether a first row (node field, class field) is a header line such as node<TAB>class."""
    node, cls = node.strip().lower(), re.sub(r"[\s-]+", "_", cls.strip().lower())
    if cls not in _CLASS_WORDS:
        return False
    if node in _NODE_WORDS:
        return True
    m = re.fullmatch(r"([a-z]+)[_\s-]?([a-z]+)", node)
    return m is not None and m.group(1) in _NODE_WORDS and m.group(2) in _NODE_SUFFIXES


def read_classes(path: str | os.PathLike, *, separator: str | None = ClassConfig.class_separator,
                 delimiter: str | None = None, header: str = "auto") -> pd.DataFrame:
    """Read a class table: node identifier, class (more columns are ignored).

    Parameters
    ----------
    path : path
        TSV/CSV/white-space table (as every table of aligner: gzip or not, ``#`` comments and
        blank lines skipped). A node of several classes is given on several rows, or on one row
        with its classes joined by ``separator``. A first line such as ``node<TAB>class`` (a
        word for the node, then ``class``, ``type``, ``family``, ``group`` ...) is a header line.
    separator : str, optional
        Split each class field at this text (``";"``, ``"|"``); spaces around the parts are
        removed and empty parts ignored.
    delimiter, header
        How to read the file (:func:`aligner.io.readers.read_table`).

    Returns
    -------
    pandas.DataFrame
        Columns ``node`` and ``cls`` (str), one row per (node, class), without repeats, in file order.

    Raises
    ------
    InputFormatError
        The file is missing or malformed (an empty field, a row of one column); the message
        names the file and the line.
    """
    return _as_classes(os.fspath(path), "classes", separator=separator, delimiter=delimiter, header=header)


def _as_classes(obj, name: str, *, separator: str | None, delimiter: str | None = None,
                header: str = "auto") -> pd.DataFrame:
    """(node, cls) rows of a mapping, Series, DataFrame (first two columns), rows or path."""
    if isinstance(obj, (Mapping, pd.Series)):
        items = obj.items()
        nodes, classes = [], []
        for node, value in items:
            for c in _classes_of(value, name):
                nodes.append(node)
                classes.append(c)
    else:
        table = as_table(obj, name=name, layout="node, class", min_cols=2, max_cols=64, what="class table",
                         delimiter=delimiter, header=header)
        nodes, classes = list(table.text(0)), list(table.text(1))
        if not isinstance(obj, (str, os.PathLike)):  # an object's missing class (None, NaN) is none, as in a mapping
            keep = [not _missing(v) for v in table.columns[1]]
            nodes, classes = [v for v, k in zip(nodes, keep) if k], [c for c, k in zip(classes, keep) if k]
        if isinstance(obj, (str, os.PathLike)) and header == "auto" and table.header is None and nodes and \
                _header_words(str(nodes[0]), str(classes[0])):
            nodes, classes = nodes[1:], classes[1:]  # a header line: node, class
            if not nodes:  # as read_table refuses a table without data rows
                path, line = table.origin(0)
                raise InputFormatError("has a header line but no data rows: expected a class table below it",
                                       path=path, line=line)
    df = pd.DataFrame({"node": pd.Series(nodes, dtype=object).astype(str).str.strip(),
                       "cls": pd.Series(classes, dtype=object).astype(str)})
    if separator is not None:
        if not isinstance(separator, str) or not separator:
            raise InvalidParameterError(f"class_separator must be a non-empty string; got {separator!r}",
                                        param="class_separator")
        df["cls"] = df["cls"].str.split(separator, regex=False)
        df = df.explode("cls", ignore_index=True)
    df["cls"] = df["cls"].astype(str).str.strip()
    df = df[df["cls"] != ""]
    return df.drop_duplicates(ignore_index=True)


def _missing(value) -> bool:
    """Whether a value stands for no class: None, NaN, pandas' NA."""
    return value is None or value is pd.NA or (isinstance(value, float) and np.isnan(value))


def _classes_of(value, name: str) -> list:
    """The classes of one node of a mapping: a label, a collection of labels, or none (None, NaN)."""
    if _missing(value):
        return []
    if isinstance(value, (list, tuple, set, frozenset, np.ndarray, pd.Series)):
        return sorted({str(v) for v in value if v is not None}, key=str)
    if isinstance(value, (str, int, np.integer)):
        return [value]
    raise InvalidParameterError(f"{name} must map each node to a class, a list of classes or None; got "
                                f"{type(value).__name__}", param=name)


def prior_from_classes(classes_a, classes_b, *, score: float = ClassConfig.score,
                       separator: str | None = ClassConfig.class_separator, delimiter: str | None = None,
                       header: str = "auto") -> pd.DataFrame:
    """Every pair of a node of A and a node of B that share a class, all with the same score.

    For annotations that say which nodes *may* correspond but not which one does: anatomical
    classes of neurons (the left and right members of a bilateral pair share one), cell
    types, gene families. The wiring then has to decide within each class. A pair that shares
    several classes is listed once, with the same score: a class says "may correspond", and two
    of them say no more.

    Parameters
    ----------
    classes_a, classes_b : mapping, Series, DataFrame, rows or path
        Node identifier -> class label, for the nodes of A and of B: a mapping or Series (a
        value may be a list of classes, or None for none), a table of (node, class) rows in
        which a node may be repeated (a DataFrame's first two columns; a missing class, None or
        NaN, is none), or a class table file
        (:func:`read_classes`). Nodes without a class get no candidate.
    score : float > 0
        The prior score of every pair.
    separator : str, optional
        Split each class label at this text (``"a;b"`` with ``";"``: classes a and b).
    delimiter, header
        How to read class table files.

    Returns
    -------
    DataFrame
        Columns ``node_a``, ``node_b``, ``score``, sorted; usable as the ``prior`` of
        :func:`aligner.align`.

    Examples
    --------
    >>> prior_from_classes({"x1": "X", "x2": "X", "y": "Y"}, {"u": "X", "v": "Y"}).values.tolist()
    [['x1', 'u', 1.0], ['x2', 'u', 1.0], ['y', 'v', 1.0]]
    >>> prior_from_classes({"x": ["X", "Y"], "y": "Y"}, {"u": "X;Y"}, separator=";").values.tolist()
    [['x', 'u', 1.0], ['y', 'u', 1.0]]
    """
    score = check_real(score, "score", low=0.0, closed="neither")
    read = {"separator": separator, "delimiter": delimiter, "header": header}
    a = _as_classes(classes_a, "classes_a", **read).rename(columns={"node": "node_a"})
    b = _as_classes(classes_b, "classes_b", **read).rename(columns={"node": "node_b"})
    pairs = a.merge(b, on="cls")[["node_a", "node_b"]].astype(str).drop_duplicates()
    pairs["score"] = float(score)
    return pairs.sort_values(["node_a", "node_b"], kind="stable").reset_index(drop=True)
