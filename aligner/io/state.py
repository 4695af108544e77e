"""The run state an alignment keeps for ``aligner update``: state.npz in its output directory.

One NumPy ``.npz`` archive (uncompressed: it is read and written at memory speed) holding the
arrays an update starts from, and a JSON record ``meta`` with the format version, the run's
options, digests of its input files and a checksum over everything else. Reading checks the
format, the version and the checksum, so a state file that was edited, truncated or written by
another version is refused with a message, never half-used.

Arrays (node indices are those of the run's own numbering, names given beside them):

=============  ===========  ===================================================================
``names_a``    str (n1,)    node names of A
``names_b``    str (n2,)    node names of B
``edges_a``    int32 (e,2)  scored edges of A (each once)
``edges_b``    int32 (e,2)  scored edges of B
``pairs``      int32 (m,2)  candidate pairs (node of A, node of B)
``prior``      float64 (m)  their prior after the score-kind transformation (full precision:
                            an update with the same prior and nodes takes the candidates from
                            here instead of reading the prior again)
``x``          float32 (m)  diffusion scores (the warm start of an update: its residual is
                            recomputed exactly, so single precision costs only pushes)
``matched``    int64 (k)    candidate index of each pair of the final matching
``product_``   uint (m)     the product graph's row lengths (in the smallest unsigned integer
``degree``                  type that holds them), for an update to patch instead of building
                            it; empty for a weighted run (its entry weights are not kept)
``product_``   int32 (s)    the product graph's neighbour lists, one row after the other
``indices``                 (empty for a weighted run)
=============  ===========  ===================================================================

Optional arrays, present when the run's prior was not read from a file an update can read again
(a prior given as a DataFrame or rows, an update that applied a prior diff, and the updates after
it): the prior's rows, in order (as reading the edited file would give them), so that a later
update needs no file for them.

=================  ==========  ================================================================
``prior_a``        int32 (r)   each row's node of A: its index in ``names_a``, or ``n1 + j`` for
                               the j-th name of ``prior_extra_a`` (a name A does not have)
``prior_b``        int32 (r)   the same for B
``prior_values``   float64 (r) the rows' scores as given (before the score-kind transformation)
``prior_extra_a``  str         names the rows give that A does not have
``prior_extra_b``  str         the same for B
=================  ==========  ================================================================

A run with seed pairs and a prior also holds ``seed_added`` (int64, candidate indices): the
candidates that are there only as seed pairs (prior 0, not among the prior's top-k), so that an
update can tell the prior's candidates from them and take the prior from here as well.

Versions 3 (without the optional arrays) and 4 (without ``seed_added``) are read as well.
"""

from __future__ import annotations

import hashlib
import json
import os
import zipfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from aligner.errors import InputFormatError

__all__ = ["STATE_FILE", "STATE_VERSION", "RunState", "write_state", "read_state", "file_digest", "holds_network",
           "held_network"]

STATE_FILE = "state.npz"
STATE_VERSION = 5
#: versions this one reads (3 lacks the optional arrays, 3 and 4 the seed pairs added)
READS = (3, 4, 5)
_FORMAT = "aligner run state"
ARRAYS = ("names_a", "names_b", "edges_a", "edges_b", "pairs", "prior", "x", "matched", "product_degree",
          "product_indices")
#: arrays a state holds or not (all or none): the prior's rows
OPTIONAL = ("prior_a", "prior_b", "prior_values", "prior_extra_a", "prior_extra_b")
#: and the candidates there only as seed pairs
SEEDS_ADDED = ("seed_added",)


@dataclass(frozen=True, eq=False)
class RunState:
    """A run's state as read back: the arrays of the module docstring and ``meta``."""

    arrays: dict
    meta: dict
    path: Path

    def __getattr__(self, name):
        try:
            return self.__dict__["arrays"][name]
        except KeyError:
            raise AttributeError(name) from None


#: bytes read from each end of an input file for its fingerprint
FINGERPRINT_BYTES = 1 << 20


def file_digest(path) -> str | None:
    """A fingerprint of an input file (None for an input that is not a file; for a pattern of
    several files, one over their names and fingerprints): its size, its
    modification time in nanoseconds and a SHA-256 of its first and last MiB. An edit changes the
    time (and nearly always the size or an end); reading whole files of 10^6-node inputs would
    cost about 0.3 s a run for no practical gain."""
    try:
        if not os.path.isfile(path):
            from aligner.io.paths import input_files

            try:
                files = input_files(path)
            except InputFormatError:  # a pattern that matches nothing (any more)
                return None
            if files is None:
                return None
            h = hashlib.sha256(b"parts:")  # a pattern: its files, by name and fingerprint
            for f in files:
                h.update(f"{os.path.abspath(f)}:{file_digest(f)};".encode())
            return h.hexdigest()
    except TypeError:
        return None
    st = os.stat(path)
    h = hashlib.sha256(f"{st.st_size}:{st.st_mtime_ns}:".encode())
    with open(path, "rb") as fh:
        h.update(fh.read(FINGERPRINT_BYTES))
        if st.st_size > FINGERPRINT_BYTES:
            fh.seek(max(FINGERPRINT_BYTES, st.st_size - FINGERPRINT_BYTES))
            h.update(fh.read(FINGERPRINT_BYTES))
    return h.hexdigest()


_DTYPES = {"edges_a": np.int32, "edges_b": np.int32, "pairs": np.int32, "prior": np.float64, "x": np.float32,
           "matched": np.int64, "product_indices": np.int32, "prior_a": np.int32, "prior_b": np.int32,
           "prior_values": np.float64, "seed_added": np.int64}


def _stored(name: str, value) -> np.ndarray:
    """An array as the state stores it."""
    if name in ("names_a", "names_b", "prior_extra_a", "prior_extra_b"):
        return np.asarray(value).astype(str)
    if name == "product_degree":  # the smallest type for the longest row (16 bits on the benchmark's pairs)
        value = np.asarray(value)
        top = int(value.max()) if len(value) else 0
        return value.astype(next(t for t in (np.uint8, np.uint16, np.uint32, np.uint64) if top <= np.iinfo(t).max))
    a = np.ascontiguousarray(value, dtype=_DTYPES[name])
    return a.reshape(-1, 2) if name in ("edges_a", "edges_b", "pairs") else a


def _digest_update(h, name: str, a: np.ndarray) -> None:
    h.update(name.encode())
    h.update(str(a.dtype).encode())
    h.update(str(a.shape).encode())
    h.update(np.ascontiguousarray(a))  # hashed in place: a copy of 10^8 bytes costs as much as the hash


def _names(arrays) -> tuple[str, ...]:
    """The arrays a state holds (``arrays``: a mapping or the names in a file), in the order they
    are written and hashed."""
    return ARRAYS + sum((group for group in (OPTIONAL, SEEDS_ADDED) if group[0] in arrays), ())


def _checksum(arrays: dict, meta: dict) -> str:
    h = hashlib.sha256()
    h.update(json.dumps({k: v for k, v in meta.items() if k != "checksum"}, sort_keys=True).encode())
    for name in _names(arrays):
        _digest_update(h, name, arrays[name])
    return h.hexdigest()


def write_state(fh, arrays: dict, meta: dict) -> None:
    """Write the state file into the open binary file ``fh`` (meta gains ``format``, ``version``
    and ``checksum``), one array at a time: each is converted, hashed and written before the next,
    so the state costs little memory beyond the largest array's stored copy."""
    meta = {"format": _FORMAT, "version": STATE_VERSION} | dict(meta)
    h = hashlib.sha256()
    h.update(json.dumps(meta, sort_keys=True).encode())
    with zipfile.ZipFile(fh, mode="w", compression=zipfile.ZIP_STORED, allowZip64=True) as z:
        for name in _names(arrays):
            a = _stored(name, arrays[name])
            _digest_update(h, name, a)
            with z.open(name + ".npy", "w", force_zip64=True) as member:
                np.lib.format.write_array(member, a, allow_pickle=False)
            del a
        meta["checksum"] = h.hexdigest()
        with z.open("meta.npy", "w") as member:
            np.lib.format.write_array(member, np.array(json.dumps(meta)), allow_pickle=False)


def read_state(path) -> RunState:
    """Read and check a state file; InputFormatError (exit 2) naming what is wrong."""
    path = Path(path)
    if not path.exists():
        raise InputFormatError("no such run: give the output directory of a previous run of align, demo or update",
                               path=str(path))
    if path.is_dir():
        path = path / STATE_FILE
    if not path.is_file():
        raise InputFormatError(f"no run state in {path.parent}: {path.name} is missing (runs of this version keep "
                               "it; align again to get one)", path=str(path))
    if not zipfile.is_zipfile(path):
        raise InputFormatError(f"{path.name} is not a readable run state (not a {STATE_FILE} written by a run, or "
                               "a damaged one); give the output directory of a previous run of align, demo or "
                               "update", path=str(path))
    try:
        with np.load(path, allow_pickle=False) as z:
            meta = json.loads(str(z["meta"]))
            arrays = {name: z[name] for name in _names(z.files)}
    except (OSError, ValueError, KeyError, json.JSONDecodeError, EOFError, zipfile.BadZipFile) as exc:
        raise InputFormatError(f"{path.name} is not a readable run state ({type(exc).__name__}: {exc})",
                               path=str(path)) from None
    if meta.get("format") != _FORMAT:
        raise InputFormatError(f"{path.name} is not a run state of aligner", path=str(path))
    if meta.get("version") not in READS:
        raise InputFormatError(f"{path.name} has state format version {meta.get('version')}; this version reads "
                               f"versions {READS[0]} to {READS[-1]}: align again to get a current one",
                               path=str(path))
    if meta.get("checksum") != _checksum(arrays, meta):
        raise InputFormatError(f"{path.name} does not match its checksum: it was changed or damaged after the run "
                               "wrote it; align again", path=str(path))
    return RunState(arrays, meta, path)


def holds_network(meta: dict, side: str) -> bool:
    """Whether a run's state (its ``meta``) holds its network of ``side`` ("a" or "b") exactly: an
    unweighted one (the state keeps edges, not weights)."""
    counts = meta.get("networks", {}).get(side)
    return counts is not None and not counts["weighted"]


def held_network(state: RunState, side: str, *, directed: bool, source: str | None = None):
    """The run's network of ``side`` ("a" or "b") rebuilt from its state, exactly as reading its
    file gave it (node names, edges, the reader's counts of self-loops and repeated edges), or
    None when the state does not hold it (a weighted network: the state keeps edges, not
    weights). ``source`` names it (default: the run's record of it)."""
    import dataclasses

    from aligner.core.network import network_from_edges

    if not holds_network(state.meta, side):
        return None
    counts = state.meta["networks"][side]
    if source is None:
        source = (state.meta["inputs"].get(f"network_{side}") or {}).get("source") or f"<network_{side}>"
    names = np.asarray(getattr(state, f"names_{side}"), dtype=object)
    e = getattr(state, f"edges_{side}")
    net = network_from_edges(names, e[:, 0], e[:, 1], None, source=source, directed=directed)
    loops = counts.get("loop_nodes")
    return dataclasses.replace(net, n_self_loops=counts["self_loops"], n_duplicate_edges=counts["duplicate_edges"],
                               loop_nodes=None if loops is None else np.asarray(loops, dtype=np.int32))
