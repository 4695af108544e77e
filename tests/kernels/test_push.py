"""The push kernels on their own, against a direct sparse solve.

In a normal solve the passes in index order of :func:`aligner.core.diffusion.diffuse` do most
of the work before the queue kernel starts, so a fault in the queue kernel's own arithmetic
(say, a push that ignores the edge weights) can hide behind them, and the other way round.
Here each kernel solves the whole system from x = 0, and so does ``diffuse`` with the passes
switched off and with the queue left only the last few pushes.
"""

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.sparse.linalg import spsolve

import aligner.core.diffusion as diffusion
from aligner.core.candidates import build_candidates
from aligner.core.diffusion import column_scale, diffuse, prior_vector
from aligner.core.network import network_from_edges
from aligner.core.product import build_product
from aligner.errors import ConvergenceError
from aligner.kernels.push import _push, _push_pass, _residual, _sub_rows

CASES = [(True, True), (False, True), (True, False), (False, False)]  # (directed, weighted)


def _graph(n, p, seed, weighted, directed):
    rng = np.random.default_rng(seed)
    a = (rng.random((n, n)) < p) & ~np.eye(n, dtype=bool)
    if not directed:
        a = np.triu(a)  # each undirected edge once
    u, v = np.nonzero(a)
    w = rng.uniform(0.2, 5.0, len(u)) if weighted else None  # spread out: weights matter
    return u, v, w


def _problem(directed, weighted, seed=0, n1=7, n2=6, m=28):
    """Product system of two random networks on a random candidate set, and its direct solution.

    Reference: the Kronecker product of the dense (weighted) adjacency matrices, built with
    numpy.kron from the edge lists, restricted to the candidates; P[k, l] = W[l, k] / s_l with
    s_l the out-strength of l inside the candidate set (Singh, Xu & Berger 2008, with
    direction and weights); x = spsolve(I - alpha P, (1 - alpha) h) (scipy.sparse.linalg).
    """
    ua, va, wa = _graph(n1, 0.4, seed + 1, weighted, directed)
    ub, vb, wb = _graph(n2, 0.4, seed + 2, weighted, directed)
    names = lambda n: np.array([f"v{i}" for i in range(n)], dtype=object)  # noqa: E731
    net_a = network_from_edges(names(n1), ua, va, wa, directed=directed)
    net_b = network_from_edges(names(n2), ub, vb, wb, directed=directed)
    rng = np.random.default_rng(seed + 3)
    allp = np.array([(i, j) for i in range(n1) for j in range(n2)])
    keep = np.sort(rng.choice(len(allp), size=m, replace=False))
    cand = build_candidates(allp[keep], rng.uniform(0.1, 1.0, m), n1, n2, top_k=None)
    a = net_a.walk_adjacency(directed, weighted)
    b = net_b.walk_adjacency(directed, weighted)
    prod = build_product(a[0], a[1], b[0], b[1], cand, a_weights=a[2] if weighted else None,
                         b_weights=b[2] if weighted else None, directed=directed)
    scale = column_scale(prod, "restricted")

    def dense(n, u, v, w):
        d = np.zeros((n, n))
        d[u, v] = 1.0 if w is None else w
        return d if directed else d + d.T

    W = np.kron(dense(n1, ua, va, wa), dense(n2, ub, vb, wb))[np.ix_(keep, keep)]
    s = W.sum(axis=1)
    P = W.T * np.divide(1.0, s, out=np.zeros_like(s), where=s > 0)[None, :]
    h = prior_vector(cand.prior)
    return prod, scale, h, P


@pytest.mark.parametrize("directed,weighted", CASES)
@pytest.mark.parametrize("alpha", [0.5, 0.9])
def test_queue_kernel_alone_equals_spsolve(directed, weighted, alpha):
    prod, scale, h, P = _problem(directed, weighted)
    want = spsolve(sp.csc_matrix(np.eye(len(h)) - alpha * P), (1 - alpha) * h)
    wts = np.empty(0) if prod.weights is None else prod.weights
    x = np.zeros(prod.m)
    r = (1 - alpha) * h  # the residual of x = 0
    thresh = np.full(prod.m, 1e-15)
    pushes, touches, capped = _push(prod.indptr, prod.indices, wts, scale, alpha, x, r, thresh, 10**8)
    assert not capped and pushes > 0 and touches > 0
    assert np.all(np.abs(r) <= 1e-15)  # the kernel's exit condition
    # push keeps x* = x + (I - alpha P)^{-1} r, so ||x - x*||_1 <= ||r||_1 / (1 - alpha)
    # (Andersen, Chung & Lang 2006); the bound is below 1e-12 here
    np.testing.assert_allclose(x, want, rtol=0, atol=1e-12)
    # and its residual bookkeeping agrees with an exact recount by the residual kernel
    out = np.empty(prod.m)
    _residual(prod.indptr, prod.indices, wts, scale, alpha, x, (1 - alpha) * h, out)
    np.testing.assert_allclose(out, r, atol=1e-14)


@pytest.mark.parametrize("directed,weighted", CASES)
@pytest.mark.parametrize("alpha", [0.5, 0.9])
def test_pass_kernel_alone_equals_spsolve(directed, weighted, alpha):
    # passes in index order until none pushes: Gauss–Seidel order of push; the same invariant
    # x* = x + (I - alpha P)^{-1} r holds, so at the exit the scores agree with a direct solve
    prod, scale, h, P = _problem(directed, weighted)
    want = spsolve(sp.csc_matrix(np.eye(len(h)) - alpha * P), (1 - alpha) * h)
    wts = np.empty(0) if prod.weights is None else prod.weights
    x, r = np.zeros(prod.m), (1 - alpha) * h
    thresh = np.full(prod.m, 1e-15)
    order = np.arange(prod.m, dtype=np.int64)
    total = 0
    for _ in range(10_000):
        pushes, _touches = _push_pass(prod.indptr, prod.indices, wts, scale, alpha, x, r, thresh, order, 10**8)
        total += pushes
        if pushes == 0:
            break
    assert total > prod.m and np.all(np.abs(r) <= 1e-15)
    np.testing.assert_allclose(x, want, rtol=0, atol=1e-12)
    out = np.empty(prod.m)
    _residual(prod.indptr, prod.indices, wts, scale, alpha, x, (1 - alpha) * h, out)
    np.testing.assert_allclose(out, r, atol=1e-14)


@pytest.mark.parametrize("directed,weighted", CASES)
def test_sub_rows_equals_scipy_submatrix(directed, weighted):
    # the receivers' rows renumbered: the same matrix as scipy's row-and-column selection
    prod, *_ = _problem(directed, weighted)
    wts = np.empty(0) if prod.weights is None else prod.weights
    live = np.flatnonzero(np.bincount(prod.indices, minlength=prod.m) > 0)
    new_id = np.full(prod.m, -1, dtype=np.int32)
    new_id[live] = np.arange(len(live), dtype=np.int32)
    ip, ix, w = _sub_rows(prod.indptr, prod.indices, wts, live, new_id)
    got = sp.csr_array((w if weighted else np.ones(len(ix)), ix, ip), shape=(len(live), len(live)))
    full = sp.csr_array((prod.entry_weights(), prod.indices, prod.indptr), shape=(prod.m, prod.m))
    want = full[live][:, live]
    assert len(live) < prod.m or not directed  # a guard on the instance: some rows are dropped when directed
    assert full[live].nnz == want.nnz  # the receivers' neighbours are receivers
    np.testing.assert_array_equal(got.toarray(), want.toarray())


@pytest.mark.parametrize("directed,weighted", CASES)
def test_diffuse_with_passes_only_equals_spsolve(monkeypatch, directed, weighted):
    monkeypatch.setattr(diffusion, "QUEUE_FRACTION", 0.0)  # passes until converged, the queue finds nothing
    alpha = 0.85
    prod, scale, h, P = _problem(directed, weighted, seed=10)
    want = spsolve(sp.csc_matrix(np.eye(len(h)) - alpha * P), (1 - alpha) * h)
    res = diffuse(prod, h, scale, alpha=alpha, tol=1e-12)
    assert res.steps > prod.m and res.residual <= 1e-12
    np.testing.assert_allclose(res.x, want, rtol=0, atol=1e-11)


@pytest.mark.parametrize("directed,weighted", CASES)
def test_diffuse_without_passes_equals_spsolve(monkeypatch, directed, weighted):
    monkeypatch.setattr(diffusion, "QUEUE_FRACTION", 2.0)  # no passes: the queue does it all
    alpha = 0.85
    prod, scale, h, P = _problem(directed, weighted, seed=10)
    want = spsolve(sp.csc_matrix(np.eye(len(h)) - alpha * P), (1 - alpha) * h)
    res = diffuse(prod, h, scale, alpha=alpha, tol=1e-12)
    assert res.steps > 0 and res.residual <= 1e-12
    np.testing.assert_allclose(res.x, want, rtol=0, atol=1e-11)


def test_weights_change_the_answer():
    # a guard on the test itself: with these weights the weighted and the unweighted systems
    # differ by far more than the tolerance above, so ignoring the weights cannot pass
    prod_w, scale_w, h, P_w = _problem(True, True)
    prod_u, scale_u, _, P_u = _problem(True, False)
    a = spsolve(sp.csc_matrix(np.eye(len(h)) - 0.9 * P_w), 0.1 * h)
    b = spsolve(sp.csc_matrix(np.eye(len(h)) - 0.9 * P_u), 0.1 * h)
    assert np.abs(a - b).max() > 1e-3  # measured 0.024: far above the tests' 1e-11


# --------------------------------------------------------------------------- the work, counted by a reference

def _reference_solve(W, h, alpha, tol, queue_fraction, cap=10**9):
    """The push solver as documented (diffuse and aligner.kernels.push), in plain Python.

    W[l, k] is the weight of the product arc l -> k; P[k, l] = W[l, k] / s_l with s_l the row sum
    (the walk of Singh, Xu & Berger 2008). Thresholds tol (deg_l + 1) / sum(deg + 1). When at
    least ``queue_fraction`` of the entries are active: one pass over all entries in index order,
    pushing each active entry as it is reached, then passes over the receivers (entries with an
    in-neighbour) while the previous pass pushed at least ``queue_fraction`` of them; then a FIFO
    queue of single pushes (Andersen, Chung & Lang 2006). With fewer active entries at the start
    (a warm start; here ``queue_fraction`` > 1 makes every start one), the active entries that
    are not receivers are pushed once in index order and the FIFO queue runs over the receivers.
    Returns x, pushes, edge touches.
    """
    from collections import deque

    m = len(h)
    s = W.sum(axis=1)
    scale = np.divide(1.0, s, out=np.zeros_like(s), where=s > 0)
    deg = (W != 0).sum(axis=1) + 1.0
    th = tol * deg / deg.sum()
    x, r = np.zeros(m), (1 - alpha) * h.copy()
    work = {"steps": 0, "touches": 0}

    def push(l):
        rl = r[l]
        x[l] += rl
        r[l] = 0.0
        work["steps"] += 1
        nbrs = np.flatnonzero(W[l])
        work["touches"] += len(nbrs)
        for k in nbrs:
            r[k] += alpha * rl * scale[l] * W[l, k]
        return nbrs

    def one_pass(entries):
        pushed = 0
        for l in entries:
            if abs(r[l]) > th[l]:
                if work["steps"] >= cap:
                    break
                push(l)
                pushed += 1
        return pushed

    def fifo(entries, limit):  # True when it stopped at the limit with entries still queued
        queue = deque(l for l in entries if abs(r[l]) > th[l])
        inq = np.zeros(m, bool)
        inq[list(queue)] = True
        while queue:
            if work["steps"] >= limit:
                return True
            l = queue.popleft()
            inq[l] = False
            if abs(r[l]) <= th[l]:
                continue
            for k in push(l):
                if not inq[k] and abs(r[k]) > th[k]:
                    queue.append(k)
                    inq[k] = True
        return False

    receivers = [k for k in range(m) if W[:, k].any()]
    if (np.abs(r) > th).sum() >= queue_fraction * m:
        one_pass(range(m))
        pushed = len(receivers)
        while work["steps"] < cap and pushed > 0 and pushed >= queue_fraction * len(receivers):
            pushed = one_pass(receivers)
    else:
        one_pass([k for k in range(m) if k not in set(receivers)])
    fifo(receivers, cap)
    return x, work["steps"], work["touches"]


@pytest.mark.parametrize("directed,weighted", CASES)
@pytest.mark.parametrize("fraction", [2.0, 0.05, 0.6, 0.0])
def test_pushes_and_touches_counted_as_documented(monkeypatch, directed, weighted, fraction):
    # fraction 2.0: a warm start's rule (the queue alone, on the receivers); 0.05: the shipped
    # rule; 0.6: fewer passes; 0.0: passes only
    monkeypatch.setattr(diffusion, "QUEUE_FRACTION", fraction)
    alpha, tol = 0.85, 1e-9
    prod, scale, h, W = _weights_problem(directed, weighted)
    x_ref, steps_ref, touches_ref = _reference_solve(W, h, alpha, tol, fraction)
    res = diffuse(prod, h, scale, alpha=alpha, tol=tol)
    np.testing.assert_allclose(res.x, x_ref, rtol=0, atol=1e-14)
    assert (res.steps, res.edge_touches) == (steps_ref, touches_ref)
    assert res.report()["pushes"] == steps_ref and res.report()["edge_touches"] == touches_ref


def _weights_problem(directed, weighted, seed=20):
    """_problem's system, with W (the arc weights of the restricted Kronecker product) kept."""
    n1, n2, m = 7, 6, 28
    ua, va, wa = _graph(n1, 0.4, seed + 1, weighted, directed)
    ub, vb, wb = _graph(n2, 0.4, seed + 2, weighted, directed)
    prod, scale, h, _ = _problem(directed, weighted, seed=seed, n1=n1, n2=n2, m=m)
    rng = np.random.default_rng(seed + 3)
    allp = np.array([(i, j) for i in range(n1) for j in range(n2)])
    keep = np.sort(rng.choice(len(allp), size=m, replace=False))

    def dense(n, u, v, w):
        d = np.zeros((n, n))
        d[u, v] = 1.0 if w is None else w
        return d if directed else d + d.T

    W = np.kron(dense(n1, ua, va, wa), dense(n2, ub, vb, wb))[np.ix_(keep, keep)]
    return prod, scale, h, W


@pytest.mark.parametrize("extra", [0, 3, 40])
def test_work_cap_is_shared_by_the_passes_and_the_queue(extra):
    # max_work caps the pushes of the passes and of the queue together; the reference stops where the documented
    # rule does, so the error carries the same step count and the same residual
    alpha, tol = 0.85, 1e-12
    prod, scale, h, W = _weights_problem(True, True)
    cap = prod.m + extra  # every entry is active at the start: the first pass fits, then `extra` pushes
    x_ref, steps_ref, _ = _reference_solve(W, h, alpha, tol, diffusion.QUEUE_FRACTION, cap=cap)
    s = W.sum(axis=1)
    P = W.T * np.divide(1.0, s, out=np.zeros_like(s), where=s > 0)[None, :]
    resid_ref = np.abs((1 - alpha) * h - x_ref + alpha * P @ x_ref).sum()
    with pytest.raises(ConvergenceError) as info:
        diffuse(prod, h, scale, alpha=alpha, tol=tol, max_work=cap)
    assert info.value.iterations == steps_ref == cap
    assert info.value.residual == pytest.approx(resid_ref, rel=1e-9)
