"""Compiled kernels of the refinement stage (see :mod:`aligner.core.refine`); no argument checking.

All kernels work on the restricted product graph S over the m candidate pairs, stored as a
symmetric CSR pattern (``s_indptr``, ``s_indices``, neighbour lists sorted), and on the
candidate pairs sorted by (node of A, node of B) with the row pointer ``c_indptr`` over the
nodes of A.
"""

import numba
import numpy as np

from aligner.kernels.options import OUTER, inner
from aligner.kernels.utils import _find



@numba.njit(cache=True, nogil=True, **OUTER)
def _matched_neighbours(s_indptr, s_indices, s_w, sel, out):
    """out = S @ 1_sel: for every pair, how many of its product-graph neighbours are in ``sel``
    (with non-empty entry weights ``s_w``: their summed entry weights).

    Uses the symmetry of S, so it costs the degrees of the selected pairs only.
    """
    weighted = s_w.shape[0] > 0
    out[:] = 0.0
    for t in range(sel.shape[0]):
        k = sel[t]
        for e in range(s_indptr[k], s_indptr[k + 1]):
            out[s_indices[e]] += s_w[e] if weighted else 1.0


@inner
def _adjacent(s_indptr, s_indices, s_w, k, l):
    """S[k, l]: how many times l is stored among the neighbours of k (0, 1, or 2 in the
    symmetrised product graph of directed networks, where reciprocal arcs give two entries);
    with non-empty entry weights ``s_w``, the sum of those entries' weights."""
    weighted = s_w.shape[0] > 0
    lo = s_indptr[k]
    hi = s_indptr[k + 1]
    t = _find(s_indices, lo, hi, l)
    if t < 0:
        return 0.0
    c = s_w[t] if weighted else 1.0
    u = t - 1
    while u >= lo and s_indices[u] == l:
        c += s_w[u] if weighted else 1.0
        u -= 1
    u = t + 1
    while u < hi and s_indices[u] == l:
        c += s_w[u] if weighted else 1.0
        u += 1
    return c


@inner
def _toggle(s_indptr, s_indices, s_w, g, k, sign):
    weighted = s_w.shape[0] > 0
    for e in range(s_indptr[k], s_indptr[k + 1]):
        g[s_indices[e]] += sign * s_w[e] if weighted else sign


@inner
def _apply(s_indptr, s_indices, s_w, g, pair_a, pair_b, mate_a, mate_b, removed, added):
    """Take the pairs ``removed`` out of the matching and put ``added`` in (entries -1 skipped)."""
    for t in range(removed.shape[0]):
        k = removed[t]
        if k >= 0:
            _toggle(s_indptr, s_indices, s_w, g, k, -1.0)
            mate_a[pair_a[k]] = -1
            mate_b[pair_b[k]] = -1
    for t in range(added.shape[0]):
        k = added[t]
        if k >= 0:
            _toggle(s_indptr, s_indices, s_w, g, k, 1.0)
            mate_a[pair_a[k]] = k
            mate_b[pair_b[k]] = k


@numba.njit(cache=True, nogil=True, **OUTER)
def _max_entry(s_indptr, s_indices):
    """The largest entry of S: the longest run of one neighbour in a sorted neighbour list
    (1 on undirected networks, 2 in the symmetrised product graph of directed ones); 0 if empty."""
    best = 0
    for k in range(s_indptr.shape[0] - 1):
        run = 0
        for t in range(s_indptr[k], s_indptr[k + 1]):
            run = run + 1 if t > s_indptr[k] and s_indices[t] == s_indices[t - 1] else 1
            if run > best:
                best = run
    return float(best)


@inner
def _row_bounds(c_indptr, bw, g, top1, top1_at, top2):
    """For every node i of A: the largest bw + g over its candidates (top1, at candidate top1_at)
    and the second largest (top2); 0 where there is none (every bw + g is >= 0)."""
    for i in range(c_indptr.shape[0] - 1):
        a = 0.0
        b = 0.0
        at = -1
        for t in range(c_indptr[i], c_indptr[i + 1]):
            v = bw[t] + g[t]
            if v > a:
                b = a
                a = v
                at = t
            elif v > b:
                b = v
        top1[i] = a
        top1_at[i] = at
        top2[i] = b


@inner
def _col_bounds(col_ptr, col_idx, bw, g, top1, top1_at, top2):
    """:func:`_row_bounds` over the candidates of each node of B."""
    for j in range(col_ptr.shape[0] - 1):
        a = 0.0
        b = 0.0
        at = -1
        for e in range(col_ptr[j], col_ptr[j + 1]):
            t = col_idx[e]
            v = bw[t] + g[t]
            if v > a:
                b = a
                a = v
                at = t
            elif v > b:
                b = v
        top1[j] = a
        top1_at[j] = at
        top2[j] = b


@inner
def _raise_bound(top1, top1_at, top2, node, t, v):
    """Keep top1 >= every value of the node's candidates and top2 >= every value but top1_at's,
    after candidate t's value rose to v (values that fall leave the bounds valid)."""
    if t == top1_at[node]:
        if v > top1[node]:
            top1[node] = v
    elif v > top1[node]:
        if top1[node] > top2[node]:
            top2[node] = top1[node]
        top1[node] = v
        top1_at[node] = t
    elif v > top2[node]:
        top2[node] = v


@inner
def _raise_bounds(s_indptr, s_indices, pair_a, pair_b, bw, g, added, r1, r1_at, r2, c1, c1_at, c2):
    """After a move: the pairs whose g rose are the product-graph neighbours of the added pairs."""
    for u in range(added.shape[0]):
        k = added[u]
        if k < 0:
            continue
        for e in range(s_indptr[k], s_indptr[k + 1]):
            t = s_indices[e]
            v = bw[t] + g[t]
            _raise_bound(r1, r1_at, r2, pair_a[t], t, v)
            _raise_bound(c1, c1_at, c2, pair_b[t], t, v)


@inner
def _mark_row(c_indptr, dirty, i, bits):
    """Mark the candidates of node i of A with ``bits``; returns how many."""
    for t in range(c_indptr[i], c_indptr[i + 1]):
        dirty[t] |= bits
    return c_indptr[i + 1] - c_indptr[i]


@inner
def _mark_col(col_ptr, col_idx, dirty, b, bits):
    """Mark the candidates of node b of B with ``bits``; returns how many."""
    for e in range(col_ptr[b], col_ptr[b + 1]):
        dirty[col_idx[e]] |= bits
    return col_ptr[b + 1] - col_ptr[b]


@inner
def _mark_rotations_through(c_indptr, col_ptr, col_idx, pair_a, pair_b, mate_a, mate_b, dirty, i, hb):
    """Mark (bit 2) the candidates p = (i, j') whose 3-rotations can end at node h' = ``hb`` of B:
    those with q = (j, h') a candidate, j the node of A matched at j' (that is, j' the partner
    of some j with a candidate at h'). Returns the look-ups made."""
    work = 0
    lo = c_indptr[i]
    hi = c_indptr[i + 1]
    for e in range(col_ptr[hb], col_ptr[hb + 1]):
        l = mate_a[pair_a[col_idx[e]]]
        if l < 0:
            continue
        p = _find(pair_b, lo, hi, pair_b[l])
        work += 1
        if p >= 0:
            dirty[p] |= 2
    return work


@numba.njit(cache=True, nogil=True, **OUTER)
def mark_pair(c_indptr, col_ptr, col_idx, pair_a, pair_b, mate_a, mate_b, dirty, t):
    """Mark every candidate p whose moves in :func:`_local_search` read the value bw + g of pair
    t = (a, b'), under the current matching (both bits where a 2-exchange reads it, bit 2 where
    only a 3-rotation does). In the notation there (p = (i, j'), k and l matched at i and j',
    q = (j, i'), and for a rotation s = (h, i'), r matched at h, q = (j, h')):

    - t = p;
    - t = k (t matched): the candidates at a; t = l: those at b';
    - t = q of a 2-exchange: the one candidate (node matched at b', node matched at a);
    - t = s: with r the pair matched at a and k at b', the candidates at k's node of A whose
      rotation ends at r's node of B; t = r (t matched): the same for every s = (a, i') at a;
    - t = q of a rotation: with r the pair matched at b' and l at a, the candidates at l's node
      of B whose node of A is matched at the node of B of some candidate s at r's node of A.

    A superset is harmless (a marked candidate is only examined again). Returns the marks and
    look-ups made."""
    dirty[t] |= 3
    a = pair_a[t]
    b = pair_b[t]
    work = 1
    matched = mate_a[a] == t
    if matched:
        work += _mark_row(c_indptr, dirty, a, 3)
        work += _mark_col(col_ptr, col_idx, dirty, b, 3)
    l = mate_a[a]
    k = mate_b[b]
    if l >= 0 and k >= 0:
        p = _find(pair_b, c_indptr[pair_a[k]], c_indptr[pair_a[k] + 1], pair_b[l])  # t as a 2-exchange's q
        if p >= 0:
            dirty[p] |= 3
        # t as a rotation's q = (j, h'): r = k, j' = l's node of B
        for s in range(c_indptr[pair_a[k]], c_indptr[pair_a[k] + 1]):
            ks = mate_b[pair_b[s]]
            if ks >= 0:
                i = pair_a[ks]
                p = _find(pair_b, c_indptr[i], c_indptr[i + 1], pair_b[l])
                work += 1
                if p >= 0:
                    dirty[p] |= 2
    if l >= 0:
        if matched:  # t as r: every s at a
            for s in range(c_indptr[a], c_indptr[a + 1]):
                ks = mate_b[pair_b[s]]
                if ks >= 0:
                    work += _mark_rotations_through(c_indptr, col_ptr, col_idx, pair_a, pair_b, mate_a, mate_b,
                                                    dirty, pair_a[ks], pair_b[l])
        elif k >= 0:  # t as s
            work += _mark_rotations_through(c_indptr, col_ptr, col_idx, pair_a, pair_b, mate_a, mate_b, dirty,
                                            pair_a[k], pair_b[l])
    return work


@inner
def _mark_partner_a(c_indptr, pair_a, pair_b, mate_b, dirty, a):
    """Mark the candidates whose moves read the partner of node a of A: its own (both bits) and,
    for every candidate s = (a, i'), those of the node matched at i' (bit 2: the rotations
    whose r is a's pair). Returns the marks made."""
    work = _mark_row(c_indptr, dirty, a, 3)
    for s in range(c_indptr[a], c_indptr[a + 1]):
        k = mate_b[pair_b[s]]
        if k >= 0:
            work += _mark_row(c_indptr, dirty, pair_a[k], 2)
    return work


@inner
def _mark_move(s_indptr, s_indices, c_indptr, col_ptr, col_idx, pair_a, pair_b, mate_a, mate_b, dirty, moved):
    """After a move (the pairs ``moved``, removed and added, -1 skipped): mark the candidates
    whose moves read a partner that changed (at the moved pairs' nodes) or a g that changed (of
    the moved pairs' product-graph neighbours). Returns the marks made."""
    work = 0
    for u in range(moved.shape[0]):
        k = moved[u]
        if k < 0:
            continue
        work += _mark_partner_a(c_indptr, pair_a, pair_b, mate_b, dirty, pair_a[k])
        work += _mark_col(col_ptr, col_idx, dirty, pair_b[k], 3)
        for e in range(s_indptr[k], s_indptr[k + 1]):
            work += mark_pair(c_indptr, col_ptr, col_idx, pair_a, pair_b, mate_a, mate_b, dirty, s_indices[e])
    return work


@inner
def _mark_after(s_indptr, s_indices, c_indptr, col_ptr, col_idx, pair_a, pair_b, mate_a, mate_b, dirty, removed, added,
                both, marks, m):
    """After a move of the local search: its marks (:func:`_mark_move`) while the sweep's marks
    stay within ``m``; once past, every candidate (too many to follow: the rest of the sweep and
    the next examine everything). ``both`` is scratch of 6. Returns the sweep's marks."""
    if marks <= m:
        both[:3] = removed
        both[3:] = added
        marks += _mark_move(s_indptr, s_indices, c_indptr, col_ptr, col_idx, pair_a, pair_b, mate_a, mate_b, dirty,
                            both)
        if marks > m:
            dirty[:] = 3
    return marks


@numba.njit(cache=True, nogil=True, **OUTER)
def mark_changes(c_indptr, col_ptr, col_idx, pair_a, pair_b, mate_a, mate_b, dirty, pairs, nodes_a, nodes_b):
    """Mark for :func:`_local_search` the candidates whose moves read the value of one of
    ``pairs`` (:func:`mark_pair`) or the partner of one of ``nodes_a`` (of A) or ``nodes_b`` (of
    B). Returns the marks made."""
    work = 0
    for u in range(pairs.shape[0]):
        work += mark_pair(c_indptr, col_ptr, col_idx, pair_a, pair_b, mate_a, mate_b, dirty, pairs[u])
    for u in range(nodes_a.shape[0]):
        work += _mark_partner_a(c_indptr, pair_a, pair_b, mate_b, dirty, nodes_a[u])
    for u in range(nodes_b.shape[0]):
        work += _mark_col(col_ptr, col_idx, dirty, nodes_b[u], 3)
    return work


@numba.njit(cache=True, nogil=True, **OUTER)
def _local_search(s_indptr, s_indices, s_w, c_indptr, col_ptr, col_idx, pair_a, pair_b, bw, g, mate_a, mate_b,
                  max_sweeps, rotations, eps, s_max, dirty):
    """First-improvement search over 2-exchanges (and 3-rotations) of a matching, in place.

    The matching is ``mate_a[i]`` (candidate index matched at node i of A, or -1) and
    ``mate_b[i']`` (same for node i' of B); ``g`` must hold S @ 1_M on entry and holds it for
    the final matching on exit. The objective is F(M) = sum_{k in M} bw[k] + 1/2 sum_{k in M} g[k].
    With non-empty entry weights ``s_w`` the entries of S are those weights (C then sums the
    weights of the conserved edge pairs), each at most ``s_max``.

    For a move that removes the pairs R from M and adds the pairs D,

        dC = sum_D g - sum_R g + sum_{pairs in R} S + sum_{pairs in D} S - sum_{r in R, d in D} S_rd

    (expand 1/2 u'^T S u' for u' = u - 1_R + 1_D; S has a zero diagonal), and S_rd = 0 when r
    and d share a node (no self-loops in A or B).

    2-exchange: for every candidate p = (i, j') not in M, with k = (i, i') and l = (j, j') the
    pairs of M at i and at j' (either may be absent), remove k and l, add p, and add
    q = (j, i') when q is a candidate. Each added pair shares a node with each removed one, so
    dC = g_p + g_q - g_k - g_l + S_kl [k, l removed] + S_pq [p, q added]. (On undirected
    networks S_pq = S_kl; in the symmetrised product graph of directed ones they differ: S_kl
    counts arcs i -> j, i' -> j' pointing the same way, S_pq arcs between i, j and j', i'.)

    3-rotation (``rotations`` true): with k, l, p as above and both k, l present, for every
    candidate s = (h, i') (read from the column index ``col_ptr``/``col_idx``: the candidates
    of each node of B) with h matched by r = (h, h') and q = (j, h') a candidate, replace
    k, l, r by p, q, s (i -> j', j -> h', h -> i'). Here p/r, q/k and s/l share no node.
    Both kinds of move are pruned with upper bounds on bw + g kept for every row (node of A)
    and, in sweeps with rotations, every column (node of B), with every entry of S at most
    ``s_max`` (1 on undirected networks, 2 in the symmetrised product graph of directed ones)
    and so 5 ``s_max`` on the five positive S terms of a rotation: a 2-exchange is skipped
    before S_kl and q are looked up when base + 2 s_max plus the bound of row j without l
    cannot exceed ``eps``;
    a rotation's whole column when no s in it can lift the move (the bound of column i'
    without k plus that of row j without l), and each s before q is looked up. The bounds are
    computed at the start of every sweep and raised after each move where g rose, so they
    never prune a move the exact test would make: the moves are those of the unpruned search.

    A move is made when its change of F exceeds ``eps``. A sweep visits every candidate once.
    Sweeps try 2-exchanges only until one makes no move; then a sweep also tries rotations, and
    after one with a move the cheap sweeps resume. The search stops after a sweep with
    rotations (or, without them, a 2-exchange sweep) that makes no move, or after
    ``max_sweeps`` sweeps.

    **Work list.** With a ``dirty`` array (one uint8 per candidate) a sweep examines only the
    candidates marked there: bit 1 asks for the 2-exchanges, bit 2 for the rotations (a sweep
    with rotations examines a candidate with either bit). Examining clears the bits it answers;
    every move marks each candidate whose moves read a value the move changed (both bits, or
    bit 2 where only a rotation reads it: :func:`_mark_move`), so a candidate left unmarked
    would make no move if examined: the moves, sweeps and result are those of the search over
    every candidate, which is what ``dirty=None`` gives (all candidates, every sweep; numba then
    compiles none of the marking, which keeps a default run's first compile as it was). All bits
    set on entry is a search from scratch; only some set continues a search whose matching was a
    local optimum before the values of the marked candidates changed. When the marks of one sweep pass ``m``, marking
    stops, and the rest of that sweep and the next examine every candidate.

    Returns (moves, sweeps, gain), gain being the sum of the changes of F of the moves made.
    """
    n1 = c_indptr.shape[0] - 1
    pos = 5.0 * s_max  # bounds the five positive S terms of a rotation
    gain = 0.0
    moves = 0
    sweeps = 0
    rem = np.empty(3, dtype=np.int64)
    add = np.empty(3, dtype=np.int64)
    rotate = False  # rotation sweeps only once 2-exchange sweeps have stopped moving
    n2 = col_ptr.shape[0] - 1
    # allocated empty and filled here (np.zeros and np.full would each compile numba's own
    # implementation on a first run: see aligner.kernels.options)
    r1, r1_at, r2 = np.empty(n1, dtype=np.float64), np.empty(n1, dtype=np.int64), np.empty(n1, dtype=np.float64)
    for _t in range(n1):
        r1[_t], r1_at[_t], r2[_t] = 0.0, -1, 0.0
    c1, c1_at, c2 = np.empty(n2, dtype=np.float64), np.empty(n2, dtype=np.int64), np.empty(n2, dtype=np.float64)
    for _t in range(n2):
        c1[_t], c1_at[_t], c2[_t] = 0.0, -1, 0.0
    m = c_indptr[n1]
    marks = 0  # marks made in this sweep; past m the next sweep examines everything
    both = np.empty(6, dtype=np.int64)
    while sweeps < max_sweeps:
        sweeps += 1
        moved = 0
        if dirty is not None:
            if marks > m:
                dirty[:] = 3
        marks = 0
        _row_bounds(c_indptr, bw, g, r1, r1_at, r2)
        if rotate:
            _col_bounds(col_ptr, col_idx, bw, g, c1, c1_at, c2)
        for i in range(n1):
            for p in range(c_indptr[i], c_indptr[i + 1]):
                if dirty is not None:
                    flag = dirty[p]
                    if rotate:
                        if flag == 0:
                            continue
                        dirty[p] = 0
                    else:
                        if flag & 1 == 0:
                            continue
                        dirty[p] = flag & 2
                k = mate_a[i]
                if k == p:
                    continue
                jb = pair_b[p]
                l = mate_b[jb]
                base = bw[p] + g[p]
                q = -1
                s_kl = 0.0
                if k >= 0:
                    base -= bw[k] + g[k]
                if l >= 0:
                    base -= bw[l] + g[l]
                delta = base
                if k >= 0 and l >= 0:
                    j = pair_a[l]
                    urow = r2[j] if r1_at[j] == l else r1[j]  # bounds bw_q + g_q (q != l)
                    if base + 2.0 * s_max + urow <= eps:  # the exchange cannot gain enough
                        if not rotate:
                            continue
                        ib = pair_b[k]
                        ucol = c2[ib] if c1_at[ib] == k else c1[ib]
                        if base + s_max + ucol + urow + pos <= eps:  # nor can a rotation (see below)
                            continue
                    s_kl = _adjacent(s_indptr, s_indices, s_w, k, l)
                    delta += s_kl
                    j = pair_a[l]
                    q = _find(pair_b, c_indptr[j], c_indptr[j + 1], pair_b[k])
                    if q >= 0:
                        delta += bw[q] + g[q] + _adjacent(s_indptr, s_indices, s_w, p, q)
                if delta > eps:
                    rem[0] = k
                    rem[1] = l
                    rem[2] = -1
                    add[0] = p
                    add[1] = q
                    add[2] = -1
                    _apply(s_indptr, s_indices, s_w, g, pair_a, pair_b, mate_a, mate_b, rem, add)
                    _raise_bounds(s_indptr, s_indices, pair_a, pair_b, bw, g, add, r1, r1_at, r2, c1, c1_at, c2)
                    if dirty is not None:
                        marks = _mark_after(s_indptr, s_indices, c_indptr, col_ptr, col_idx, pair_a, pair_b, mate_a,
                                            mate_b, dirty, rem, add, both, marks, m)
                    gain += delta
                    moved += 1
                    continue
                if not rotate or k < 0 or l < 0:
                    continue
                j = pair_a[l]
                ib = pair_b[k]
                # base = bw_p + g_p - (bw_k + g_k) - (bw_l + g_l); add S_kl (k, l both removed)
                base += s_kl
                # upper bounds on bw_q + g_q over row j (q != l) and on bw_s + g_s over column i'
                # (s != k); bw_r + g_r >= 0 is subtracted, so nothing in this column can beat eps
                ucol = c2[ib] if c1_at[ib] == k else c1[ib]
                if base + ucol + urow + pos <= eps:
                    continue
                for e in range(col_ptr[ib], col_ptr[ib + 1]):
                    s = col_idx[e]  # s = (h, i')
                    h = pair_a[s]
                    if h == i or h == j:
                        continue
                    r = mate_a[h]
                    if r < 0:
                        continue
                    d = base + bw[s] + g[s] - bw[r] - g[r]
                    if d + urow + pos <= eps:
                        continue  # neither q nor the five positive S terms below can lift it
                    hb = pair_b[r]
                    q = _find(pair_b, c_indptr[j], c_indptr[j + 1], hb)
                    if q < 0:
                        continue
                    d += bw[q] + g[q]
                    if d + pos <= eps:
                        continue
                    d += _adjacent(s_indptr, s_indices, s_w, k, r) + _adjacent(s_indptr, s_indices, s_w, l, r)
                    d += (_adjacent(s_indptr, s_indices, s_w, p, q) + _adjacent(s_indptr, s_indices, s_w, p, s)
                          + _adjacent(s_indptr, s_indices, s_w, q, s))
                    d -= (_adjacent(s_indptr, s_indices, s_w, p, r) + _adjacent(s_indptr, s_indices, s_w, q, k)
                          + _adjacent(s_indptr, s_indices, s_w, s, l))
                    if d > eps:
                        rem[0] = k
                        rem[1] = l
                        rem[2] = r
                        add[0] = p
                        add[1] = q
                        add[2] = s
                        _apply(s_indptr, s_indices, s_w, g, pair_a, pair_b, mate_a, mate_b, rem, add)
                        _raise_bounds(s_indptr, s_indices, pair_a, pair_b, bw, g, add, r1, r1_at, r2, c1, c1_at, c2)
                        if dirty is not None:
                            marks = _mark_after(s_indptr, s_indices, c_indptr, col_ptr, col_idx, pair_a, pair_b,
                                                mate_a, mate_b, dirty, rem, add, both, marks, m)
                        gain += d
                        moved += 1
                        break
        moves += moved
        if moved == 0:
            if rotate or not rotations:
                break
            rotate = True
        else:
            rotate = False
    return moves, sweeps, gain


@numba.njit(cache=True, nogil=True, **OUTER)
def exchange_losses(s_indptr, s_indices, s_w, c_indptr, pair_a, pair_b, f, mate_a, mate_b, i0, i1, loss):
    """For each node i of A, the least -Delta F over the 2-exchanges that remove its matched pair,
    into ``loss[i]`` (left as it is, e.g. inf, when there is none), in one pass over the candidates
    of the nodes ``i0 .. i1 - 1`` of A (a move found there may lower the loss of any node: ranges
    run apart, each into its own ``loss``, give the whole pass's losses as their minimum).

    The moves and Delta F are those of :func:`_local_search` (see there): for a candidate
    p = (i, j') not in M, k = M at i and l = M at j' (either may be absent), replace k, l by p and,
    when it is a candidate, q = (j, i'); Delta F = f_p + f_q - f_k - f_l + S_kl + S_pq with
    f = bw + S 1_M. ``s_w``: the entry weights of S (empty: each entry counts 1). ``pair_a``,
    ``pair_b``: both ends of every candidate; ``mate_a``, ``mate_b``: the matched candidate at
    each node, or -1.

    Returns a checksum of the entries read ahead (returned only so that those reads are kept):
    before the candidates of a node are worked through, one simple loop reads the entries each
    will look up (its partner's matched pair l, f_l, the first candidate of l's node), so that
    their cache misses overlap instead of coming one at a time inside the branchy loop (about a
    third faster at 10^6 nodes, the same losses).
    """
    touched = 0.0
    for i in range(i0, i1):
        k = mate_a[i]
        lo = c_indptr[i]
        hi = c_indptr[i + 1]
        for p in range(lo, hi):
            l = mate_b[pair_b[p]]
            if l >= 0:
                j = pair_a[l]
                touched += f[l] + loss[j] + pair_b[c_indptr[j]]
        for p in range(lo, hi):
            if p == k:
                continue
            l = mate_b[pair_b[p]]
            delta = f[p]
            if k >= 0:
                delta -= f[k]
            if l >= 0:
                delta -= f[l]
                j = pair_a[l]
                if k >= 0:
                    delta += _adjacent(s_indptr, s_indices, s_w, k, l)
                    q = _find(pair_b, c_indptr[j], c_indptr[j + 1], pair_b[k])
                    if q >= 0:
                        delta += f[q] + _adjacent(s_indptr, s_indices, s_w, p, q)
                if -delta < loss[j]:
                    loss[j] = -delta
            if k >= 0 and -delta < loss[i]:
                loss[i] = -delta
    return touched


@numba.njit(cache=True, nogil=True, **OUTER)
def neutral_exchanges(s_indptr, s_indices, c_indptr, pair_a, pair_b, g, prior, mate_a, mate_b, prior_tol):
    """The 2-exchanges of :func:`exchange_losses` (with f = g = S 1_M: conserved edges only) that
    replace each pair they give up by one with a prior within ``prior_tol`` of it (k by p; l by q,
    or l absent): the *swaps*, where l and q both exist (node i takes j's partner and j takes
    i's), and the *neutral* moves, which also keep the conserved edges exactly.

    Returns the rows (p, k, l, q, kind) one after the other (a flat array of 5 n entries:
    ``reshape(-1, 5)``), candidate indices (-1 where absent), in the order of p; kind has bit 1
    for a neutral move and bit 2 for a swap. The prior is tested first, so a move whose priors
    differ costs no adjacency look-up.
    """
    out = np.empty(320, dtype=np.int64)  # rows of 5, flat (cheaper to compile than a 2-D array)
    unit = np.empty(0, dtype=np.float64)  # no entry weights: each entry of S counts 1
    n = 0
    n1 = c_indptr.shape[0] - 1
    for i in range(n1):
        k = mate_a[i]
        if k < 0:
            continue
        for p in range(c_indptr[i], c_indptr[i + 1]):
            if p == k or abs(prior[p] - prior[k]) > prior_tol * prior[k]:
                continue
            l = mate_b[pair_b[p]]
            q = -1
            delta = g[p] - g[k]
            if l >= 0:
                j = pair_a[l]
                q = _find(pair_b, c_indptr[j], c_indptr[j + 1], pair_b[k])
                if q < 0 or abs(prior[q] - prior[l]) > prior_tol * prior[l]:
                    continue
                delta += (g[q] - g[l] + _adjacent(s_indptr, s_indices, unit, k, l)
                          + _adjacent(s_indptr, s_indices, unit, p, q))
            kind = (1 if delta == 0.0 else 0) + (2 if l >= 0 else 0)
            if kind == 0:
                continue
            if 5 * n == out.shape[0]:
                grown = np.empty(2 * out.shape[0], dtype=np.int64)
                for t in range(5 * n):
                    grown[t] = out[t]
                out = grown
            out[5 * n] = p
            out[5 * n + 1] = k
            out[5 * n + 2] = l
            out[5 * n + 3] = q
            out[5 * n + 4] = kind
            n += 1
    return out[:5 * n]
