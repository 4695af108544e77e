"""Writing results: one atomic writer, outputs published as one set, directories checked first.

Every file the package writes goes through :func:`write_text_atomic` (one file, renamed into
place when complete) or :func:`publish_outputs` (a set of files that appear together or not
at all, even when the process is killed). :func:`check_outdir` refuses an unusable output
directory before any work is done and tidies up after a killed run; :func:`write_outputs`,
:func:`write_sweep_outputs` and :func:`write_prior_table` write the outputs of ``align``,
``sweep`` and ``prior-from-labels``.
"""

from __future__ import annotations

import csv
import io as _io
import json
import math
import os
import re
import shutil
import signal
import stat
import tempfile
import threading
from contextlib import contextmanager, suppress
from pathlib import Path
from typing import Iterable, Mapping

import numpy as np
import pandas as pd
import pyarrow as pa

from aligner.io.state import STATE_FILE, write_state
from aligner.checks import warn
from aligner.core import tsv
from aligner.errors import InputFormatError, InvalidParameterError


def _read_umask() -> int:
    """The process's umask as it is now: from /proc/self/status where the system gives it there
    (Linux 4.7 on), which reads it without changing it (no other thread of a program that uses
    aligner as a library can create a file in between); elsewhere set and at once set back."""
    try:
        with open("/proc/self/status", encoding="ascii", errors="replace") as status:
            for line in status:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError, IndexError):
        pass
    mask = os.umask(0o022)
    os.umask(mask)
    return mask

__all__ = ["OUTPUT_FILES", "PARQUET_FILES", "RUN_FILES", "REPORT_FILE", "SWEEP_TABLE", "PRIOR_COLUMNS",
           "TRANSFER_TABLE", "TRANSFER_SELECTION", "check_outdir", "write_outputs", "write_sweep_outputs",
           "write_prior_table", "check_output_file", "read_transferred", "write_transfer_selection",
           "write_text_atomic", "publish_outputs", "recover_interrupted", "table_text", "json_text",
           "read_run_table", "read_summary", "damaged_output", "RERUN_ALIGN", "RERUN_SWEEP"]

#: The table of interactions carried across the alignment, one of :data:`OUTPUT_FILES`.
TRANSFER_TABLE = "transferred_edges.tsv"
#: The files :func:`write_outputs` writes, as one set.
OUTPUT_FILES = ("alignment.tsv", "conserved_edges.tsv", TRANSFER_TABLE, "summary.json", STATE_FILE)
#: The tables' Parquet copies, written with ``parquet=True`` (``aligner align --parquet``).
PARQUET_FILES = ("alignment.parquet", "conserved_edges.parquet", "transferred_edges.parquet")
#: What ``aligner transfer`` writes into a run's directory: the rows it selected and printed.
TRANSFER_SELECTION = "transferred_selected.tsv"
#: The page ``aligner report`` writes into a run's directory.
REPORT_FILE = "report.html"
#: A run's files besides those one write may give (state, Parquet copies) and the files other
#: commands make from the run (the report, the transfer's selection): when a run replaces another
#: in its directory, those the new run does not write go with the old run, which they describe
RUN_FILES = (*OUTPUT_FILES, *PARQUET_FILES, REPORT_FILE, TRANSFER_SELECTION)
#: The table :func:`write_sweep_outputs` writes beside its figures.
SWEEP_TABLE = "sweep.tsv"
#: The columns of a prior table, in the order they are written.
PRIOR_COLUMNS = ("node_a", "node_b", "score")
#: Tables with fewer rows are written by pandas alone: as quick at that size, and the first run
#: after installation then compiles no text kernel for them (the text is the same either way).
_COMPILED_FROM_ROWS = 20_000


# --------------------------------------------------------------------------- text of a file

def table_text(df: pd.DataFrame, *, float_format: str = "%.10g", na_rep: str = "") -> str:
    """A DataFrame as TSV text: header, no index, ``\\n`` line ends, floats as ``float_format``.

    The text is that of ``df.to_csv(sep="\\t", index=False, ...)``; plain columns (text, float64
    with a ``%.<P>g`` format, integers) are rendered by compiled passes (:mod:`aligner.core.tsv`),
    anything else by pandas.
    """
    return _table_bytes(df, float_format=float_format, na_rep=na_rep).decode("utf-8")


def _pandas_text(df: pd.DataFrame, float_format, na_rep: str) -> str:
    buf = _io.StringIO()
    df.to_csv(buf, sep="\t", index=False, float_format=float_format, na_rep=na_rep, lineterminator="\n")
    return buf.getvalue()


def _text_of(col: pd.Series) -> tsv.Field | None:
    """A column of strings as UTF-8 bytes (no copy when pandas holds them in pyarrow)."""
    dtype = col.dtype
    if isinstance(dtype, pd.StringDtype):
        values = col.array
    elif dtype == object and pd.api.types.infer_dtype(col, skipna=False) == "string":
        values = col.to_numpy()
    else:
        return None
    try:
        return tsv.text_field(pa.array(values, type=pa.large_string()))
    except (pa.ArrowException, UnicodeError):
        return None


def _field(col: pd.Series, float_format, na_rep: str) -> tsv.Field | None:
    """The text of one column as pandas writes it, or None when pandas must write it."""
    dtype = col.dtype
    if dtype == np.float64 and isinstance(float_format, str):
        return tsv.float_field(col.to_numpy(), float_format, na_rep)
    if isinstance(dtype, np.dtype) and (dtype.kind == "i" or (dtype.kind == "u" and dtype.itemsize < 8)):
        return tsv.int_field(col.to_numpy())
    text = _text_of(col)
    return None if text is None or tsv.quoted(text) else text


def _as_text(col: pd.Series) -> pd.Series:
    """A sort key ordering a column of node names as text (code points), whatever the names'
    type (a networkx graph's integers, say): the order in which the readers number nodes, and
    so the order the same network gives from a file or a table of strings."""
    if pd.api.types.infer_dtype(col, skipna=True) in ("string", "empty"):
        return col
    return col.map(str)


def _in_order(df: pd.DataFrame, keys) -> bool:
    """Whether ``df`` is already sorted by the text columns ``keys`` (so a stable sort keeps it)."""
    fields = [_text_of(df[k]) for k in keys]
    return all(f is not None for f in fields) and tsv.rows_in_order_of(fields)


def _table_bytes(df: pd.DataFrame, *, float_format="%.10g", na_rep: str = "", sort_by=None) -> bytes:
    """:func:`table_text` as UTF-8 bytes, after a stable sort by the columns ``sort_by``."""
    return bytes(_table_buffer(df, float_format=float_format, na_rep=na_rep, sort_by=sort_by))


def _table_buffer(df: pd.DataFrame, *, float_format="%.10g", na_rep: str = "", sort_by=None) -> bytes | memoryview:
    """:func:`_table_bytes`, or for a large table the compiled rows' own array of bytes (a view
    of it: written to a file as it is, not copied into ``bytes`` first)."""
    small = len(df) < _COMPILED_FROM_ROWS
    if sort_by is not None and (small or not _in_order(df, sort_by)):
        df = df.sort_values(list(sort_by), kind="stable", key=_as_text)
    fields = None
    if not small and df.shape[1] >= 2 and not isinstance(df.columns, pd.MultiIndex):
        fields = [_field(col, float_format, na_rep) for _, col in df.items()]
    if fields is None or any(f is None for f in fields):
        return _quote_comment_starts(_pandas_text(df, float_format, na_rep).encode("utf-8"))
    header = _pandas_text(df.iloc[:0], float_format, na_rep).encode("utf-8")
    text = tsv.rows_text(fields, prefix=header)
    if tsv.starts_with(fields[0], ord("#")):  # (no field holds a line end: a row starts each line)
        return _quote_comment_starts(text.tobytes())
    return memoryview(text)


def _quote_comment_starts(text: bytes) -> bytes:
    """``text`` with every row's first field that starts with ``#`` put in quotes.

    The readers skip lines starting with ``#`` as comments, so a row of a node named ``#x`` would
    be lost when the table is read back (``aligner score`` on an alignment.tsv, a written prior):
    ``"#x"`` is read as the name ``#x``. Such a field was written unquoted, so it holds no quote,
    tab or line end; a line start inside a quoted field (after an odd number of quotes) is left
    alone.
    """
    if not (text.startswith(b"#") or b"\n#" in text):
        return text
    a = np.frombuffer(text, dtype=np.uint8)
    starts = np.concatenate([[0], np.flatnonzero(a[:-1] == ord("\n")) + 1])
    starts = starts[a[starts] == ord("#")]
    quotes_before = np.concatenate([[0], np.cumsum(a == ord('"'))])[starts]
    starts = starts[quotes_before % 2 == 0]
    pieces, last = [], 0
    for start in starts.tolist():
        ends = [i for i in (text.find(b"\t", start), text.find(b"\n", start)) if i >= 0]
        end = min(ends) if ends else len(text)
        pieces += [text[last:start], b'"', text[start:end], b'"']
        last = end
    pieces.append(text[last:])
    return b"".join(pieces)


def json_text(obj: object) -> str:
    """``obj`` as indented JSON text; non-finite floats become null (JSON has no NaN, RFC 8259)."""
    return json.dumps(_finite(obj), indent=2, sort_keys=False) + "\n"


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


def _as_bytes(data: str | bytes | memoryview) -> bytes | memoryview:
    return data.encode("utf-8") if isinstance(data, str) else data


# --------------------------------------------------------------------------- one file

#: what follows ``.<name>.`` in the name of write_text_atomic's temporary file
_PART = re.compile(r"(\d+)-[a-z0-9_]{8}\.part")


def _remove_dead_parts(path: Path) -> None:
    """Remove the temporary files that writers of ``path`` killed outright (SIGKILL, a power cut)
    left beside it: ``.<name>.<pid>-<random>.part`` of a process no longer running."""
    try:
        entries = os.listdir(path.parent)
    except OSError:
        return
    head = f".{path.name}."
    for entry in entries:
        # exactly <pid>-<mkstemp's 8 characters>.part after the name: not another file's part whose
        # name merely starts with this one's (.prior.2024-06-01.tsv.<pid>-....part)
        ours = _PART.fullmatch(entry[len(head):]) if entry.startswith(head) else None
        if ours is not None and _dead(ours.group(1)):
            with suppress(OSError):
                os.unlink(path.parent / entry)


def write_text_atomic(path: str | os.PathLike, data: str | bytes) -> Path:
    """Write ``data`` (text as UTF-8, or bytes) to ``path`` atomically; return the path.

    The data goes to a temporary file beside ``path`` (same directory, so the same file
    system), is flushed and fsynced, and the file is renamed into place: a reader, or a run
    killed at any moment, sees the old file or the new one, never a part (``rename`` is
    atomic on POSIX). The temporary file is removed if anything fails, and one that a writer
    killed outright left (its name holds the writer's process id) by the next write of ``path``.
    """
    path = Path(path)
    _remove_dead_parts(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.{os.getpid()}-", suffix=".part", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            # mkstemp makes the file private (0600); give it the mode a plain open() would (or
            # the mode of the file it replaces), as the run's other outputs have
            try:
                mode = stat.S_IMODE(os.stat(path).st_mode)
            except OSError:
                mode = 0o666 & ~_read_umask()
            os.fchmod(fh.fileno(), mode)
            fh.write(_as_bytes(data))
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        with suppress(FileNotFoundError):
            os.unlink(tmp)
        raise
    return path


# --------------------------------------------------------------------------- a set of files

@contextmanager
def _signals_deferred():
    """Hold back SIGINT, SIGTERM and SIGHUP around a few renames, and deliver one that came
    meanwhile once they are done.

    In the main thread the signals' Python handlers are swapped for one that only notes the
    signal: a process-wide signal may reach any of the process's threads (numba's among them),
    whose C handler then has the main thread run the Python handler, so masking the signals in
    the main thread alone (``pthread_sigmask``) did not hold them back. Elsewhere (handlers can be
    set in the main thread only) the signals are masked in the calling thread, as before."""
    sigs = [getattr(signal, s) for s in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, s)]
    # (a handler not set from Python, which getsignal gives as None, could not be put back; an
    # ignored signal stays ignored)
    if threading.current_thread() is threading.main_thread() and all(signal.getsignal(s) is not None for s in sigs):
        came: list[int] = []
        old = {}
        try:
            for sig in sigs:
                if signal.getsignal(sig) is not signal.SIG_IGN:
                    old[sig] = signal.signal(sig, lambda signum, frame: came.append(signum))
            yield
        finally:
            for sig, handler in old.items():
                signal.signal(sig, handler)
            # the renames are done (or failed): each signal that came now does what it would have
            # done, in the order they came (the first that raises or ends the process ends it)
            for sig in dict.fromkeys(came):
                signal.raise_signal(sig)
        return
    if not hasattr(signal, "pthread_sigmask"):  # pragma: no cover - not POSIX
        yield
        return
    mask = signal.pthread_sigmask(signal.SIG_BLOCK, set(sigs))
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, mask)


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


def publish_outputs(outdir: str | os.PathLike, files: dict, drop=()) -> None:
    """Make the files ``files`` (name -> text, bytes, or a function writing into an open binary
    file) appear in the directory ``outdir`` as one set, and the files named in ``drop`` that
    ``outdir`` holds go with the old set.

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
    :func:`check_outdir` before the next run) puts the user's files back. When ``outdir``
    cannot be renamed (a mount point, the working directory or one holding it, an unwritable
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
        _write_new(new, files)
        if swap and out.exists():
            os.chmod(new, stat.S_IMODE(os.stat(out).st_mode))
        with _signals_deferred():
            if swap:
                _swap_in(new, out, files, drop)
            else:
                for name in sorted(files, key=lambda n: n == "summary.json"):
                    os.replace(new / name, out / name)
                for name in set(drop) - set(files):
                    if (out / name).is_file():  # a folder of such a name is the user's
                        os.unlink(out / name)
                os.rmdir(new)
        _fsync_dir(parent if swap else out)
    except BaseException:
        shutil.rmtree(new, ignore_errors=True)
        raise


def _write_new(new: Path, files: dict[str, str | bytes]) -> None:
    """Write each file into the (new, empty) staging directory, flushed and fsynced."""
    for name, data in files.items():
        with open(new / name, "xb") as fh:
            if callable(data):  # a writer of its own (the run state, streamed)
                data(fh)
            else:
                fh.write(_as_bytes(data))
            fh.flush()
            os.fsync(fh.fileno())
    _fsync_dir(new)


def _swap_in(new: Path, out: Path, files, drop=()) -> None:
    """Steps 2 and 3 of :func:`publish_outputs`: rename the staging directory to ``out`` (the old
    directory's entries not in ``files`` nor ``drop`` moved into it)."""
    if not out.exists():
        os.rename(new, out)
        return
    old = out.parent / _staging_name(out, "old")
    os.rename(out, old)
    try:
        os.rename(new, out)
    except OSError:
        os.rename(old, out)
        raise
    drop = {name for name in drop if (old / name).is_file()}  # a folder of such a name is the user's
    for entry in os.listdir(old):
        if entry not in files and entry not in drop:
            os.rename(old / entry, out / entry)
    for name in {*files, *drop}:
        with suppress(FileNotFoundError):
            os.unlink(old / name)
    os.rmdir(old)


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


# --------------------------------------------------------------------------- output directories and files

def check_outdir(outdir: str | os.PathLike, *, force: bool = False, files=OUTPUT_FILES) -> Path:
    """Refuse an output path that is a file, cannot be made or written, or holds outputs of an earlier run.

    First puts back what a killed run left half-swapped (see :func:`recover_interrupted`).
    ``files`` are the outputs about to be written (default: those of :func:`write_outputs`);
    any of them already there is refused unless ``force``.

    Raises
    ------
    InvalidParameterError
        Saying what is wrong with the directory and what to do.
    """
    out = Path(outdir)
    if out.exists() and not out.is_dir():
        raise InvalidParameterError(f"The output '{out}' exists and is not a directory; choose another "
                                    "directory with --out.")
    up = out.absolute()
    while not up.exists() and up != up.parent:
        up = up.parent
    if not up.is_dir():
        raise InvalidParameterError(f"The output directory '{out}' cannot be made: '{up}' is a file, not a "
                                    "directory; choose another directory with --out.")
    if not os.access(up, os.W_OK | os.X_OK):
        raise InvalidParameterError(f"The output directory '{out}' cannot be written: permission denied on "
                                    f"'{up}'; choose another directory with --out.")
    try:
        for note in recover_interrupted(out, files):
            warn(note)
    except OSError as exc:
        warn(f"could not tidy up after an interrupted run in '{out}': {exc}")
    existing = [f for f in files if (out / f).exists()]
    if existing and not force:
        them = "them" if len(existing) > 1 else "it"
        raise InvalidParameterError(f"The output directory '{out}' already holds {', '.join(existing)}; "
                                    "choose another directory or pass --force (force=True in Python) to replace "
                                    f"{them}.")
    return out


def _publish(out: Path, files: dict[str, str | bytes], drop=()) -> list[Path]:
    try:
        publish_outputs(out, files, drop)
    except OSError as exc:
        raise InvalidParameterError(f"The output directory '{out}' cannot be written: "
                                    f"{exc.strerror or exc}; choose another directory with --out.") from None
    return [out / f for f in files]


def output_files(parquet: bool = False) -> tuple[str, ...]:
    """The files :func:`write_outputs` writes (with ``parquet``, the tables' Parquet copies too)."""
    return OUTPUT_FILES + (PARQUET_FILES if parquet else ())


def _parquet_bytes(df: pd.DataFrame, sort_by=None) -> bytes:
    """A table as Parquet bytes, in the row order of its TSV file (stable sort by ``sort_by``)."""
    import io

    import pyarrow.parquet as pq

    if sort_by is not None and not _in_order(df, sort_by):
        df = df.sort_values(list(sort_by), kind="stable", key=_as_text)
    buf = io.BytesIO()
    pq.write_table(pa.Table.from_pandas(df, preserve_index=False), buf)
    return buf.getvalue()


def write_outputs(outdir: str | os.PathLike, result, *, force: bool = False,
                  parquet: bool = False, state: bool = True) -> list[Path]:
    """Write alignment.tsv, conserved_edges.tsv, transferred_edges.tsv, summary.json and the run
    state (state.npz, :mod:`aligner.io.state`: what ``aligner update`` starts from) of an
    alignment into ``outdir``, as one set; with ``parquet`` also the three tables as Parquet
    files (``alignment.parquet``, ...: the same rows in the same order, typed columns).

    ``result`` is an :class:`~aligner.pipeline.AlignmentResult` (``.pairs``,
    ``.conserved_edges``, ``.transferred_edges()``, ``.summary``); the transferred edges are
    written in the order given (best first). The files appear together or not at all (see
    :func:`publish_outputs`), so an interrupted run (Ctrl-C, a killed process) leaves the
    previous outputs or none, never a mix. Other files in ``outdir`` are kept, but not those of
    a run replaced there (``force``) that this one does not write (:data:`RUN_FILES`: its state
    or Parquet copies, the report and the transfer's selection made from it), which would
    describe the old run beside the new. ``state=False`` leaves the run state out.
    """
    out = check_outdir(outdir, force=force, files=output_files(parquet))
    # the transferred edges first: they are found now, and their arrays of edges then do not
    # meet the other tables' text in memory
    moved = _table_buffer(result.transferred_edges())
    pairs = _table_buffer(result.pairs, sort_by=("node_a", "node_b"))
    cons = _table_buffer(result.conserved_edges, sort_by=("node_a1", "node_a2"))
    files = {"alignment.tsv": pairs, "conserved_edges.tsv": cons, TRANSFER_TABLE: moved,
             "summary.json": json_text(result.summary)}
    if state and hasattr(result, "state"):  # a result of the pipeline (not a bare table holder)
        arrays, meta = result.state()
        files[STATE_FILE] = lambda fh: write_state(fh, arrays, meta)  # streamed: no copy of it in memory
    if parquet:
        files |= dict(zip(PARQUET_FILES, (_parquet_bytes(result.pairs, ("node_a", "node_b")),
                                          _parquet_bytes(result.conserved_edges, ("node_a1", "node_a2")),
                                          _parquet_bytes(result.transferred_edges()))))
    # a run replaced here (its summary.json is there) takes its other files along; else none go
    return _publish(out, files, drop=RUN_FILES if (out / "summary.json").is_file() else ())


def write_sweep_outputs(outdir: str | os.PathLike, table: pd.DataFrame, figures: dict[str, bytes], *,
                        force: bool = False) -> list[Path]:
    """Write a sweep's table (sweep.tsv) and its figures into ``outdir``, as one set.

    Parameters
    ----------
    outdir : path
        The output directory (made if missing); other files in it are kept.
    table : DataFrame
        One row per alpha; written as TSV, floats with 6 significant digits (``%.6g``) but
        ``alpha`` in full (the shortest text that reads back as the same number, so that two
        alphas never share a label), missing values as ``NA``.
    figures : dict of str to bytes
        File name -> content of each figure (``sweep.png``, ``sweep.svg``).
    force : bool
        Replace a sweep.tsv already in ``outdir``; without it, one there is refused.

    Returns
    -------
    list of Path
        The files written, sweep.tsv first.
    """
    if "alpha" in table.columns:  # -0.0 + 0.0 is 0.0: no alpha written as -0
        table = table.assign(alpha=[np.format_float_positional(float(a) + 0.0, trim="-") for a in table["alpha"]])
    files = {SWEEP_TABLE: _table_bytes(table, float_format="%.6g", na_rep="NA"), **figures}
    if SWEEP_TABLE in figures:
        raise InvalidParameterError(f"figures must not hold a file named {SWEEP_TABLE}; got {sorted(figures)}",
                                    param="figures")
    out = check_outdir(outdir, force=force, files=(SWEEP_TABLE,))
    return _publish(out, files)


def check_output_file(path: str | os.PathLike, *, force: bool = False, inputs=()) -> Path:
    """Refuse an output file path before any work: a directory, one of the command's ``inputs``
    (even with ``force``, which replaces outputs, not inputs), an existing file (without
    ``force``), or a path in a directory that does not exist. Returns it as a Path."""
    path = Path(path)
    if path.is_dir():
        raise InvalidParameterError(f"The output '{path}' is a directory; give a file path with --out.")
    from aligner.io.paths import input_files

    for given in inputs:
        for one in input_files(given) or [given]:  # a pattern's files, each
            with suppress(OSError):  # an input that is not there cannot be the output
                if path.is_file() and os.path.samefile(path, one):
                    raise InvalidParameterError(f"The output '{path}' is one of the inputs ({one}); choose another "
                                                "path with --out.")
    if path.exists() and not force:
        raise InvalidParameterError(f"The output '{path}' already exists; choose another path with --out or pass "
                                    "--force (force=True in Python) to replace it.")
    if not path.parent.is_dir():
        raise InvalidParameterError(f"The output '{path}' cannot be written: '{path.parent}' is not a directory; "
                                    "choose another path with --out.")
    return path


def write_prior_table(df: pd.DataFrame, path: str | os.PathLike, *, force: bool = False) -> Path:
    """Write a prior table as TSV with the header ``node_a, node_b, score``, atomically.

    Scores are written with ten significant digits. An existing file is refused unless
    ``force``; a directory always is.

    Raises
    ------
    InvalidParameterError
        ``df`` lacks a column, or ``path`` is a directory, an existing file (without
        ``force``) or in a directory that does not exist.
    """
    missing = [c for c in PRIOR_COLUMNS if c not in df.columns]
    if missing:
        raise InvalidParameterError(f"df must have the columns {', '.join(PRIOR_COLUMNS)}; got a table without "
                                    f"{', '.join(missing)}", param="df")
    path = check_output_file(path, force=force)
    try:
        return write_text_atomic(path, _table_bytes(df[list(PRIOR_COLUMNS)]))
    except OSError as exc:
        raise InvalidParameterError(f"The output '{path}' cannot be written: {exc.strerror or exc}; choose "
                                    "another path with --out.") from None


#: what a run's output that cannot be read back says to do (``{dir}``: the run's directory)
RERUN_ALIGN = "rerun the alignment into {dir} (aligner align ... -o {dir} --force)"
RERUN_SWEEP = "rerun the sweep into {dir} (aligner sweep ... -o {dir} --force)"
#: the columns of transferred_edges.tsv as :func:`read_run_table` checks them (docs/formats.md)
TRANSFER_COLUMNS = {"direction": ("A->B", "B->A"), "node_a1": "name", "node_a2": "name", "node_b1": "name",
                    "node_b2": "name", "support": "number", "confidence_1": "number", "confidence_2": "number",
                    "score_1": "number", "score_2": "number", "triangles": "number", "common_neighbours": "number",
                    "weight": "number"}
#: the columns of transferred_edges.tsv that ``aligner transfer`` and the report need
TRANSFER_REQUIRED = ("direction", "node_a1", "node_a2", "node_b1", "node_b2", "support", "triangles",
                     "common_neighbours")


def damaged_output(path: str | os.PathLike, problem: str, *, line: int | None = None,
                   rerun: str = RERUN_ALIGN) -> InputFormatError:
    """The error for an output of a run that cannot be read back: ``problem``, then what to do."""
    path = Path(path)
    return InputFormatError(f"{problem}; the run's outputs look damaged: {rerun.format(dir=path.parent)}",
                            path=str(path), line=line)


def _raw_line(path: Path, number: int) -> str | None:
    """Line ``number`` (1-based) of the file, without its line end; None past the end."""
    with open(path, encoding="utf-8", errors="replace", newline="") as fh:
        for i, line in enumerate(fh, 1):
            if i == number:
                return line.rstrip("\r\n")
    return None


def _is_number(col: pd.Series, na: bool) -> np.ndarray:
    """Per field: whether it reads as a number (with ``na``, an empty field or NA also passes)."""
    if pd.api.types.is_numeric_dtype(col):
        return np.ones(len(col), dtype=bool)
    ok = pd.to_numeric(col, errors="coerce").notna().to_numpy() | (col.str.strip().str.lower() == "nan").to_numpy()
    if na:
        ok |= col.isin(("", "NA")).to_numpy()
    return ok


def _bad_fields(col: pd.Series, kind: object) -> np.ndarray:
    """Per field of ``col``: whether it is not what a column of ``kind`` holds (see :func:`read_run_table`)."""
    if kind == "name":
        return (col == "").to_numpy()
    if isinstance(kind, tuple):
        return ~col.isin(kind).to_numpy()
    if kind in ("number", "number?"):
        return ~_is_number(col, kind == "number?")
    return np.zeros(len(col), dtype=bool)


def _field_problem(df: pd.DataFrame, row: int, columns: Mapping[str, object]) -> str:
    """What is wrong with the first bad field of ``row``."""
    for name, kind in columns.items():
        if name not in df or not _bad_fields(df[name].iloc[row:row + 1], kind)[0]:
            continue
        value = df[name].iat[row]
        if isinstance(kind, tuple):
            return f"the {name} field {value!r} is not one of {', '.join(kind)}"
        return f"the {name} field {value!r} is not a number" if value != "" else f"the {name} field is empty"
    return "the row is malformed"


def read_run_table(path: str | os.PathLike, columns: Mapping[str, object], *, required: Iterable[str] = (),
                   rerun: str = RERUN_ALIGN) -> pd.DataFrame:
    """A tab-separated table a run wrote (alignment.tsv, conserved_edges.tsv, ...), read back and checked.

    ``columns`` says what each column the caller uses must hold: ``"name"`` (non-empty text),
    ``"text"`` (any text), ``"number"``, ``"number?"`` (a number, or empty or NA for a missing
    value) or a tuple of the allowed values; ``required`` are those that must be in the header
    (the others are checked when present). Text columns come back as text, number columns as
    numbers, other columns as pandas reads them. Blank lines are skipped.

    Raises
    ------
    InputFormatError
        The file cannot be read, is empty, lacks a required column, or has a row with too few or
        too many fields or a field that is not what its column holds: the message names the file
        and the line, and says to rerun the run (``rerun``, with ``{dir}`` its directory).
    """
    path = Path(path)
    try:
        df = pd.read_csv(path, sep="\t", dtype={c: str for c, k in columns.items() if k not in ("number", "number?")},
                         keep_default_na=False, skip_blank_lines=False, encoding="utf-8")
    except pd.errors.EmptyDataError:
        raise damaged_output(path, "the file is empty", rerun=rerun) from None
    except pd.errors.ParserError as exc:
        found = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", str(exc))
        if found is None:
            raise damaged_output(path, "the file cannot be parsed as a tab-separated table", rerun=rerun) from None
        want, line, saw = (int(g) for g in found.groups())
        raise damaged_output(path, f"the row has {saw} fields where the header has {want}", line=line,
                             rerun=rerun) from None
    except UnicodeDecodeError:
        raise damaged_output(path, "the file is not UTF-8 text", rerun=rerun) from None
    except OSError as exc:
        raise InputFormatError(f"the file cannot be read ({exc.strerror or exc})", path=str(path)) from None
    if not isinstance(df.index, pd.RangeIndex):  # pandas took the first column as an index: line 2 is too long
        raise damaged_output(path, f"the row has more fields than the header's {df.shape[1]}", line=2, rerun=rerun)
    missing = [c for c in required if c not in df.columns]
    if missing:
        raise damaged_output(path, f"the header lacks the column{'s' if len(missing) > 1 else ''} "
                             f"{', '.join(missing)}", line=1, rerun=rerun)
    bad = np.zeros(len(df), dtype=bool)
    for name, kind in columns.items():
        if name in df:
            bad |= _bad_fields(df[name], kind)
    if bad.any():  # a blank line is a row of empty fields (so line numbers hold): skipped, as a reader would
        blank = np.ones(len(df), dtype=bool)
        for _, col in df.items():
            blank &= (col == "").to_numpy() if not pd.api.types.is_numeric_dtype(col) else False
        bad &= ~blank
        df = df.loc[~blank] if blank.any() else df
    if bad.any():
        row = int(np.flatnonzero(bad)[0])
        line = row + 2  # the header is line 1; blank lines were read as rows, so the count holds
        raw = _raw_line(path, line)
        fields = None if raw is None else len(next(csv.reader([raw], delimiter="\t"), [""]))
        if fields is not None and fields != df.shape[1]:
            problem = f"the row has {fields} field{'s' if fields != 1 else ''} where the header has {df.shape[1]}"
        else:
            problem = _field_problem(df, df.index.get_loc(row), columns)
        raise damaged_output(path, problem, line=line, rerun=rerun)
    df = df.reset_index(drop=True)
    for name, kind in columns.items():
        if kind in ("number", "number?") and name in df and not pd.api.types.is_numeric_dtype(df[name]):
            df[name] = pd.to_numeric(df[name], errors="coerce")  # numbers, nan/inf or (checked) missing values
    return df


def read_summary(outdir: str | os.PathLike, *, rerun: str = RERUN_ALIGN) -> dict:
    """``outdir/summary.json`` of a finished run, as a dict.

    Raises
    ------
    InputFormatError
        The file cannot be read or is not a JSON object (naming the line of a JSON syntax error).
    """
    path = Path(outdir) / "summary.json"
    try:
        text = path.read_text(encoding="utf-8")
    except UnicodeDecodeError:
        raise damaged_output(path, "the file is not UTF-8 text", rerun=rerun) from None
    except OSError as exc:
        raise InputFormatError(f"the file cannot be read ({exc.strerror or exc})", path=str(path)) from None
    try:
        summary = json.loads(text)
    except json.JSONDecodeError as exc:
        raise damaged_output(path, f"the file is not valid JSON ({exc.msg} at column {exc.colno})",
                             line=exc.lineno, rerun=rerun) from None
    except RecursionError:
        raise damaged_output(path, "the file is not valid JSON (nested too deeply)", rerun=rerun) from None
    if not isinstance(summary, dict):
        raise damaged_output(path, "the file does not hold a JSON object", rerun=rerun)
    return summary


def read_transferred(outdir: str | os.PathLike) -> pd.DataFrame:
    """The table ``outdir/transferred_edges.tsv`` of a finished run, node names as text, checked
    by :func:`read_run_table`.

    Raises
    ------
    InvalidParameterError
        When ``outdir`` holds no such file (not a run's directory, or a run from before the
        file was written).
    InputFormatError
        When the file is damaged: empty, a column missing, a row too short or too long, a field
        that is not what its column holds (naming the line).
    """
    path = Path(outdir) / TRANSFER_TABLE
    if not path.is_file():
        raise InvalidParameterError(f"'{outdir}' holds no {TRANSFER_TABLE} (not a run's output directory, or "
                                    "written before aligner wrote that file); run aligner align -o there again.")
    return read_run_table(path, TRANSFER_COLUMNS, required=TRANSFER_REQUIRED)


def write_transfer_selection(outdir: str | os.PathLike, table: pd.DataFrame) -> Path:
    """Write the rows ``aligner transfer`` selected to ``outdir/transferred_selected.tsv``,
    atomically, replacing an earlier selection (a view of the run, like report.html)."""
    path = Path(outdir) / TRANSFER_SELECTION
    try:
        return write_text_atomic(path, _table_bytes(table))
    except OSError as exc:
        raise InvalidParameterError(f"The output '{path}' cannot be written: {exc.strerror or exc}.") from None
