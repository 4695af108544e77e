"""Compiled push kernel: CSR arrays in, arrays out; no checking (see :mod:`aligner.core.diffusion`)."""

import numba
import numpy as np

from aligner.kernels.options import OUTER


@numba.njit(cache=True, nogil=True, **OUTER)
def _push(indptr, indices, weights, col_scale, alpha, x, r, thresh, max_pushes):
    """Gauss–Southwell relaxation of x = alpha * P x + b with a FIFO work queue.

    On entry ``r`` holds the residual of ``x`` (b - (I - alpha P) x); both are updated in
    place. P[k, l] = weights[t] * col_scale[l] for every stored entry t = (l -> k) of l's list
    (``weights`` empty: all 1). An entry l is pushed while |r[l]| > thresh[l]: x[l] += r[l],
    r[l] = 0, and every listed neighbour k of l gains alpha * P[k, l] * r[l]. At a normal exit
    |r[l]| <= thresh[l] for all l.

    Returns (pushes, edge touches, stopped_at_cap).
    """
    m = x.shape[0]
    weighted = weights.shape[0] > 0
    queue = np.empty(m, dtype=np.int64)
    inq = np.empty(m, dtype=np.bool_)
    for _t in range(inq.shape[0]):
        inq[_t] = False
    head = 0
    size = 0
    for l in range(m):
        if abs(r[l]) > thresh[l]:
            queue[(head + size) % m] = l
            size += 1
            inq[l] = True
    pushes = 0
    touches = 0
    while size > 0:
        if pushes >= max_pushes:
            return pushes, touches, True
        l = queue[head]
        head += 1
        if head == m:
            head = 0
        size -= 1
        inq[l] = False
        rl = r[l]
        if abs(rl) <= thresh[l]:
            continue
        x[l] += rl
        r[l] = 0.0
        pushes += 1
        w = alpha * rl * col_scale[l]
        lo = indptr[l]
        hi = indptr[l + 1]
        touches += hi - lo
        for t in range(lo, hi):
            k = indices[t]
            if weighted:
                r[k] += w * weights[t]
            else:
                r[k] += w
            if not inq[k] and abs(r[k]) > thresh[k]:
                queue[(head + size) % m] = k
                size += 1
                inq[k] = True
    return pushes, touches, False


@numba.njit(cache=True, nogil=True, **OUTER)
def _residual(indptr, indices, weights, col_scale, alpha, x, b, out):
    """out = b - x + alpha * P x, computed exactly from the CSR pattern; returns its 1-norm."""
    m = x.shape[0]
    weighted = weights.shape[0] > 0
    for k in range(m):
        out[k] = b[k] - x[k]
    for l in range(m):
        w = alpha * col_scale[l] * x[l]
        if w != 0.0:
            for t in range(indptr[l], indptr[l + 1]):
                if weighted:
                    out[indices[t]] += w * weights[t]
                else:
                    out[indices[t]] += w
    s = 0.0
    for k in range(m):
        s += abs(out[k])
    return s


@numba.njit(cache=True, nogil=True, **OUTER)
def _push_pass(indptr, indices, weights, col_scale, alpha, x, r, thresh, order, pushes_left):
    """One pass of push in index order over the entries listed in ``order``.

    Every listed entry l with |r[l]| > thresh[l] is pushed at once (x[l] += r[l], r[l] = 0,
    every listed neighbour k of l gains alpha * P[k, l] * r[l], as in :func:`_push`), so
    residual sent to an entry later in the order is pushed in the same pass (Gauss–Seidel
    order). Stops after ``pushes_left`` pushes. Returns (pushes, edge touches).
    """
    weighted = weights.shape[0] > 0
    pushes = 0
    touches = 0
    for q in range(order.shape[0]):
        l = order[q]
        rl = r[l]
        if abs(rl) <= thresh[l]:
            continue
        if pushes >= pushes_left:
            break
        x[l] += rl
        r[l] = 0.0
        pushes += 1
        w = alpha * rl * col_scale[l]
        lo = indptr[l]
        hi = indptr[l + 1]
        touches += hi - lo
        if weighted:
            for t in range(lo, hi):
                r[indices[t]] += w * weights[t]
        else:
            for t in range(lo, hi):
                r[indices[t]] += w
    return pushes, touches


@numba.njit(cache=True, nogil=True, **OUTER)
def _sub_rows(indptr, indices, weights, rows, new_id):
    """The CSR rows ``rows`` of a graph, renumbered by ``new_id`` (every listed neighbour of a
    listed row must have new_id >= 0). Returns (indptr, indices, weights)."""
    n = rows.shape[0]
    weighted = weights.shape[0] > 0
    out_ptr = np.empty(n + 1, dtype=np.int64)
    for _t in range(out_ptr.shape[0]):
        out_ptr[_t] = 0
    for q in range(n):
        l = rows[q]
        out_ptr[q + 1] = out_ptr[q] + indptr[l + 1] - indptr[l]
    out_idx = np.empty(out_ptr[n], dtype=np.int32)
    out_w = np.empty(out_ptr[n] if weighted else 0, dtype=np.float64)
    for q in range(n):
        l = rows[q]
        p = out_ptr[q]
        for t in range(indptr[l], indptr[l + 1]):
            out_idx[p] = new_id[indices[t]]
            if weighted:
                out_w[p] = weights[t]
            p += 1
    return out_ptr, out_idx, out_w
