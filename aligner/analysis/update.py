"""Re-align after the inputs change, starting from a previous run's state.

:func:`update` reads the state a run kept (:mod:`aligner.io.state`), prepares the new inputs
with the previous run's options (:func:`aligner.pipeline.prepare`), carries the previous
diffusion scores over to the new candidate pairs (by node names) and runs the same stages as
:func:`aligner.align` from there (:func:`aligner.pipeline.run_stages` with that warm start). The
diffusion's residual is recomputed exactly from the carried scores, so it is non-zero only
where the change reached and the push works there; its result is certified to the same
tolerance as a fresh run's. The rounding and the scores run as in ``align``, on the new inputs.
The refinement, where ``align`` refines from one start, continues the local search from the
previous final matching over the candidates the change reached (:func:`_continued_refinement`);
otherwise it runs as in ``align``.

When the change is too large for the warm start to pay (more than :data:`FULL_SHARE` of the new
candidate pairs new or rescored, or of either network's edges added or removed), the update
starts from zero like ``align`` and says so in ``summary["update"]["mode"]``.
"""

from __future__ import annotations

import dataclasses
import os
import time
from pathlib import Path
from typing import Any, Callable, NamedTuple

import numpy as np
import pyarrow as pa

from aligner.config import AlignConfig, from_options
from aligner.core.arrays import unique
from aligner.core.identifiers import lookup
from aligner.core.prior import PriorRows
from aligner.errors import InputFormatError, InvalidParameterError
from aligner.io.readers import NoRows
from aligner.io.state import file_digest, held_network, holds_network, read_state
from aligner.pipeline import AlignmentResult, Clock, prepare, run_stages, with_product_graph

__all__ = ["update", "previous_inputs", "FULL_SHARE", "INPUTS"]

#: above this share of changed candidate pairs or edges the update starts from zero
FULL_SHARE = 0.25
#: the inputs a run records, and which of them an update may replace
INPUTS = ("network_a", "network_b", "prior", "seeds", "truth")


class _Kept(str):
    """The recorded source of an input the previous run did not read from a file, where only the
    state can stand for it: a network an earlier update built from an edge diff (the state keeps
    its edges), or a prior not read from a file (the state keeps its candidates, which stand for
    it while the nodes stay the same: :func:`_kept_inputs`)."""


def _diff_source(side: str) -> str:
    """The source of a network :func:`_with_diff` builds (recorded in the state it leads to)."""
    return f"<network_{side}: the previous run's edges with the diff applied>"


def _inputs(state, given: dict, names=INPUTS, advice: str | None = None) -> dict:
    """The update's inputs: those given, else the previous run's files, which must be unchanged
    (or, for an input the previous run did not read from a file, the state where it can stand for
    it: a :class:`_Kept` source). ``advice`` ends the message about a changed file (default: give
    the input to use)."""
    out = {}
    for name in names:
        if given.get(name) is not None:
            out[name] = given[name]
            continue
        rec = state.meta["inputs"].get(name)
        if rec is None:
            out[name] = None
            continue
        if rec["fingerprint"] is None:
            side = name[-1] if name.startswith("network_") else None
            # an update's own diffed network, unweighted: the state holds it exactly
            if (side and holds_network(state.meta, side) and rec["source"] == _diff_source(side)) \
                    or name == "prior":
                out[name] = _Kept(rec["source"])
                continue
            raise InvalidParameterError(f"the previous run read {name} from memory ({rec['source']}); give it to "
                                        "the update", param=name)
        if file_digest(rec["source"]) != rec["fingerprint"]:
            raise InputFormatError(f"{name} of the previous run, {rec['source']}, is missing or has changed since "
                                   "the run; " + (advice or f"give the {name} to use"), path=rec["source"])
        out[name] = rec["source"]
    return out


def _edge_keys(u, v, n: int, directed: bool) -> np.ndarray:
    """One integer per edge over ``n`` nodes: an arc by (u, v), an undirected edge by its two ends
    in order."""
    u, v = np.asarray(u, dtype=np.int64), np.asarray(v, dtype=np.int64)
    if not directed:
        u, v = np.minimum(u, v), np.maximum(u, v)
    return u * n + v


def _is_identity(mapping: np.ndarray) -> bool:
    """Whether a renumbering (:func:`_renumber`) leaves every node where it was."""
    return bool(np.all(mapping == np.arange(len(mapping))))


def _with_diff(state, side: str, add, remove, cfg: AlignConfig):
    """The previous run's network of ``side`` ("a" or "b") with the edges of ``remove`` taken out
    and those of ``add`` put in, built from the state's integer edges: only the diff files are
    read. Nodes seen first in ``add`` join; a node left without edges goes, as it would from the
    edited file (a network is its edge list), so the result is the Network that reading the
    edited file gives. A self-loop line names its node although the readers drop the loop: a
    node the previous file named in a self-loop line (the state keeps which) stays, even when the
    diff removes its last edge, unless the diff removes that line too, and a self-loop among the
    added edges brings its node.
    The counts of self-loops and of repeated edges are the previous file's, plus those of the
    added lines, less the self-loops removed. Returns the network, whether its nodes are the
    previous run's, name for name, and what :func:`_edge_changes` would find, known here from
    the diff (edges added, edges removed, the nodes at their ends that remain, new indices).

    Raises InputFormatError naming the first edge to remove that the previous network lacks, or
    to add that it already has (a diff that does not fit the run it is applied to)."""
    from aligner.core.network import network_from_edges
    from aligner.io.inputs import as_network
    from aligner.io.readers import network_from_table, read_table

    if cfg.weighted:
        raise InvalidParameterError("edge diffs apply to unweighted runs; give the whole new network file of a "
                                    "weighted run", param=f"add_{side}")
    names = np.asarray(state.names_a if side == "a" else state.names_b, dtype=str)
    edges = (state.edges_a if side == "a" else state.edges_b).astype(np.int64)
    label = "A" if side == "a" else "B"
    diffs = {}
    columns = ((names, f"network {label}"),) * 2  # both fields of a diff's first line name nodes of this network
    for path, removing in ((remove, True), (add, False)):
        if path is not None:
            try:
                if isinstance(path, (str, os.PathLike)):
                    table = read_table(path, min_cols=2, max_cols=3, delimiter=cfg.delimiter, header=cfg.header,
                                       what="edge list")
                    _check_diff_header(table.header, path, None, cfg, columns)
                    net = network_from_table(table, directed=cfg.directed)
                else:
                    net = as_network(path, name=f"{'removed' if removing else 'added'} edges of {label}",
                                     directed=cfg.directed, delimiter=cfg.delimiter, header=cfg.header)
            except NoRows as empty:  # an empty diff (a feed's quiet day): nothing to add or remove
                _check_diff_header(empty.header, path, empty.line, cfg, columns)
                continue
            diffs[removing] = (path, net.names.astype(str), net.scored_edges(cfg.directed)[0].astype(np.int64),
                               net)
    counts = state.meta.get("networks", {}).get(side) or {}
    known = counts.get("loop_nodes")
    if True in diffs and known is not None:  # a self-loop line to remove must be the previous file's
        path, dnames, _, dnet = diffs[True]
        had = names[np.asarray(known, dtype=np.int64)]
        asked = dnames[dnet.loop_nodes]
        absent = ~np.isin(asked, had)
        if absent.any():
            u = str(asked[int(np.argmax(absent))])
            where, line = _edge_line(path, u, u, cfg)
            raise InputFormatError(f"the diff asks network {label} of the previous run to remove a self-loop line "
                                   f"it does not have: {u} - {u}; the diff does not fit that run", path=where,
                                   line=line)
    # one numbering over the previous names and the diffs' (sorted, as the readers number nodes)
    every, old_ids = _joined_names(names, [d[1] for d in diffs.values()])
    n = len(every)

    have = _edge_keys(old_ids[edges[:, 0]], old_ids[edges[:, 1]], n, cfg.directed)
    # the state keeps each edge once, in order, and the numbering keeps the order: no sort then
    order = None if _is_sorted(have) else np.argsort(have, kind="stable")  # None: in order
    keep = np.ones(len(have), dtype=bool)
    extra = gone = np.empty(0, dtype=np.int64)
    for removing in (True, False):
        if removing not in diffs:
            continue
        path, dnames, de, _ = diffs[removing]
        ids = np.searchsorted(every, dnames)
        dk = _edge_keys(ids[de[:, 0]], ids[de[:, 1]], n, cfg.directed)
        pos = np.minimum(np.searchsorted(have, dk, sorter=order), max(len(have) - 1, 0))
        if order is not None:
            pos = order[pos]
        found = have[pos] == dk if len(have) else np.zeros(len(dk), dtype=bool)
        wrong = ~found if removing else found
        if wrong.any():
            t = int(np.argmax(wrong))
            u, v = dnames[de[t, 0]], dnames[de[t, 1]]
            what = "remove an edge it does not have" if removing else "add an edge it already has"
            where, line = _edge_line(path, u, v, cfg)
            raise InputFormatError(f"the diff asks network {label} of the previous run to {what}: {u} - {v}; "
                                   "the diff does not fit that run", path=where, line=line)
        if removing:
            keep[pos] = False
            gone = dk
        else:
            extra = dk
    # the kept edges in order, the added ones put in their places: the network then needs no sort
    kept = have[keep] if order is None else have[order[keep[order]]]
    extra = np.sort(extra)
    kept = np.insert(kept, np.searchsorted(kept, extra), extra)
    u, v = np.divmod(kept, n)
    # the readers keep a node a dropped self-loop line names: the nodes named by loop lines are
    # the previous file's (kept in the state), less those of the removed lines, plus the added's
    looped = np.zeros(n, dtype=bool)
    if known is not None:
        looped[old_ids[np.asarray(known, dtype=np.int64)]] = True
        for removing, (_, dnames, de, dnet) in diffs.items():
            looped[np.searchsorted(every, dnames[dnet.loop_nodes])] = not removing
    else:  # a state that does not say: the nodes without edges were named by loops only
        loops_only = np.ones(len(names), dtype=bool)
        loops_only[edges.ravel()] = False
        looped[old_ids[loops_only]] = True
        for removing, (_, dnames, de, dnet) in diffs.items():
            if dnet.n_self_loops:
                alone = np.ones(len(dnames), dtype=bool)
                alone[de.ravel()] = False  # named in the diff by its self-loops only
                looped[np.searchsorted(every, dnames[alone])] = not removing
    used = looped.copy()
    used[u] = used[v] = True
    new_id = np.cumsum(used) - 1  # the nodes left with an edge or a loop line, in name order
    source = _diff_source(side)
    net = network_from_edges(every[used].astype(object), new_id[u], new_id[v], None, source=source,
                             directed=cfg.directed)
    # a removed self-loop takes its line out (its node's, counted once however often the diff names it)
    loops = counts.get("self_loops", 0) + sum(-len(d[3].loop_nodes) if r and d[3].loop_nodes is not None
                                              else d[3].n_self_loops * (-1 if r else 1) for r, d in diffs.items())
    repeats = counts.get("duplicate_edges", 0) + (diffs[False][3].n_duplicate_edges if False in diffs else 0)
    net = dataclasses.replace(net, n_self_loops=max(loops, 0), n_duplicate_edges=repeats,
                              loop_nodes=new_id[looped].astype(np.int32) if known is not None else None)
    moved = np.concatenate([gone, extra])
    ends = unique(np.concatenate([moved // n, moved % n]))
    changed = (len(extra), len(gone), new_id[ends[used[ends]]].astype(np.int64))  # each edge once in a diff
    return net, every is names and bool(used.all()), changed


def _check_diff_header(fields, path, line: int | None, cfg: AlignConfig, columns) -> None:
    """Refuse a diff file whose first line, taken for a header because the previous run read its
    files with ``header="yes"``, names a node of the run in one of its columns (``columns``: the
    names of each column's network, sorted, with a label): most likely a diff written without the
    header line the run's files have, whose first row would otherwise be dropped without a word."""
    if cfg.header != "yes" or not fields:
        return
    for value, (names, label) in zip(fields, columns):
        at = int(np.searchsorted(names, value))
        if at < len(names) and names[at] == value:
            raise InputFormatError(
                f"its first line was taken for a header line, as the previous run read its files with --header "
                f"yes, but it names {value!r}, a node of {label}: give the diff a header line too, so that its "
                "first row is not dropped", path=str(path), line=line)


def _edge_line(path, u: str, v: str, cfg: AlignConfig) -> tuple[str, int | None]:
    """The file and line of the first row of the edge list ``path`` naming the edge u - v (either
    way round when undirected), for a message; read again, on the error path only."""
    from aligner.io.inputs import as_table

    t = as_table(path, name="edges", layout="node_a, node_b[, weight]", min_cols=2, max_cols=3, what="edge list",
                 delimiter=cfg.delimiter, header=cfg.header)
    a, b = (_chunked(t.names(c)).to_numpy().astype(str) for c in (0, 1))
    hit = (a == u) & (b == v)
    if not cfg.directed:
        hit |= (a == v) & (b == u)
    return t.origin(int(np.argmax(hit))) if hit.any() else (str(path), None)


def _is_sorted(a: np.ndarray, strict: bool = False) -> bool:
    """Whether ``a`` is in increasing order (``strict``: and without repeats)."""
    return len(a) < 2 or bool(np.all(a[1:] > a[:-1]) if strict else np.all(a[1:] >= a[:-1]))


def _joined_names(names: np.ndarray, more: list) -> tuple[np.ndarray, np.ndarray]:
    """The sorted union of ``names`` and the arrays of ``more``, and the index of every name of
    ``names`` in it. ``names`` (a network's names) are sorted and distinct, as the readers number
    nodes; the diffs' few names are placed by binary search instead of sorting every name again."""
    extra = np.unique(np.concatenate(more)) if more else np.empty(0, dtype=names.dtype)
    if not _is_sorted(names, strict=True):
        every = np.unique(np.concatenate([names, extra]))
        return every, np.searchsorted(every, names)
    pos = np.searchsorted(names, extra)
    known = pos < len(names)
    known[known] = names[pos[known]] == extra[known]
    new, at = extra[~known], pos[~known]
    if not len(new):
        return names, np.arange(len(names), dtype=np.int64)
    # a name moves up by the new names inserted before it (np.insert puts each before index ``at``)
    shift = np.cumsum(np.bincount(at, minlength=len(names) + 1))[: len(names)]
    wide = names.astype(np.promote_types(names.dtype, new.dtype), copy=False)  # longer new names fit
    return np.insert(wide, at, new), np.arange(len(names), dtype=np.int64) + shift


def _kept_inputs(state, given: dict, files: dict, cfg: AlignConfig, same_names: dict) -> dict:
    """The networks and the prior for :func:`prepare`: an unchanged input rebuilt from the state
    where that gives exactly what reading its file again would, else the file (or what was given).
    ``same_names`` (side -> whether the network's nodes are the previous run's, name for name) is
    completed for both sides, each compared at most once.

    - A network not given, unweighted in the file (the state keeps its edges, not weights): from
      the state's names and edges; the reader's counts of self-loops and repeated edges from
      ``meta``.
    - The prior not given, both networks with the same node names as before, candidates from the
      prior: the previous candidate pairs with their prior, as a prior table (less the pairs there
      only as seed pairs, which the state marks; a state that does not, of a run with seeds, reads
      the prior's file). Choosing
      the candidates again from them gives the same set (the top-k cut of a top-k cut is itself,
      ties broken alike), and the table's record (rows, unknown names, merged repeats) comes from
      ``meta``, so warnings and ``summary.json`` say what reading the file said.
    """
    from aligner.core.prior import PriorTable
    from aligner.io.inputs import as_network, prior_notes

    meta = state.meta
    out = dict(files)
    read = {"delimiter": cfg.delimiter, "header": cfg.header, "directed": cfg.directed}
    nets = {}
    for side in ("a", "b"):
        key = f"network_{side}"
        if given.get(key) is None and holds_network(meta, side):
            nets[side] = held_network(state, side, directed=cfg.directed, source=files[key])
            same_names[side] = True
        else:
            nets[side] = as_network(files[key], name=key, **read)
        out[key] = nets[side]
        if side not in same_names:
            old = getattr(state, f"names_{side}")
            same_names[side] = len(nets[side].names) == len(old) and np.array_equal(nets[side].names.astype(str), old)
    record = meta.get("prior_table")
    same_nodes = same_names["a"] and same_names["b"]
    rows = _state_prior_rows(state)
    # the previous candidates less those there only as seed pairs (which the state marks from
    # version 5 on): the prior's top-k candidates; the seeds, old or new, are added to them again
    prior_only = _prior_candidates(state)
    if (given.get("prior") is None and record is not None and prior_only is not None and not cfg.structural
            and same_nodes):
        pairs, scores = state.pairs, state.prior.astype(np.float64)
        if len(prior_only) < len(pairs):
            pairs, scores = pairs[prior_only], scores[prior_only]
        table = PriorTable(pairs=pairs, scores=scores, n_rows=record["rows"],
                           n_unknown=record["unknown"], unknown_examples=list(record["unknown_examples"]),
                           n_dropped_kind=record["dropped_by_score_kind"], n_duplicates=record["duplicates"],
                           source=files["prior"], released_pairs=record["pairs"],
                           rows=rows if isinstance(out["prior"], _Kept) else None)  # the same nodes: the same codes
        out["prior"] = prior_notes(table)
    elif isinstance(out["prior"], _Kept) and rows is not None:  # the rows the state keeps
        out["prior"] = _KeptPrior(rows, None, None, str(out["prior"]))
    elif isinstance(out["prior"], _Kept):
        raise InvalidParameterError(f"the previous run's prior ({out['prior']}) was not read from a file, and the "
                                    f"state keeps only its candidate pairs, which stand for it only while both "
                                    "networks keep their nodes (and, in a run with seeds, in a state of version 5 "
                                    "or later); give the whole new prior",
                                    param="prior")
    if isinstance(out["prior"], _PriorRows):  # by name until the networks are read: now they are
        out["prior"] = out["prior"].table(nets["a"], nets["b"], cfg.score_kind)
    elif isinstance(out["prior"], _KeptPrior):
        out["prior"] = _kept_prior_table(state, out["prior"], nets["a"], nets["b"], same_names, cfg.score_kind)
    return out


def _prior_candidates(state) -> np.ndarray | None:
    """Indices of the previous candidates that came from the prior (all of them in a run without
    seed pairs), or None when the state cannot tell (seed pairs and a state of version 4 or less)."""
    m = len(state.pairs)
    if state.meta["inputs"].get("seeds") is None:
        return np.arange(m)
    if "seed_added" not in state.arrays:
        return None
    keep = np.ones(m, dtype=bool)
    keep[state.seed_added] = False
    return np.flatnonzero(keep)


def _state_prior_rows(state) -> PriorRows | None:
    """The prior's rows a state keeps (a prior no file holds: one an update edited), or None."""
    if "prior_a" not in state.arrays:
        return None
    return PriorRows(state.prior_a, state.prior_b, state.prior_values, state.prior_extra_a, state.prior_extra_b)


@dataclasses.dataclass(frozen=True)
class _PriorRows:
    """A prior table by name, as three columns (pyarrow strings and float64 scores), checked by
    the score kind's rules; :meth:`table` maps it onto the networks once they are read."""

    a: pa.ChunkedArray
    b: pa.ChunkedArray
    values: np.ndarray
    source: str

    def table(self, net_a, net_b, kind: str):
        from aligner.core.prior import prior_from_columns
        from aligner.io.inputs import prior_notes

        # no file holds these rows: the table keeps them, for the run's state
        return prior_notes(prior_from_columns(self.a, self.b, self.values, net_a, net_b, kind=kind,
                                              source=self.source, keep_rows=True))


def _chunked(column) -> pa.ChunkedArray:
    """A column of identifiers as a pyarrow chunked array of strings (no copy when read from a file)."""
    from aligner.core.identifiers import as_arrow_strings

    if isinstance(column, pa.ChunkedArray):
        return column
    return pa.chunked_array([as_arrow_strings(column)])


def _with_prior_diff(state, add, remove, cfg: AlignConfig) -> "_PriorRows | _KeptPrior":
    """The previous run's prior table with the pairs of ``remove`` (node_a, node_b) taken out and
    the rows of ``add`` (node_a, node_b, score: every row of a pair the prior has takes the new
    score, in its place, the last of the diff's rows for the pair when it repeats one; another
    row is added at the end), as rows by name: the table of the file edited so. The previous
    table is its file, which must be unchanged, or, for a prior an earlier update edited, the
    rows the state keeps (then the diff is returned as read, to be applied to those rows by node
    once the networks are read: :class:`_KeptPrior`).

    Pairs are compared by name (dictionary-encoded, no Python string per row) among the rows of
    the nodes of A the diff names, found by one hash probe over the previous table's first
    column, so the diff costs about one reading of the previous prior, as a whole new prior would.

    Raises InputFormatError naming the first pair to remove that the previous prior lacks."""
    import pyarrow.compute as pac

    from aligner.core.prior import check_scores
    from aligner.io.inputs import as_table

    if cfg.prior_columns is not None:
        raise InvalidParameterError("prior diffs apply to runs that read the prior's own three columns; this run "
                                    "picked them with prior_columns: give the whole new prior", param="add_prior")
    rec = state.meta["inputs"].get("prior")
    if rec is None:
        raise InvalidParameterError("the previous run had no prior to change; give a whole prior", param="add_prior")
    source = _inputs(state, {"prior": None}, names=("prior",))["prior"]
    kept_rows = _state_prior_rows(state) if isinstance(source, _Kept) else None
    if isinstance(source, _Kept) and kept_rows is None:
        raise InvalidParameterError(f"prior diffs apply to a previous prior read from a file or kept in the run's "
                                    f"state; the previous run's prior ({source}) was neither (its state keeps only "
                                    "the candidate pairs): give the whole new prior", param="add_prior")
    read = {"delimiter": cfg.delimiter, "header": cfg.header}

    def node_columns():
        return ((np.asarray(state.names_a, dtype=str), "network A"),
                (np.asarray(state.names_b, dtype=str), "network B"))

    def rows(obj, cols: int, what: str, diff: bool = False):
        t = as_table(obj, name=what, layout="node_a, node_b" + (", score" if cols == 3 else "[, score]"),
                     min_cols=cols, max_cols=3, what=what, **read)
        if diff:
            _check_diff_header(t.header, obj, None, cfg, node_columns())
        a, b = (_chunked(t.names(c)) for c in (0, 1))
        values = None
        if cols == 3:
            values = t.numeric(2, "score")
            # the score kind's rules where the rows are read, so a refusal names the file and line
            check_scores(values, cfg.score_kind, source=t.source, origin=t.origin)
        return a, b, values, t.origin

    def diff_rows(obj, cols: int, what: str):
        if obj is None:
            return None
        try:
            return rows(obj, cols, what, diff=True)
        except NoRows as empty:  # an empty diff (a feed's quiet day): nothing to add or remove
            _check_diff_header(empty.header, obj, empty.line, cfg, node_columns())
            return None

    gone = diff_rows(remove, 2, "table of prior pairs to remove")
    new = diff_rows(add, 3, "table of prior rows to add")
    if kept_rows is not None:  # a prior no file holds: its rows, kept in the state by node
        named = str(source) if str(source).endswith(" with the diff applied>") else \
            f"<prior: {source} with the diff applied>"
        return _KeptPrior(kept_rows, gone, new, named, remove)
    named = f"<prior: {source} with the diff applied>"
    old_a, old_b, old_v, _ = rows(source, 3, "prior table")
    diff = [p for p in (gone, new) if p is not None]
    if not diff:
        return _PriorRows(old_a, old_b, old_v, named)
    # the rows of the previous prior whose node of A a diff names (one hash probe over the
    # table): the only ones a diff can remove or rescore
    asked = pa.chunked_array([c for p in diff for c in p[0].cast(old_a.type).chunks], type=old_a.type)
    near = np.flatnonzero(pac.is_in(old_a, value_set=pac.unique(asked)).to_numpy(zero_copy_only=False))
    # each pair as one integer: the codes of its two names among the names of those rows and the
    # diff's (a dictionary encoding per column)
    parts = [(old_a.take(near), old_b.take(near))] + [p[:2] for p in diff]
    codes = [pac.dictionary_encode(pa.concat_arrays([x[c].cast(old_a.type).combine_chunks() for x in parts]))
             for c in (0, 1)]
    n_b, keys, at = max(len(codes[1].dictionary), 1), [], 0
    for a, _ in parts:
        ca, cb = (codes[c].indices[at:at + len(a)].to_numpy(zero_copy_only=False).astype(np.int64) for c in (0, 1))
        keys.append(ca * n_b + cb)
        at += len(a)
    keep, values, appended = _edit_rows(old_v, near, keys[0], keys[1] if gone is not None else None,
                                        keys[-1] if new is not None else None, new, gone, remove)
    cols = [old_a, old_b]
    if not keep.all():
        mask = pa.array(keep)
        cols = [old_a.filter(mask), old_b.filter(mask)]
    if len(appended):
        at = pa.array(appended)
        cols = [pa.chunked_array(c.chunks + n.take(at).cast(c.type).chunks, type=c.type)
                for c, n in zip(cols, new[:2])]
        values = np.concatenate([values, new[2][appended]])
    return _PriorRows(cols[0], cols[1], values, named)


def _edit_rows(old_v: np.ndarray, near: np.ndarray, near_keys: np.ndarray, gone_keys, new_keys, new, gone, remove):
    """A prior diff applied to a table's rows, each pair as one integer key: ``near`` are the rows
    a diff can reach, with their keys; ``gone_keys`` the pairs to remove (None: none), ``new_keys``
    the diff's rows (None: none; their values ``new[2]``). The removed pairs' rows go; every row of
    a pair the diff rescores takes its score (the last of the diff's rows for it) in its place; the
    diff's other rows come last. Returns the mask of rows kept, the kept rows' values and the
    indices of the diff's rows appended. Raises InputFormatError naming the first pair to remove
    that the table lacks (``gone``: its names, ``remove``: its file)."""
    if gone_keys is not None:
        have = np.isin(gone_keys, near_keys)
        if not have.all():
            r = int(np.argmax(~have))
            u, v = gone[0][r].as_py(), gone[1][r].as_py()
            where, line = gone[3](r)
            raise InputFormatError(f"the diff asks the previous run's prior to remove a pair it does not "
                                   f"have: {u} / {v}; the diff does not fit that run", path=where or str(remove),
                                   line=line)
    keep = np.ones(len(old_v), dtype=bool)
    if gone_keys is not None:
        keep[near[np.isin(near_keys, gone_keys)]] = False
    values, appended = old_v, np.empty(0, dtype=np.int64)
    if new_keys is not None:
        live = keep[near]
        rescores = np.isin(new_keys, near_keys[live])
        if rescores.any():
            uk, first = np.unique(new_keys[::-1], return_index=True)
            last = len(new_keys) - 1 - first  # each pair's last row in the diff
            rows_at, rows_key = near[live], near_keys[live]
            pos = np.minimum(np.searchsorted(uk, rows_key), len(uk) - 1)
            hit = uk[pos] == rows_key
            values = old_v.copy()
            values[rows_at[hit]] = new[2][last[pos[hit]]]
        appended = np.flatnonzero(~rescores)
    return keep, values[keep] if not keep.all() else values, appended


@dataclasses.dataclass(frozen=True)
class _KeptPrior:
    """A prior an earlier update edited, as the state keeps its rows (by node), and a diff to apply
    to it (rows by name, as read: ``gone`` pairs to remove, ``new`` rows to add or rescore, each
    None when not given): made into a table once the networks are read (:func:`_kept_prior_table`),
    without turning the kept rows into names."""

    rows: PriorRows
    gone: tuple | None
    new: tuple | None
    source: str
    remove: Any = None  # the file of ``gone``, for messages


class _Names:
    """One side's node names as a kept prior's codes number them: the previous run's names, then
    the names the rows give that its network lacks, then names a diff brings."""

    def __init__(self, names: np.ndarray, extra: np.ndarray):
        self.names, self.n = names, len(names)  # the network's own names when they are the previous run's
        self.extra = np.asarray(extra).astype(object)

    @property
    def size(self) -> int:
        return self.n + len(self.extra)

    def codes(self, column) -> np.ndarray:
        """The codes of a column of names (new names join the extra ones)."""
        idx = lookup(self.names, column)
        miss = np.flatnonzero(idx < 0)
        if len(miss):
            rest = _chunked(column).take(pa.array(miss))
            at = lookup(self.extra, rest) if len(self.extra) else np.full(len(miss), -1, dtype=np.int64)
            brand = at < 0
            if brand.any():
                fresh, inv = np.unique(rest.filter(pa.array(brand)).to_numpy(zero_copy_only=False).astype(str),
                                       return_inverse=True)
                at[brand] = len(self.extra) + inv
                self.extra = np.concatenate([self.extra, fresh.astype(object)])
            idx[miss] = self.n + at
        return idx

    def name(self, code: int) -> str:
        return str(self.names[code] if code < self.n else self.extra[code - self.n])

    def names_of(self, codes: np.ndarray) -> np.ndarray:
        out = np.empty(len(codes), dtype=object)
        low = codes < self.n
        out[low] = self.names[codes[low]]
        out[~low] = self.extra[codes[~low] - self.n]
        return out.astype(str)

    def onto(self, net, same: bool) -> np.ndarray:
        """Each code's index among the nodes of ``net`` (-1: absent); ``same``: the network has the
        previous run's names."""
        base = np.arange(self.n, dtype=np.int64) if same else _renumber(self.names, net.names)
        ext = lookup(net.names, self.extra) if len(self.extra) else np.empty(0, dtype=np.int64)
        return np.concatenate([base, ext])


def _kept_prior_table(state, kept: _KeptPrior, net_a, net_b, same_names: dict, kind: str):
    """The prior table of kept rows with their diff applied, on the networks: the rows stay node
    indices throughout (the diff's names are looked up, the rows' are not), so an update after one
    that edited the prior costs no reading of its rows by name. The table keeps its rows for the
    next state."""
    from aligner.core.prior import prior_from_ids
    from aligner.io.inputs import prior_notes

    rows = kept.rows
    # a network with the previous run's names looks names up in its own (kept in pyarrow form
    # since it was made) rather than in the state's text
    side_a, side_b = (_Names(net.names if same_names.get(side) else getattr(state, f"names_{side}"), extra)
                      for side, net, extra in (("a", net_a, rows.extra_a), ("b", net_b, rows.extra_b)))
    ca, cb, values = rows.a, rows.b, rows.values  # int32 codes: int64 only where keys are made
    diff = [d for d in (kept.gone, kept.new) if d is not None]
    if diff:
        coded = [(side_a.codes(d[0]), side_b.codes(d[1])) for d in diff]
        n_b = side_b.size
        asked = np.zeros(side_a.size, dtype=bool)
        for da, _ in coded:
            asked[da] = True
        near = np.flatnonzero(asked[ca])
        keys = [da * n_b + db for da, db in coded]
        keep, values, appended = _edit_rows(values, near, ca[near].astype(np.int64) * n_b + cb[near],
                                            keys[0] if kept.gone is not None else None,
                                            keys[-1] if kept.new is not None else None, kept.new, kept.gone,
                                            kept.remove)
        if not keep.all():
            ca, cb = ca[keep], cb[keep]
        if len(appended):
            ca = np.concatenate([ca, coded[-1][0][appended].astype(ca.dtype)])
            cb = np.concatenate([cb, coded[-1][1][appended].astype(cb.dtype)])
            values = np.concatenate([values, kept.new[2][appended]])
    ia = side_a.onto(net_a, same_names.get("a", False))[ca]
    ib = side_b.onto(net_b, same_names.get("b", False))[cb]

    # the rows for the next state, on the new networks' names (read before ia is changed below)
    kept_rows = PriorRows.from_ids(ia, ib, values, net_a.n, net_b.n, lambda r: side_a.names_of(ca[r]),
                                   lambda r: side_b.names_of(cb[r]))
    return prior_notes(prior_from_ids(ia, ib, values, kind=kind, source=kept.source, rows=kept_rows,
                                      example=lambda r: f"{side_a.name(int(ca[r]))} / {side_b.name(int(cb[r]))}"))


def _check_options(state, config: AlignConfig | None, options: dict,
                   keeps: str = "an update keeps the run's options (align again to change them)") -> AlignConfig:
    """The previous run's options; any option given must agree with it (``keeps`` ends the
    message that says one does not)."""
    previous = AlignConfig(**state.meta["options"])
    asked = from_options(AlignConfig, config, options) if (config is not None or options) else previous
    for name, value in asked.as_dict().items():
        if (name in options or config is not None) and value != getattr(previous, name):
            raise InvalidParameterError(f"{name} {value!r} differs from the previous run's {getattr(previous, name)!r}"
                                        f"; {keeps}", param=name)
    return previous


def previous_inputs(previous, *, keeps: str = "asking about a run keeps its options (leave the option out)",
                    **options: Any) -> tuple[dict, AlignConfig]:
    """A finished run's inputs and options, for asking about the run without aligning again
    (``aligner query --run``): the networks and the prior rebuilt from its state where the state
    holds them, as an update with no new input rebuilds them (:func:`_kept_inputs`: unweighted
    networks from their edges; the prior as the run's candidate pairs while the run has no seeds),
    the rest read from the run's files, which must be unchanged. ``options`` given must agree with
    the run's (``keeps`` ends the message that says one does not).

    Returns ({"network_a", "network_b", "prior", "seeds", "truth"}, the run's AlignConfig).

    Raises
    ------
    InputFormatError
        The state is missing, damaged or of another version; an input it does not hold changed
        since the run.
    InvalidParameterError
        An option differs from the run's.
    """
    state = read_state(previous)
    cfg = _check_options(state, None, options, keeps)
    meta = state.meta
    # what the state holds exactly is not read again, so its file may have moved or changed since
    held = {f"network_{side}" for side in ("a", "b") if holds_network(meta, side)}
    if meta.get("prior_table") is not None and meta["inputs"].get("seeds") is None and not cfg.structural:
        held.add("prior")
    files = {name: (meta["inputs"].get(name) or {}).get("source") for name in held}
    files |= _inputs(state, {}, names=[name for name in INPUTS if name not in held],
                     advice="the state does not hold it: align again")
    return _kept_inputs(state, {}, files, cfg, {}), cfg


def _renumber(names_old, names_new) -> np.ndarray:
    """For each old node, its index among the new names (-1 when gone), by one hash look-up of
    the old names among the new (an unchanged node set gives the identity). At 10^6 nodes it
    takes 0.4-0.5 s; a binary search of the names as fixed-width text took 0.8-1.3 s in a fresh
    process (converting every name first), 0.3 s once the process's memory is warm
    (docs/update_benchmark.md)."""
    return lookup(np.asarray(names_new, dtype=object), names_old)


def _sorted(keys: np.ndarray) -> np.ndarray:
    """``keys`` in increasing order (sorted only when they are not already: lists the run state
    and the readers keep in order, renumbered by an order-keeping map, come sorted)."""
    return keys if _is_sorted(keys) else np.sort(keys)


def _edge_changes(old_edges, new_edges, to_new, n_new, directed: bool) -> tuple[int, int, np.ndarray]:
    """Edges (arcs when ``directed``) added and removed, the old ones renumbered into the new
    nodes (each list holds every edge once, and renumbering keeps them distinct, so sorted keys
    suffice; an undirected edge is keyed by its two ends in order), and the nodes (new indices,
    sorted, distinct) at an end of an added or removed edge."""
    none = np.empty(0, dtype=np.int64)
    if len(old_edges) == len(new_edges) and _is_identity(to_new) and np.array_equal(old_edges, new_edges):
        return 0, 0, none
    e = to_new[old_edges.astype(np.int64)]
    whole = (e >= 0).all(axis=1)
    cut = e[~whole]  # edges that lost a node: their other end stays
    e = e[whole]
    old_keys = _sorted(_edge_keys(e[:, 0], e[:, 1], n_new, directed))
    new_keys = _sorted(_edge_keys(new_edges[:, 0], new_edges[:, 1], n_new, directed))
    gone, came = _unshared(old_keys, new_keys)
    common = len(old_keys) - len(gone)
    moved = np.concatenate([gone, came])
    ends = unique(np.concatenate([moved // n_new, moved % n_new, cut[cut >= 0]]).astype(np.int64))
    return int(len(new_keys) - common), int(len(old_edges) - common), ends


def _unshared(old: np.ndarray, new: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The keys of ``old`` missing from ``new`` and those of ``new`` missing from ``old`` (both
    sorted, without repeats), by one merge: a stable sort of two sorted runs merges them in linear
    time (4 times faster than two binary searches of 4 million keys in 4 million)."""
    both = np.concatenate([old, new])
    order = np.argsort(both, kind="stable")
    merged = both[order]
    alone = np.ones(len(merged), dtype=bool)
    same = merged[1:] == merged[:-1]
    alone[1:] &= ~same
    alone[:-1] &= ~same
    at = order[alone]
    return old[at[at < len(old)]], new[at[at >= len(old)] - len(old)]


def _keeps_order(mapping: np.ndarray) -> bool:
    """Whether a renumbering (:func:`_renumber`) keeps the order of the nodes it keeps."""
    return _is_sorted(mapping[mapping >= 0], strict=True)


def _carried(old: np.ndarray, to_a: np.ndarray, to_b: np.ndarray, cand, old_x, old_prior):
    """The old candidates' scores on the new candidates (x0, 0 on new pairs), which new pairs were
    old ones (kept), and which of those kept their prior within 1e-6 (same_prior): one compiled
    merge pass (:func:`aligner.kernels.tables.carry_rows`) over the old pairs in the new order,
    which they keep when the renumbering keeps the node order (as the readers number nodes)."""
    from aligner.kernels.tables import carry_rows

    if not (_keeps_order(to_a) and _keeps_order(to_b)):
        order = np.lexsort((to_b[old[:, 1]], to_a[old[:, 0]]))  # gone nodes (-1) first: skipped
        old, old_x, old_prior = old[order], old_x[order], old_prior[order]
    x0 = np.zeros(cand.m)
    kept = np.zeros(cand.m, dtype=bool)
    same_prior = np.zeros(cand.m, dtype=bool)
    carry_rows(np.ascontiguousarray(old[:, 0]), np.ascontiguousarray(old[:, 1]), to_a, to_b,
               np.ascontiguousarray(cand.pairs[:, 0]), np.ascontiguousarray(cand.pairs[:, 1]),
               old_x, old_prior, cand.prior, x0, kept, same_prior)
    return x0, kept, same_prior


class _Maps(NamedTuple):
    """How the previous run's problem maps onto the new one."""

    to_a: np.ndarray  # new index of every old node of A, -1 when gone
    to_b: np.ndarray
    kept: np.ndarray  # which new candidates were old ones
    ends_a: np.ndarray  # nodes of A (new indices) at an end of an added or removed edge
    ends_b: np.ndarray
    same_pairs: bool  # the same nodes and candidate pairs, in the same numbering


def _carry(state, problem, same_names: dict, known: dict | None = None) -> tuple[np.ndarray, dict, _Maps]:
    """The previous scores on the new candidate pairs (0 on new pairs), what changed, and how the
    old problem maps onto the new one (``same_names``: the sides known to keep the previous run's
    nodes, name for name, whose names are not compared again; ``known``: the sides given as edge
    diffs, with :func:`_edge_changes`'s answer known from the diff, not found again)."""
    known = known or {}
    net_a, net_b, cand = problem.network_a, problem.network_b, problem.candidates
    to_a = np.arange(net_a.n, dtype=np.int64) if same_names.get("a") else _renumber(state.names_a, net_a.names)
    to_b = np.arange(net_b.n, dtype=np.int64) if same_names.get("b") else _renumber(state.names_b, net_b.names)
    old = state.pairs
    same_pairs = len(old) == cand.m and _is_identity(to_a) and _is_identity(to_b) and np.array_equal(old, cand.pairs)
    if same_pairs:  # the same nodes and candidates: no look-up
        from aligner.kernels.tables import carry_same

        x0 = np.empty(cand.m)
        kept = np.ones(cand.m, dtype=bool)
        rescored = carry_same(state.x, state.prior, cand.prior, x0)
    else:
        x0, kept, same_prior = _carried(old, to_a, to_b, cand, state.x, state.prior)
        rescored = int((kept & ~same_prior).sum())
    directed = problem.config.directed
    ea_add, ea_del, ends_a = known.get("a") or _edge_changes(state.edges_a, net_a.scored_edges(directed)[0], to_a,
                                                             net_a.n, directed)
    eb_add, eb_del, ends_b = known.get("b") or _edge_changes(state.edges_b, net_b.scored_edges(directed)[0], to_b,
                                                             net_b.n, directed)
    changes = {
        "nodes_a_added": int(net_a.n - (to_a >= 0).sum()), "nodes_a_removed": int((to_a < 0).sum()),
        "nodes_b_added": int(net_b.n - (to_b >= 0).sum()), "nodes_b_removed": int((to_b < 0).sum()),
        "edges_a_added": ea_add, "edges_a_removed": ea_del, "edges_b_added": eb_add, "edges_b_removed": eb_del,
        "candidates_added": int(cand.m - kept.sum()), "candidates_removed": int(len(old) - kept.sum()),
        "candidates_rescored": int(rescored),
    }
    return x0, changes, _Maps(to_a, to_b, kept, ends_a, ends_b, same_pairs)


#: Above this share of the candidates' product-graph rows to build again, the update builds the
#: whole graph (on parallel threads) instead of patching it (one thread, plus a copy of the rest).
PATCH_SHARE = 0.3


def _product_patch(state, problem, maps: _Maps, record: dict):
    """How the update makes the product graph: a function that patches the previous run's graph
    (:func:`aligner.core.product.patch_product`, the rows of the pairs the change reached built
    again), or None (build it as ``align`` does) with ``record`` saying why."""
    from aligner.core.product import ProductGraph, patch_product

    cfg, cand = problem.config, problem.candidates
    why = ("the run is weighted (its entry weights are not kept)" if cfg.weighted else
           "the previous run kept no product graph" if len(state.product_degree) != len(state.pairs) else
           "the nodes or the candidate pairs changed" if not maps.same_pairs else None)
    if why is None:
        at_a, at_b = np.zeros(cand.n1, dtype=bool), np.zeros(cand.n2, dtype=bool)
        at_a[maps.ends_a] = True  # a pair's row reads A's edges at its node of A and B's at its node of B
        at_b[maps.ends_b] = True
        redo = at_a[cand.pairs[:, 0]]
        redo |= at_b[cand.pairs[:, 1]]
        share = float(redo.mean()) if cand.m else 0.0
        if share > PATCH_SHARE:
            why = f"the change reached {share:.0%} of the candidates' rows (more than {PATCH_SHARE:.0%})"
    if why is not None:
        record.update(mode="built", reason=why)
        return None
    record.update(mode="patched", reason="the rows of the pairs the change reached built again",
                  pairs_rebuilt=int(redo.sum()))

    def build():
        deg = state.product_degree
        indptr = np.zeros(len(deg) + 1, dtype=np.int64)
        np.cumsum(deg, out=indptr[1:])
        old = ProductGraph(indptr=indptr, indices=state.product_indices, directed=cfg.directed)
        a, b = problem.network_a.walk_adjacency(cfg.directed), problem.network_b.walk_adjacency(cfg.directed)
        return patch_product(old, a[0], a[1], b[0], b[1], cand, redo)

    return build


#: A candidate whose weight in the refinement's objective (beta * w~, in units of one conserved
#: edge) moved by more than this since the previous run is searched again by an incremental
#: update's refinement; a move the search skips elsewhere gains at most six such changes (plus the
#: single-precision rounding of the kept scores, 2^-24 of a pair's weight).
VALUE_TOL = 1e-3
#: Above this share of candidates touched, times the refinement's starts, the continued search
#: costs as much as align's refinement (its marking and look-ups cost more per candidate than a
#: sweep, and align refines once per start; measured at 10^5 nodes with one start and at 2 x 10^4
#: with eight: docs/update_benchmark.md), so the update refines as align does.
CONTINUE_SHARE = 0.05


def _neighbour_rows(net, nodes: np.ndarray) -> np.ndarray:
    """The neighbours of ``nodes`` in ``net`` (either direction), with repeats."""
    if not len(nodes):
        return np.empty(0, dtype=np.int64)
    return np.concatenate([net.indices[net.indptr[u]:net.indptr[u + 1]] for u in nodes]).astype(np.int64)


def _previous_matching(state, maps: _Maps, cand) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """The previous run's final matching on the new candidates, and the nodes (of A, of B) whose
    previous match is not a candidate any more, with those of them whose partner stayed in its
    network (the pair's old product-graph neighbours lost a matched neighbour)."""
    old = state.pairs[state.matched].astype(np.int64)
    a, b = maps.to_a[old[:, 0]], maps.to_b[old[:, 1]]
    both = (a >= 0) & (b >= 0)
    keys = cand.pairs[:, 0].astype(np.int64) * cand.n2 + cand.pairs[:, 1]
    want = a[both] * cand.n2 + b[both]
    pos = np.minimum(np.searchsorted(keys, want), max(cand.m - 1, 0))
    hit = keys[pos] == want if cand.m else np.zeros(len(want), dtype=bool)
    lost_a, lost_b = a[both][~hit], b[both][~hit]
    freed_a = np.concatenate([lost_a, a[~both & (a >= 0)]])
    freed_b = np.concatenate([lost_b, b[~both & (b >= 0)]])
    return pos[hit], freed_a, freed_b, lost_a


def _several_starts(near: int | None) -> str:
    """Why an update of a run refining from several starts refines as ``align``: the previous
    run's starts reached other matchings nearly as good (``near``, None when its state does not
    say), which name alternatives (:mod:`aligner.core.ambiguity`) a search from one matching
    would not find again."""
    if near is None:
        return "the run refines from several starts, and the previous run's state does not say whether they reached " \
               "near-optimal matchings"
    return f"the run refines from several starts, and the previous run's reached {near} near-optimal " \
           f"matching{'' if near == 1 else 's'}"


def _continued_refinement(state, maps: _Maps, x0: np.ndarray, record: dict):
    """An incremental update's refinement, for :func:`aligner.pipeline.run_stages`: the local
    search continued from the previous run's final matching, examining the candidates the change
    reached (:func:`aligner.core.refine.continue_local_search`), instead of Frank–Wolfe from the
    new rounded matching and a search over every candidate.

    Returns None (so ``align``'s refinement runs) with several refinement starts (small
    problems) when the previous run's reached near-optimal matchings (:func:`_several_starts`),
    seed pairs when the previous run's final matching was not its refinement's (a rounded
    matching is no local optimum), or a weighted run counting agreement (whose entry weights can
    change where no edge did), and when the continued search ends below the new rounded
    matching's F (``align`` never ends below it) or without a seed pair. With several starts and
    no near-optimal matching the search continues from the previous run's matching, the best of
    its starts; after a run that held its seed pairs, it holds them too. ``record`` receives what
    was done, for the summary."""
    from aligner.core.refine import (RISE_TOL, continue_local_search, held_weight, normalise_weights,
                                     refine_objective, start_record)
    from aligner.core.rounding import round_matching
    from aligner.pipeline import Improvement, counted_weights, refine_starts

    def run(problem, diffusion, rounded):
        cfg, cand = problem.config, problem.candidates
        prod = problem.product.symmetrised()
        near = state.meta.get("near_optima")  # None: a state written before it was kept
        why = (_several_starts(near) if refine_starts(problem) > 1 and near != 0 else
               # the search continues from a local optimum of its own; the rounded matching a
               # run keeps when its refinement's result was not used is none
               "the run has seed pairs, and the previous run's refinement was not used"
               if problem.seed_index is not None and state.meta.get("refined") is False else
               "the run has seed pairs, and the previous run's state does not say whether its refinement was used"
               if problem.seed_index is not None and state.meta.get("refined") is None else
               "the run counts edges by agreement" if counted_weights(cfg, prod) is not None else
               # F then counts conserved edges alone: a matched pair that conserves none is a tie
               # the search keeps and align's assignment leaves unmatched
               "the run refines with beta 0" if cfg.beta == 0 else None)
        if why is not None:
            record.update(mode="full", reason=why)
            return None
        start, freed_a, freed_b, lost_a = _previous_matching(state, maps, cand)
        bw_new = normalise_weights(diffusion.x)[0]
        bw_new *= cfg.beta  # the search's weights, to the bit (arrays of m entries are made sparingly)
        old_scale = float(np.mean(state.x, where=state.x > 0, dtype=np.float64)) if (state.x > 0).any() else 1.0
        # a value that moved helps a move only where it rose on a pair the move adds (one not
        # matched) or fell on one it removes (a matched one)
        moved = np.multiply(x0, -cfg.beta / old_scale)
        moved += bw_new
        moved[start] *= -1.0
        touched = moved > VALUE_TOL
        del moved
        touched |= ~maps.kept
        rows = np.zeros(cand.n1, dtype=bool)
        rows[maps.ends_a] = True  # their product-graph rows changed
        rows[_neighbour_rows(problem.network_a, lost_a)] = True  # a matched neighbour left them
        cols = np.zeros(cand.n2, dtype=bool)
        cols[maps.ends_b] = True
        touched |= rows[cand.pairs[:, 0]] | cols[cand.pairs[:, 1]]
        share = float(touched.mean()) if cand.m else 0.0
        starts = refine_starts(problem)
        limit = min(1.0, CONTINUE_SHARE * starts)
        if share > limit:
            per = f", {CONTINUE_SHARE:.0%} for each of the {starts} refinement starts" if starts > 1 else ""
            record.update(mode="full", reason=f"the change touched {share:.1%} of the candidates (more than "
                                              f"{limit:.0%}{per}): refined as align",
                          pairs_touched=int(touched.sum()))
            return None
        # after a run that refined with its seed pairs held (every free start gave one up), the
        # search holds them too: its start is then a local optimum of the search with them held
        hold = problem.seed_index if problem.seed_index is not None and state.meta.get("seeds_held") else None
        if hold is not None and not np.isin(hold, start).all():
            record.update(mode="full", reason="the previous run held its seed pairs, and its matching lacks one of "
                                              "the seed pairs: refined as align")
            return None
        res, marked = continue_local_search(prod, cand, diffusion.x, start, np.flatnonzero(touched), freed_a,
                                            freed_b, beta=cfg.beta, hold=hold)
        f_rounded, c_rounded = refine_objective(prod, bw_new, rounded.index)
        record.update(pairs_touched=int(touched.sum()), candidates_marked=marked, moves=res.local_moves)
        if problem.seed_index is not None and not np.isin(problem.seed_index, res.index).all():
            # align keeps no refined matching without every seed pair (refine_from_starts' keep)
            record.update(mode="full", reason="the continued search ended without a seed pair: refined as align")
            return None
        if res.objective[-1] < f_rounded - RISE_TOL * (1.0 + abs(f_rounded)):
            record.update(mode="full", reason="the continued search ended below the new rounded matching")
            return None
        # the step align's refinement starts with, taken from the continued matching: the
        # assignment on F's gradient beta w~ + S 1_M. The search moves pairs two or three at a
        # time; an assignment also finds longer chains (a partner moved to a free node so that an
        # unmatched node takes its place), and where one raises F align's result can differ
        grad = np.add(res.neighbours, bw_new)  # S 1_M from the search, which keeps it
        if hold is not None:  # as align's refinement with the seed pairs held takes its steps
            grad[hold] += held_weight(prod, bw_new)
        step = round_matching(cand, grad, method=cfg.rounding)
        del grad
        f_step = (res.objective[-1] if np.array_equal(step.index, res.index)
                  else refine_objective(prod, bw_new, step.index)[0])
        if f_step > res.objective[-1] + RISE_TOL * (1.0 + abs(res.objective[-1])):
            record.update(mode="full", reason="an assignment step from the continued matching raised F: refined as "
                                              "align")
            return None
        record.update(mode="continued", reason="local search from the previous matching" +
                      (", the seed pairs held" if hold is not None else ""))
        # (the record says the seed pairs were held, and the state keeps it for the next update)
        held = () if hold is None else (start_record("previous matching", res, True, seeds_held=True),)
        res = dataclasses.replace(res, objective=[f_rounded, *res.objective],
                                  conserved_before=c_rounded,
                                  weight_before=float(diffusion.x[rounded.index].sum()), starts=held)
        final = dataclasses.replace(rounded, index=res.index, weight=float(diffusion.x[res.index].sum()))
        return Improvement(final, rounded, res)

    return run


def _matches_changed(state, res: AlignmentResult, maps) -> int:
    """Nodes of A whose matched node of B differs between the runs (a node matched in one run only,
    or in one network only, counts)."""
    net_a, cand = res.network_a, res.candidates
    to_a, to_b = maps.to_a, maps.to_b
    new = np.full(net_a.n, -1, dtype=np.int64)
    new[cand.pairs[res.matching.index, 0]] = cand.pairs[res.matching.index, 1]
    old_pairs = state.pairs[state.matched].astype(np.int64)
    old = np.full(net_a.n, -1, dtype=np.int64)
    here = to_a[old_pairs[:, 0]] >= 0
    partner = to_b[old_pairs[here, 1]]
    old[to_a[old_pairs[here, 0]]] = np.where(partner >= 0, partner, -2)  # -2: the partner left B
    gone = int((~here).sum())  # matched nodes of A that left A
    return int((old != new).sum()) + gone


def update(previous, network_a=None, network_b=None, prior=None, *, seeds=None, truth=None,
           add_a=None, remove_a=None, add_b=None, remove_b=None, add_prior=None, remove_prior=None,
           config: AlignConfig | None = None, progress: Callable[[str], None] | None = None,
           **options: Any) -> AlignmentResult:
    """Align the new inputs starting from a previous run's state.

    Parameters
    ----------
    previous : path
        The previous run's output directory (or its state.npz).
    network_a, network_b, prior, seeds, truth : optional
        The new inputs, as for :func:`aligner.align`; one left out is the previous run's file,
        which must be unchanged (its fingerprint is in the state).
    add_a, remove_a, add_b, remove_b : optional
        Instead of a whole new network, edge lists to add to and remove from the previous run's
        network (unweighted runs); nodes seen first in ``add_*`` join the network. A diff that
        removes a missing edge or adds a present one is refused.
    add_prior, remove_prior : optional
        Instead of a whole new prior, rows (node_a, node_b, score) to add to or rescore in the
        previous run's prior file (which must be unchanged), and pairs (node_a, node_b) to take
        out of it; removing a pair the prior lacks is refused.
    config, **options :
        The previous run's options are used; any given must agree with them.

    Returns
    -------
    AlignmentResult
        As :func:`aligner.align` on the new inputs would give, to the same certified tolerance
        (except that a continued refinement ends at a local optimum reached from the previous
        matching, not necessarily ``align``'s: ``summary["update"]["refine"]`` says which ran),
        with ``summary["update"]``: the previous run, the mode (``incremental`` or ``full`` and
        why), what changed, pairs whose score moved by more than the per-score bound, pushes and
        edge touches against the previous run's, matches changed, how the refinement ran,
        seconds against the previous run's.

    Raises
    ------
    InputFormatError
        The state is missing, damaged or of another version; an input left out changed since.
    InvalidParameterError
        An option differs from the previous run's.
    """
    t0 = time.perf_counter()
    state = read_state(previous)
    cfg = _check_options(state, config, options)
    given = {"network_a": network_a, "network_b": network_b, "prior": prior, "seeds": seeds, "truth": truth}
    for side, (add, remove) in (("a", (add_a, remove_a)), ("b", (add_b, remove_b))):
        if (add is not None or remove is not None) and given[f"network_{side}"] is not None:
            raise InvalidParameterError(f"give either a new network {side.upper()} or edges to add and remove, not "
                                        "both", param=f"add_{side}")
    if (add_prior is not None or remove_prior is not None) and prior is not None:
        raise InvalidParameterError("give either a new prior or prior rows to add and remove, not both",
                                    param="add_prior")
    clock = Clock(progress)
    same_names: dict[str, bool] = {}
    known: dict[str, tuple] = {}  # the edge changes of a side given as a diff
    with clock.stage("read"):  # the diffs, the inputs given, and those kept in the state
        for side, (add, remove) in (("a", (add_a, remove_a)), ("b", (add_b, remove_b))):
            if add is not None or remove is not None:
                given[f"network_{side}"], same_names[side], known[side] = _with_diff(state, side, add, remove, cfg)
        if add_prior is not None or remove_prior is not None:
            given["prior"] = _with_prior_diff(state, add_prior, remove_prior, cfg)
        files = _inputs(state, given)
        inputs = _kept_inputs(state, given, files, cfg, same_names)
    problem = prepare(inputs["network_a"], inputs["network_b"], inputs["prior"], seeds=files["seeds"],
                      truth=files["truth"], config=cfg, clock=clock, with_product=False)
    t1 = time.perf_counter()
    x0, changes, maps = _carry(state, problem, same_names, known)
    carry_s = time.perf_counter() - t1
    product = {}
    problem = with_product_graph(problem, clock, build=_product_patch(state, problem, maps, product))
    m = problem.candidates.m
    share_pairs = (changes["candidates_added"] + changes["candidates_rescored"]) / max(m, 1)
    share_edges = max((changes["edges_a_added"] + changes["edges_a_removed"]) / max(len(state.edges_a), 1),
                      (changes["edges_b_added"] + changes["edges_b_removed"]) / max(len(state.edges_b), 1))
    full = max(share_pairs, share_edges) > FULL_SHARE
    refined = {}
    res = run_stages(problem, clock, x0=None if full else x0,
                     improve_from=None if full else _continued_refinement(state, maps, x0, refined))
    bound = cfg.tol / (1.0 - cfg.alpha)
    moved = np.subtract(res.diffusion.x, x0, out=x0)  # x0 is not read again: no array of m entries more
    np.abs(moved, out=moved)
    prev = state.meta
    res.summary["update"] = {
        "previous": str(Path(state.path).resolve().parent),
        "mode": "full" if full else "incremental",
        "reason": (f"{max(share_pairs, share_edges):.0%} of the candidates or edges changed (more than "
                   f"{FULL_SHARE:.0%}): started from zero" if full else "started from the previous scores"),
        "changes": changes,
        "scores_moved": int(np.count_nonzero(moved > bound)),
        "score_bound": bound,
        "pushes": res.diffusion.steps, "edge_touches": res.diffusion.edge_touches,
        "previous_pushes": prev.get("diffusion", {}).get("steps"),
        "previous_edge_touches": prev.get("diffusion", {}).get("edge_touches"),
        "matches_changed": _matches_changed(state, res, maps),
        "product": product,
        "refine": refined or None,
        "carry_seconds": round(carry_s, 4),
        "seconds": round(time.perf_counter() - t0, 4), "previous_seconds": prev.get("seconds"),
    }
    return res
