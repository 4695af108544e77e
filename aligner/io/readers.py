"""Read networks and similarity tables from files; write the outputs of a run.

Everything that touches the file system lives here. Readers return the canonical
array forms of :mod:`aligner.core.network` and plain arrays; they never print.
"""

from __future__ import annotations

import csv
import gzip
import io as _io
import json
import math
import os
import re
import shutil
import signal
import stat
import tempfile
import zlib
from contextlib import contextmanager, suppress
from dataclasses import dataclass, field
from pathlib import Path
from typing import Iterator

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pac
import pyarrow.csv as pacsv

from aligner.checks import check_choice
from aligner.errors import InputFormatError, InvalidParameterError
from aligner.core.network import Network, merge_duplicate_pairs, network_from_edges

__all__ = [
    "read_network",
    "read_prior",
    "read_pairs",
    "PriorTable",
    "PairTable",
    "write_text_atomic",
    "write_table_atomic",
    "EVALUE_CAP",
]

#: -log10 of an E-value of exactly 0 is taken as this value (the smallest positive double is
#: about 1e-308, so no finite E-value gives more).
EVALUE_CAP = 310.0

HEADER_WORDS = {
    "node", "node_a", "node_b", "node1", "node2", "source", "target", "src", "dst", "from", "to",
    "id1", "id2", "protein1", "protein2", "weight", "score", "similarity",
    "evalue", "e_value", "distance", "gene1", "gene2", "neuron1", "neuron2", "left", "right",
}
DELIMITERS = {"tab": "\t", "comma": ",", "semicolon": ";", "space": " ", "whitespace": None}


def _open_text(path: str) -> Iterator[str]:
    """Yield the lines of a text file, gzip-compressed or not, with any UTF-8 byte-order mark removed."""
    with open(path, "rb") as fh:
        magic = fh.read(2)
    opener = gzip.open if magic == b"\x1f\x8b" else open
    with opener(path, "rt", encoding="utf-8-sig", newline="") as fh:
        yield from fh


def _check_readable(path: str) -> None:
    p = Path(path)
    if not p.exists():
        raise InputFormatError("no such file; check the path", path=path)
    if p.is_dir():
        raise InputFormatError("is a directory, not a file; give the path of a file", path=path)
    if not os.access(p, os.R_OK):
        raise InputFormatError("the file cannot be read (permission denied); check its permissions", path=path)


def _data_lines(path: str, sep: str | None = None) -> Iterator[tuple[int, str]]:
    """Yield (line number, text) of the non-blank, non-comment lines.

    Blank as pandas' C reader sees it: only spaces and tabs (only spaces in a tab-delimited
    file, where a tab separates empty fields); other white space such as a form feed or a
    no-break space is data. A comment line starts with '#' after such blanks.
    """
    blank = " " if sep == "\t" else " \t"
    for no, line in enumerate(_open_text(path), 1):
        text = line.rstrip("\r\n")
        stripped = text.lstrip(blank)
        if stripped and not stripped.startswith("#"):
            yield no, text


def _detect_delimiter(path: str, first: str) -> str | None:
    if "\t" in first:
        return "\t"
    if "," in first:
        return ","
    if ";" in first:
        return ";"
    return None  # runs of white space


def _split(line: str, sep: str | None) -> list[str]:
    if sep is None:
        # runs of spaces and tabs only, as pandas' sep=r"\s+" (str.split would also split at
        # other Unicode white space, which pandas keeps inside a field)
        return re.split(r"[ \t]+", line.strip(" \t"))
    try:
        return next(csv.reader([line], delimiter=sep))
    except csv.Error:
        if '"' not in line:  # e.g. a field over csv.field_size_limit(); csv would split as str.split
            return line.split(sep)
        raise


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


@dataclass
class _RawTable:
    columns: list[np.ndarray]
    line_numbers: np.ndarray | None  # filled only on the slow path
    has_header: bool
    header: list[str] | None
    path: str
    first_line: int  # file line number of the first data row
    sep: str | None = None  # the delimiter (None: runs of white space)


def _read_raw(path: str, *, min_cols: int, max_cols: int, delimiter: str | None, header: str,
              what: str) -> _RawTable:
    """Read a delimited table of strings with ``min_cols``..``max_cols`` columns.

    Fast path: pandas' C reader. The file is scanned line by line only to locate an error.
    Any failure to read or decode the file becomes an InputFormatError naming it.
    """
    try:
        return _read_raw_unchecked(path, min_cols=min_cols, max_cols=max_cols, delimiter=delimiter,
                                   header=header, what=what)
    except UnicodeDecodeError as exc:
        raise InputFormatError(f"is not UTF-8 text ({exc.reason} at byte {exc.start}); save it as UTF-8",
                               path=path) from None
    except (OSError, EOFError, zlib.error) as exc:  # gzip.BadGzipFile is an OSError
        raise InputFormatError(f"cannot be read ({exc}); check that the file is complete and not "
                               "damaged", path=path) from None
    except csv.Error as exc:
        raise InputFormatError(f"cannot be parsed ({exc}); check the quoting and the delimiter (give "
                               "--delimiter)", path=path) from None


def _read_raw_unchecked(path: str, *, min_cols: int, max_cols: int, delimiter: str | None, header: str,
                        what: str) -> _RawTable:
    check_choice(header, "header", ("auto", "yes", "no"))
    if delimiter is not None and delimiter not in DELIMITERS and (
            not isinstance(delimiter, str) or len(delimiter) != 1 or delimiter in '"#\r\n'):
        raise InvalidParameterError(
            "The 'delimiter' parameter of the file readers must be tab, comma, semicolon, space, whitespace "
            f"or one character other than a quote, '#' or a line break. Got {delimiter!r} instead.")
    _check_readable(path)
    a_what = f"{'an' if what[:1] in 'aeiou' else 'a'} {what}"
    try:
        lines = _data_lines(path)
        first = next(lines, None)
        second = next(lines, None)
    except UnicodeDecodeError as exc:
        raise InputFormatError(f"is not UTF-8 text ({exc.reason} at byte {exc.start}); "
                               "save it as UTF-8", path=path) from None
    except (OSError, EOFError, gzip.BadGzipFile) as exc:
        raise InputFormatError(f"cannot be read ({exc}); check that the file is complete and not damaged",
                               path=path) from None
    if first is None:
        raise InputFormatError(f"is empty: expected {a_what} with {min_cols}"
                               f"{'' if min_cols == max_cols else f' to {max_cols}'} columns "
                               "(blank lines and lines starting with # are skipped)", path=path)
    if delimiter is None:
        sep = _detect_delimiter(path, first[1])
    else:
        sep = DELIMITERS.get(delimiter, delimiter)
    fields = _split(first[1], sep)
    if header == "auto":
        low = [f.strip().lower() for f in fields]
        has_header = all(f in HEADER_WORDS for f in low) or (
            len(fields) >= 3 and not _is_number(fields[2]) and second is not None
            and len(_split(second[1], sep)) >= 3 and _is_number(_split(second[1], sep)[2]))
    else:
        has_header = header == "yes"
    if has_header and second is None:
        raise InputFormatError(f"has a header line but no data rows: expected {a_what} below it", path=path,
                               line=first[0])
    ncols = len(fields)
    start_no, start_text = (second if has_header else first)
    ncols = len(_split(start_text, sep))
    expect = f"{min_cols}" if min_cols == max_cols else f"{min_cols} to {max_cols}"
    if ncols < min_cols:
        raise InputFormatError(
            f"has {ncols} column{'s' if ncols != 1 else ''}, expected {expect} for {a_what}"
            + ("" if sep is not None else " (the delimiter was taken to be white space; give --delimiter)"),
            path=path, line=start_no)
    if ncols > max_cols:
        raise InputFormatError(f"has {ncols} columns, expected at most {max_cols} for {a_what}; "
                               "remove the extra columns", path=path, line=start_no)
    # both readers skip every line before the first data row (comments, blanks, the header)
    cols = _read_arrow(path, sep, ncols, start_no - 1)
    if cols is not None:
        return _RawTable(cols, None, has_header, fields if has_header else None, path, start_no, sep)
    # pandas' comment="#" would also cut a line at a '#' inside it ("gene#1"), and its skiprows
    # does not count a blank line ended by a lone CR: in those cases pandas is given the data
    # lines as _data_lines sees them (a slower Python pass), otherwise the file itself
    source = path
    if _needs_line_filter(path):
        source = _io.StringIO("\n".join(t for no, t in _data_lines(path, sep) if no >= start_no))
    try:
        df = pd.read_csv(
            source,
            sep=r"\s+" if sep is None else sep,
            header=None,
            names=list(range(ncols)),
            skiprows=range(start_no - 1) if source is path else None,
            comment=None,
            dtype=str,
            keep_default_na=False,
            skip_blank_lines=True,
            encoding="utf-8-sig",
            compression=("gzip" if _is_gzip(path) else None) if source is path else None,  # by content
            engine="c",
            on_bad_lines="error",
        )
    except pd.errors.ParserError as exc:
        _raise_bad_row(path, sep, ncols, start_no, what)
        raise InputFormatError(f"cannot be parsed ({exc}); check the quoting and the delimiter",
                               path=path) from None
    except UnicodeDecodeError as exc:
        raise InputFormatError(f"is not UTF-8 text ({exc.reason}); save it as UTF-8", path=path) from None
    cols = [df[c].to_numpy(dtype=object) for c in range(ncols)]
    if any(df[c].str.contains("[\r\n]", regex=True).any() for c in range(ncols)):
        # a quoted field running over a line break: one record per line is the format
        no, text = next(((no, t) for no, t in _data_lines(path, sep) if no >= start_no and t.count('"') % 2),
                        (None, ""))
        raise InputFormatError(f"has a quote that is not closed on its line: {text[:80]!r}; close it or "
                               "remove the quote", path=path, line=no)
    # A short row shows up as empty strings in its last columns.
    bad = np.zeros(len(df), dtype=bool)
    for c in range(min_cols):
        bad |= cols[c] == ""
    if bad.any():
        _raise_bad_row(path, sep, ncols, start_no, what)
        row = int(np.argmax(bad))
        no, text = _locate(path, start_no, row, sep)
        raise InputFormatError(f"has an empty field: {text[:80]!r}; fill it in or remove the row", path=path,
                               line=no)
    return _RawTable(cols, None, has_header, fields if has_header else None, path, start_no, sep)


def _needs_line_filter(path: str) -> bool:
    """Whether the (decompressed) file holds a '#' or a lone CR; a fast byte scan."""
    opener = gzip.open if _is_gzip(path) else open
    with opener(path, "rb") as fh:
        while chunk := fh.read(1 << 20):
            if b"#" in chunk or re.search(rb"\r(?!\n)", chunk):
                return True
    return False


def _read_arrow(path: str, sep: str | None, ncols: int, skip: int) -> list | None:
    """Fast path: pyarrow's multi-threaded CSV reader, for a single-character delimiter.

    ``skip`` lines (leading comments, blank lines, the header) are skipped. Returns the
    columns (strings as pyarrow arrays; a third column as float64 when every value parses), or
    None when the file needs the careful reader: white-space delimited, a comment or a short
    row further down, a value that does not parse. The careful reader then finds and names
    the line at fault, so this path never has to.
    """
    if sep is None:
        return None
    names = [f"c{k}" for k in range(ncols)]
    types = {n: pa.string() for n in names[:2]}
    try:
        source = pa.input_stream(path, compression="gzip" if _is_gzip(path) else None)
        try:
            table = pacsv.read_csv(
                source,
                read_options=pacsv.ReadOptions(column_names=names, skip_rows=skip, encoding="utf8"),
                # no quoting here: a file with quotes goes to the careful reader, so that quoting
                # follows one set of rules (pyarrow accepted a quote left open at the end of the file)
                parse_options=pacsv.ParseOptions(delimiter=sep, quote_char=False, newlines_in_values=False),
                convert_options=pacsv.ConvertOptions(column_types=types, null_values=[],
                                                     strings_can_be_null=False, quoted_strings_can_be_null=False),
            )
        finally:
            source.close()
    except (pa.ArrowException, OSError, ValueError):
        return None
    cols = []
    for k, name in enumerate(names):
        col = table.column(name)
        col = col.combine_chunks() if isinstance(col, pa.ChunkedArray) else col
        if k < 2:
            if len(col) and (pac.any(pac.starts_with(pac.utf8_ltrim(col, characters=" \t"), "#")).as_py()
                             or pac.any(pac.equal(pac.utf8_length(col), 0)).as_py()
                             or pac.any(pac.match_substring_regex(col, "[\r\n\"]")).as_py()):
                return None  # a comment line, an empty field, a quote: the careful reader
            if k == 0 and len(col) and col[0].as_py().startswith("\ufeff"):
                return None  # a byte-order mark pyarrow kept
            cols.append(col)
        else:
            values = None
            if pa.types.is_string(col.type) and len(col) and (
                    pac.any(pac.match_substring_regex(col, "[\r\n\"]")).as_py()
                    or pac.any(pac.equal(pac.utf8_length(col), 0)).as_py()):
                return None  # a quote or an empty field
            if pa.types.is_floating(col.type) or pa.types.is_integer(col.type):
                values = col.to_numpy(zero_copy_only=False).astype(np.float64)
            # a column that is not all finite numbers stays as text for the careful checks
            cols.append(values if values is not None and np.isfinite(values).all()
                        else col.cast(pa.string()).to_numpy(zero_copy_only=False))
    return cols


def _is_gzip(path: str) -> bool:
    with open(path, "rb") as fh:
        return fh.read(2) == b"\x1f\x8b"


def _locate(path: str, start: int, row: int, sep: str | None) -> tuple[int | None, str]:
    """The file line number and text of data row ``row`` (0-based, from line ``start`` on)."""
    k = 0
    for no, text in _data_lines(path, sep):
        if no < start:
            continue
        if k == row:
            return no, text
        k += 1
    return None, ""


def _raise_bad_row(path: str, sep: str | None, ncols: int, start: int, what: str) -> None:
    for no, text in _data_lines(path, sep):
        if no < start:
            continue
        got = len(_split(text, sep))
        if got != ncols:
            why = ("a quote that is not closed on its line? close it or remove the quote" if text.count('"') % 2
                   else "mixed delimiters or a stray column?")
            raise InputFormatError(
                f"has {got} field{'s' if got != 1 else ''} where the first row has {ncols}; "
                f"{why} {text[:80]!r}", path=path, line=no)


def _numeric(raw: _RawTable, col: int, label: str) -> np.ndarray:
    """Column ``col`` as float64; a non-numeric or non-finite entry is an error naming its line."""
    if isinstance(raw.columns[col], np.ndarray) and raw.columns[col].dtype == np.float64:
        return raw.columns[col]  # parsed and checked finite by the fast reader
    values = pd.to_numeric(pd.Series(raw.columns[col]), errors="coerce").to_numpy(dtype=np.float64)
    bad = ~np.isfinite(values)
    if bad.any():
        row = int(np.argmax(bad))
        no, _ = _locate(raw.path, raw.first_line, row, raw.sep)
        raise InputFormatError(f"the {label} {raw.columns[col][row]!r} is not a finite number; the column "
                               "must hold numbers such as 0.5 or 1e-3", path=raw.path, line=no)
    return values


def _line_of(raw: _RawTable, row: int) -> int:
    return _locate(raw.path, raw.first_line, row, raw.sep)[0]


# --------------------------------------------------------------------------- networks

def read_network(path: str | os.PathLike, *, delimiter: str | None = None, header: str = "auto",
                 directed: bool = False) -> Network:
    """Read a network from an edge list (undirected unless ``directed``).

    Parameters
    ----------
    path : str or path-like
        A TSV/CSV/white-space edge list, optionally gzip-compressed: two columns of node
        identifiers and an optional third column of non-negative edge weights. Lines starting
        with ``#`` and blank lines are ignored.
    delimiter : str, optional
        ``"tab"``, ``"comma"``, ``"semicolon"``, ``"whitespace"`` or a literal character.
        Detected from the first data line when omitted.
    header : {"auto", "yes", "no"}
        Whether the first data line is a header. ``"auto"`` takes it as one when its fields
        are common column names (``source``, ``target``, ``node_a`` ...) or when its third
        field is text while the next line's is a number.
    directed : bool
        Read each row as an arc from the first column to the second.

    Returns
    -------
    Network
        Self-loops dropped and duplicate edges (arcs) merged (weights summed), each counted.

    Raises
    ------
    InputFormatError
        The file is missing, empty, not UTF-8, or a row is malformed; the message names the line.
    """
    path = os.fspath(path)
    raw = _read_raw(path, min_cols=2, max_cols=3, delimiter=delimiter, header=header, what="edge list")
    weights = None
    if len(raw.columns) == 3:
        weights = _numeric(raw, 2, "edge weight")
        if (weights < 0).any():
            row = int(np.argmax(weights < 0))
            raise InputFormatError(f"the edge weight {weights[row]:g} is negative; weights must be >= 0",
                                   path=path, line=_line_of(raw, row))
    a = raw.columns[0]
    b = raw.columns[1]
    names, codes = _intern(a, b)
    m = len(a)
    return network_from_edges(names, codes[:m], codes[m:], weights, source=path, directed=directed)


# --------------------------------------------------------------------------- priors

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


def transform_scores(values: np.ndarray, kind: str) -> tuple[np.ndarray, np.ndarray]:
    """Turn raw prior values into similarities; return them and a mask of rows to keep.

    ``similarity``: used as given (must be >= 0). ``evalue``: ``-log10(E)``, with E = 0 given
    :data:`EVALUE_CAP`; rows with E > 1 carry no evidence of similarity and are dropped.
    ``distance``: ``1 / (1 + d)`` (must be >= 0).
    """
    keep = np.ones(len(values), dtype=bool)
    if kind == "similarity":
        return values.astype(np.float64), keep
    if kind == "evalue":
        keep = values <= 1.0
        with np.errstate(divide="ignore"):
            s = np.where(values > 0, -np.log10(np.where(values > 0, values, 1.0)), EVALUE_CAP)
        return np.minimum(s, EVALUE_CAP), keep
    if kind == "distance":
        return 1.0 / (1.0 + values), keep
    raise ValueError(kind)


def prior_from_columns(
    a: np.ndarray, b: np.ndarray, values: np.ndarray, net_a: Network, net_b: Network, *,
    kind: str = "similarity", source: str = "<memory>", line_of=None,
) -> PriorTable:
    """Map a prior given as three columns onto the node indices of two networks.

    Unknown nodes are counted and skipped; duplicate pairs keep the highest similarity.
    """
    values = np.asarray(values, dtype=np.float64)
    bad = ~np.isfinite(values)
    if kind in ("similarity", "distance", "evalue"):
        bad |= values < 0
    if bad.any():
        row = int(np.argmax(bad))
        what = "not a finite number" if not np.isfinite(values[row]) else "negative"
        need = {"similarity": "similarities must be >= 0 (use --score-kind distance for dissimilarities)",
                "distance": "distances must be >= 0", "evalue": "E-values must be >= 0"}[kind]
        raise InputFormatError(f"the score {float(values[row])!r} is {what}; {need}", path=source,
                               line=None if line_of is None else line_of(row))
    scores, keep = transform_scores(values, kind)
    ia = _lookup(net_a.names, a)
    ib = _lookup(net_b.names, b)
    known = (ia >= 0) & (ib >= 0)
    n_unknown = int((~known).sum())
    examples = [f"{_at(a, r)} / {_at(b, r)}" for r in np.flatnonzero(~known)[:3]]
    ok = known & keep
    pairs = np.stack([ia[ok], ib[ok]], axis=1).astype(np.int32) if ok.any() else np.empty((0, 2), np.int32)
    sc = scores[ok]
    # duplicate pairs: the highest similarity wins
    pairs, sc, n_dup = merge_duplicate_pairs(pairs, sc, net_b.n)
    pairs = pairs.astype(np.int32)
    return PriorTable(pairs=pairs, scores=sc, n_rows=len(values), n_unknown=n_unknown,
                      unknown_examples=examples, n_dropped_kind=int((known & ~keep).sum()),
                      n_duplicates=n_dup, source=source)


def _arrow_strings(values) -> pa.Array:
    if isinstance(values, pa.ChunkedArray):
        return values.combine_chunks()
    if isinstance(values, pa.Array):
        return values
    return pa.array(np.asarray(values, dtype=object), type=pa.string())


def _intern(a, b) -> tuple[np.ndarray, np.ndarray]:
    """Sorted unique identifiers of two columns and the index of every entry among them.

    Identifiers sort by code point (UTF-8 byte order), the same order as Python's ``sorted``.
    """
    both = pa.concat_arrays([_arrow_strings(a), _arrow_strings(b)])
    uniq = pac.unique(both)
    uniq = uniq.take(pac.array_sort_indices(uniq))
    codes = pac.index_in(both, value_set=uniq).to_numpy(zero_copy_only=False)
    return uniq.to_numpy(zero_copy_only=False).astype(object), codes.astype(np.int64)


def _at(values, row: int) -> str:
    """Entry ``row`` of a string column (numpy or pyarrow) as a Python string."""
    v = values[int(row)]
    return v.as_py() if isinstance(v, pa.Scalar) else str(v)


def _lookup(names: np.ndarray, query) -> np.ndarray:
    """Index of each query identifier in the ``names`` array, -1 where absent (a hash look-up)."""
    if len(names) == 0:
        return np.full(len(query), -1, dtype=np.int64)
    idx = pac.index_in(_arrow_strings(query), value_set=_arrow_strings(names))
    return pac.fill_null(idx, -1).to_numpy(zero_copy_only=False).astype(np.int64)


def read_prior(path: str | os.PathLike, net_a: Network, net_b: Network, *, kind: str = "similarity",
               delimiter: str | None = None, header: str = "auto") -> PriorTable:
    """Read a prior similarity table ``node_a, node_b, score`` and map it onto two networks.

    Raises
    ------
    InputFormatError
        A row is malformed or a score is non-numeric, NaN, infinite or negative; the message
        names the file and line.
    """
    path = os.fspath(path)
    raw = _read_raw(path, min_cols=3, max_cols=3, delimiter=delimiter, header=header, what="prior table")
    values = _numeric(raw, 2, "score")
    return prior_from_columns(raw.columns[0], raw.columns[1], values, net_a, net_b, kind=kind,
                              source=path, line_of=lambda r: _line_of(raw, r))


@dataclass(frozen=True)
class PairTable:
    """Two columns of node pairs (a truth table or an alignment), mapped onto two networks."""

    pairs: np.ndarray
    n_rows: int
    n_unknown: int
    unknown_examples: list[str]
    source: str


def read_pairs(path: str | os.PathLike, net_a: Network, net_b: Network, *, delimiter: str | None = None,
               header: str = "auto", what: str = "pair table") -> PairTable:
    """Read a table whose first two columns are node pairs (extra columns are ignored)."""
    path = os.fspath(path)
    raw = _read_raw(path, min_cols=2, max_cols=64, delimiter=delimiter, header=header, what=what)
    a, b = raw.columns[0], raw.columns[1]
    ia = _lookup(net_a.names, a)
    ib = _lookup(net_b.names, b)
    known = (ia >= 0) & (ib >= 0)
    examples = [f"{_at(a, r)} / {_at(b, r)}" for r in np.flatnonzero(~known)[:3]]
    pairs = np.stack([ia[known], ib[known]], axis=1).astype(np.int32) if known.any() else np.empty((0, 2), np.int32)
    return PairTable(pairs=pairs, n_rows=len(a), n_unknown=int((~known).sum()), unknown_examples=examples,
                     source=path)


# --------------------------------------------------------------------------- writing

def write_text_atomic(path: str | os.PathLike, text: str) -> None:
    """Write ``text`` to a temporary file beside ``path`` and rename it into place when complete."""
    path = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise


def write_table_atomic(path: str | os.PathLike, df: pd.DataFrame) -> None:
    """Write a DataFrame as TSV (header, no index, ``%.10g`` floats), atomically."""
    buf = _io.StringIO()
    df.to_csv(buf, sep="\t", index=False, float_format="%.10g", lineterminator="\n")
    write_text_atomic(path, buf.getvalue())


def write_json_atomic(path: str | os.PathLike, obj: object) -> None:
    """Write ``obj`` as indented JSON, atomically. Non-finite floats become null."""
    write_text_atomic(path, json.dumps(_finite(obj), indent=2, sort_keys=False) + "\n")


def _finite(obj):
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: _finite(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_finite(v) for v in obj]
    if isinstance(obj, np.generic):
        return _finite(obj.item())
    return obj


# --------------------------------------------------------------------------- publishing a set of outputs

def table_text(df: pd.DataFrame) -> str:
    """A DataFrame as TSV text (header, no index, ``%.10g`` floats), as the outputs are written."""
    buf = _io.StringIO()
    df.to_csv(buf, sep="\t", index=False, float_format="%.10g", lineterminator="\n")
    return buf.getvalue()


def json_text(obj: object) -> str:
    """``obj`` as indented JSON text; non-finite floats become null."""
    return json.dumps(_finite(obj), indent=2, sort_keys=False) + "\n"


@contextmanager
def _signals_deferred():
    """Hold back SIGINT, SIGTERM and SIGHUP (delivered on exit) around a few renames."""
    sigs = {getattr(signal, s) for s in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, s)}
    if not hasattr(signal, "pthread_sigmask"):  # pragma: no cover - not POSIX
        yield
        return
    old = signal.pthread_sigmask(signal.SIG_BLOCK, sigs)
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, old)


def _fsync_dir(path: Path) -> None:
    try:
        fd = os.open(path, os.O_RDONLY)
    except OSError:  # pragma: no cover - e.g. Windows
        return
    try:
        os.fsync(fd)
    except OSError:  # pragma: no cover
        pass
    finally:
        os.close(fd)


def _staging_name(out: Path, kind: str) -> str:
    return f".{out.name}.aligner-{kind}-{os.getpid()}-{os.urandom(4).hex()}"


def _can_swap(out: Path) -> bool:
    """Whether ``out`` may be renamed aside: not a mount point, not (holding) the working directory."""
    try:
        cwd = os.getcwd()
    except OSError:
        cwd = ""
    inside = cwd == str(out) or cwd.startswith(str(out).rstrip(os.sep) + os.sep)
    return not inside and not os.path.ismount(out) and os.access(out.parent, os.W_OK | os.X_OK)


def publish_outputs(outdir: str | os.PathLike, texts: dict[str, str]) -> None:
    """Make the files ``texts`` (name -> text) appear in the directory ``outdir`` as one set.

    A reader, or a run killed at any moment (Ctrl-C, SIGKILL), sees either the previous
    outputs or the new ones, never a mix; other files in ``outdir`` are kept. The scheme
    (one ``rename`` is atomic on POSIX; three are not, so the directory is swapped):

    1. The files are written, flushed and fsynced into a new staging directory
       ``.<name>.aligner-new-<pid>-<random>`` beside ``outdir`` (same file system).
    2. No ``outdir`` yet: the staging directory is renamed to ``outdir``: one atomic step.
    3. ``outdir`` exists: it is renamed aside to ``.<name>.aligner-old-<pid>-<random>``, the
       staging directory is renamed to ``outdir``, the user's other entries are moved from the
       old directory into the new one, and the old outputs and directory are removed. Between
       the two renames ``outdir`` is briefly absent (no outputs); it never holds a mix.

    The renames run with SIGINT/SIGTERM/SIGHUP held back (delivered when they are done). If
    the process is killed during step 3 anyway, :func:`recover_interrupted` (called by
    ``check_outdir`` before the next run) puts the user's files back. When ``outdir`` cannot
    be renamed (a mount point, the working directory or one holding it, an unwritable
    parent), the files are staged inside it and renamed into place one by one, summary
    last, signals held back: atomic against Ctrl-C, but not against SIGKILL in that window.
    """
    out = Path(os.path.realpath(outdir))
    parent = out.parent
    swap = not out.exists() or _can_swap(out)
    if not out.exists():
        parent.mkdir(parents=True, exist_ok=True)
    new = (parent if swap else out) / _staging_name(out, "new")
    try:  # from the mkdir on: a Ctrl-C landing just after it must still remove the staging directory
        os.mkdir(new)  # mode 0o777 less the umask, as a plain mkdir
        for name, text in texts.items():
            with open(new / name, "x", encoding="utf-8", newline="\n") as fh:
                fh.write(text)
                fh.flush()
                os.fsync(fh.fileno())
        _fsync_dir(new)
        if swap and out.exists():
            os.chmod(new, stat.S_IMODE(os.stat(out).st_mode))
        with _signals_deferred():
            if swap and not out.exists():
                os.rename(new, out)
            elif swap:
                old = parent / _staging_name(out, "old")
                os.rename(out, old)
                try:
                    os.rename(new, out)
                except OSError:
                    os.rename(old, out)
                    raise
                for entry in os.listdir(old):
                    if entry not in texts:
                        os.rename(old / entry, out / entry)
                for name in texts:
                    with suppress(FileNotFoundError):
                        os.unlink(old / name)
                os.rmdir(old)
            else:
                for name in sorted(texts, key=lambda n: n == "summary.json"):
                    os.replace(new / name, out / name)
                os.rmdir(new)
        _fsync_dir(parent if swap else out)
    except BaseException:
        shutil.rmtree(new, ignore_errors=True)
        raise


def _dead(pid: str) -> bool:
    if not pid.isdigit() or int(pid) == os.getpid():
        return False
    try:
        os.kill(int(pid), 0)
    except ProcessLookupError:
        return True
    except OSError:
        return False
    return False


def recover_interrupted(outdir: str | os.PathLike, names) -> list[str]:
    """Undo what a killed :func:`publish_outputs` left behind for ``outdir``; return notes.

    Staging directories of dead processes are removed; an ``-old-`` directory (the process
    was killed while swapping) is put back as ``outdir`` when that is missing, or else the
    user's files in it are moved back into ``outdir``. A note names anything left over.
    """
    out = Path(os.path.realpath(outdir))
    notes = []
    for where, prefix in ((out.parent, f".{out.name}.aligner-"), (out, f".{out.name}.aligner-new-")):
        try:
            entries = sorted(os.listdir(where))
        except OSError:
            continue
        for entry in entries:
            if not entry.startswith(prefix):
                continue
            kind, _, rest = entry[len(f".{out.name}.aligner-"):].partition("-")
            if kind not in ("new", "old") or not _dead(rest.split("-")[0]):
                continue
            path = where / entry
            if kind == "new":
                shutil.rmtree(path, ignore_errors=True)
                continue
            if not out.exists():
                os.rename(path, out)
                notes.append(f"restored '{out}' from an interrupted run")
                continue
            for item in os.listdir(path):
                if item in names:
                    with suppress(FileNotFoundError):
                        os.unlink(path / item)
                elif not os.path.lexists(out / item):
                    os.rename(path / item, out / item)
            with suppress(OSError):
                os.rmdir(path)
            if path.exists():
                notes.append(f"'{path}' holds files left by an interrupted run; move back what you need "
                             "and delete it")
    return notes
