"""Reading and the candidates on the cluster, with dask.dataframe.

Each file of an input (each part, for a glob pattern) is read on a worker by the single-machine
reader (:func:`aligner.io.readers.read_table`: the same checks and messages). Then, with
dask.dataframe:

- **names to ids**: the identifiers of both columns of a network, without repeats, sorted (code
  point order, as :func:`aligner.core.identifiers.intern` sorts them) and numbered by their
  position: the single machine's numbering. A network of few identifiers (at most
  :data:`BROADCAST_NAMES` in its files' own lists) is numbered on the client from those lists;
  a larger one by a distributed sort (``drop_duplicates``, ``sort_values``);
- **edges and prior rows to ids**: by a hash look-up in the whole numbering, sent to every
  worker, for a network of few identifiers; otherwise by merges on the identifiers (shuffle
  joins). Prior rows naming an unknown node are counted, the first three kept as examples; the
  scores are read as the score kind says on the worker that read them;
- **the candidates**: a shuffle by node of A puts every pair of a node in one partition, where
  repeated pairs keep their highest score and each node marks its ``top_k`` best pairs; a
  shuffle by node of B, and each node of B marks its ``top_k`` best; the candidates are the pairs
  either marked (:func:`aligner.core.candidates.build_candidates`' rule, ties to the smaller
  index of the other node).

The client receives integer arrays (edges, candidate pairs and their scores, a file or partition
at a time) and the sorted identifiers; no row of text is parsed on it.
"""

from __future__ import annotations

import functools
import os
import threading
import time
import warnings
from dataclasses import dataclass

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pac

from aligner.checks import warn
from aligner.config import AlignConfig
from aligner.core.candidates import build_candidates
from aligner.core.identifiers import as_arrow_strings, lookup, names_from_arrow
from aligner.core.network import Network, unique_sorted
from aligner.core.prior import PriorTable, check_scores, transform_scores
from aligner.errors import AlignerWarning, InputFormatError
from aligner.io.inputs import prior_notes
from aligner.io.paths import input_files
from aligner.io.readers import (all_parts_empty, checked_network, edge_weights, prior_pick, read_part, read_table,
                                same_columns)

__all__ = ["on_cluster", "ClusterRead", "read_on_cluster", "select_on_cluster"]

_STRING = "string[pyarrow]"
#: a network whose files list at most this many identifiers in all is numbered on the client and
#: its numbering sent whole to every worker (about 40 bytes per node) for look-ups, rather than
#: sorted on the cluster and joined by shuffles
BROADCAST_NAMES = 5_000_000
#: the dataframe steps use at most one partition per this many rows of the prior
FRAME_ROWS = 1_000


def on_cluster(network_a, network_b, prior, cfg: AlignConfig) -> bool:
    """Whether the inputs can be read on the cluster: both networks and the prior are files (or
    glob patterns), and the candidates come from the prior (not from structure)."""
    paths = all(isinstance(x, (str, os.PathLike)) for x in (network_a, network_b, prior))
    return paths and not cfg.structural


# --------------------------------------------------------------------------- on the workers

def _strings(col) -> pd.Series:
    """A table's column of identifiers as a pandas string column backed by pyarrow."""
    return pd.Series(pd.array(as_arrow_strings(col), dtype=_STRING))


def _arrow(col: pd.Series) -> pa.Array:
    """A pandas column of identifiers as one pyarrow string array."""
    return as_arrow_strings(pa.array(col.array)).cast(pa.string())


#: one read at a time per worker process records its warnings (``warnings.catch_warnings`` swaps
#: process-wide state, which threads of one worker would otherwise undo for each other)
_WARNINGS_LOCK = threading.Lock()


def _with_warnings(read):
    """``read`` (a reader of one file) returning its result and, last, the messages of the
    :class:`~aligner.errors.AlignerWarning` it issued, for the client to issue in file order as one
    machine does (issued on a worker, they would reach neither the caller nor the command line)."""
    @functools.wraps(read)
    def reader(*args):
        with _WARNINGS_LOCK, warnings.catch_warnings(record=True) as seen:
            warnings.simplefilter("always")
            got = read(*args)
        for w in seen:  # anything else is the worker's, as it would have been
            if not issubclass(w.category, AlignerWarning):
                warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
        return *got, [str(w.message) for w in seen if issubclass(w.category, AlignerWarning)]
    return reader


@_with_warnings
def _read_edges(path: str, delimiter, header, part: bool):
    """One edge-list file as a frame (``u``, ``v``[, ``w``]), its number of columns and its error;
    errors are returned, not raised, so the client reports them in the single machine's order
    (:func:`_read_parts`): an error in a value (a weight) comes with the file's columns."""
    try:
        t = _read(path, part, min_cols=2, max_cols=3, delimiter=delimiter, header=header, what="edge list")
    except InputFormatError as exc:
        return None, 0, exc
    if t is None:
        return None, 0, None
    try:
        frame = pd.DataFrame({"u": _strings(t.text(0)), "v": _strings(t.text(1))})
        w = edge_weights(t)
        if w is not None:
            frame["w"] = w
        return frame, len(t.columns), None
    except InputFormatError as exc:
        return None, len(t.columns), exc


def _read(path: str, part: bool, **options):
    """A file's table; for a part of a pattern, None when it has no data rows."""
    return read_part(path, **options) if part else read_table(path, **options)


@_with_warnings
def _read_prior(path: str, delimiter, header, columns, kind: str, part: bool):
    """One prior file as a frame (``a``, ``b``, similarity ``s``, ``keep``: not dropped by the
    score kind); errors returned as by :func:`_read_edges`."""
    try:
        t = _read(path, part, min_cols=3, max_cols=3, delimiter=delimiter, header=header, what="prior table",
                  pick=prior_pick(columns))
    except InputFormatError as exc:
        return None, 0, exc
    if t is None:
        return None, 0, None
    try:
        values = t.numeric(2, "score")
        check_scores(values, kind, source=t.source, origin=t.origin)
        scores, keep = transform_scores(values, kind)
        frame = pd.DataFrame({"a": _strings(t.text(0)), "b": _strings(t.text(1)), "s": scores, "keep": keep})
        return frame, len(t.columns), None
    except InputFormatError as exc:
        return None, len(t.columns), exc


def _outcome(result):
    """The small part of a read's result: (rows, columns, error, warnings)."""
    frame, ncols, err, warned = result
    return (0 if frame is None else len(frame)), ncols, err, warned


def _numbered(result, start: int) -> pd.DataFrame:
    """The frame of a read, with the global number of each row (``row``)."""
    frame = result[0]
    return frame.assign(row=np.arange(start, start + len(frame), dtype=np.int64))


def _index(col: pd.Series, names: pa.Array) -> np.ndarray:
    """The id of every identifier of ``col`` among the sorted ``names`` (-1: not there), as int32."""
    return lookup(names, _arrow(col)).astype(np.int32)


def _edge_ids(result, start: int, names: pa.Array) -> pd.DataFrame:
    """A file's edges as ids (``row``, ``ui``, ``vi``[, ``w``]) by a look-up in the whole numbering."""
    frame = result[0]
    out = pd.DataFrame({"row": np.arange(start, start + len(frame), dtype=np.int64),
                        "ui": _index(frame["u"], names), "vi": _index(frame["v"], names)})
    if "w" in frame:
        out["w"] = frame["w"].to_numpy()
    return out


def _prior_ids(result, start: int, names_a: pa.Array, names_b: pa.Array) -> pd.DataFrame:
    """A prior file's rows as numbers (:func:`_numeric`) by look-ups in both numberings."""
    frame = result[0]
    return pd.DataFrame({"row": np.arange(start, start + len(frame), dtype=np.int64),
                         "ia": _index(frame["a"], names_a), "ib": _index(frame["b"], names_b),
                         "s": frame["s"].to_numpy(), "keep": frame["keep"].to_numpy()})


def _with_ids(frame: pd.DataFrame, start: int) -> pd.DataFrame:
    frame = frame.copy()
    frame["id"] = np.arange(start, start + len(frame), dtype=np.int64)
    return frame


def _numeric(frame: pd.DataFrame) -> pd.DataFrame:
    """A merged prior frame without its text: int32 ids (-1: unknown node; node counts stay below 2^31,
    as the candidate pairs hold them), score, kept, row."""
    return pd.DataFrame({"row": frame["row"].to_numpy(),
                         "ia": frame["ia"].fillna(-1).to_numpy(np.int32),
                         "ib": frame["ib"].fillna(-1).to_numpy(np.int32),
                         "s": frame["s"].to_numpy(), "keep": frame["keep"].to_numpy()})


def _merged_meta(prior_meta: pd.DataFrame) -> pd.DataFrame:
    return prior_meta.assign(row=np.empty(0, dtype=np.int64), ia=np.empty(0), ib=np.empty(0))


def _texts(result, rows: np.ndarray) -> list[str]:
    frame = result[0]
    return [f"{a} / {b}" for a, b in zip(frame["a"].to_numpy()[rows], frame["b"].to_numpy()[rows])]


def _dedupe(frame: pd.DataFrame) -> pd.DataFrame:
    """Each pair (``ia``, ``ib``) once, with its highest score (a partition holds every row of
    its nodes of A)."""
    rows, s, _ = unique_sorted(frame["ia"].to_numpy(), frame["ib"].to_numpy(), frame["s"].to_numpy(),
                               largest=True)  # the single machine's merge of repeated prior pairs
    return pd.DataFrame({"ia": rows[:, 0], "ib": rows[:, 1], "s": s})


def _top(frame: pd.DataFrame, node: str, other: str, k: int | None, flag: str, min_score: float) -> pd.DataFrame:
    """Pairs scoring at least ``min_score``, with ``flag`` True on each ``node``'s ``k`` best
    (ties to the smaller ``other``); a partition holds every pair of its nodes."""
    frame = frame[frame["s"].to_numpy() >= min_score]
    if k is None:
        return frame.assign(**{flag: True})
    g, o, s = frame[node].to_numpy(), frame[other].to_numpy(), frame["s"].to_numpy()
    order = np.lexsort((o, -s, g))
    gs = g[order]
    start = np.ones(len(gs), dtype=bool)
    start[1:] = gs[1:] != gs[:-1]
    first = np.maximum.accumulate(np.where(start, np.arange(len(gs)), 0))
    top = np.empty(len(gs), dtype=bool)
    top[order] = np.arange(len(gs)) - first < k
    return frame.assign(**{flag: top})


def _either(frame: pd.DataFrame) -> pd.DataFrame:
    keep = frame["top_a"].to_numpy() | frame["top_b"].to_numpy()
    return frame.loc[keep, ["ia", "ib", "s"]]


# --------------------------------------------------------------------------- on the client

def _files(path) -> tuple[list[str], list[str], bool]:
    """The files of an input as named here (as the single machine names them in its messages),
    the same absolute (for the workers), and whether it was a pattern."""
    files = input_files(path)
    pattern = files is not None
    named = files if pattern else [os.fspath(path)]
    return named, [os.path.abspath(f) for f in named], pattern


def _read_parts(client, path, reader, what: str, *args):
    """Read an input's files on the workers: (futures of the results of the files with rows, their
    rows, their number of columns, the number of files); the first file's error is raised."""
    from distributed import wait

    named, files, pattern = _files(path)
    futures = client.map(reader, files, *[[a] * len(files) for a in args], [pattern] * len(files), pure=False)
    wait(futures)
    facts = client.gather(client.map(_outcome, futures, pure=False))
    # in the single machine's order: each file's table in name order, then whether the files'
    # columns agree, then the values (an error in a value comes with the file's columns)
    for f, shown, (_, c, err, warned) in zip(files, named, facts):
        for message in warned:
            warn(shown + message[len(f):] if message.startswith(f) else message)
        if err is not None and not c:  # the first file whose table cannot be read
            raise _unseen(err, f, shown) or _named(err, f, shown)
    # messages name the files as the user gave them, not as the workers were sent them
    kept = [(f, fut, n, c) for f, fut, (n, c, _, _) in zip(named, futures, facts) if c]
    if not kept:
        raise all_parts_empty(os.fspath(path), len(files), what)
    same_columns([(f, c) for f, _, _, c in kept], what)
    for f, shown, (_, _, err, _) in zip(files, named, facts):
        if err is not None:  # the first file with a value that is refused
            raise _named(err, f, shown)
    return [fut for _, fut, _, _ in kept], [n for _, _, n, _ in kept], kept[0][3], len(files)


def _unseen(err: InputFormatError, path: str, shown: str) -> InputFormatError | None:
    """The error to give when a worker finds no file at ``path`` (absolute), which the client sees:
    the workers do not share this file system (None when that is not the case); it names the file
    as ``shown``."""
    if err.path == path and err.bare.startswith("no such file") and os.path.isfile(path):
        return InputFormatError("the dask workers cannot open this file, which exists where aligner runs: give "
                                "paths that every worker sees (a shared file system), or read the inputs here and "
                                "ship them with --reading client (Python: reading='client')", path=shown)
    return None


def _named(err: InputFormatError, path: str, shown: str) -> InputFormatError:
    """A worker's error about the file ``path`` (absolute, as the workers were sent it), naming the
    file as ``shown`` (as given, as the single machine's reader names it)."""
    if err.path != path or path == shown:
        return err
    return type(err)(err.bare, path=shown, line=err.line)


def _frame(futures, rows, meta: pd.DataFrame):
    """One dask frame of the files' frames, each row numbered over the whole input."""
    import dask
    import dask.dataframe as dd

    starts = _starts(rows)
    parts = [dask.delayed(_numbered)(f, int(s)) for f, s in zip(futures, starts)]
    return dd.from_delayed(parts, meta=meta.assign(row=np.empty(0, dtype=np.int64)), verify_meta=False)


def _file_names(result) -> pa.Array:
    """The identifiers of a file's two columns, each once (unsorted)."""
    frame = result[0]
    return pac.unique(pa.concat_arrays([_arrow(frame["u"]), _arrow(frame["v"])]))


def _names_of(client, parts):
    """A network's sorted identifiers ``(Network.names, pyarrow array)``, merged on the client from
    each file's own, when they are few (at most :data:`BROADCAST_NAMES` in all the files' lists);
    None when they are more (then :func:`_numbering` sorts them on the cluster)."""
    lists = [client.submit(_file_names, f, pure=False) for f in parts]
    if sum(client.gather(client.map(len, lists, pure=False))) > BROADCAST_NAMES:
        return None
    merged = pac.unique(pa.chunked_array(list(_results(lists)), type=pa.string()))
    arrow = merged.take(pac.array_sort_indices(merged))  # code point order, as intern() sorts
    return names_from_arrow(arrow), arrow


def _numbering(client, edges, parts: int):
    """The identifiers of a network (both columns, each once, sorted) numbered by position by a
    distributed sort: a persisted frame (``name``, ``id``)."""
    import dask
    import dask.dataframe as dd

    both = dd.concat([edges["u"].rename("name"), edges["v"].rename("name")])
    # persisted before the sort, which reads its input twice (sampling the quantiles, then sorting)
    names = client.persist(both.drop_duplicates(split_out=parts).to_frame())
    names = client.persist(names.sort_values("name", npartitions=parts))
    lengths = names.map_partitions(len).compute().to_numpy()
    starts = _starts(lengths)
    numbered = [dask.delayed(_with_ids)(p, int(s)) for p, s in zip(names.to_delayed(), starts)]
    meta = _with_ids(names._meta, 0)
    return client.persist(dd.from_delayed(numbered, meta=meta, verify_meta=False))


def _ids_frame(names: pa.Array, parts: int):
    """A numbering the client holds, as a dask frame (``name``, ``id``) to merge with."""
    import dask.dataframe as dd

    frame = pd.DataFrame({"name": pd.array(names, dtype=_STRING), "id": np.arange(len(names), dtype=np.int64)})
    return dd.from_pandas(frame, npartitions=parts, sort=False)


#: how many times a scatter is tried when the worker it went to has just been lost
SHARE_ATTEMPTS = 3


def _share(client, value):
    """``value`` placed on the cluster once; the workers whose tasks use it fetch it from there (a
    scatter to every worker would wait for ever on a worker that has just been lost).

    A worker lost just before the scatter may still be listed by the scheduler and be the one
    chosen: the connection to it closes, and the scatter is tried again (the scheduler drops the
    worker meanwhile), as dask runs a lost worker's reading tasks again elsewhere."""
    from distributed.comm.core import CommClosedError

    for attempt in range(SHARE_ATTEMPTS):
        try:
            return client.scatter(value, hash=False)
        except (CommClosedError, OSError):
            if attempt == SHARE_ATTEMPTS - 1:
                raise
            time.sleep(0.5 * (attempt + 1))


def _merge(frame, ids, on: str, to: str, how: str):
    """``frame`` with the id of its column ``on`` as ``to``: a shuffle join on the identifiers."""
    return frame.merge(ids.rename(columns={"name": on, "id": to}), on=on, how=how)


def _partitions(client, frame):
    """The partitions of a persisted frame, fetched to the client one at a time."""
    for part in frame.to_delayed():
        yield client.compute(part).result()


def _results(futures):
    """The values of ``futures``, fetched to the client one at a time."""
    for fut in futures:
        yield fut.result()


def _starts(rows) -> np.ndarray:
    return np.concatenate([[0], np.cumsum(rows)[:-1]]).astype(np.int64)


def _network(client, parts, rows, ids, names, n_edges: int, weighted_file: bool, source: str,
             directed: bool) -> Network:
    """The network of an input's files, its rows in file order (so repeated edges sum their
    weights in the single machine's order), fetched a file or partition at a time into the arrays
    it fills. The ids come from a look-up in the whole numbering, sent to every worker, when it
    is small (:data:`BROADCAST_NAMES`), else from two shuffle joins."""
    n_names = len(names[0])
    if ids is None or n_names <= BROADCAST_NAMES:
        shared = _share(client, names[1])
        chunks = _results([client.submit(_edge_ids, f, int(s), shared, pure=False)
                           for f, s in zip(parts, _starts(rows))])
    else:
        edges = _frame(parts, rows, _edge_meta(weighted_file))
        m = _merge(_merge(edges, ids, "u", "ui", "inner"), ids, "v", "vi", "inner")
        chunks = _partitions(client, client.persist(m[["row", "ui", "vi", *(["w"] if weighted_file else [])]]))
    dtype = np.int32 if n_names < 2**31 else np.int64
    u, v = np.empty(n_edges, dtype=dtype), np.empty(n_edges, dtype=dtype)
    w = np.empty(n_edges, dtype=np.float64) if weighted_file else None
    for got in chunks:
        row = got["row"].to_numpy()
        u[row], v[row] = got["ui"].to_numpy(), got["vi"].to_numpy()
        if w is not None:
            w[row] = got["w"].to_numpy()
    return checked_network(names[0], u, v, w, source=source, directed=directed)  # refused as on one machine


def _edge_meta(weighted: bool) -> pd.DataFrame:
    meta = pd.DataFrame({"u": pd.Series([], dtype=_STRING), "v": pd.Series([], dtype=_STRING)})
    return meta.assign(w=np.empty(0)) if weighted else meta


def _names(ids) -> tuple[np.ndarray, pa.Array]:
    """A network's sorted identifiers, as ``Network.names`` holds them and as a pyarrow array."""
    arrow = pa.array(ids["name"].compute(), type=pa.string())
    return names_from_arrow(arrow), arrow


@dataclass
class ClusterRead:
    """The networks read on the cluster, and the prior's files read there (their frames stay on
    the workers until :func:`select_on_cluster`)."""

    network_a: Network
    network_b: Network
    ids_a: object  # dask frames (name, id): the numbering of each network, when sorted on the cluster
    ids_b: object
    names_a: pa.Array  # the same numbering on the client: the sorted identifiers
    names_b: pa.Array
    prior_parts: list  # futures of the prior files' frames
    prior_rows: list[int]
    prior_source: str
    report: dict


def read_on_cluster(client, network_a, network_b, prior, cfg: AlignConfig, *, parts: int) -> ClusterRead:
    """Read both networks and the prior's files on the cluster; the networks come back to the
    client as integer arrays and sorted identifiers, numbered as on one machine."""
    t0 = time.perf_counter()
    read = (cfg.delimiter, cfg.header)
    fa, rows_a, cols_a, files_a = _read_parts(client, network_a, _read_edges, "edge list", *read)
    fb, rows_b, cols_b, files_b = _read_parts(client, network_b, _read_edges, "edge list", *read)
    fp, rows_p, _, files_p = _read_parts(client, prior, _read_prior, "prior table", *read, cfg.prior_columns,
                                         cfg.score_kind)
    t1 = time.perf_counter()
    # at least FRAME_ROWS rows of the prior per dataframe partition: more partitions than that
    # are tasks and shuffle outputs with nothing in them (tens of thousands asked for on a small
    # pair took minutes and gigabytes)
    parts = max(1, min(parts, -(-int(sum(rows_p)) // FRAME_ROWS)))
    numbered = []
    for files, rows, cols in ((fa, rows_a, cols_a), (fb, rows_b, cols_b)):
        names = _names_of(client, files)
        ids = None
        if names is None:  # many identifiers: sorted on the cluster
            ids = _numbering(client, _frame(files, rows, _edge_meta(cols == 3)), parts)
            names = _names(ids)
        numbered.append((ids, names))
    (ids_a, names_a), (ids_b, names_b) = numbered
    net_a = _network(client, fa, rows_a, ids_a, names_a, int(sum(rows_a)), cols_a == 3, os.fspath(network_a),
                     cfg.directed)
    net_b = _network(client, fb, rows_b, ids_b, names_b, int(sum(rows_b)), cols_b == 3, os.fspath(network_b),
                     cfg.directed)
    report = {"where": "cluster", "files": {"network_a": files_a, "network_b": files_b, "prior": files_p},
              "partitions": parts,
              "seconds": {"files": round(t1 - t0, 4), "networks": round(time.perf_counter() - t1, 4)}}
    return ClusterRead(net_a, net_b, ids_a, ids_b, names_a[1], names_b[1], fp, rows_p, os.fspath(prior), report)


def _rows_text(client, read: "ClusterRead", rows: np.ndarray) -> list[str]:
    """``"a / b"`` of the prior's rows ``rows`` (global row numbers), read from the files' frames."""
    starts = _starts(read.prior_rows)
    out = []
    for r in rows:
        k = int(np.searchsorted(starts, r, side="right")) - 1
        out += client.submit(_texts, read.prior_parts[k], np.array([r - starts[k]]), pure=False).result()
    return out


def select_on_cluster(client, read: ClusterRead, cfg: AlignConfig, *, parts: int):
    """Map the prior onto the networks and select the candidates, on the cluster.

    Returns
    -------
    (PriorTable, float, CandidateSet)
        The prior's counts (its rows stay on the cluster; warnings issued as on one machine), the
        highest score of a usable pair, and the candidate pairs: what
        :func:`aligner.pipeline.read_inputs` and :func:`aligner.pipeline.find_candidates` give
        (seeds not yet added).
    """
    import dask
    import dask.dataframe as dd

    parts = min(parts, read.report["partitions"])  # as few as the reading chose (FRAME_ROWS)
    t0 = time.perf_counter()
    prior_meta = pd.DataFrame({"a": pd.Series([], dtype=_STRING), "b": pd.Series([], dtype=_STRING),
                               "s": np.empty(0), "keep": np.empty(0, dtype=bool)})
    small = [ids is None or net.n <= BROADCAST_NAMES for ids, net in ((read.ids_a, read.network_a),
                                                                       (read.ids_b, read.network_b))]
    numbered = None
    if all(small):  # look-ups in the whole numberings
        na, nb = _share(client, read.names_a), _share(client, read.names_b)
        numbered = [client.submit(_prior_ids, f, int(s), na, nb, pure=False)
                    for f, s in zip(read.prior_parts, _starts(read.prior_rows))]
        p = dd.from_delayed(numbered, meta=_numeric(_merged_meta(prior_meta)), verify_meta=False)
    else:  # numbers only after the merges (run once): -1 for an unknown node
        ids_a = read.ids_a if read.ids_a is not None else _ids_frame(read.names_a, parts)
        ids_b = read.ids_b if read.ids_b is not None else _ids_frame(read.names_b, parts)
        p = _frame(read.prior_parts, read.prior_rows, prior_meta)
        p = _merge(_merge(p, ids_a, "a", "ia", "left"), ids_b, "b", "ib", "left")
        p = client.persist(p.map_partitions(_numeric, meta=_numeric(p._meta)))
    known = (p["ia"] >= 0) & (p["ib"] >= 0)
    usable = p[known & p["keep"]][["ia", "ib", "s"]]
    n_unknown, first_unknown, n_dropped, n_usable = dask.compute(
        (~known).sum(), p["row"][~known].nsmallest(3), (known & ~p["keep"]).sum(), usable.shape[0])
    examples = _rows_text(client, read, np.sort(first_unknown.to_numpy()))
    read.prior_parts = []  # the files' text is no longer needed: the workers free it before the shuffles
    by_a = usable.shuffle(on="ia", npartitions=parts).map_partitions(_dedupe, meta=_dedupe(usable._meta))
    by_a = client.persist(by_a)
    del p, usable, known, numbered
    n_pairs, best = dask.compute(by_a.shape[0], by_a["s"].max())
    marked = by_a.map_partitions(_top, "ia", "ib", cfg.top_k, "top_a", cfg.min_score,
                                 meta=by_a._meta.assign(top_a=np.empty(0, dtype=bool)))
    marked = marked.shuffle(on="ib", npartitions=parts)
    marked = marked.map_partitions(_top, "ib", "ia", cfg.top_k, "top_b", -np.inf,
                                   meta=marked._meta.assign(top_b=np.empty(0, dtype=bool)))
    chosen = client.persist(marked.map_partitions(_either, meta=by_a._meta))
    del marked, by_a  # the shuffled copies go once the chosen pairs are held
    m = int(chosen.shape[0].compute())
    pairs = np.empty((m, 2), dtype=np.int32)  # filled a partition at a time: the client never holds a frame
    scores = np.empty(m, dtype=np.float64)
    at = 0
    for got in _partitions(client, chosen):
        k = len(got)
        pairs[at:at + k, 0], pairs[at:at + k, 1] = got["ia"].to_numpy(), got["ib"].to_numpy()
        scores[at:at + k] = got["s"].to_numpy()
        at += k
    del chosen
    read.report["seconds"]["prior_and_candidates"] = round(time.perf_counter() - t0, 4)

    table = PriorTable(pairs=np.empty((0, 2), dtype=np.int32), scores=np.empty(0), n_rows=int(sum(read.prior_rows)),
                       n_unknown=int(n_unknown),
                       unknown_examples=examples,
                       n_dropped_kind=int(n_dropped), n_duplicates=int(n_usable - n_pairs),
                       source=read.prior_source, released_pairs=int(n_pairs))
    table = prior_notes(table)
    cand = build_candidates(pairs, scores, read.network_a.n, read.network_b.n, min_score=cfg.min_score, top_k=None)
    return table, float(best) if n_pairs else 0.0, cand
