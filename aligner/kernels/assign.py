"""Maximum-weight bipartite matching kernels (sparse and dense).

Two entry points solve the same problem, "pick at most one entry per row and
per column so that the total weight is as large as possible; never pick an
entry whose weight is not positive":

* :func:`sparse_max_weight_matching` -- a shortest augmenting path solver
  working directly on a CSR matrix, for large sparse candidate sets: a short
  Python driver calling three compiled phases (packing, row reduction,
  shortest paths), each compiled on its own so that none is compiled again
  inside another.
* :func:`max_weight_matching_dense` -- a thin pure-Python wrapper around the
  dense Jonker-Volgenant solver of the ``lapjv`` package, for small dense
  problems and as an independent cross-check.
"""

from __future__ import annotations

import numba
import numpy as np
from llvmlite import ir
from numba.core import cgutils, types
from numba.core.extending import intrinsic

from aligner.kernels.options import OUTER, inner

__all__ = ["sparse_max_weight_matching", "max_weight_matching_dense"]

#: bits of the common grid the costs handed to lapjv are put on, at most (see
#: max_weight_matching_dense)
GRID_BITS = 40

# Work allowed to the augmenting row reduction phase, in row scans per
# stored positive entry; the shortest-path phase finishes whatever is left.
_ARR_BUDGET = 16.0

# Number of interleaved chains in the row reduction phase.
_LANES = 8

# Fields of the per-column record.  What a search or a bid needs about a
# column besides its potential (its label, its owner and the owner's entry
# range) sits in one float64 row, so that following a column to its owner
# costs one cache miss instead of one per array.  Integer fields are stored
# exactly as floats.  The potentials ``v`` are a separate compact array:
# they are read for every entry scanned.
_DIST = 0  # tentative distance of the current search
_OWNER = 1  # row matched to the column, -1 if free
_BEG = 2  # entry range of the owner in the packed entry array
_END = 3
_OCOST = 4  # cost of the owner's entry in this column
_PRED = 5  # row preceding the column on the current shortest path tree
_PREDP = 6  # packed entry used to reach the column
_NFIELDS = 8  # (one spare field: 64-byte rows)

# Column states during the shortest-path phase.
_UNSEEN = 0  # matched, not reached by the current search
_IN_HEAP = 1  # reached, distance tentative
_SETTLED = 2  # distance final
_FREE = 3  # unmatched: can only end a path, never enters the heap
_ON_STACK = 4  # reached at a distance <= the current level: settled next


# ---------------------------------------------------------------------------
# Indexed binary min-heap over column ids.  ``heap[0:size]`` holds column
# ids, ``hkey[slot]`` the key of ``heap[slot]`` (kept inline for locality)
# and ``pos[col]`` the slot of ``col``.
# ---------------------------------------------------------------------------


@inner
def _sift_up(heap, hkey, pos, slot, col, key):
    """Place ``col`` with ``key`` at ``slot`` or above it, moving larger keys down."""
    while slot > 0:
        parent = (slot - 1) >> 1
        pkey = hkey[parent]
        if pkey <= key:
            break
        pcol = heap[parent]
        heap[slot] = pcol
        hkey[slot] = pkey
        pos[pcol] = slot
        slot = parent
    heap[slot] = col
    hkey[slot] = key
    pos[col] = slot


# The heap functions take no literal flags or sizes: each constant argument would compile a
# specialisation of its own (one signature each keeps the first run's compilation short).
@inner
def _heap_push(heap, hkey, pos, size, col, key):
    """Insert ``col`` with ``key``; return the new size."""
    _sift_up(heap, hkey, pos, size, col, key)
    return size + 1


@inner
def _heap_decrease(heap, hkey, pos, col, key):
    """Lower the key of ``col`` (in the heap) to ``key``."""
    _sift_up(heap, hkey, pos, pos[col], col, key)


@inner
def _heap_pop(heap, hkey, pos, size):
    """Remove the root; return the new size (the root was ``heap[0]``)."""
    size -= 1
    if size == 0:
        return size
    col = heap[size]
    key = hkey[size]
    slot = 0
    while True:
        child = 2 * slot + 1
        if child >= size:
            break
        ckey = hkey[child]
        right = child + 1
        if right < size:
            rkey = hkey[right]
            if rkey < ckey:
                child = right
                ckey = rkey
        if ckey >= key:
            break
        ccol = heap[child]
        heap[slot] = ccol
        hkey[slot] = ckey
        pos[ccol] = slot
        slot = child
    heap[slot] = col
    hkey[slot] = key
    pos[col] = slot
    return size


@inner
def _take(rec, rstart, row_to_col, row_cost, i, j, cost):
    """Match row ``i`` to column ``j`` through an entry of cost ``cost``."""
    rec[j, _OWNER] = i
    rec[j, _BEG] = rstart[i]
    rec[j, _END] = rstart[i + 1]
    rec[j, _OCOST] = cost
    row_to_col[i] = j
    row_cost[i] = cost


# ---------------------------------------------------------------------------
# Software prefetch (a hint only: it never changes results).
# ---------------------------------------------------------------------------


def _prefetch_typing(typingctx, arr, idx):
    """Hint the CPU to fetch the cache line holding ``arr[idx]`` (or
    ``arr[idx, 0]`` for a 2-D array): ``llvm.prefetch``, read, high
    locality."""
    sig = types.void(arr, idx)

    def codegen(context, builder, signature, args):
        aryty = signature.args[0]
        ary = context.make_array(aryty)(context, builder, args[0])
        index = [args[1]] + [context.get_constant(types.intp, 0)] * (aryty.ndim - 1)
        ptr = cgutils.get_item_pointer(context, builder, aryty, ary, index,
                                       wraparound=False)
        i8p = ir.IntType(8).as_pointer()
        i32 = ir.IntType(32)
        fnty = ir.FunctionType(ir.VoidType(), [i8p, i32, i32, i32])
        fn = builder.module.declare_intrinsic("llvm.prefetch", [i8p], fnty)
        # read access, high locality, data cache
        builder.call(fn, [builder.bitcast(ptr, i8p), i32(0), i32(3), i32(1)])
        return context.get_dummy_value()

    return sig, codegen


if numba.config.DISABLE_JIT:  # plain Python run (debugging): no-op hint

    def _prefetch(arr, idx):
        pass

else:
    _prefetch = intrinsic(_prefetch_typing)


@inner
def _prefetch_entries(ent, beg, end):
    for p in range(beg, end, 4):  # four 16-byte entries per 64-byte line
        _prefetch(ent, p)
    if end > beg:
        _prefetch(ent, end - 1)


@inner
def _best_two(ent, beg, end, v):
    """Cheapest and second cheapest reduced option of a free row.

    Options are the row's entries (reduced cost ``cost - v[col]``) and its
    dummy (0).  Returns ``(u1, j1, c1, u2, j2, c2)``: values, columns (-1
    for the dummy) and entry costs.
    """
    u1 = 0.0  # own dummy
    j1 = -1
    c1 = 0.0
    u2 = np.inf
    j2 = -1
    c2 = 0.0
    for p in range(beg, end):
        c = np.int64(ent[p, 0])
        cost = ent[p, 1]
        h = cost - v[c]
        if h < u2:
            if h >= u1:
                u2 = h
                j2 = c
                c2 = cost
            else:
                u2 = u1
                j2 = j1
                c2 = c1
                u1 = h
                j1 = c
                c1 = cost
    return u1, j1, c1, u2, j2, c2


@numba.njit(cache=True, nogil=True, **OUTER)
def _row_reduction_pass(rstart, ent, free, n_free, max_steps, v, rec,
                        row_to_col, row_cost):
    """One augmenting row reduction pass over ``free[:n_free]``.

    Each free row takes the option of least reduced cost ``u1``.  If that is
    strictly below the second least ``u2``, the column's potential drops by
    ``u2 - u1`` (the row is then tight on two options) and the displaced
    owner continues the chain; on a tie a displaced owner waits for the
    next pass.  The row's own dummy column (cost 0, potential 0) is one of
    the options: picking it leaves the row unmatched for good.  Potentials
    only decrease, and only on columns that stay matched, so every matched
    row keeps non-negative reduced costs and is tight on its own entry.

    ``_LANES`` chains run interleaved, each step split in three stages
    (fetch the row's entries; fetch the potentials of its columns; pick
    and apply) with software prefetches in between, so that the memory
    latency of one chain overlaps the work of the others.  Any order of
    steps is a valid reduction; a step re-checks its two best options
    against the current potentials before applying, and rescans the row
    if another chain changed them in the meantime.

    Returns ``(n_still_free, steps)``; the free rows are ``free[:n]``.
    """
    n_lanes = _LANES
    lane_row = np.empty(n_lanes, dtype=np.int64)
    lane_stage = np.empty(n_lanes, dtype=np.int64)
    lane_beg = np.empty(n_lanes, dtype=np.int64)
    lane_end = np.empty(n_lanes, dtype=np.int64)
    lane_j = np.empty((n_lanes, 2), dtype=np.int64)
    lane_f = np.empty((n_lanes, 4), dtype=np.float64)  # u1, c1, u2, c2
    for _t in range(n_lanes):  # filled here, not by np.zeros / np.full (aligner.kernels.options)
        lane_row[_t], lane_stage[_t], lane_beg[_t], lane_end[_t] = -1, 0, 0, 0
        lane_j[_t, 0], lane_j[_t, 1] = 0, 0
        lane_f[_t, 0], lane_f[_t, 1], lane_f[_t, 2], lane_f[_t, 3] = 0.0, 0.0, 0.0, 0.0
    k = 0
    prv = n_free
    n_free = 0
    steps = 0
    active = 0
    while True:
        for lane in range(n_lanes):
            i = lane_row[lane]
            if i < 0:
                if k < prv and steps < max_steps:
                    i = free[k]
                    k += 1
                    lane_row[lane] = i
                    lane_beg[lane] = rstart[i]
                    lane_end[lane] = rstart[i + 1]
                    lane_stage[lane] = 0
                    _prefetch_entries(ent, rstart[i], rstart[i + 1])
                    active += 1
                continue
            beg = lane_beg[lane]
            end = lane_end[lane]
            stage = lane_stage[lane]
            if stage == 0:
                for p in range(beg, end):
                    _prefetch(v, np.int64(ent[p, 0]))
                lane_stage[lane] = 1
                continue
            if stage == 1:
                u1, j1, c1, u2, j2, c2 = _best_two(ent, beg, end, v)
                if j1 < 0:
                    # the dummy is cheapest: row i stays unmatched
                    steps += 1
                    lane_row[lane] = -1
                    active -= 1
                    continue
                _prefetch(rec, j1)
                if j2 >= 0:
                    _prefetch(rec, j2)
                lane_j[lane, 0] = j1
                lane_j[lane, 1] = j2
                lane_f[lane, 0] = u1
                lane_f[lane, 1] = c1
                lane_f[lane, 2] = u2
                lane_f[lane, 3] = c2
                lane_stage[lane] = 2
                continue
            # stage 2: apply one reduction step for row i
            steps += 1
            j1 = lane_j[lane, 0]
            j2 = lane_j[lane, 1]
            u1 = lane_f[lane, 0]
            c1 = lane_f[lane, 1]
            u2 = lane_f[lane, 2]
            c2 = lane_f[lane, 3]
            if c1 - v[j1] != u1 or (j2 >= 0 and c2 - v[j2] != u2):
                # another chain moved a potential: recompute
                u1, j1, c1, u2, j2, c2 = _best_two(ent, beg, end, v)
                if j1 < 0:
                    lane_row[lane] = -1
                    active -= 1
                    continue
            # j1 is a real column, so the dummy is among the others: u2 <= 0
            i0 = np.int64(rec[j1, _OWNER])
            if u1 < u2:
                v[j1] -= u2 - u1
            elif i0 >= 0:
                # tie with an owned column: take the second option instead
                j1 = j2
                c1 = c2
                if j1 < 0:
                    # tie with the dummy: unmatched, nothing moves
                    lane_row[lane] = -1
                    active -= 1
                    continue
                i0 = np.int64(rec[j1, _OWNER])
            nbeg = 0
            nend = 0
            if i0 >= 0:  # the owner's entries, before _take overwrites
                nbeg = np.int64(rec[j1, _BEG])
                nend = np.int64(rec[j1, _END])
            _take(rec, rstart, row_to_col, row_cost, i, j1, c1)
            if i0 < 0:
                lane_row[lane] = -1
                active -= 1
                continue
            row_to_col[i0] = -1
            if u1 < u2 and steps < max_steps:
                # the displaced row continues the chain in this lane
                lane_row[lane] = i0
                lane_beg[lane] = nbeg
                lane_end[lane] = nend
                lane_stage[lane] = 0
                _prefetch_entries(ent, nbeg, nend)
            else:
                free[n_free] = i0
                n_free += 1
                lane_row[lane] = -1
                active -= 1
        if active == 0 and (k >= prv or steps >= max_steps):
            break
    # out of budget: hand the rest over unchanged
    while k < prv:
        free[n_free] = free[k]
        n_free += 1
        k += 1
    return n_free, steps


@numba.njit(cache=True, nogil=True, **OUTER)
def _insert_rows(free, n_free, rstart, ent, v, rec, row_to_col, row_cost, state,
                 heap, hkey, pos, stack, touched, settled):
    """Assign each free row ``free[:n_free]`` by one shortest augmenting path.

    Work arrays (``state`` and the column lists) are left as found after
    each row: only the labels of the columns a search touched are reset.
    (One kernel with the loop inside: a first run compiles it once.)
    """
    for f in range(n_free):
        s = free[f]
        inf = np.inf

        # ---- quick exit: cheapest reduced option of row s ---------------
        # If it is s's own dummy or a free column, it is what the search
        # would settle first, so take it with no change of potentials.
        best = 0.0  # own dummy column: cost 0, potential 0
        best_col = np.int64(-1)
        best_cost = 0.0
        for p in range(rstart[s], rstart[s + 1]):
            k = np.int64(ent[p, 0])
            d = ent[p, 1] - v[k]
            if d < best or (d == best and best_col >= 0
                            and state[k] == _FREE):
                best = d
                best_col = k
                best_cost = ent[p, 1]
        if best_col < 0:
            continue  # staying unmatched is optimal for row s
        if state[best_col] == _FREE:
            _take(rec, rstart, row_to_col, row_cost, s, best_col, best_cost)
            state[best_col] = _UNSEEN
            continue

        # ---- Dijkstra from row s on reduced costs ------------------------
        # Matched columns go through the heap.  A free column, or the dummy
        # of a reached row, can only end the path, so only the cheapest of
        # each kind is remembered.  Columns reached at a distance not above
        # the level being settled are final at once and skip the heap (ties
        # are common: the potentials make many edges tight).
        n_touched = 0
        n_settled = 0
        size = np.int64(0)
        n_stack = 0
        level = -inf
        dummy_dist = 0.0  # s's own dummy
        dummy_row = s
        free_dist = inf
        sink = -1
        sink_row = -1
        sink_p = -1
        r = s
        beg = rstart[s]
        end = rstart[s + 1]
        base = 0.0
        while True:
            # relax the entries of row r, reached at reduced distance base
            for p in range(beg, end):
                k = np.int64(ent[p, 0])
                sk = state[k]
                if sk == _SETTLED:
                    continue
                d = base + ent[p, 1] - v[k]
                if sk == _UNSEEN:
                    touched[n_touched] = k
                    n_touched += 1
                    rec[k, _DIST] = d
                    rec[k, _PRED] = r
                    rec[k, _PREDP] = p
                    if d <= level:
                        state[k] = _ON_STACK
                        stack[n_stack] = k
                        n_stack += 1
                    else:
                        state[k] = _IN_HEAP
                        size = _heap_push(heap, hkey, pos, size, k, d)
                elif sk == _FREE:
                    if d < free_dist:
                        free_dist = d
                        sink = k
                        sink_row = r
                        sink_p = p
                elif d < rec[k, _DIST]:
                    rec[k, _DIST] = d
                    rec[k, _PRED] = r
                    rec[k, _PREDP] = p
                    if sk == _IN_HEAP:
                        _heap_decrease(heap, hkey, pos, k, d)
            bound = dummy_dist if dummy_dist < free_dist else free_dist
            if n_stack > 0:
                n_stack -= 1
                j = stack[n_stack]
                if rec[j, _DIST] >= bound:
                    break
            else:
                if size == 0 or hkey[0] >= bound:
                    break
                j = heap[0]
                size = _heap_pop(heap, hkey, pos, size)
                level = rec[j, _DIST]
            state[j] = _SETTLED
            settled[n_settled] = j
            n_settled += 1
            r = np.int64(rec[j, _OWNER])
            beg = np.int64(rec[j, _BEG])
            end = np.int64(rec[j, _END])
            # u[r] = c[r, j] - v[j]; reduced cost of (r, k) is c - v[k] - u[r]
            vj = v[j]
            base = rec[j, _DIST] - (rec[j, _OCOST] - vj)
            if base < dummy_dist:
                dummy_dist = base
                dummy_row = r

        if free_dist <= dummy_dist:
            delta = free_dist
        else:
            delta = dummy_dist
            sink = -1

        # ---- update potentials of settled columns ------------------------
        for t in range(n_settled):
            j = settled[t]
            v[j] += rec[j, _DIST] - delta

        # ---- augment along the path --------------------------------------
        k = -1
        if sink >= 0:
            state[sink] = _UNSEEN  # matched from now on
            k = sink
            r = sink_row
            p = sink_p
        elif dummy_row != s:
            # dummy_row drops out; its column passes back along the path
            r = dummy_row
            k = row_to_col[r]
            row_to_col[r] = -1
            row_cost[r] = 0.0
            r = np.int64(rec[k, _PRED])
            p = np.int64(rec[k, _PREDP])
        # (otherwise row s stays unmatched and nothing moves)
        if k >= 0:
            while True:
                prev = row_to_col[r]
                _take(rec, rstart, row_to_col, row_cost, r, k, ent[p, 1])
                if r == s:
                    break
                k = prev
                r = np.int64(rec[k, _PRED])
                p = np.int64(rec[k, _PREDP])

        # ---- reset touched labels ----------------------------------------
        for t in range(n_touched):
            state[touched[t]] = _UNSEEN


@numba.njit(cache=True, nogil=True, **OUTER)
def _pack(indptr, indices, weights, n_cols):
    """Check the CSR arrays; return the positive entries packed by row.

    Returns ``(rstart, ent)``: row ``i`` owns ``ent[rstart[i]:rstart[i+1]]``,
    rows of ``(column, cost = -weight)`` (the column stored as a float).
    """
    n_rows = indptr.shape[0] - 1
    if n_rows < 0:
        raise ValueError("indptr must have at least one element")
    if n_cols < 0:
        raise ValueError("n_cols must be non-negative")
    if indptr[0] < 0 or indptr[n_rows] > indices.shape[0] \
            or indptr[n_rows] > weights.shape[0]:
        raise ValueError("inconsistent CSR arrays")
    for i in range(n_rows):
        if indptr[i + 1] < indptr[i]:
            raise ValueError("indptr must be non-decreasing")

    # ---- pack the positive entries: (column, cost = -weight) pairs -------
    rstart = np.empty(n_rows + 1, dtype=np.int64)
    m = 0
    for i in range(n_rows):
        rstart[i] = m
        for p in range(indptr[i], indptr[i + 1]):
            w = weights[p]
            if w > 0.0:
                c = indices[p]
                if c < 0 or c >= n_cols:
                    raise ValueError("column index out of range")
                if w == np.inf:
                    raise ValueError("weights must be finite")
                m += 1
    rstart[n_rows] = m
    ent = np.empty((m, 2), dtype=np.float64)
    q = 0
    for i in range(n_rows):
        for p in range(indptr[i], indptr[i + 1]):
            w = weights[p]
            if w > 0.0:
                ent[q, 0] = indices[p]
                ent[q, 1] = -w
                q += 1
    return rstart, ent


def _solve(indptr, indices, weights, n_cols, arr_budget):
    """Kernel of :func:`sparse_max_weight_matching` (CSR arrays of int64).

    ``arr_budget`` is the work allowed to the augmenting row reduction
    phase, in row scans per stored positive entry (0 runs the shortest-path
    phase alone).  Every value gives an optimal matching.

    Plain Python calling the compiled phases: each phase is a kernel of its
    own, so none is compiled twice inside a larger one (a first run's
    compilation is shorter), and the arrays are allocated by numpy.
    """
    rstart, ent = _pack(indptr, indices, weights, n_cols)
    return solve_packed(rstart, ent, n_cols, arr_budget)


def solve_packed(rstart, ent, n_cols, arr_budget=_ARR_BUDGET):
    """:func:`_solve` on entries already packed by row as :func:`_pack` packs them
    (``rstart``, and ``ent`` rows of (column as a float, cost = -weight), every weight positive
    and finite): each row's column, or -1."""
    n_rows = rstart.shape[0] - 1
    m = ent.shape[0]
    row_to_col = np.full(n_rows, -1, dtype=np.int64)
    row_cost = np.zeros(n_rows, dtype=np.float64)  # cost of the entry used
    v = np.zeros(n_cols, dtype=np.float64)  # column potentials
    rec = np.zeros((n_cols, _NFIELDS), dtype=np.float64)
    rec[:, _OWNER] = -1.0

    # ---- phase 1: augmenting row reduction (cheap warm start) ----------
    free = np.arange(n_rows, dtype=np.int64)
    n_free = n_rows
    steps_left = int(min(arr_budget * m, 2.0**62))
    while n_free > 0 and steps_left > 0:
        before = n_free
        n_free, used = _row_reduction_pass(rstart, ent, free, n_free,
                                           steps_left, v, rec, row_to_col,
                                           row_cost)
        steps_left -= used
        if n_free >= before:
            break  # only ties left to trade: let the searches finish

    # ---- phase 2: shortest augmenting paths for the rows still free -----
    if n_free > 0:
        state = np.where(rec[:, _OWNER] < 0, _FREE, _UNSEEN).astype(np.int8)
        heap, pos, stack, touched, settled = (np.empty(n_cols, dtype=np.int64) for _ in range(5))
        hkey = np.empty(n_cols, dtype=np.float64)
        _insert_rows(free, n_free, rstart, ent, v, rec, row_to_col, row_cost,
                     state, heap, hkey, pos, stack, touched, settled)
    return row_to_col


def sparse_max_weight_matching(indptr, indices, weights, n_cols):
    """Maximum-weight one-to-one matching of a sparse bipartite graph.

    Rows and columns of a CSR matrix are the two sides of a bipartite graph
    and every stored entry with a positive weight is an edge.  The function
    returns a matching (each row and each column used at most once) of
    largest total weight.  Rows may stay unmatched: the objective is the
    total weight, not the number of pairs.

    Parameters
    ----------
    indptr : ndarray of int32 or int64, shape (n_rows + 1,)
        CSR row pointer; row ``i`` owns entries ``indptr[i]:indptr[i + 1]``.
    indices : ndarray of int32 or int64, shape (nnz,)
        Column index of each stored entry, in ``[0, n_cols)``.  Sorting
        within a row is customary but not required; a repeated
        ``(row, column)`` pair acts like parallel edges, i.e. like its
        largest weight.
    weights : ndarray of float64, shape (nnz,)
        Weight of each stored entry.  Any real value is accepted; entries
        with weight ``<= 0`` (and NaN) are ignored, since matching them can
        never increase the total.  ``+inf`` raises ``ValueError``.
    n_cols : int
        Number of columns.

    Returns
    -------
    row_to_col : ndarray of int64, shape (n_rows,)
        ``row_to_col[i]`` is the column matched to row ``i``, or ``-1`` if
        row ``i`` is unmatched.  Every matched pair is a stored entry with
        positive weight, and no column appears twice.

    Raises
    ------
    ValueError
        If the CSR arrays are inconsistent, a column index of a positive
        entry is out of range, or a positive weight is infinite.

    Notes
    -----
    The problem is solved as a rectangular minimum-cost assignment in which
    *every* row is assigned: an entry ``(i, j)`` with ``w > 0`` costs
    ``-w``, and each row ``i`` has a private dummy column of cost 0 meaning
    "row ``i`` unmatched"; real columns may stay unused.  Column potentials
    ``v <= 0`` (exactly 0 on unused columns) and implicit row potentials
    ``u[i] = c[i, col(i)] - v[col(i)]`` keep every reduced cost
    ``c[i, j] - u[i] - v[j]`` of a matched row non-negative, which certifies
    optimality once every row is assigned.  Dummy columns are never stored:
    their cost and potential are 0.

    Two phases, both from Jonker & Volgenant (1987):

    1. *Augmenting row reduction*: each free row takes its cheapest option
       and, when it is strictly cheaper than the second cheapest, lowers
       that column's potential by the difference; a displaced row is
       processed next.  This settles most rows at ``O(deg)`` cost each.
       Eight such chains run interleaved with software prefetches, since a
       step is bound by memory latency.  The phase stops after ``16 * nnz``
       steps or when a pass makes no progress (ties can trade forever).
    2. *Shortest augmenting paths* for the rows still free: Dijkstra's
       algorithm on reduced costs, with an indexed binary heap, from the
       free row to the nearest free column or dummy (a reached matched row
       ``r`` may give up its column and drop out, at distance
       ``d[col(r)] - u[r]``), then the usual potential update on the
       settled columns and augmentation along the path.  A row whose
       cheapest option is free is assigned without a search.

    Cost: phase 1 makes at most ``16 * nnz`` row scans.  Each search of
    phase 2 works only on the columns it reaches (labels are reset from a
    list of touched columns, never by an ``O(n)`` sweep): ``O(E_r log V_r)``
    for the ``E_r`` entries and ``V_r`` columns it reaches, so the worst
    case is ``O(n_rows * nnz * log n_cols)``; on random sparse instances
    nearly all rows finish in phase 1.  Extra memory is ``O(nnz + n_rows +
    n_cols)``: the positive entries are repacked for locality (16 bytes
    each), plus about 120 bytes per column and 32 per row.  All arithmetic
    is float64, so the result is optimal up to the rounding of sums of
    weights.

    References
    ----------
    .. [1] R. Jonker and A. Volgenant, "A shortest augmenting path algorithm
       for dense and sparse linear assignment problems", Computing 38,
       325-340 (1987). doi:10.1007/BF02278710
    .. [2] E. W. Dijkstra, "A note on two problems in connexion with graphs",
       Numerische Mathematik 1, 269-271 (1959). doi:10.1007/BF01386390
    """
    # one compiled kernel for every integer type of the CSR arrays
    return _solve(np.ascontiguousarray(indptr, dtype=np.int64),
                  np.ascontiguousarray(indices, dtype=np.int64),
                  np.ascontiguousarray(weights, dtype=np.float64), int(n_cols), _ARR_BUDGET)


def max_weight_matching_dense(weights_dense):
    """Maximum-weight one-to-one matching of a dense weight matrix.

    Parameters
    ----------
    weights_dense : array_like of float, shape (n_rows, n_cols)
        Weight of each (row, column) pair.  Entries ``<= 0`` (and NaN) are
        treated as "no edge": they are never part of the returned matching.

    Returns
    -------
    row_to_col : ndarray of int64, shape (n_rows,)
        Column matched to each row, or ``-1`` if the row is unmatched.

    Raises
    ------
    ValueError
        If ``weights_dense`` is not two-dimensional or holds ``+inf``.

    Notes
    -----
    The matrix is padded with zeros to a square ``n x n`` cost matrix,
    ``n = max(n_rows, n_cols)``, holding ``-w`` where ``w > 0`` and 0
    elsewhere, and handed to ``lapjv.lapjv(cost, force_doubles=True)``, a
    dense Jonker-Volgenant solver.  A full assignment of that square matrix
    of least cost is a maximum-weight matching once the cells with zero cost
    (non-positive weights and padding) are dropped.

    The costs are first put on a common grid, integers of ``2**-b`` times the
    largest weight (``b = min(40, 52 - ceil(log2(n + 1)))``), so that every
    sum lapjv forms is exact: lapjv 1.3.29 was seen not to terminate on costs
    that differ only in their last bits, and on exact ties among floats of
    different exponents (a 146 x 146 matrix of structural similarities with
    1,431 distinct values; ``tests/data/dense_ties``). The matching is
    optimal for the rounded weights, so its total is within ``n * 2**-b`` of
    the largest weight of the double-precision optimum; a weight below half a
    step counts as no evidence. The sparse kernel has no such rounding.

    Cost: ``O(n^2)`` memory and ``O(n^3)`` time in the worst case, so this is
    meant for small problems and for cross-checking
    :func:`sparse_max_weight_matching`.

    References
    ----------
    .. [1] R. Jonker and A. Volgenant, "A shortest augmenting path algorithm
       for dense and sparse linear assignment problems", Computing 38,
       325-340 (1987). doi:10.1007/BF02278710
    """
    import lapjv  # local import: only this wrapper needs it

    w = np.asarray(weights_dense, dtype=np.float64)
    if w.ndim != 2:
        raise ValueError("weights_dense must be a 2-D array")
    n_rows, n_cols = w.shape
    out = np.full(n_rows, -1, dtype=np.int64)
    if n_rows == 0 or n_cols == 0:
        return out
    positive = w > 0.0  # False for NaN
    if np.any(np.isinf(w) & positive):
        raise ValueError("weights must be finite")
    if not positive.any():
        return out
    n = max(n_rows, n_cols)
    cost = np.zeros((n, n), dtype=np.float64)
    # lapjv 1.3.29 was seen to loop forever on costs that differ only in their last bits, and on
    # exact ties among floats of different exponents (its sums then round); on a common grid of
    # integers every sum of n costs stays below 2**53, so its arithmetic is exact
    bits = min(GRID_BITS, 52 - int(np.ceil(np.log2(n + 1))))
    step = float(w[positive].max()) * 2.0**-bits
    cost[:n_rows, :n_cols] = -np.round(np.where(positive, w, 0.0) / step)
    positive &= cost[:n_rows, :n_cols] != 0  # below half a step: no evidence left
    if n == 1:
        x = np.zeros(1, dtype=np.int64)
    else:
        x = np.asarray(lapjv.lapjv(cost, force_doubles=True)[0], dtype=np.int64)
    x = x[:n_rows]
    rows = np.arange(n_rows)
    keep = x < n_cols
    keep[keep] = positive[rows[keep], x[keep]]
    out[keep] = x[keep]
    return out


# ---------------------------------------------------------------------------
# The rounding stage's CSR over the pairs with evidence, and the way back.
# ---------------------------------------------------------------------------


@numba.njit(cache=True, nogil=True, **OUTER)
def pack_positive(pairs, w, n1, n2):
    """The candidate pairs with ``w > 0``, packed for the sparse solver as :func:`_pack` packs a
    CSR, without the CSR's columns and weights in between (16 bytes a kept pair fewer at the
    solver's peak; the rounding's, and each Frank–Wolfe step's).

    Returns (use, rstart, ent, nc): the kept candidate indices ascending (empty when every pair
    is kept: the identity), the row pointer over the A nodes with a kept pair, each kept pair's
    (column as a float, -weight), and the number of columns. ``pairs`` (m, 2) sorted by (node of
    A, node of B); the A and B nodes with a kept pair are numbered in increasing order (the
    numbering of ``np.unique(..., return_inverse=True)``). Two passes over the pairs and two
    over the nodes, no sort; NaN weights are not kept. Raises ValueError on an infinite weight,
    as :func:`_pack` does.
    """
    m = pairs.shape[0]
    pos_a = np.empty(n1 + 1, dtype=np.int64)
    for _t in range(pos_a.shape[0]):
        pos_a[_t] = 0
    pos_b = np.empty(n2 + 1, dtype=np.int64)
    for _t in range(pos_b.shape[0]):
        pos_b[_t] = 0
    count = 0
    for k in range(m):
        wk = w[k]
        if wk > 0:
            if wk == np.inf:
                raise ValueError("weights must be finite")
            count += 1
            pos_a[pairs[k, 0]] = 1
            pos_b[pairs[k, 1]] = 1
    r = 0
    for i in range(n1):  # present nodes numbered in increasing order
        present = pos_a[i]
        pos_a[i] = r
        r += present
    c = 0
    for j in range(n2):
        present = pos_b[j]
        pos_b[j] = c
        c += present
    every = count == m
    use = np.empty(0 if every else count, dtype=np.int64)
    ent = np.empty((count, 2), dtype=np.float64)
    rstart = np.empty(r + 1, dtype=np.int64)
    for _t in range(rstart.shape[0]):
        rstart[_t] = 0
    t = 0
    for k in range(m):
        wk = w[k]
        if wk > 0:
            rstart[pos_a[pairs[k, 0]] + 1] += 1
            if not every:
                use[t] = k
            ent[t, 0] = pos_b[pairs[k, 1]]
            ent[t, 1] = -wk
            t += 1
    for i in range(r):
        rstart[i + 1] += rstart[i]
    return use, rstart, ent, c


@numba.njit(cache=True, nogil=True, **OUTER)
def matched_packed(rstart, ent, row_to_col, use):
    """The way back from :func:`pack_positive`'s packing: the candidate index of each matched
    row's entry in its column (``use`` empty: the entry's own position), rows ascending."""
    nr = rstart.shape[0] - 1
    n = 0
    for r in range(nr):
        if row_to_col[r] >= 0:
            n += 1
    out = np.empty(n, dtype=np.int64)
    every = use.shape[0] == 0
    t = 0
    for r in range(nr):
        c = row_to_col[r]
        if c < 0:
            continue
        for p in range(rstart[r], rstart[r + 1]):
            if ent[p, 0] == c:
                out[t] = p if every else use[p]
                t += 1
                break
    return out[:t]
