"""Compiled kernels that explore the restricted product graph on demand, without building it.

Used by :mod:`aligner.analysis.query` (local push from one node's candidate pairs) and
:mod:`aligner.priors.seeds` (candidate pairs grown outward from anchor pairs). Arrays in, arrays out;
no checking (the callers check).
"""

import numba
import numpy as np

from aligner.kernels.options import OUTER, inner
from aligner.kernels.utils import _find


# --------------------------------------------------------------------------- small helpers

@inner
def _grow_int(a, need):
    cap = a.shape[0]
    if need <= cap:
        return a
    while cap < need:
        cap *= 2
    out = np.empty((cap,) + a.shape[1:], dtype=a.dtype)
    out[: a.shape[0]] = a
    return out


@inner
def _grow_float(a, need):
    cap = a.shape[0]
    if need <= cap:
        return a
    while cap < need:
        cap *= 2
    out = np.zeros((cap,) + a.shape[1:], dtype=a.dtype)
    out[: a.shape[0]] = a
    return out


# --------------------------------------------------------------------------- counterpart queries

# Local state, one row per pair the query holds (its "local id"):
#   ints[l]   = (global candidate index, start of its neighbour list in the pool (-1: not kept),
#                deg_S (-1: not fully counted yet), in queue, lower bound on deg_S: pairs with a
#                kept neighbour list that are adjacent to it, position in N_A(i) where a partial
#                count stopped (-1: not started), the partial count)
#   floats[l] = (x, r, h, column scale, threshold weight v)
# slot[k] is the local id of global candidate k, or -1; the caller resets it entry by entry.
_GID, _START, _DEG, _INQ, _LB, _CPOS, _CNT = 0, 1, 2, 3, 4, 5, 6
_X, _R, _H, _SCALE, _V = 0, 1, 2, 3, 4


@inner
def _hold(k, slot, ints, floats, n, c_a, c_b, deg_a, deg_b, restricted):
    """Local id of global candidate k, adding a row for it when it has none."""
    if slot[k] >= 0:
        return slot[k], ints, floats, n
    if n == ints.shape[0]:
        ints = _grow_int(ints, n + 1)
        floats = _grow_float(floats, n + 1)
    slot[k] = n
    ints[n, _GID] = k
    ints[n, _START] = -1
    ints[n, _DEG] = -1
    ints[n, _INQ] = 0
    ints[n, _LB] = 0
    ints[n, _CPOS] = -1
    ints[n, _CNT] = 0
    floats[n, :] = 0.0
    if not restricted:
        d = deg_a[c_a[k]] * deg_b[c_b[k]]
        floats[n, _SCALE] = 1.0 / d if d > 0 else 0.0
        floats[n, _V] = d
    return n, ints, floats, n + 1


@inner
def _discover(l, a_indptr, a_indices, b_indptr, b_indices, c_indptr, c_a, c_b, deg_a, deg_b, restricted,
              slot, ints, floats, n, pool, npool):
    """Discover and keep the neighbour list of held pair l = (i, i'), holding every neighbour.

    The neighbours are the candidates (j, j') with j in N_A(i) and j' in N_B(i'). For every
    j, the sorted partners of j (``c_b[c_indptr[j]:c_indptr[j+1]]``) and the sorted N_B(i')
    are intersected by binary search of each entry of the shorter list in the longer one;
    ``probes`` counts those searches. Candidates are sorted by (j, j'), so the list comes
    out sorted by global index, as in :func:`aligner.core.product.build_product`. Called before
    the pair's first push. Returns the grown state and the probes.
    """
    k = ints[l, _GID]
    i = c_a[k]
    ip = c_b[k]
    lo_b = b_indptr[ip]
    hi_b = b_indptr[ip + 1]
    start = npool
    probes = 0
    if hi_b > lo_b:
        for s in range(a_indptr[i], a_indptr[i + 1]):
            j = a_indices[s]
            u0 = c_indptr[j]
            u1 = c_indptr[j + 1]
            if u1 == u0:
                continue
            short_row = u1 - u0 <= hi_b - lo_b
            p0, p1 = (u0, u1) if short_row else (lo_b, hi_b)
            probes += p1 - p0
            for t in range(p0, p1):
                if short_row:
                    u = t if _find(b_indices, lo_b, hi_b, c_b[t]) >= 0 else -1
                else:
                    u = _find(c_b, u0, u1, b_indices[t])
                if u < 0:
                    continue
                lu, ints, floats, n = _hold(u, slot, ints, floats, n, c_a, c_b, deg_a, deg_b, restricted)
                ints[lu, _LB] += 1
                if npool == pool.shape[0]:
                    pool = _grow_int(pool, npool + 1)
                pool[npool] = lu
                npool += 1
    d = npool - start
    ints[l, _START] = start
    ints[l, _DEG] = d
    if restricted:
        floats[l, _SCALE] = 1.0 / d if d > 0 else 0.0
        floats[l, _V] = d
    return ints, floats, n, pool, npool, probes


@numba.njit(cache=True, nogil=True, **OUTER)
def _count(l, limit, a_indptr, a_indices, b_indptr, b_indices, c_indptr, c_a, c_b, ints, floats, restricted):
    """Count the neighbours of held pair l, resuming a partial count, until the count reaches
    ``limit`` or all are counted (then deg_S is known). Returns the probes made.

    The push only needs to know whether deg_S(l) >= |r_l| / eps (then l is not pushed), so a
    pair at a hub is counted only as far as its residual requires.
    """
    k = ints[l, _GID]
    i = c_a[k]
    ip = c_b[k]
    lo_b = b_indptr[ip]
    hi_b = b_indptr[ip + 1]
    s = ints[l, _CPOS]
    if s < 0:
        s = a_indptr[i]
    end = a_indptr[i + 1] if hi_b > lo_b else a_indptr[i]
    cnt = ints[l, _CNT]
    probes = 0
    while s < end and cnt < limit:
        j = a_indices[s]
        u0 = c_indptr[j]
        u1 = c_indptr[j + 1]
        s += 1
        if u1 == u0:
            continue
        if u1 - u0 <= hi_b - lo_b:
            probes += u1 - u0
            for t in range(u0, u1):
                if _find(b_indices, lo_b, hi_b, c_b[t]) >= 0:
                    cnt += 1
        else:
            probes += hi_b - lo_b
            for t in range(lo_b, hi_b):
                if _find(c_b, u0, u1, b_indices[t]) >= 0:
                    cnt += 1
    ints[l, _CPOS] = s
    ints[l, _CNT] = cnt
    if s >= end:
        ints[l, _DEG] = cnt
        if restricted:
            floats[l, _SCALE] = 1.0 / cnt if cnt > 0 else 0.0
            floats[l, _V] = cnt
    return probes


@inner
def _least_count(r, eps):
    """The least whole c with eps * c >= r as computed in floating point: the count at which
    r is no longer above the threshold eps * c, the test the queue applies. (r / eps rounded can
    land on a c with eps * c < r, and a count stopped there left the pair queued by every
    round's check and never pushed.)"""
    c = np.floor(r / eps)
    if not c < 2.0**52:  # no count comes near (and steps of 1 would not move c)
        return c
    while eps * c < r:
        c += 1.0
    while c > 0.0 and eps * (c - 1.0) >= r:
        c -= 1.0
    return c


@inner
def _enqueue(queue, qhead, qtail, l):
    if qtail == queue.shape[0]:
        if qhead > 0:
            queue[: qtail - qhead] = queue[qhead:qtail]
            qtail -= qhead
            qhead = 0
        queue = _grow_int(queue, qtail + 1)
    queue[qtail] = l
    return queue, qhead, qtail + 1


@numba.njit(cache=True, nogil=True, **OUTER)
def _weight(ints, floats, l, restricted):
    """The threshold weight of held pair l: v_l, or a lower bound on it while l is undiscovered."""
    if restricted and ints[l, _DEG] < 0:
        return float(max(ints[l, _LB], ints[l, _CNT]))
    return floats[l, _V]


@numba.njit(cache=True, nogil=True, **OUTER)
def _local_push(a_indptr, a_indices, b_indptr, b_indices, c_indptr, c_a, c_b, deg_a, deg_b, restricted,
                slot, seed_idx, seed_h, expand_idx, alpha, eps, max_pushes, force=True):
    """Push x = alpha P x + (1 - alpha) h from a sparse ``h``, discovering the product graph on demand.

    ``h`` is ``seed_h`` on the global candidates ``seed_idx`` (zero elsewhere); ``slot`` must
    be -1 everywhere on entry. Gauss–Southwell with a FIFO queue: entry l is pushed while
    |r_l| > eps v_l, with v_l = deg_S(l) (restricted normalisation) or deg_A(j) deg_B(j')
    (product normalisation) -- the weights for which P v <= v; in the first round every source
    of h is pushed once whatever its threshold. Under the restricted
    normalisation deg_S(l) is needed before l can be pushed (its column scale 1/deg_S and its
    threshold): while it is unknown the threshold uses a lower bound, the larger of "pairs
    with a kept list adjacent to l" (at least 1 for any pair that received residual by a
    push) and a partial count; when l comes up in the queue its neighbours are counted
    (:func:`_count`, resumable) only until the count shows eps deg_S >= |r_l| or deg_S is
    known. A pair's neighbour list is discovered and kept (:func:`_discover`) just before its
    first push, which holds its neighbours. ``expand_idx`` are counted in full at the start
    (the support of the asked pairs). When the queue is empty the residual
    b - (I - alpha P) x is recomputed exactly from x over the pairs held (every pair with
    x != 0 has its list; every pair with r != 0 is held), and any entry still above its
    threshold is queued again.

    Returns (ints, floats, pool, pushes, edges_scanned, probes, rounds, residual_l1, capped);
    ``ints`` and ``floats`` hold one row per pair held (see the layout above).
    """
    ints = np.full((64, 7), -1, dtype=np.int64)
    floats = np.zeros((64, 5), dtype=np.float64)
    pool = np.empty(256, dtype=np.int64)
    npool = 0
    n = 0
    queue = np.empty(64, dtype=np.int64)
    qhead = 0
    qtail = 0
    pushes = 0
    scanned = 0
    probes = 0
    capped = False
    for t in range(seed_idx.shape[0]):
        l, ints, floats, n = _hold(seed_idx[t], slot, ints, floats, n, c_a, c_b, deg_a, deg_b, restricted)
        floats[l, _H] += seed_h[t]
        floats[l, _R] += (1.0 - alpha) * seed_h[t]
    for t in range(expand_idx.shape[0]):
        l, ints, floats, n = _hold(expand_idx[t], slot, ints, floats, n, c_a, c_b, deg_a, deg_b, restricted)
        if ints[l, _DEG] < 0:
            probes += _count(l, np.inf, a_indptr, a_indices, b_indptr, b_indices, c_indptr, c_a, c_b, ints,
                             floats, restricted)
    rounds = 0
    # the residual's 1-norm so far: at x = 0 it is that of (1 - alpha) h (reported as such when
    # nothing is ever pushed: the bound must hold however little is done)
    res = 0.0
    for l in range(n):
        res += abs(floats[l, _R])
    while True:
        rounds += 1
        queued = 0
        for l in range(n):
            # in the first round every source of h is pushed once, even below its threshold (a
            # score of 0 with a wide bound would be a poor answer; a push never hurts the bound)
            forced = force and rounds == 1 and floats[l, _H] != 0.0 and floats[l, _R] != 0.0
            if forced or abs(floats[l, _R]) > eps * _weight(ints, floats, l, restricted):
                queue, qhead, qtail = _enqueue(queue, qhead, qtail, l)
                ints[l, _INQ] = 2 if forced else 1
                queued += 1
        if queued == 0:
            break
        while qhead < qtail:
            if pushes >= max_pushes:
                capped = True
                break
            l = queue[qhead]
            qhead += 1
            forced = ints[l, _INQ] == 2
            ints[l, _INQ] = 0
            rl = floats[l, _R]
            if restricted and ints[l, _DEG] < 0:
                # learn enough of deg_S (the threshold) to decide, without holding its neighbours
                limit = np.inf if forced or eps <= 0.0 else _least_count(abs(rl), eps)
                probes += _count(l, limit, a_indptr, a_indices, b_indptr, b_indices, c_indptr, c_a, c_b,
                                 ints, floats, restricted)
                if ints[l, _DEG] < 0:
                    continue  # eps * (count so far) >= |r_l|: not to be pushed
            if not forced and abs(rl) <= eps * floats[l, _V]:
                continue
            if ints[l, _START] < 0:  # first push: keep the neighbour list
                ints, floats, n, pool, npool, pr = _discover(l, a_indptr, a_indices, b_indptr, b_indices,
                                                             c_indptr, c_a, c_b, deg_a, deg_b, restricted, slot,
                                                             ints, floats, n, pool, npool)
                probes += pr
            floats[l, _X] += rl
            floats[l, _R] = 0.0
            pushes += 1
            w = alpha * rl * floats[l, _SCALE]
            s0 = ints[l, _START]
            d = ints[l, _DEG]
            scanned += d
            for t in range(s0, s0 + d):
                kk = pool[t]
                floats[kk, _R] += w
                if ints[kk, _INQ] == 0 and abs(floats[kk, _R]) > eps * _weight(ints, floats, kk, restricted):
                    queue, qhead, qtail = _enqueue(queue, qhead, qtail, kk)
                    ints[kk, _INQ] = 1
        # the exact residual
        for l in range(n):
            floats[l, _R] = (1.0 - alpha) * floats[l, _H] - floats[l, _X]
        for l in range(n):
            xl = floats[l, _X]
            if xl != 0.0:
                w = alpha * xl * floats[l, _SCALE]
                s0 = ints[l, _START]
                for t in range(s0, s0 + ints[l, _DEG]):
                    floats[pool[t], _R] += w
        res = 0.0
        for l in range(n):
            res += abs(floats[l, _R])
        qhead = 0
        qtail = 0
        for l in range(n):
            ints[l, _INQ] = 0
        if capped:
            break
        if rounds >= 50:  # float drift keeps re-queueing: never seen, but do not loop forever
            capped = True
            break
    return ints[:n], floats[:n], pool[:npool], pushes, scanned, probes, rounds, res, capped


@numba.njit(cache=True, nogil=True, **OUTER)
def _reset_slots(slot, gids):
    for t in range(gids.shape[0]):
        slot[gids[t]] = -1


# --------------------------------------------------------------------------- seed expansion

@numba.njit(cache=True, nogil=True, **OUTER)
def witness_rows(a_indptr, a_indices, b_indptr, b_indices, mate_a, mate_b, rows, kcap, deg_a, deg_b,
                  skip_matched):
    """For every node j of A in ``rows``: its best ``kcap`` partners j' by witness count.

    The witness count of (j, j') is the number of anchor pairs (a, a') (``mate_a[a] = a'``)
    with a in N_A(j) and a' in N_B(j'): the edges at j that matching j to j' would conserve
    with the anchors. Ties are broken by degree similarity min(d, d') / max(d, d'), then by
    the smaller j'. With ``skip_matched`` partners j' that are anchored are left out.
    Work: sum over j of the B-degrees of the images of j's anchored neighbours; memory O(n2)
    plus the output.

    Returns (pairs (K, 2), counts (K,), degree similarity (K,)).
    """
    n2 = b_indptr.shape[0] - 1
    cnt = np.zeros(n2, dtype=np.int64)
    touched = np.empty(n2, dtype=np.int64)
    cap = 1024
    out_p = np.empty((cap, 2), dtype=np.int64)
    out_c = np.empty(cap, dtype=np.int64)
    out_d = np.empty(cap, dtype=np.float64)
    k = 0
    for t in range(rows.shape[0]):
        j = rows[t]
        nt = 0
        for s in range(a_indptr[j], a_indptr[j + 1]):
            ap = mate_a[a_indices[s]]
            if ap < 0:
                continue
            for q in range(b_indptr[ap], b_indptr[ap + 1]):
                jp = b_indices[q]
                if skip_matched and mate_b[jp] >= 0:
                    continue
                if cnt[jp] == 0:
                    touched[nt] = jp
                    nt += 1
                cnt[jp] += 1
        if nt == 0:
            continue
        dj = deg_a[j]
        cands = np.sort(touched[:nt])
        sims = np.empty(nt, dtype=np.float64)
        keys = np.empty(nt, dtype=np.float64)
        for q in range(nt):
            d2 = deg_b[cands[q]]
            hi = max(dj, d2)
            sims[q] = min(dj, d2) / hi if hi > 0 else 1.0
            keys[q] = -(cnt[cands[q]] + 0.5 * sims[q])
        order = np.argsort(keys, kind="mergesort")  # stable: equal keys stay in j' order
        take = min(kcap, nt)
        if k + take > out_c.shape[0]:
            out_p = _grow_int(out_p, k + take)
            out_c = _grow_int(out_c, k + take)
            out_d = _grow_float(out_d, k + take)
        for q in range(take):
            u = order[q]
            out_p[k, 0] = j
            out_p[k, 1] = cands[u]
            out_c[k] = cnt[cands[u]]
            out_d[k] = sims[u]
            k += 1
        for q in range(nt):
            cnt[touched[q]] = 0
    return out_p[:k], out_c[:k], out_d[:k]
