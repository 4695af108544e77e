"""Parse delimited files (edge lists, prior, pair and seed tables) into columns and arrays.

Parsing only: every reader here turns a file into columns of strings (and numbers) with
line-accurate errors; the one exception, :func:`read_network`, also numbers the nodes, since
an edge list's canonical form is a :class:`~aligner.core.network.Network`. What a prior score
means is :mod:`aligner.core.prior`; turning a caller's object into a table is
:mod:`aligner.io.inputs`; writing is :mod:`aligner.io.outputs`. Readers never print.
"""

from __future__ import annotations

import csv
import gzip
import io as _io
import os
import re
import zlib
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Iterator

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pac
import pyarrow.csv as pacsv

from aligner.checks import bad_parameter, check_choice, warn
from aligner.config import DELIMITER, DELIMITER_NAMES, DELIMITER_SHAPE, HEADERS
from aligner.core.network import Network, network_from_edges
from aligner.errors import InputFormatError, InvalidParameterError
from aligner.io.paths import input_files
from aligner.core.identifiers import intern, lookup, pairs_from_columns, PairTable
from aligner.core.prior import PriorTable, prior_from_columns

__all__ = [
    "NoRows",
    "Table",
    "Columns",
    "read_table",
    "read_network",
    "network_from_table",
    "edge_weights",
    "checked_network",
    "same_columns",
    "read_part",
    "all_parts_empty",
    "read_prior",
    "read_pairs",
    "PairTable",
    "PriorTable",
    "open_text",
    "check_readable",
    "data_lines",
    "read_node_list",
    "reading_errors",
    "DELIMITERS",
    "FIELD_BLANKS",
]

HEADER_WORDS = {
    "node", "node_a", "node_b", "node1", "node2", "source", "target", "src", "dst", "from", "to",
    "id1", "id2", "protein1", "protein2", "weight", "score", "similarity",
    "evalue", "e_value", "distance", "gene1", "gene2", "neuron1", "neuron2", "left", "right",
    "pre", "post", "presynaptic", "postsynaptic", "sender", "receiver", "synapses", "count",
}
#: Further column names: a word naming one end of a link, with a suffix (``source_id``,
#: ``from_node``, ``pre_neuron``, ``postsynaptic_cell``, ``receiver-name``).
_END_NAME = re.compile(r"^(?:source|target|src|dst|from|to|pre|post|presynaptic|postsynaptic|sender|receiver|"
                       r"start|end|head|tail)[ _.-]?(?:id|node|name|neuron|cell)$")


def _header_word(field: str) -> bool:
    """Whether ``field`` is a common column name (:data:`HEADER_WORDS`, or an end of a link
    with a suffix, :data:`_END_NAME`), ignoring case and the blanks around it."""
    f = field.strip().lower()
    return f in HEADER_WORDS or _END_NAME.match(f) is not None

#: A first line whose first two fields both look like column names by their shape (a word and a
#: side marker: ``geneA``/``geneB``, ``interactor_1``/``interactor_2``, ``a``/``b``) but are not in
#: HEADER_WORDS is read as data; when neither field occurs again in the file it is also reported
#: (see :func:`_warn_if_header_like`).
_COLUMN_NAME_SHAPE = re.compile(r"^[A-Za-z]+(?:[ _.-]?[A-Za-z]+)*[ _.-]?(?:[0-9]|[A-Za-z])$|^[A-Za-z]$")
#: The names ``delimiter`` / ``--delimiter`` accepts besides a single character (declared in
#: :data:`aligner.config.DELIMITER_NAMES`), and what each stands for.
DELIMITERS = dict(zip(DELIMITER_NAMES, ("\t", ",", ";", " ", None)))
#: What is stripped from both ends of every field of a delimited file (both readers, and the
#: header line): spaces and tabs, so that ``a1\t b1  `` names ``a1`` and ``b1``. Spaces inside an
#: identifier stay; other white space (a no-break space, a form feed) is data.
FIELD_BLANKS = " \t"


# --------------------------------------------------------------------------- lines of a file

def open_text(path: str) -> Iterator[str]:
    """Yield the lines of a text file, gzip-compressed or not, with any UTF-8 byte-order mark removed.

    Compression is detected by content (the gzip magic bytes, RFC 1952), not by the file name.
    """
    with open(path, "rb") as fh:
        magic = fh.read(2)
    opener = gzip.open if magic == b"\x1f\x8b" else open
    with opener(path, "rt", encoding="utf-8-sig", newline="") as fh:
        yield from fh


#: why a path that is no regular file is refused: every input is read more than once (a first
#: look for the delimiter and header, then the whole table), and a pipe gives its text once
NOT_A_FILE = ("is a pipe or a device, not a file (a shell's <(...) gives a pipe): an input is read more than once; "
              "write it to a file and give that")


def check_readable(path: str) -> None:
    """Refuse a path that is missing, a directory or unreadable, saying what to do.

    Raises
    ------
    InputFormatError
        Naming the path.
    """
    if not os.path.exists(path):
        raise InputFormatError("no such file; check the path", path=path)
    if os.path.isdir(path):
        raise InputFormatError("is a directory, not a file; give the path of a file", path=path)
    if not os.path.isfile(path):  # a pipe (a shell's <(...), a FIFO) or a device: its text can be read once
        raise InputFormatError(NOT_A_FILE, path=path)
    if not os.access(path, os.R_OK):
        raise InputFormatError("the file cannot be read (permission denied); check its permissions", path=path)


def data_lines(path: str, sep: str | None = None) -> Iterator[tuple[int, str]]:
    """Yield (line number, text) of the non-blank, non-comment lines of a file.

    Blank as pandas' C reader sees it: only spaces and tabs (only spaces in a tab-delimited
    file, where a tab separates empty fields); other white space such as a form feed or a
    no-break space is data. A comment line starts with '#' after such blanks.
    """
    blank = " " if sep == "\t" else " \t"
    for no, line in enumerate(open_text(path), 1):
        text = line.rstrip("\r\n")
        stripped = text.lstrip(blank)
        if stripped and not stripped.startswith("#"):
            yield no, text


def read_node_list(path: str | os.PathLike) -> tuple[list[str], list[int]]:
    """The nodes of a node file (``aligner query --node-file``): one identifier per line.

    Read as every input (gzip by content, a UTF-8 byte-order mark removed); blank lines and lines
    starting with ``#`` are skipped, and the spaces and tabs around an identifier removed.

    Returns
    -------
    names, lines : list of str, list of int
        The identifiers in file order and the line each is on, for messages.

    Raises
    ------
    InputFormatError
        The file is missing, unreadable, not UTF-8 or damaged; the message names it.
    """
    path = os.fspath(path)
    check_readable(path)
    names, lines = [], []
    with reading_errors(path):
        for no, text in data_lines(path):
            names.append(text.strip(FIELD_BLANKS))
            lines.append(no)
    return names, lines


@contextmanager
def reading_errors(path: str):
    """Within this block, a file's bytes that are not UTF-8 text, or cannot be read or
    decompressed, raise InputFormatError naming the file."""
    try:
        yield
    except UnicodeDecodeError as exc:
        raise InputFormatError(f"is not UTF-8 text ({exc.reason} at byte {exc.start}); save it as UTF-8",
                               path=path) from None
    except (OSError, EOFError, zlib.error) as exc:  # gzip.BadGzipFile is an OSError
        raise InputFormatError(f"cannot be read ({exc}); check that the file is complete and not "
                               "damaged", path=path) from None


def _detect_delimiter(first: str) -> str | None:
    """The delimiter of a file from its first data line: a tab, else a comma, else a semicolon,
    else runs of white space (None); one inside a quoted field is part of a name, not a delimiter."""
    bare = _outside_quotes(first)
    for sep in ("\t", ",", ";"):
        if sep in bare:
            return sep
    return None  # runs of white space


def _outside_quotes(line: str) -> str:
    """``line`` without its quoted fields: those that open with a quote at the start of the line or
    right after a tab, a comma or a semicolon (a quote inside a field is text, as CSV readers take
    it), up to the closing quote (a doubled quote inside stays part of the field). A quote that is
    not closed on the line is kept with the rest of the line."""
    out, i, n, at_start = [], 0, len(line), True
    while i < n:
        if line[i] == '"' and at_start:
            j = i + 1
            while j < n and not (line[j] == '"' and line[j + 1:j + 2] != '"'):
                j += 2 if line[j] == '"' else 1
            if j >= n:  # a quote not closed on its line hides nothing (the readers then name the line)
                out.append(line[i:])
                break
            i, at_start = j + 1, False
            continue
        out.append(line[i])
        at_start = line[i] in "\t,;"
        i += 1
    return "".join(out)


def _split(line: str, sep: str | None) -> list[str]:
    if sep is None:
        # runs of spaces and tabs only, as pandas' sep=r"\s+" (str.split would also split at
        # other Unicode white space, which pandas keeps inside a field)
        return re.split(r"[ \t]+", line.strip(" \t"))
    try:
        return next(csv.reader([line], delimiter=sep))
    except csv.Error:
        if len(line) > csv.field_size_limit():
            # a field over the csv module's limit (131,072 characters unless raised), quoted or
            # not: identifiers are arbitrary strings, so read this line with a limit it fits in
            # (the limit is the process's own: put back at once)
            old = csv.field_size_limit(len(line) + 1)
            try:
                return next(csv.reader([line], delimiter=sep))
            finally:
                csv.field_size_limit(old)
        if '"' not in line:  # csv would split as str.split
            return line.split(sep)
        raise


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _locate(path: str, start: int, row: int, sep: str | None) -> tuple[int | None, str]:
    """The file line number and text of data row ``row`` (0-based, from line ``start`` on)."""
    k = 0
    for no, text in data_lines(path, sep):
        if no < start:
            continue
        if k == row:
            return no, text
        k += 1
    return None, ""


# --------------------------------------------------------------------------- columns picked by an option

@dataclass(frozen=True)
class Columns:
    """Columns of a wider table picked by an option, by 1-based position or header name.

    Attributes
    ----------
    text : str
        The option's value as given: ``"1,2,11"``, ``"query,subject,evalue"`` (checked by the
        option's declaration in :mod:`aligner.config`).
    flag, keyword : str
        The option on the command line and in Python, for messages (``--prior-columns``,
        ``prior_columns``).
    prefix : tuple of int
        0-based positions taken before those the option picks (a label table's identifier,
        column 1, is always taken).

    Examples
    --------
    >>> Columns("1, 2,evalue", "--prior-columns", "prior_columns").items
    (0, 1, 'evalue')
    """

    text: str
    flag: str
    keyword: str
    prefix: tuple = ()

    @property
    def items(self) -> tuple:
        """0-based positions (int) and header names (str), in the order given (after ``prefix``)."""
        return self.prefix + tuple(int(t) - 1 if re.fullmatch(r"[0-9]+", t) else t
                                   for t in (t.strip() for t in self.text.split(",")))

    @property
    def by_name(self) -> bool:
        return any(isinstance(t, str) for t in self.items)

    @property
    def named(self) -> str:
        """How a message names the option: ``--prior-columns 1,2,11 (prior_columns='1,2,11')``."""
        return f"{self.flag} {self.text} ({self.keyword}={self.text!r})"

    def positions(self, names: list[str] | None, ncols: int, *, where: str | None = None,
                  path: str | None = None, line: int | None = None, data_line: int | None = None) -> list[int]:
        """The 0-based positions of the picked columns in a table of ``ncols`` columns.

        ``names``: the header's fields (None: the table has none). A file (``path``, ``line``)
        gets InputFormatError; an object (``where`` names it: "the DataFrame prior") gets
        InvalidParameterError for the option's keyword. Both messages name the option. ``line``
        is the header's (a name not found), ``data_line`` the first data row's (a position
        beyond its width; default ``line``).
        """
        named = self.named if path is not None else f"{self.keyword}={self.text!r}"
        found = []
        for item in self.items:
            if isinstance(item, int):
                if item >= ncols:
                    self._fail(f"has {ncols} column{'s' if ncols != 1 else ''} but {named} picks column {item + 1}; "
                               f"pick columns 1 to {ncols}" + (", or check --delimiter" if path else ""),
                               where, path, line if data_line is None else data_line)
                found.append(item)
                continue
            if names is None:
                self._fail(f"has no header line, but {named} picks the column {item!r} by name; pick it by "
                           "position (1-based) instead" + (", or give the file a header line" if path else ""),
                           where, path, line)
            clean = [str(n).strip() for n in names]
            hits = [k for k, n in enumerate(clean) if n == item] or \
                [k for k, n in enumerate(clean) if n.lower() == item.lower()]
            if len(hits) != 1:
                shown = ", ".join(clean[:16]) + (", ..." if len(clean) > 16 else "")
                why = "no column" if not hits else "more than one column"
                self._fail(f"has {why} named {item!r} (its columns: {shown}); check {named}", where, path, line)
            found.append(hits[0])
        if len(set(found)) != len(found):
            self._fail(f"has one column picked twice by {named}; pick different columns"
                       + (f" (column {self.prefix[0] + 1} is always taken)" if self.prefix else ""), where, path, line)
        return found

    def _fail(self, text: str, where: str | None, path: str | None, line: int | None):
        if path is None:  # an object: the option is the caller's parameter
            raise InvalidParameterError(f"{where} {text}", param=self.keyword)
        raise InputFormatError(text, path=path, line=line)


# --------------------------------------------------------------------------- tables

@dataclass(frozen=True, eq=False)
class Table:
    """The columns of a table and where its rows came from, for messages.

    Attributes
    ----------
    columns : tuple
        One entry per column: a numpy array (object strings, or float64 for a numeric column
        the fast reader parsed) or a pyarrow string array; from an object, its own values.
    source : str
        The file path, or a label such as ``<DataFrame prior>`` for a caller's object.
    first_line : int or None
        File line of the first data row; None when the table did not come from a file.
    sep : str or None
        The delimiter of the file (None: runs of white space).
    header : tuple of str or None
        The header line's fields, when the file had one.
    picked : tuple of int or None
        When ``columns`` were picked from a wider table by an option (:class:`Columns`), the
        0-based position of each in the table it was read from; ``pick`` is that option.
    """

    columns: tuple
    source: str
    first_line: int | None = None
    sep: str | None = None
    header: tuple | None = None
    picked: tuple | None = None
    pick: "Columns | None" = None
    parts: tuple | None = None  # a table read from several files: (part Table, first row) each

    @property
    def n_rows(self) -> int:
        return len(self.columns[0]) if self.columns else 0

    def _part(self, row: int) -> tuple["Table", int]:
        """The part file holding data row ``row`` and the row's index in it."""
        starts = [start for _, start in self.parts]
        k = int(np.searchsorted(starts, row, side="right")) - 1
        part, start = self.parts[k]
        return part, row - start

    def origin(self, row: int) -> tuple[str, int | None]:
        """(file, line) of data row ``row``: the part file for a table read from several files;
        the line is None for a table not read from a file."""
        if self.parts is not None:
            part, r = self._part(row)
            return part.source, part.line_of(r)
        return self.source, self.line_of(row)

    def line_of(self, row: int) -> int | None:
        """File line of data row ``row`` (0-based), in its part file for a table read from several
        files (:meth:`origin` names the file); None for a table not read from a file."""
        if self.parts is not None:
            part, r = self._part(row)
            return part.line_of(r)
        if self.first_line is None:
            return None
        return _locate(self.source, self.first_line, row, self.sep)[0]

    def where(self, row: int) -> str:
        """``line 7`` for a file, ``row 3`` (1-based) for an object, ``parts/b.tsv, line 7`` for a
        table read from several files: where data row ``row`` is."""
        if self.parts is not None:
            path, line = self.origin(row)
            return f"{path}, line {line}"
        return f"row {row + 1}" if self.first_line is None else f"line {self.line_of(row)}"

    def error(self, row: int, message: str) -> InputFormatError:
        """The error about data row ``row``, in the documented form: ``file, line 7: message`` for a
        file (the part file of a pattern), ``<seeds>: row 3: message`` for an object."""
        path, line = self.origin(row)
        if line is None and self.first_line is None:
            return InputFormatError(f"{self.where(row)}: {message}", path=path)
        return InputFormatError(message, path=path, line=line)

    def names(self, col: int):
        """Column ``col`` as node identifiers (:meth:`text`). In a caller's object (a DataFrame,
        rows) spaces and tabs around a name are trimmed (:data:`FIELD_BLANKS`, as a file's fields
        are, so that a name means the same node in memory and once written and read back), and an
        entry that is missing (None, NaN, pd.NA) or text that is empty or only blanks is an error
        naming its row, as an empty field of a file is; it would otherwise become a node named
        "nan" or "None"."""
        out = self.text(col)
        raw = self.columns[col]
        if self.first_line is None and self.parts is None and not isinstance(raw, (pa.Array, pa.ChunkedArray)):
            bad = np.asarray(pd.isna(raw), dtype=bool).reshape(-1)
            if out.dtype == object:
                out = np.array([v.strip(FIELD_BLANKS) for v in out], dtype=object)
                bad |= np.array([not v for v in out], dtype=bool).reshape(-1)
            if bad.any():
                row = int(np.argmax(bad))
                raise self.error(row, f"column {col + 1} names no node ({raw[row]!r}); fill it in or remove the row")
        return out

    def text(self, col: int):
        """Column ``col`` as identifiers: pyarrow strings as read, else a numpy array of str."""
        c = self.columns[col]
        if isinstance(c, (pa.Array, pa.ChunkedArray)) or self.first_line is not None:
            return c
        return np.array([str(v) for v in c], dtype=object)

    def numeric(self, col: int, label: str) -> np.ndarray:
        """Column ``col`` as float64; a non-numeric or non-finite entry is an error naming its line.

        ``label`` names the values in the message ("score", "edge weight").
        """
        c = self.columns[col]
        if isinstance(c, np.ndarray) and c.dtype == np.float64 and self.first_line is not None:
            return c  # parsed and checked finite by the fast reader
        values = pd.to_numeric(pd.Series(np.asarray(c, dtype=object)), errors="coerce").to_numpy(np.float64)
        bad = ~np.isfinite(values)
        if bad.any():
            row = int(np.argmax(bad))
            where = "" if self.first_line is not None else f"{self.where(row)}: "
            which = "the column" if self.pick is None else f"column {self.picked[col] + 1}, picked by " + (
                self.pick.named if self.first_line is not None else f"{self.pick.keyword}={self.pick.text!r}") + ","
            path, line = self.origin(row)
            shown = c[row].item() if isinstance(c[row], np.generic) else c[row]  # nan, not np.float64(nan)
            raise InputFormatError(f"{where}the {label} {shown!r} is not a finite number; {which} must hold "
                                   "numbers such as 0.5 or 1e-3", path=path, line=line)
        return values


def release_unused_memory() -> None:
    """Hand back to the system what pyarrow's allocator keeps after a table is read and dropped.

    The fast reader's buffers come from pyarrow's memory pool, which keeps freed memory for
    reuse: after reading a 10^6-node pair about 0.5 GB of it (measured with
    ``pyarrow.default_memory_pool().max_memory()`` against the resident size), held through
    every later stage unless released.
    """
    pa.default_memory_pool().release_unused()


def read_table(path: str | os.PathLike, *, min_cols: int, max_cols: int, delimiter: str | None = None,
               header: str = "auto", what: str = "table", pick: Columns | None = None,
               required: int | None = None, text_cols: int = 2) -> Table:
    """Read a delimited table of strings with ``min_cols`` to ``max_cols`` columns.

    Parameters
    ----------
    path : str or path-like
        UTF-8 text, gzip-compressed or not (detected by content). Blank lines and lines
        starting with ``#`` are skipped.
    min_cols, max_cols : int
        The number of columns allowed (taken from the first data row).
    delimiter : str, optional
        A name of :data:`DELIMITERS` or one ASCII character; detected from the first data line
        when omitted (tab, comma, semicolon, else runs of white space).
    header : {"auto", "yes", "no"}
        Whether the first data line is a header (see :func:`read_network`).
    what : str
        What the table is ("edge list", "prior table"), for messages.
    pick : Columns, optional
        Read only these columns of a wider table, in this order (then ``min_cols`` and
        ``max_cols`` do not apply; the first row must reach every picked position). Header
        names imply a header line. The Table's ``picked`` says where each column came from.
    required : int, optional
        With ``pick``: how many of the first picked columns must not hold an empty field
        (default: all of them).
    text_cols : int
        How many of the first columns (picked ones, with ``pick``) are identifiers or text,
        never parsed as numbers.

    Returns
    -------
    Table

    Raises
    ------
    InputFormatError
        The file is missing, unreadable, empty, not UTF-8, damaged, or a row is malformed;
        the message names the file and the line.

    Notes
    -----
    Fast path: pyarrow's CSV reader; else pandas' C reader. The file is scanned line by
    line only to locate an error.
    """
    path = os.fspath(path)
    files = input_files(path)
    if files is not None:  # a pattern: one table from the files it matches
        parts = [part for f in files if (part := read_part(
            f, min_cols=min_cols, max_cols=max_cols, delimiter=delimiter, header=header, what=what, pick=pick,
            required=required, text_cols=text_cols)) is not None]
        if not parts:
            raise all_parts_empty(path, len(files), what)
        return _joined(path, parts, what)
    try:
        with reading_errors(path):
            return _read_table(path, min_cols=min_cols, max_cols=max_cols, delimiter=delimiter, header=header,
                               what=what, pick=pick, required=required, text_cols=text_cols)
    except csv.Error as exc:
        raise InputFormatError(f"cannot be parsed ({exc}); check the quoting and the delimiter (give "
                               "--delimiter)", path=path) from None


def read_part(path: str, **options) -> Table | None:
    """One file of a pattern, read by :func:`read_table` with ``options``; None when it has no
    data rows (a partition without rows, or its header only, adds nothing to the table)."""
    try:
        return read_table(path, **options)
    except NoRows:
        return None


class NoRows(InputFormatError):
    """A file without data rows (empty, or a header only): an error for a file, a part that adds
    nothing for a pattern. ``header``: the fields of the line taken for a header, if any."""

    def __init__(self, message: str, *, path: str | None = None, line: int | None = None,
                 header: tuple | None = None):
        super().__init__(message, path=path, line=line)
        self.header = header


def _joined(pattern: str, parts: list[Table], what: str) -> Table:
    """One table from the tables of the files a pattern matched, in name order; their rows keep
    their files and lines for messages (:meth:`Table.origin`)."""
    first = parts[0]
    same_columns([(p.source, len(p.columns)) for p in parts], what)
    # one part keeps its columns as they are; the table still carries the pattern as its source
    # (a later update fingerprints the files the pattern matches then, not this one file)
    columns = first.columns if len(parts) == 1 else tuple(
        _concat([p.columns[k] for p in parts]) for k in range(len(first.columns)))
    starts = np.cumsum([0] + [p.n_rows for p in parts[:-1]])
    return Table(columns, pattern, first_line=first.first_line, sep=first.sep, header=first.header,
                 picked=first.picked, pick=first.pick, parts=tuple(zip(parts, (int(s) for s in starts))))


def all_parts_empty(pattern: str, n_files: int, what: str) -> InputFormatError:
    """The error of a pattern whose files all lack data rows."""
    return InputFormatError(f"every one of the {n_files} files this pattern matches is empty or holds a header "
                            f"only: expected {_a(what)}", path=pattern)


def same_columns(parts: list[tuple[str, int]], what: str) -> None:
    """Refuse the files of a pattern (``(path, number of columns)`` each, in name order) when
    one has other columns than the first."""
    first, ncols = parts[0]
    for source, n in parts[1:]:
        if n != ncols:
            raise InputFormatError(f"has {n} columns where {first} has {ncols}; every file of {_a(what)} given by "
                                   "a pattern must have the same columns", path=source)


def _concat(cols: list):
    """One column from the same column of several tables: pyarrow strings, float64 numbers (both
    as the fast reader gives them) or, when the parts were read differently, numpy objects."""
    if all(isinstance(c, (pa.Array, pa.ChunkedArray)) for c in cols):
        chunks = [c.cast(pa.large_string()) for c in cols]
        return pa.chunked_array(chunks, type=pa.large_string()).combine_chunks()
    if all(isinstance(c, np.ndarray) and c.dtype == np.float64 for c in cols):
        return np.concatenate(cols)
    as_objects = [c.to_numpy(zero_copy_only=False).astype(object) if isinstance(c, (pa.Array, pa.ChunkedArray))
                  else np.asarray(c, dtype=object) for c in cols]
    return np.concatenate(as_objects)


def _check_options(delimiter, header) -> None:
    """The rule of ``AlignConfig``'s declarations, for a caller of the readers that passes no config."""
    check_choice(header, "header", HEADERS)
    if delimiter is not None and (not isinstance(delimiter, str) or not re.fullmatch(DELIMITER, delimiter)):
        raise bad_parameter("delimiter", DELIMITER_SHAPE, delimiter)


def _a(what: str) -> str:
    return f"{'an' if what[:1] in 'aeiou' else 'a'} {what}"


def _read_table(path: str, *, min_cols: int, max_cols: int, delimiter, header: str, what: str,
                pick: Columns | None = None, required: int | None = None, text_cols: int = 2) -> Table:
    """:func:`read_table` without its translation of decoding and reading errors."""
    _check_options(delimiter, header)
    if pick is not None and pick.by_name and header == "no":
        raise InputFormatError(f"cannot be read with --header no (header='no'): {pick.named} picks columns by "
                               "header name; pick them by position (1-based), or leave --header out", path=path)
    check_readable(path)
    lines = data_lines(path)
    first, second = next(lines, None), next(lines, None)
    expect = f"{min_cols}" if min_cols == max_cols else f"{min_cols} to {max_cols}"
    if first is None:
        raise NoRows(f"is empty: expected {_a(what)} with {expect} columns (blank lines and lines "
                     "starting with # are skipped)", path=path)
    sep = _detect_delimiter(first[1]) if delimiter is None else DELIMITERS.get(delimiter, delimiter)
    fields = [f.strip(FIELD_BLANKS) for f in _split(first[1], sep)]
    numeric = 2
    if pick is not None:  # the header test looks at the score (the last picked column) when it is a position
        numeric = pick.items[-1] if isinstance(pick.items[-1], int) and len(pick.items) > text_cols else None
    has_header = header == "yes" or (pick is not None and pick.by_name) or (
        header == "auto" and _looks_like_header(fields, second, sep, numeric))
    if has_header and second is None:
        raise NoRows(f"has a header line but no data rows: expected {_a(what)} below it", path=path,
                     line=first[0], header=tuple(fields))
    start_no, start_text = second if has_header else first
    ncols = len(_split(start_text, sep))
    if pick is not None:
        return _read_picked(path, sep, ncols, start_no, pick, fields if has_header else None,
                            first[0] if has_header else start_no, len(pick.items) if required is None else required,
                            text_cols, check_header=header == "auto" and not has_header, first=first)
    if ncols < min_cols:
        given = f" (the delimiter was given as {delimiter!r} with --delimiter, which applies to every input file)"
        raise InputFormatError(
            f"has {ncols} column{'s' if ncols != 1 else ''}, expected {expect} for {_a(what)}"
            + (given if delimiter is not None else "" if sep is not None
               else " (the delimiter was taken to be white space; give --delimiter)"),
            path=path, line=start_no)
    if ncols > max_cols:
        pick_hint = (" or pick its node of A, node of B and score columns with --prior-columns (by position, such as "
                     "1,2,11, or by header name)") if what == "prior table" else ""
        raise InputFormatError(f"has {ncols} columns, expected at most {max_cols} for {_a(what)}; "
                               f"remove the extra columns{pick_hint}", path=path, line=start_no)
    # both readers skip every line before the first data row (comments, blanks, the header)
    cols = _read_arrow(path, sep, ncols, start_no - 1)
    if cols is None:
        cols = _read_careful(path, sep, ncols, start_no, min_cols, what)
    if header == "auto" and not has_header:
        _warn_if_header_like(path, first[0], fields, cols)
    elif header == "auto" and not all(_header_word(f) for f in fields):
        _warn_if_data_like(path, first[0], fields, cols)
    return Table(tuple(cols), path, start_no, sep, tuple(fields) if has_header else None)


def _warn_if_data_like(path: str, line: int, fields: list[str], cols) -> None:
    """Warn when a first line taken for a header by its text above a number (not by column names)
    has names in its first two fields that are nodes of the file: most likely a data row whose
    third field is not a number, which would otherwise be skipped without a word."""
    names = [f.strip() for f in fields[:2]]
    for col in cols[:2]:
        arr = col if isinstance(col, (pa.Array, pa.ChunkedArray)) else pa.array(np.asarray(col, dtype=object))
        if arr.type != pa.string() and arr.type != pa.large_string():
            arr = pac.cast(arr, pa.string())
        if pac.any(pac.is_in(arr, value_set=pa.array(names))).as_py():
            warn(f"{path}, line {line}: the first row ({', '.join(repr(f) for f in fields[:3])}) was taken for a "
                 f"header line (its third field is text above a number), but {names[0]!r} or {names[1]!r} is a "
                 "node of the file's other rows; if it is a data row, fix its third field; give --header yes "
                 "(header='yes') to skip it without this warning")
            return


def _read_picked(path: str, sep: str | None, ncols: int, start_no: int, pick: Columns, names: list[str] | None,
                 names_line: int, required: int, text_cols: int, *, check_header: bool, first) -> Table:
    """:func:`_read_table` for the columns an option picks from a wider table."""
    use = pick.positions(names, ncols, path=path, line=names_line, data_line=start_no)
    cols = _read_arrow(path, sep, ncols, start_no - 1, use=use, text_cols=text_cols)
    if cols is None:
        cols = _read_careful(path, sep, ncols, start_no, required, "table", use=use)
    if check_header and len(use) >= 2:
        fields = _split(first[1], sep)
        _warn_if_header_like(path, first[0], [fields[use[0]], fields[use[1]]], cols)
    return Table(tuple(cols), path, start_no, sep, None if names is None else tuple(names), tuple(use), pick)


def _warn_if_header_like(path: str, line: int, fields: list[str], cols) -> None:
    """Warn once when the first row, read as data, looks like a header line.

    The evidence: its first two fields have the shape of column names that differ only in their
    last character (``geneA``/``geneB``, ``interactor_1``/``interactor_2``, ``a``/``b``) and
    neither occurs anywhere else in the first two columns, as a header's names would not. A
    real first row of nodes named like that (``ab1``/``ab2`` with no other edge) is kept as data
    all the same: the warning names the option that settles it.
    """
    if len(fields) < 2 or len(cols[0]) < 3:  # in a file of one or two rows "found nowhere else" says nothing
        return
    f0, f1 = fields[0].strip(), fields[1].strip()
    if f0 == f1 or f0[:-1] != f1[:-1]:
        return
    if not (_COLUMN_NAME_SHAPE.match(f0) and _COLUMN_NAME_SHAPE.match(f1)):
        return
    for col in cols[:2]:
        arr = col if isinstance(col, (pa.Array, pa.ChunkedArray)) else pa.array(np.asarray(col, dtype=object))
        if arr.type != pa.string() and arr.type != pa.large_string():
            arr = pac.cast(arr, pa.string())
        if pac.sum(pac.is_in(arr, value_set=pa.array([f0, f1]))).as_py() > 1:
            return  # a name of the first row recurs (first row counted once): real data
    warn(f"{path}, line {line}: the first row ({f0!r}, {f1!r}) looks like a header line (its names occur "
         "nowhere else in the file) but was read as data; give --header yes (header='yes') to skip it, or "
         "--header no (header='no') to keep it as data without this warning")


def _looks_like_header(fields: list[str], second, sep: str | None, numeric: int | None = 2) -> bool:
    """``header="auto"``: every field a common column name, or a text field above a number in column
    ``numeric`` (0-based: the third by default, a prior's score; None: no such test)."""
    if all(_header_word(f) for f in fields):
        return True
    if numeric is None or len(fields) <= numeric or _is_number(fields[numeric]) or second is None:
        return False
    below = _split(second[1], sep)
    return len(below) > numeric and _is_number(below[numeric])


def _read_careful(path: str, sep: str | None, ncols: int, start_no: int, min_cols: int, what: str,
                  use: list[int] | None = None) -> list:
    """The slow path: pandas' C reader, then the checks that name the line at fault.

    ``use``: return these columns only, in this order; ``min_cols`` of them must not be empty.
    """
    # pandas' comment="#" would also cut a line at a '#' inside it ("gene#1"), and its skiprows
    # does not count a blank line ended by a lone CR: in those cases pandas is given the data
    # lines as data_lines sees them (a slower Python pass), otherwise the file itself
    source = path
    if _needs_line_filter(path):
        source = _io.StringIO("\n".join(t for no, t in data_lines(path, sep) if no >= start_no))
    try:
        df = pd.read_csv(
            source, sep=r"\s+" if sep is None else sep, header=None, names=list(range(ncols)),
            skiprows=range(start_no - 1) if source is path else None, comment=None, dtype=str,
            keep_default_na=False, skip_blank_lines=True, encoding="utf-8-sig",
            compression=("gzip" if _is_gzip(path) else None) if source is path else None,  # by content
            engine="c", on_bad_lines="error",
        )
    except pd.errors.ParserError as exc:
        _raise_bad_row(path, sep, ncols, start_no)
        _raise_open_quote(path, sep, start_no)
        raise InputFormatError(f"cannot be parsed ({exc}); check the quoting and the delimiter",
                               path=path) from None
    except UnicodeDecodeError as exc:
        raise InputFormatError(f"is not UTF-8 text ({exc.reason}); save it as UTF-8", path=path) from None
    use = list(range(ncols)) if use is None else use
    # spaces and tabs around a field are not part of it (see FIELD_BLANKS); white-space
    # delimited fields have none
    cols = [(df[c] if sep is None else df[c].str.strip(FIELD_BLANKS)).to_numpy(dtype=object) for c in use]
    if any(df[c].str.contains("[\r\n]", regex=True).any() for c in use):
        # a quoted field running over a line break: one record per line is the format
        _raise_open_quote(path, sep, start_no)
        raise InputFormatError("has a quoted field running over a line break; one record per line is the format: "
                               "close the quote on its line", path=path)
    # A short row shows up as empty strings in its last columns.
    bad = np.zeros(len(df), dtype=bool)
    for c in range(min_cols):
        bad |= cols[c] == ""
    if bad.any():
        _raise_bad_row(path, sep, ncols, start_no)
        no, text = _locate(path, start_no, int(np.argmax(bad)), sep)
        raise InputFormatError(f"has an empty field: {text[:80]!r}; fill it in or remove the row", path=path,
                               line=no)
    return cols


def _raise_open_quote(path: str, sep: str | None, start: int) -> None:
    """Raise for the first data row (from line ``start`` on) with a field that opens a quote and does
    not close it on its line, if any: a quoted field running over a line break, or to the end of
    the file (a quote inside a field is text and opens nothing)."""
    for no, text in data_lines(path, sep):
        if no >= start and _opens_quote(text, sep):
            raise InputFormatError(f"has a quote that is not closed on its line: {text[:80]!r}; close it or "
                                   "remove the quote", path=path, line=no)


def _opens_quote(line: str, sep: str | None) -> bool:
    """Whether a field of ``line`` starts with a quote that the line does not close."""
    seps = " \t" if sep is None else sep
    i, n, at_start = 0, len(line), True
    while i < n:
        if line[i] == '"' and at_start:
            j = i + 1
            while j < n and not (line[j] == '"' and line[j + 1:j + 2] != '"'):
                j += 2 if line[j] == '"' else 1
            if j >= n:
                return True
            i, at_start = j + 1, False
            continue
        at_start = line[i] in seps
        i += 1
    return False


def _raise_bad_row(path: str, sep: str | None, ncols: int, start: int) -> None:
    """Raise for the first data row whose number of fields differs from ``ncols``, if any."""
    for no, text in data_lines(path, sep):
        if no < start:
            continue
        got = len(_split(text, sep))
        if got != ncols:
            why = ("a quote that is not closed on its line? close it or remove the quote" if text.count('"') % 2
                   else "mixed delimiters or a stray column?")
            raise InputFormatError(
                f"has {got} field{'s' if got != 1 else ''} where the first row has {ncols}; "
                f"{why} {text[:80]!r}", path=path, line=no)


def _needs_line_filter(path: str) -> bool:
    """Whether the (decompressed) file holds a '#' or a lone CR; a fast byte scan."""
    opener = gzip.open if _is_gzip(path) else open
    with opener(path, "rb") as fh:
        while chunk := fh.read(1 << 20):
            if b"#" in chunk or re.search(rb"\r(?!\n)", chunk):
                return True
    return False


def _read_arrow(path: str, sep: str | None, ncols: int, skip: int, use: list[int] | None = None,
                text_cols: int = 2) -> list | None:
    """Fast path: pyarrow's multi-threaded CSV reader, for a single-character delimiter.

    ``skip`` lines (leading comments, blank lines, the header) are skipped. ``use``: parse only
    these columns (and the first, to find comment lines), returned in this order; the first
    ``text_cols`` of them are text. Returns the columns (text as pyarrow arrays; a later column
    as float64 when every value parses), or
    None when the file needs the careful reader: white-space delimited, a comment or a short
    row further down, a value that does not parse. The careful reader then finds and names
    the line at fault, so this path never has to.
    """
    if sep is None:
        return None
    names = [f"c{k}" for k in range(ncols)]
    use = list(range(ncols)) if use is None else use
    text = {0, *use[:text_cols]}
    types = {names[k]: pa.string() for k in text}
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
                                                     strings_can_be_null=False, quoted_strings_can_be_null=False,
                                                     include_columns=[names[k] for k in sorted({0, *use})]),
            )
        finally:
            source.close()
    except (pa.ArrowException, OSError, ValueError):
        return None
    cols = []
    if 0 not in use[:text_cols] and _needs_care(table.column("c0").combine_chunks(), first=True):
        return None  # a comment line further down shows in the first column, picked or not
    for k, name in enumerate(names[p] for p in use):
        col = table.column(name)
        col = col.combine_chunks() if isinstance(col, pa.ChunkedArray) else col
        raw = None
        if pa.types.is_string(col.type):  # trimmed before the checks: a field of spaces is an empty field
            raw = _value_bytes(col)
            trimmed = _trim(col, raw)
            col, raw = (col, raw) if trimmed is col else (trimmed, None)
        if k < text_cols:
            if _needs_care(col, first=use[k] == 0, raw=raw):
                return None  # a comment line, an empty field, a quote, a byte-order mark: the careful reader
            cols.append(col)
        else:
            values = None
            if pa.types.is_string(col.type) and _needs_care(col, first=False, comment=False, raw=raw):
                return None  # a quote or an empty field
            if pa.types.is_floating(col.type) or pa.types.is_integer(col.type):
                values = col.to_numpy(zero_copy_only=False).astype(np.float64, copy=False)
                if not np.isfinite(values).all():
                    # NaN, an infinity or an overflow ('1e400'): the careful reader keeps the file's
                    # text for the message, where this column would give pyarrow's 'inf' or 'nan'
                    return None
            # a column that is not all numbers stays as text for the careful checks
            cols.append(values if values is not None else col.cast(pa.string()).to_numpy(zero_copy_only=False))
    return cols


def _value_bytes(col: pa.Array) -> bytes:
    """The UTF-8 bytes of a string column's values, end to end (one copy, searched at C speed)."""
    _, offsets, data = col.buffers()
    if len(col) == 0 or data is None:
        return b""
    offsets = np.frombuffer(offsets, dtype=np.int32)[col.offset:col.offset + len(col) + 1]
    return np.frombuffer(data, dtype=np.uint8)[int(offsets[0]):int(offsets[-1])].tobytes()


def _trim(col: pa.Array, raw: bytes | None = None) -> pa.Array:
    """``col`` with the spaces and tabs around each value removed (:data:`FIELD_BLANKS`), as the
    careful reader does; the column itself when it holds neither byte (a byte search, memchr: these
    ASCII bytes are never part of another UTF-8 character). ``raw``: its :func:`_value_bytes`."""
    raw = _value_bytes(col) if raw is None else raw
    if b" " not in raw and b"\t" not in raw:
        return col
    return pac.utf8_trim(col, characters=FIELD_BLANKS)


def _needs_care(col: pa.Array, *, first: bool, comment: bool = True, raw: bytes | None = None) -> bool:
    """Whether a string column read by pyarrow holds what only the careful reader handles.

    An empty value, a line break or a quote in a value, a value that starts with '#' after
    spaces and tabs (``comment``: a comment line further down), a byte-order mark at the start
    (``first``: the first column). One look at the column's offsets and bytes: the values of
    a UTF-8 column hold these ASCII bytes only as those characters. ``raw``: the column's
    :func:`_value_bytes` when already at hand.
    """
    if len(col) == 0:
        return False
    _, offsets, data = col.buffers()
    offsets = np.frombuffer(offsets, dtype=np.int32)[col.offset:col.offset + len(col) + 1]
    lo, hi = int(offsets[0]), int(offsets[-1])
    text = np.frombuffer(data, dtype=np.uint8)[lo:hi] if data is not None else np.empty(0, np.uint8)
    if (offsets[1:] == offsets[:-1]).any():
        return True
    raw = text.tobytes() if raw is None else raw  # searched for a byte at C speed (memchr)
    if b"\n" in raw or b"\r" in raw or b'"' in raw:
        return True
    if first and bytes(text[:3]) == "\ufeff".encode():
        return True  # a byte-order mark pyarrow kept
    if comment:
        lead = text[offsets[:-1] - lo]
        if (lead == ord("#")).any():
            return True
        if ((lead == ord(" ")) | (lead == ord("\t"))).any():
            return pac.any(pac.starts_with(pac.utf8_ltrim(col, characters=" \t"), "#")).as_py()
    return False


def _is_gzip(path: str) -> bool:
    with open(path, "rb") as fh:
        return fh.read(2) == b"\x1f\x8b"


# --------------------------------------------------------------------------- networks, priors, pairs

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
    table = read_table(path, min_cols=2, max_cols=3, delimiter=delimiter, header=header, what="edge list")
    return network_from_table(table, directed=directed)


def network_from_table(table: Table, *, directed: bool = False) -> Network:
    """A :class:`Network` from a table of edges: node, node and an optional weight column.

    Nodes are numbered in the sorted order of their identifiers (code points), so the order
    of the rows does not matter. A weight must be a finite number >= 0.

    Raises
    ------
    InputFormatError
        A weight is not a finite number or is negative; the message names the line (the row).
    """
    weights = edge_weights(table)
    a, b = table.names(0), table.names(1)
    names, codes = intern(a, b)
    m = len(a)
    return checked_network(names, codes[:m], codes[m:], weights, source=table.source, directed=directed)


def checked_network(names, u, v, weights, *, source: str, directed: bool) -> Network:
    """:func:`aligner.core.network.network_from_edges`, refusing weights, each finite, that sum
    past the largest float (without numpy's overflow warning): the rows of a repeated edge (with
    --directed, an arc's rows, then the two arcs of an edge in its undirected view) are summed,
    and summary.json reports the total, which the solver divides by. Every reader of weights
    builds its network here (files, tables, networkx graphs, the dask engine's frames)."""
    with np.errstate(over="ignore"):
        net = network_from_edges(names, u, v, weights, source=source, directed=directed)
        total = None if net.weights is None else net.weights.sum()
    for what, ends, merged in (("arc", net.arcs, net.arc_weights), ("edge", net.edges, net.weights)):
        if merged is not None and not np.isfinite(merged).all():
            u, v = ends[int(np.argmax(~np.isfinite(merged)))]
            raise InputFormatError(f"the {what} {net.names[u]} - {net.names[v]} is given on several rows whose "
                                   "weights sum to more than the largest number (about 1.8e308); give smaller "
                                   "weights", path=source)
    if total is not None and not np.isfinite(total):
        raise InputFormatError("the edge weights sum to more than the largest number (about 1.8e308); give "
                               "smaller weights", path=source)
    return net


def edge_weights(table: Table) -> np.ndarray | None:
    """The third column of an edge table as weights (None: two columns); an entry that is not a
    finite number >= 0 is an error naming its line."""
    if len(table.columns) < 3:
        return None
    weights = table.numeric(2, "edge weight")
    if (weights < 0).any():
        row = int(np.argmax(weights < 0))
        where = "" if table.first_line is not None else f"{table.where(row)}: "
        path, line = table.origin(row)
        raise InputFormatError(f"{where}the edge weight {weights[row]:g} is negative; weights must be >= 0",
                               path=path, line=line)
    return weights


def check_skipped_header(table: Table, net_a: Network, net_b: Network, header: str) -> None:
    """Refuse a table of pairs whose line skipped as a header by ``header="yes"`` names a node
    of A and a node of B in the pair's columns: a data row of a file without a header line,
    which the option (given for every input at once) would drop without a word."""
    if header != "yes" or table.header is None:
        return
    at = table.picked[:2] if table.picked is not None else (0, 1)
    if len(table.header) <= max(at):
        return
    a, b = (table.header[k].strip() for k in at)
    if lookup(net_a.names, np.array([a], dtype=object))[0] >= 0 and \
            lookup(net_b.names, np.array([b], dtype=object))[0] >= 0:
        raise InputFormatError(f"its first line was skipped as a header line (--header yes, header='yes', applies to "
                               f"every input), but it names {a!r}, a node of A, and {b!r}, a node of B: it is a data "
                               "row; give this file a header line too, or leave --header at auto (a header line is "
                               "then found by its column names)", path=str(table.source))


#: Names of a score column whose low values are the good ones, by the score kind they suggest
#: (matched ignoring case, blanks, '_', '-' and '.').
_SCORE_NAMES = {"evalue": "evalue", "expect": "evalue", "expectvalue": "evalue", "distance": "distance",
                "dist": "distance"}


def score_column_name(table: Table, columns=None) -> str | None:
    """The name of a prior table's score column: its header's (a file), or ``columns``' (a
    DataFrame's column names), at the position read (picked, or the third); None: no names."""
    names = table.header if columns is None else [str(c) for c in columns]
    at = table.picked[2] if table.picked is not None else 2
    return names[at].strip() if names is not None and len(names) > at else None


def warn_score_kind(source, name: str | None, kind: str) -> None:
    """Warn when a prior's score column ``name``, read as a similarity (``kind``), is named as a
    score whose low values are the good ones (``evalue``, ``distance``): the best pairs would
    then count as the worst."""
    if name is None or kind != "similarity":
        return
    suggested = _SCORE_NAMES.get(re.sub(r"[\s_.-]", "", name.lower()))
    if suggested is not None:
        warn(f"{source}: the score column is named {name!r} but is read as a similarity (higher is "
             f"better); if its low values are the good ones, give --score-kind {suggested} "
             f"(score_kind={suggested!r})")


def read_prior(path: str | os.PathLike, net_a: Network, net_b: Network, *, kind: str = "similarity",
               delimiter: str | None = None, header: str = "auto", columns: str | None = None) -> PriorTable:
    """Read a prior similarity table ``node_a, node_b, score`` and map it onto two networks.

    The scores are read as ``kind`` says (see :func:`aligner.core.prior.prior_from_columns`).
    ``columns`` (``prior_columns``): pick the three columns of a wider table, by 1-based position
    or header name (``"1,2,11"``, ``"query,subject,evalue"``); a pair on several rows keeps its
    best row (the highest similarity after the score kind), as any repeated pair does.

    Raises
    ------
    InputFormatError
        A row is malformed or a score is non-numeric, NaN, infinite or negative; the message
        names the file and line.
    """
    table = read_table(path, min_cols=3, max_cols=3, delimiter=delimiter, header=header, what="prior table",
                       pick=prior_pick(columns))
    check_skipped_header(table, net_a, net_b, header)
    warn_score_kind(table.source, score_column_name(table), kind)
    return prior_from_columns(table.names(0), table.names(1), table.numeric(2, "score"), net_a, net_b, kind=kind,
                              source=table.source, origin=table.origin)


def prior_pick(columns: str | None) -> Columns | None:
    """The :class:`Columns` of the ``prior_columns`` option (None: the table's own three columns)."""
    return None if columns is None else Columns(columns, "--prior-columns", "prior_columns")


def read_pairs(path: str | os.PathLike, net_a: Network, net_b: Network, *, delimiter: str | None = None,
               header: str = "auto", what: str = "pair table") -> PairTable:
    """Read a table whose first two columns are node pairs (extra columns are ignored)."""
    table = read_table(path, min_cols=2, max_cols=64, delimiter=delimiter, header=header, what=what)
    check_skipped_header(table, net_a, net_b, header)
    return pairs_from_columns(table.names(0), table.names(1), net_a, net_b, source=table.source)
