"""A prior from node labels: character n-gram TF-IDF similarity of two sets of names.

For deduplication, the nodes of both networks carry a label (a company name, a title) and
the prior is how alike two labels read. :func:`read_labels` reads a label file,
:func:`read_label_table` a table of records with several fields (name, city, street) whose
chosen fields make the label, :func:`label_prior` turns two label sets into a sparse prior
table (node_a, node_b, score) that :func:`aligner.pipeline.align` accepts;
:func:`aligner.io.outputs.write_prior_table` writes it.

Records with several fields
---------------------------
The chosen fields of a record are joined by a space into one label, which is then weighed as
any label. Joining is chosen over averaging one similarity per field because (1) each n-gram
still weighs by its rarity over all fields, so a rare street name that matches counts for
more than a common city; (2) an empty field adds nothing, where an average would count it as
a field that does not match; (3) the n-grams are taken within words (``char_wb``), so no
n-gram spans two fields; and (4) the exact top-k search below works on one vector per record,
whereas an average of per-field scores has no such bound, and a pair that is a top pair of no
single field would be missed. Field order does not change the score.

How the similarity is computed
------------------------------
Each label is normalised (:func:`normalise_label`: lower case, accents removed by NFKD,
punctuation replaced by spaces) and turned into a vector of sublinear TF-IDF weights of its
character n-grams, ``(1 + log tf) * idf``, with the smoothed idf ``1 + log((1 + N) /
(1 + df))`` fitted on all ``N = n_A + n_B`` labels, then scaled to unit length; the score
of a pair is the cosine ``x_a . x_b``. This is
``sklearn.feature_extraction.text.TfidfVectorizer(analyzer="char_wb", sublinear_tf=True)``.

The n_A x n_B similarity matrix is never formed, densely or sparsely; the result is exact
(the same pairs as a dense ``cosine_similarity`` and a per-row sort, up to rounding in the
last bits of a score). The n-grams are numbered from the rarest to the most common and a
compiled kernel (:mod:`aligner.kernels.labels`, rows in parallel over the numba threads)
takes each row x_a of A in turn:

1. the rarest n-grams of x_a give at least ``top_k`` columns; their exact scores give
   tau >= ``min_similarity``, a lower bound of the row's ``top_k``-th best score;
2. x_a is split into a head and a tail of common n-grams whose norm is below tau / 2. A
   column scoring at least tau shares an n-gram with the head (prefix filtering), so only
   the postings lists of the head's n-grams are followed, summing ``x_a @ X_b.T`` into a
   dense accumulator of length n_B (row-by-row sparse product); a touched column gets the
   tail's share by merging the two sorted rows, unless a Cauchy-Schwarz bound shows that it
   cannot reach tau;
3. the columns at or above tau are sorted by score (on a grid of 1e-12, so that scores equal
   but for rounding tie), then column, and the best ``top_k`` kept.

The same is then done for the rows of B against A, and the two sets are united. Ties are
broken by node order (the identifiers sorted as strings), so the output does not depend on
the input order, nor on the number of threads. Each kept pair's score is recomputed once
as the dot product of the two sorted rows, so a pair found from both sides has one value.

Cost: the vectoriser is linear in the total label length. The kernel does, per row,
``sum_{g in head} df(g)`` multiply-adds (``df(g)``: labels of the other side holding n-gram
g) and a merge for each touched column; without the filter this would be
``sum_g df_A(g) df_B(g)``, nearly ``n_A n_B`` times the n-grams per label, since common
n-grams (``" co"``, ``"ltd"``) are in most labels. The head still holds words shared by many
labels (an industry word), so the time grows about as ``n_A n_B``; ``scripts/bench/bench_labels.py``
measures it on the names of ``scripts/data/make_demo.py --scenario registry``. Memory
``O(nnz(X) + n_B + block_rows * top_k)`` per pass, plus the output: no n_A x n_B array of any
kind.
"""

from __future__ import annotations

import os
import re
import unicodedata
from numbers import Integral

import numba
import numpy as np
import pandas as pd
import scipy.sparse as sp

import aligner.kernels.labels as _k
from aligner.checks import bad_parameter, check_int, check_real, warn
from aligner.config import LabelConfig
from aligner.core.arrays import unique
from aligner.errors import InputFormatError, InvalidParameterError
from aligner.io.inputs import as_table
from aligner.io.readers import Columns, check_readable, open_text, reading_errors

__all__ = ["read_labels", "read_label_table", "label_prior", "normalise_label", "tfidf_matrices"]

#: rows of one block of the similarity product (the output buffers hold BLOCK_ROWS * top_k pairs)
BLOCK_ROWS = 8192
#: how far a cosine summed in floating point may be from the exact one (far above the ~1e-15 seen on
#: labels of a few hundred n-grams): a score within this of 1 is 1, and of min_similarity reaches it
ROUNDING = 1e-12

_HEADER = ("node", "label")
#: A first line is a header when its two fields are column names: an identifier's (``id``,
#: ``record_id``, ``node``) and a label's (``name``, ``company_name``, ``label``).
_ID_NAME = re.compile(r"^(?:node|id|identifier|key|record|entity|entry)$|^[a-z][a-z0-9]*[ _.-]?(?:id|key)$")
_LABEL_NAME = re.compile(r"^(?:label|name|title|text|description)$|^[a-z][a-z0-9]*[ _.-](?:label|name|title)$")
_NON_WORD = re.compile(r"[\W_]+")


# --------------------------------------------------------------------------- reading

def read_labels(path: str | os.PathLike) -> pd.Series:
    """Read a label file: one node per line, its identifier, a tab, then its label.

    Parameters
    ----------
    path : path
        UTF-8 text, gzip-compressed or not (detected by content). Each line holds an
        identifier, a TAB and the label text, which may contain spaces, commas and further
        tabs (everything after the first tab is the label). A line without a tab, or with an
        empty label, gives a node whose identifier is its own label. Blank lines and lines
        starting with ``#`` are skipped, and so is a first line of two column names
        (``node<TAB>label``, ``id<TAB>name``, ``record_id<TAB>company_name``; any case). A
        file with no tab whose lines each hold two commas or semicolons or more (a table of
        records read as a label file) is warned about.
        Spaces around the identifier and the label are removed.

    Returns
    -------
    pandas.Series
        Label text (str) indexed by node identifier (str), in file order; named ``label``.

    Raises
    ------
    InputFormatError
        The file is missing, unreadable or not UTF-8, holds no data line (empty, comments
        only, or a header line only), an identifier is empty, or an identifier is repeated;
        the message names the file and the line.

    Examples
    --------
    >>> import tempfile, os
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = os.path.join(d, "labels.tsv")
    ...     _ = open(p, "w").write("node\\tlabel\\nR1-1\\tVantric Freight, Ltd\\nR1-2\\n")
    ...     read_labels(p).to_dict()
    {'R1-1': 'Vantric Freight, Ltd', 'R1-2': 'R1-2'}
    """
    path = os.fspath(path)
    check_readable(path)
    ids: list[str] = []
    texts: list[str] = []
    seen: dict[str, int] = {}
    header: list[int] = []
    tabbed = False
    with reading_errors(path):
        for no, text, node, label in _label_lines(path, header):
            tabbed = tabbed or "\t" in text
            if not node:
                raise InputFormatError(f"has an empty node identifier: {text[:80]!r}; give each node an "
                                       "identifier before the tab", path=path, line=no)
            if node in seen:
                raise InputFormatError(f"repeats the node identifier {node[:80]!r} (first on line "
                                       f"{seen[node]}); give each node one line", path=path, line=no)
            seen[node] = no
            ids.append(node)
            texts.append(label if label else node)
    if ids and not tabbed and all(t.count(",") >= 2 or t.count(";") >= 2 for t in texts[:100]):
        warn(f"{path}: no line holds a tab, so each whole line is taken for a node identifier (and its label), "
             f"such as {ids[0][:60]!r}; if this is a table of records, give --label-columns (label_columns) to "
             "pick its identifier and label fields")
    if not ids:  # as read_table refuses a table without data rows
        if header:
            raise InputFormatError("has a header line but no data rows: expected a label file below it (one node "
                                   "per line: its identifier, a tab, its label)", path=path, line=header[0])
        raise InputFormatError("is empty: expected a label file (one node per line: its identifier, a tab, its "
                               "label; blank lines and lines starting with # are skipped)", path=path)
    return pd.Series(texts, index=pd.Index(ids, dtype=object, name="node"), dtype=object, name="label")


def _label_lines(path: str, header: list[int]):
    """Yield (line number, text, identifier, label) of the data lines of a label file.

    Blank and comment lines are skipped, and so is a first data line of two column names
    (``node<TAB>label``, ``id<TAB>name``: its line number is appended to ``header``).
    """
    first = True
    for no, line in enumerate(open_text(path), 1):
        text = line.rstrip("\r\n")
        stripped = text.strip()
        if not stripped or stripped.startswith("#"):
            continue
        node, tab, label = text.partition("\t")
        node, label = node.strip(), label.strip()
        if first:
            first = False
            if tab and (_ID_NAME.match(node.lower()) and _LABEL_NAME.match(label.lower())):
                header.append(no)
                continue
        yield no, text, node, label


def read_label_table(path: str | os.PathLike, columns: str, *, delimiter: str | None = None,
                     header: str = "auto") -> pd.Series:
    """Read a table of records (identifier, then fields) and join the chosen fields into each label.

    Parameters
    ----------
    path : path
        A CSV/TSV table (as every table of aligner: gzip or not, ``#`` comments and blank lines
        skipped, quoted fields allowed) whose first column is the node identifier.
    columns : str
        The fields to join, comma-separated, each a header name or a 1-based position:
        ``"name,city,street"`` (names imply a header line), ``"2,4"``. The ``label_columns``
        option, ``--label-columns`` on the command line.
    delimiter, header
        How to read the file (:func:`aligner.io.readers.read_table`).

    Returns
    -------
    pandas.Series
        Label text (the fields' text joined by a space, empty fields left out; a record whose
        fields are all empty is labelled by its identifier) indexed by identifier, in file order.

    Raises
    ------
    InputFormatError
        The file is missing or malformed, a column is not found (an unknown header name, a
        position beyond the row's width), an identifier is empty or repeated; the message names
        the file, the line and, for a column, the option.

    Examples
    --------
    >>> import tempfile, os
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = os.path.join(d, "records.csv")
    ...     _ = open(p, "w").write("id,name,city,phone\\nr1,Vantric Freight,Quelbrin,5550101\\nr2,Olmera,,5550102\\n")
    ...     read_label_table(p, "name,city").to_dict()
    {'r1': 'Vantric Freight Quelbrin', 'r2': 'Olmera'}
    """
    return _record_labels(os.fspath(path), columns, "labels", delimiter=delimiter, header=header, order=False)


def _record_labels(obj, columns: str, name: str, *, delimiter: str | None = None, header: str = "auto",
                   order: bool = True) -> pd.Series:
    """Labels joined from the chosen fields of a table (path, DataFrame or rows; identifier first)."""
    pick = Columns(columns, "--label-columns", "label_columns", prefix=(0,))
    table = as_table(obj, name=name, layout="identifier, fields", min_cols=2, max_cols=2, what="label table",
                     delimiter=delimiter, header=header, pick=pick, required=1, text_cols=len(pick.items))
    ids = np.array([str(v).strip() for v in table.text(0)], dtype=object)
    fields = [[_field(v) for v in table.columns[k]] for k in range(1, len(table.columns))]
    texts = np.array([" ".join(f for f in row if f) for row in zip(*fields)] if fields else [""] * len(ids),
                     dtype=object)
    texts = np.array([node if _void(t) else t for node, t in zip(ids, texts)], dtype=object)
    first: dict[str, int] = {}
    for row, node in enumerate(ids):
        if node in first:
            path, line = table.origin(row)
            raise InputFormatError(f"{'' if table.first_line is not None else table.where(row) + ': '}repeats the "
                                   f"identifier {node[:80]!r} (first on {table.where(first[node])}); give each "
                                   "record one row", path=path, line=line)
        if not node:
            path, line = table.origin(row)
            raise InputFormatError(f"{'' if table.first_line is not None else table.where(row) + ': '}has an empty "
                                   "identifier; give each record one in the first column", path=path, line=line)
        first[node] = row
    idx = np.argsort(ids.astype(str), kind="stable") if order and len(ids) else np.arange(len(ids))
    return pd.Series(texts[idx], index=pd.Index(ids[idx], dtype=object, name="node"), dtype=object, name="label")


def _missing(v) -> bool:
    """Whether a value stands for no text: None, NaN, pandas' NA (a nullable string column's gap)."""
    return v is None or v is pd.NA or (isinstance(v, float) and np.isnan(v))


def _field(v) -> str:
    if _missing(v):
        return ""
    return str(v).strip()


def _void(text: str) -> bool:
    """Whether a label leaves nothing to compare once normalised (:func:`normalise_label`): empty,
    blank, or punctuation only."""
    return not text.strip() or (_NON_WORD.fullmatch(text) is not None and not normalise_label(text))


def _as_labels(labels, name: str) -> pd.Series:
    """Series, dict, rows (identifier, label) or path -> Series of str indexed by str, sorted by identifier."""
    table = as_table(labels, name=name, layout="node, label", min_cols=2, max_cols=2, read=read_labels)
    ids = table.text(0)
    # as in a label file (docs/formats.md), an empty or missing label (or one of punctuation only, which
    # normalising empties) makes the identifier its own label
    values = np.array([str(node) if _missing(v) or _void(str(v)) else str(v) for node, v in zip(ids, table.columns[1])],
                      dtype=object)
    if len(set(ids)) != len(ids):
        raise InvalidParameterError(f"{name} must name each node once; got repeated identifiers", param=name)
    order = np.argsort(ids.astype(str), kind="stable") if len(ids) else np.empty(0, np.int64)
    return pd.Series(values[order], index=ids[order], dtype=object)


# --------------------------------------------------------------------------- similarity

def normalise_label(text: str) -> str:
    """Lower case, accents removed (NFKD), punctuation replaced by spaces, spaces collapsed.

    Letters, digits and the marks that are part of a letter in many scripts (the vowel signs of
    Devanagari or Tamil, which NFKD leaves as they are) stay; every other character is a space.

    >>> normalise_label("Vântric-Freight & Co., Ltd.")
    'vantric freight co ltd'
    >>> normalise_label("किताब घर")  # the vowel signs stay: not 'क त ब घर'
    'किताब घर'
    """
    text = unicodedata.normalize("NFKD", text)
    text = "".join(c for c in text if not unicodedata.combining(c)).lower()
    if text.isascii():
        return " ".join(_NON_WORD.sub(" ", text).split())
    # \W also matches the marks (category M) that NFKD keeps, such as vowel signs: keep those
    return " ".join("".join(c if c.isalnum() or unicodedata.category(c)[0] == "M" else " " for c in text).split())


def _check_params(top_k, min_similarity, ngram_range, block_rows) -> None:
    check_int(top_k, "top_k", low=1)
    check_real(min_similarity, "min_similarity", low=0.0, high=1.0, closed="right")
    ok = (isinstance(ngram_range, (tuple, list)) and len(ngram_range) == 2
          and all(isinstance(v, Integral) and not isinstance(v, bool) for v in ngram_range)
          and 1 <= ngram_range[0] <= ngram_range[1])
    if not ok:
        raise bad_parameter("ngram_range", "a pair (lo, hi) of whole numbers with 1 <= lo <= hi", ngram_range)
    if block_rows is not None:
        check_int(block_rows, "block_rows", low=1)


def tfidf_matrices(docs_a, docs_b, *, ngram_range=(2, 4)) -> tuple[sp.csr_array, sp.csr_array]:
    """L2-normalised character n-gram TF-IDF rows of two document lists, fitted on their union.

    Returns empty (n, 0) matrices when no document has an n-gram.
    """
    from sklearn.feature_extraction.text import TfidfVectorizer  # lazy: sklearn is slow to import

    docs = [normalise_label(t) for t in docs_a] + [normalise_label(t) for t in docs_b]
    vec = TfidfVectorizer(analyzer="char_wb", ngram_range=tuple(ngram_range), lowercase=True,
                          strip_accents="unicode", sublinear_tf=True, dtype=np.float64)
    try:
        x = vec.fit_transform(docs)
    except ValueError:  # empty vocabulary: no label has an n-gram
        return sp.csr_array((len(docs_a), 0)), sp.csr_array((len(docs_b), 0))
    x = sp.csr_array(x)
    return x[: len(docs_a)], x[len(docs_a):]


def _top_k(xa: sp.csr_array, xb: sp.csr_array, top_k: int, min_similarity: float,
           block_rows: int) -> tuple[np.ndarray, np.ndarray]:
    """(row, col) of each row's top_k entries >= min_similarity of xa @ xb.T, ties by col."""
    na, nb = xa.shape[0], xb.shape[0]
    xbt = _csr(xb.T)
    rows_out, cols_out = [], []
    if na == 0 or nb == 0 or xa.nnz == 0:
        return np.empty(0, np.int64), np.empty(0, np.int64)
    k = min(top_k, nb)
    # running sums of squares along each row of xb (reset at each row start)
    sq = np.cumsum(xb.data ** 2)
    starts = np.repeat(xb.indptr[:-1], np.diff(xb.indptr))
    cum2 = sq - np.where(starts > 0, sq[np.maximum(starts - 1, 0)], 0.0)
    for start in range(0, na, block_rows):
        stop = min(na, start + block_rows)
        out = np.full((stop - start) * k, -1, dtype=np.int64)
        _k.top_k_rows(xa.indptr, xa.indices, xa.data, xb.indptr, xb.indices, xb.data, cum2, xbt.indptr,
                      xbt.indices, xbt.data, k, float(min_similarity), start, stop,
                      max(1, min(numba.get_num_threads(), stop - start)), out)
        used = out >= 0
        rows_out.append(np.repeat(np.arange(start, stop), k)[used])
        cols_out.append(out[used])
    return np.concatenate(rows_out), np.concatenate(cols_out)


def _renumber(x: sp.csr_array, rank: np.ndarray) -> sp.csr_array:
    """x with column c moved to rank[c]; indices sorted, int64."""
    x = sp.csr_array((x.data, rank[x.indices], x.indptr), shape=x.shape)
    return _csr(x)


def _csr(x) -> sp.csr_array:
    x = sp.csr_array(x, dtype=np.float64)
    x.sort_indices()
    x.indptr = x.indptr.astype(np.int64)
    x.indices = x.indices.astype(np.int64)
    return x


def label_prior(labels_a, labels_b, *, top_k: int = LabelConfig.top_k, min_similarity: float = LabelConfig.min_similarity,
                ngram_range: tuple[int, int] = (2, 4), block_rows: int | None = None,
                label_columns: str | None = LabelConfig.label_columns, delimiter: str | None = None,
                header: str = "auto", progress=None) -> pd.DataFrame:
    """A prior table from two label sets: character n-gram TF-IDF cosine similarity.

    Parameters
    ----------
    labels_a, labels_b : pandas.Series, dict, rows (node, label) or path
        Label text indexed (keyed) by node identifier, or a label file (see :func:`read_labels`).
        Identifiers are compared as str. A label that is empty, blank or missing (None, NaN,
        ``pd.NA``) makes the identifier its own label, as in a label file.
    top_k : int >= 1, default 10
        For every node of A its ``top_k`` most similar nodes of B are kept, and for every
        node of B its ``top_k`` most similar nodes of A; the table is the union.
    min_similarity : float in (0, 1], default 0.1
        Pairs less similar than this are never kept.
    ngram_range : (int, int), default (2, 4)
        Lengths of the character n-grams (within words, padded by a space; ``char_wb``).
    block_rows : int >= 1, optional
        Rows of A (of B in the second pass) handed to the compiled kernel at a time; only
        bounds the output buffers (``block_rows * top_k`` pairs). Default ``BLOCK_ROWS``.
    label_columns : str, optional
        ``labels_a`` and ``labels_b`` are tables of records (a path, a DataFrame or rows; the
        identifier in the first column) and these fields, by name or 1-based position
        (``"name,city,street"``), are joined by a space into each label (see
        :func:`read_label_table`, and the module docstring for why joined rather than averaged).
    delimiter, header
        How to read record table files (with ``label_columns``).
    progress : callable, optional
        Called with the name of each step as it starts (``"n-grams"``, ``"A against B"``,
        ``"B against A"``): the two searches are the long part on large label sets.

    Returns
    -------
    pandas.DataFrame
        Columns ``node_a``, ``node_b`` (str) and ``score`` (float64 in (0, 1]), sorted by
        ``(node_a, node_b)``.

    Raises
    ------
    InvalidParameterError
        A parameter is out of range, or a Series or dict repeats an identifier.
    InputFormatError
        A label file is malformed (see :func:`read_labels`).

    Notes
    -----
    The score of a pair is the cosine of the two labels' sublinear TF-IDF vectors, exact (the
    same pairs as a dense ``cosine_similarity`` and a per-row sort, up to rounding in the last
    bits); the n_A x n_B matrix is never formed. The weighting, the search (prefix filtering
    over n-grams numbered from the rarest) and its cost are described in the module
    docstring; ``scripts/bench/bench_labels.py`` measures the time.

    Examples
    --------
    >>> a = {"a1": "Vantric Freight Limited", "a2": "Olmera Foods"}
    >>> b = {"b1": "Olmera Food", "b2": "Vantric Freight Ltd"}
    >>> df = label_prior(a, b, top_k=1)
    >>> df[["node_a", "node_b"]].values.tolist()
    [['a1', 'b2'], ['a2', 'b1']]
    """
    _check_params(top_k, min_similarity, ngram_range, block_rows)
    if label_columns is None:
        sa, sb = _as_labels(labels_a, "labels_a"), _as_labels(labels_b, "labels_b")
    else:
        LabelConfig(label_columns=label_columns)  # the option's declared check and message
        read = {"delimiter": delimiter, "header": header}
        sa = _record_labels(labels_a, label_columns, "labels_a", **read)
        sb = _record_labels(labels_b, label_columns, "labels_b", **read)
    step = progress or (lambda name: None)
    step("n-grams")
    xa, xb = tfidf_matrices(sa.to_numpy(), sb.to_numpy(), ngram_range=ngram_range)
    # the threshold is lowered by the rounding of a dot product (ROUNDING), so that a pair whose cosine
    # is min_similarity exactly (two identical labels at min_similarity 1) is not lost to its last bits
    ia, ib, score = _similar_pairs(xa, xb, top_k, max(min_similarity - ROUNDING, 0.5 * min_similarity),
                                   BLOCK_ROWS if block_rows is None else block_rows, step)
    return pd.DataFrame({
        "node_a": pd.Series(sa.index.to_numpy()[ia], dtype=object),
        "node_b": pd.Series(sb.index.to_numpy()[ib], dtype=object),
        "score": score.astype(np.float64),
    })


def _similar_pairs(xa: sp.csr_array, xb: sp.csr_array, top_k: int, min_similarity: float,
                   block_rows: int, step=lambda name: None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Row of A, row of B and score of the union of both sides' top_k pairs, sorted by (a, b)."""
    # number the n-grams from the rarest to the most common (ties by vocabulary order), so
    # that each row's common n-grams come last (the kernel's prefix filter); the per-thread
    # accumulators are dense over the nodes, never over the pairs
    df = np.bincount(xa.indices, minlength=xa.shape[1]) + np.bincount(xb.indices, minlength=xb.shape[1])
    rank = np.empty(len(df), dtype=np.int64)
    rank[np.argsort(df, kind="stable")] = np.arange(len(df))
    xa, xb = _renumber(xa, rank), _renumber(xb, rank)
    step("A against B")
    ra, ca = _top_k(xa, xb, top_k, min_similarity, block_rows)
    step("B against A")
    rb, cb = _top_k(xb, xa, top_k, min_similarity, block_rows)
    nb = xb.shape[0]
    key = unique(np.concatenate([ra * nb + ca, cb * nb + rb]))  # sorted by (a, b): by identifier
    ia, ib = key // nb, key % nb
    # one score per pair however it was found: the dot product in the order of the n-grams
    score = np.empty(len(key))
    _k.pair_dots(xa.indptr, xa.indices, xa.data, xb.indptr, xb.indices, xb.data, ia, ib, score)
    # a cosine within rounding of 1 is 1: identical labels (0.9999999999999988 summed in floating point)
    return ia, ib, np.where(score > 1.0 - ROUNDING, 1.0, score)
