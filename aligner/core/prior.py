"""What a prior score means: score kinds turned into similarities, and the prior table.

A prior arrives as three columns (node of A, node of B, score) from a file or a DataFrame;
:func:`prior_from_columns` checks the scores, turns them into similarities by their kind
(:func:`transform_scores`), maps the identifiers onto two networks and merges repeated pairs,
giving the :class:`PriorTable` the candidate stage starts from. Parsing the file is the
readers' business (:mod:`aligner.io.readers`); this module only does the arithmetic.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from aligner.core.network import Network, unique_sorted
from aligner.errors import InputFormatError
from aligner.core.identifiers import as_arrow_strings, lookup, text_at

__all__ = ["EVALUE_CAP", "SCORE_KINDS", "PriorRows", "PriorTable", "check_scores", "transform_scores",
           "prior_from_columns", "prior_from_ids"]

#: -log10 of an E-value of exactly 0 is taken as this value, and so is any larger -log10 (the
#: smallest normal double is about 1e-308; the subnormal ones below it, down to 5e-324, are capped).
EVALUE_CAP = 310.0

#: The kinds of prior score, as ``score_kind`` / ``--score-kind`` names them.
SCORE_KINDS = ("similarity", "evalue", "distance")

_NEED = {"similarity": "similarities must be >= 0 (use --score-kind distance, score_kind='distance' in "
                        "Python, for dissimilarities)",
         "distance": "distances must be >= 0", "evalue": "E-values must be >= 0"}


@dataclass(frozen=True, eq=False)
class PriorRows:
    """A prior's rows, in order, by node: what the table was read from, kept where no file holds it
    (a prior an update edited by a diff) so that a later update can read it again.

    ``a[r]`` is row r's node of A, as its index among the network's names, or ``n1 + j`` for the
    j-th name of ``extra_a`` (a name A does not have); ``b`` and ``extra_b`` the same for B;
    ``values`` the scores as given (before the score kind's transformation).
    """

    a: np.ndarray
    b: np.ndarray
    values: np.ndarray
    extra_a: np.ndarray
    extra_b: np.ndarray

    @classmethod
    def from_ids(cls, ia: np.ndarray, ib: np.ndarray, values, n1: int, n2: int,
                 names_a: Callable[[np.ndarray], np.ndarray],
                 names_b: Callable[[np.ndarray], np.ndarray]) -> "PriorRows":
        """The rows whose nodes' indices among the networks' n1 and n2 names are ``ia``, ``ib`` (-1
        where absent); ``names_a(rows)`` gives the names of those rows' nodes of A (called for the
        rows naming a node A lacks only), ``names_b`` those of B."""
        def codes(idx, n, names_of):
            out = idx.astype(np.int32)
            miss = np.flatnonzero(idx < 0)
            if not len(miss):
                return out, np.empty(0, dtype=str)
            extra, inv = np.unique(np.asarray(names_of(miss)).astype(str), return_inverse=True)
            out[miss] = n + inv
            return out, extra

        (ca, xa), (cb, xb) = codes(ia, n1, names_a), codes(ib, n2, names_b)
        return cls(ca, cb, np.asarray(values, dtype=np.float64), xa, xb)

    @classmethod
    def encode(cls, a, b, values, ia: np.ndarray, ib: np.ndarray, n1: int, n2: int) -> "PriorRows":
        """The rows with identifier columns ``a``, ``b`` whose look-ups among the networks' names
        (-1 where absent) are ``ia``, ``ib``."""
        def names_in(col):
            return lambda rows: as_arrow_strings(col).take(rows).to_numpy(zero_copy_only=False)

        return cls.from_ids(ia, ib, values, n1, n2, names_in(a), names_in(b))


@dataclass(frozen=True)
class PriorTable:
    """A prior similarity table mapped onto two networks.

    ``pairs[:, 0]`` indexes network A, ``pairs[:, 1]`` network B; ``scores`` are similarities
    (higher is better, >= 0) after the transformation of the score kind.
    """

    pairs: np.ndarray
    scores: np.ndarray
    n_rows: int
    n_unknown: int
    unknown_examples: list[str] = field(default_factory=list)
    n_dropped_kind: int = 0  # rows dropped by the score kind (E-values above 1)
    n_duplicates: int = 0
    source: str = "<memory>"
    released_pairs: int = -1  # set by without_rows: how many pairs the table held
    rows: PriorRows | None = None  # the rows it was read from, where no file keeps them (keep_rows)

    @property
    def n_pairs(self) -> int:
        """The usable pairs of the table (also after :meth:`without_rows`)."""
        return len(self.pairs) if self.released_pairs < 0 else self.released_pairs

    def without_rows(self) -> "PriorTable":
        """The same table's counts without its rows (once the candidates hold what later stages
        need: at 10^6 nodes and 11 M rows, 176 MB kept for nothing otherwise)."""
        # new empty arrays: an empty slice would be a view keeping the whole table alive
        return dataclasses.replace(self, pairs=np.empty((0, 2), dtype=self.pairs.dtype),
                                   scores=np.empty(0, dtype=self.scores.dtype), released_pairs=self.n_pairs)


def check_scores(values: np.ndarray, kind: str, *, source: str = "<memory>",
                 line_of: Callable[[int], int | None] | None = None,
                 origin: Callable[[int], tuple[str, int | None]] | None = None) -> None:
    """Refuse a score that is not a finite number, or a negative one; the message names the line.

    Parameters
    ----------
    values : ndarray of float64
        The raw scores, one per row.
    kind : {"similarity", "evalue", "distance"}
    source : str
        The file (or ``<DataFrame prior>``) the scores came from, for the message.
    line_of : callable, optional
        ``line_of(row)`` gives the file line of data row ``row``.
    origin : callable, optional
        ``origin(row)`` gives the file and line of data row ``row`` (a table read from several
        files); in place of ``source`` and ``line_of``.

    Raises
    ------
    InputFormatError
        The first bad score, with its file and line.
    """
    bad = ~np.isfinite(values)
    if kind in _NEED:
        bad |= values < 0
    if bad.any():
        row = int(np.argmax(bad))
        if np.isfinite(values[row]):
            why = f"is negative; {_NEED[kind]}"
        else:  # a missing or non-numeric cell, or inf: the score kind is not the question
            why = "is not a finite number; every score must be a number (check for empty or non-numeric cells)"
        path, line = (source, None if line_of is None else line_of(row)) if origin is None else origin(row)
        raise InputFormatError(f"the score {float(values[row])!r} {why}", path=path, line=line)


def transform_scores(values: np.ndarray, kind: str) -> tuple[np.ndarray, np.ndarray]:
    """Turn raw prior values into similarities; return them and a mask of rows to keep.

    ``similarity``: used as given (must be >= 0). ``evalue``: ``-log10(E)``, with E = 0 given
    :data:`EVALUE_CAP`; rows with E > 1 carry no evidence of similarity and are dropped.
    ``distance``: ``1 / (1 + d)`` (must be >= 0).

    Examples
    --------
    >>> s, keep = transform_scores(np.array([1e-30, 0.0, 5.0]), "evalue")
    >>> s.round(6).tolist(), keep.tolist()
    ([30.0, 310.0, -0.69897], [True, True, False])
    """
    keep = np.ones(len(values), dtype=bool)
    # ``+ 0.0`` turns -0.0 into 0.0: a similarity of 0 (E = 1 gives -log10(1) = -0.0, and a file may
    # say -0) would otherwise be written as "-0" in the prior column of alignment.tsv
    if kind == "similarity":
        return values.astype(np.float64) + 0.0, keep
    if kind == "evalue":
        keep = values <= 1.0
        with np.errstate(divide="ignore"):
            s = np.where(values > 0, -np.log10(np.where(values > 0, values, 1.0)), EVALUE_CAP)
        return np.minimum(s, EVALUE_CAP) + 0.0, keep
    if kind == "distance":
        return 1.0 / (1.0 + values), keep
    raise ValueError(kind)


def prior_from_columns(
    a, b, values: np.ndarray, net_a: Network, net_b: Network, *,
    kind: str = "similarity", source: str = "<memory>", line_of: Callable[[int], int | None] | None = None,
    origin: Callable[[int], tuple[str, int | None]] | None = None, keep_rows: bool = False,
) -> PriorTable:
    """Map a prior given as three columns onto the node indices of two networks.

    Parameters
    ----------
    a, b : column of str
        Identifiers of nodes of A and of B (numpy object or pyarrow string arrays).
    values : array-like of float
        The raw scores, read as ``kind`` says.
    net_a, net_b : Network
    kind : {"similarity", "evalue", "distance"}
    source : str
        Where the table came from, for messages and ``PriorTable.source``.
    line_of : callable, optional
        ``line_of(row)`` gives the file line of data row ``row``, for messages.
    origin : callable, optional
        ``origin(row)`` gives the file and line of data row ``row``, for messages (in place of
        ``source`` and ``line_of``: a table read from several files).
    keep_rows : bool
        Keep the rows in the table (``PriorTable.rows``), for a run state to hold a prior that no
        file does.

    Returns
    -------
    PriorTable
        Unknown nodes are counted and skipped; duplicate pairs keep the highest similarity.
    """
    values = np.asarray(values, dtype=np.float64)
    check_scores(values, kind, source=source, line_of=line_of, origin=origin)
    ia = lookup(net_a.names, a)
    ib = lookup(net_b.names, b)
    rows = PriorRows.encode(a, b, values, ia, ib, net_a.n, net_b.n) if keep_rows else None
    return prior_from_ids(ia, ib, values, kind=kind, source=source, rows=rows,
                          example=lambda r: f"{text_at(a, r)} / {text_at(b, r)}")


def prior_from_ids(ia: np.ndarray, ib: np.ndarray, values: np.ndarray, *, kind: str, source: str,
                   example: Callable[[int], str], rows: PriorRows | None = None) -> PriorTable:
    """The :class:`PriorTable` of rows whose nodes are known by index (-1: a node the network
    lacks), with checked raw ``values``; ``example(row)`` names a row's two nodes for the warning
    about unknown nodes. ``ia`` is changed in place."""
    scores, keep = transform_scores(values, kind)
    known = (ia >= 0) & (ib >= 0)
    n_unknown = len(known) - int(np.count_nonzero(known))
    examples = [example(int(r)) for r in np.flatnonzero(~known)[:3]] if n_unknown else []
    n_dropped = 0
    if n_unknown:
        ia[ib < 0] = -1  # rows with ia < 0 are left out below
    if not keep.all():
        n_dropped = int(np.count_nonzero(known & ~keep))
        ia[~keep] = -1
    # duplicate pairs: the highest similarity wins
    pairs, sc, n_dup = unique_sorted(ia, ib, scores, largest=True)
    return PriorTable(pairs=pairs, scores=sc, n_rows=len(values), n_unknown=n_unknown, unknown_examples=examples,
                      n_dropped_kind=n_dropped, n_duplicates=n_dup, source=source, rows=rows)
