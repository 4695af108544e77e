import math
import time

import networkx as nx
import numpy as np
import pytest
import scipy.sparse as sp
from scipy.sparse.linalg import spsolve

from aligner.core.diffusion import column_scale, default_work_cap, diffuse, prior_vector
from aligner.errors import ConvergenceError, InvalidParameterError
from aligner.core.product import build_product
from aligner.core.candidates import build_candidates
from conftest import all_pairs_candidates, csr, random_edges


def _connected_random(n, p, rng):
    while True:
        e = random_edges(n, p, rng)
        g = nx.Graph(); g.add_nodes_from(range(n)); g.add_edges_from(e.tolist())
        if nx.is_connected(g):
            return e


def _instance(seed, n1=7, n2=8):
    rng = np.random.default_rng(seed)
    ea, ia, xa = csr(_connected_random(n1, 0.45, rng), n1)
    eb, ib, xb = csr(_connected_random(n2, 0.4, rng), n2)
    cand = all_pairs_candidates(n1, n2, rng)
    prod = build_product(ia, xa, ib, xb, cand)
    return (ea, ia, xa), (eb, ib, xb), cand, prod


@pytest.mark.parametrize("seed", [0, 1, 2, 3])
@pytest.mark.parametrize("alpha", [0.3, 0.85])
def test_push_and_power_equal_spsolve_on_kronecker_system(seed, alpha):
    # Reference: scipy.sparse.linalg.spsolve on the explicit system (I - alpha P) x = (1 - alpha) h,
    # with P built from scipy.sparse.kron(A, B) (every pair is a candidate, so the restricted
    # product graph is the whole Kronecker product and deg_S(j, j') = deg_A(j) deg_B(j')).
    (ea, ia, xa), (eb, ib, xb), cand, prod = _instance(seed)
    n1, n2 = len(ia) - 1, len(ib) - 1
    A = sp.csr_array((np.ones(len(xa)), xa, ia), shape=(n1, n1))
    B = sp.csr_array((np.ones(len(xb)), xb, ib), shape=(n2, n2))
    K = sp.kron(A, B, format="csr")  # row index i * n2 + i', the same order as the sorted candidates
    d = np.asarray(K.sum(axis=0)).ravel()
    P = K @ sp.diags(1.0 / d)
    h = prior_vector(cand.prior)
    want = spsolve(sp.csc_matrix(sp.identity(n1 * n2) - alpha * P), (1 - alpha) * h)
    scale = column_scale(prod, "restricted")
    for solver in ("push", "power"):
        res = diffuse(prod, h, scale, alpha=alpha, tol=1e-10, solver=solver)
        assert res.residual <= 1e-10
        err = np.abs(res.x - want).sum()
        assert err <= res.error_bound + 1e-13
        assert err < 1e-9  # derived: error_bound = residual / (1 - alpha) <= 1e-10 / 0.15


@pytest.mark.parametrize("seed", [0, 5])
def test_equals_networkx_pagerank_on_explicit_product(seed):
    # Reference: networkx.pagerank on networkx.tensor_product(A, B) with the prior as personalization.
    # Both graphs connected without isolated nodes: the product has no dangling nodes, so
    # networkx's x (normalised to sum 1) solves the same system x = alpha P x + (1 - alpha) h and
    # ours also sums to 1: no rescaling is needed beyond that shared normalisation.
    (ea, ia, xa), (eb, ib, xb), cand, prod = _instance(seed)
    ga = nx.Graph(ea.tolist()); gb = nx.Graph(eb.tolist())
    T = nx.tensor_product(ga, gb)
    h = prior_vector(cand.prior)
    pers = {tuple(p): h[k] for k, p in enumerate(cand.pairs.tolist())}
    ref = nx.pagerank(T, alpha=0.7, personalization=pers, tol=1e-13, max_iter=10_000)
    res = diffuse(prod, h, column_scale(prod), alpha=0.7, tol=1e-11)
    want = np.array([ref[tuple(p)] for p in cand.pairs.tolist()])
    assert res.x.sum() == pytest.approx(1.0, abs=1e-9)
    np.testing.assert_allclose(res.x, want, atol=1e-9)


def test_push_and_power_agree_within_bounds(rng):
    (ea, ia, xa), (eb, ib, xb), cand, prod = _instance(11, 12, 12)
    h = prior_vector(cand.prior)
    s = column_scale(prod)
    a = diffuse(prod, h, s, alpha=0.9, tol=1e-7, solver="push")
    b = diffuse(prod, h, s, alpha=0.9, tol=1e-7, solver="power")
    assert np.abs(a.x - b.x).sum() <= a.error_bound + b.error_bound
    assert a.steps > 0 and a.edge_touches > 0 and b.steps > 0


def test_alpha_zero_returns_prior(rng):
    *_, cand, prod = _instance(2)
    h = prior_vector(cand.prior)
    res = diffuse(prod, h, column_scale(prod), alpha=0.0)
    assert np.array_equal(res.x, h)


def test_product_normalization_and_warm_start():
    (ea, ia, xa), (eb, ib, xb), cand, prod = _instance(4)
    h = prior_vector(cand.prior)
    s = column_scale(prod, "product", deg_a=np.diff(ia), deg_b=np.diff(ib), pairs=cand.pairs)
    # every pair is a candidate, so both normalisations coincide here (common practice: the
    # restricted walk is the whole-product walk when nothing is cut away)
    np.testing.assert_allclose(s, column_scale(prod, "restricted"))
    cold = diffuse(prod, h, s, alpha=0.8, tol=1e-9)
    warm = diffuse(prod, h, s, alpha=0.85, tol=1e-9, x0=cold.x)
    ref = diffuse(prod, h, s, alpha=0.85, tol=1e-9)
    assert np.abs(warm.x - ref.x).sum() <= warm.error_bound + ref.error_bound


def test_cap_raises_convergence_error_with_figures():
    *_, cand, prod = _instance(3)
    h = prior_vector(cand.prior)
    with pytest.raises(ConvergenceError, match="stopped after 5 steps") as info:
        diffuse(prod, h, column_scale(prod), alpha=0.9, tol=1e-12, max_work=5)
    assert info.value.iterations == 5 and info.value.residual > 1e-12
    with pytest.raises(ConvergenceError):
        diffuse(prod, h, column_scale(prod), alpha=0.9, tol=1e-12, solver="power", max_work=0)


@pytest.mark.parametrize("alpha", [1.0, -0.1, 1.5, float("nan")])
def test_alpha_out_of_range(alpha):
    *_, cand, prod = _instance(3)
    with pytest.raises(InvalidParameterError, match=r"^alpha must be a number in \[0, 1\); got ") as info:
        diffuse(prod, prior_vector(cand.prior), column_scale(prod), alpha=alpha)
    assert info.value.param == "alpha"


def test_input_unchanged():
    *_, cand, prod = _instance(6)
    h = prior_vector(cand.prior)
    h0, ip, ix = h.copy(), prod.indptr.copy(), prod.indices.copy()
    diffuse(prod, h, column_scale(prod), alpha=0.6)
    assert np.array_equal(h, h0) and np.array_equal(prod.indptr, ip) and np.array_equal(prod.indices, ix)


# --------------------------------------------------------------------------- never an unconverged result

def _early_exit_push(indptr, indices, weights, col_scale, alpha, x, r, thresh, max_pushes):
    """A queue kernel that gives up at once and says it finished normally (a planted fault)."""
    return 0, 0, False


def _nan_push(indptr, indices, weights, col_scale, alpha, x, r, thresh, max_pushes):
    """A queue kernel that leaves a NaN in the scores and says it finished normally."""
    x[0] = np.nan
    return 1, 0, False


@pytest.mark.parametrize("fault", [_early_exit_push, _nan_push])
def test_push_that_stops_early_or_returns_nan_raises(monkeypatch, fault):
    # the exact residual is recomputed after the solve, whatever the kernel reports
    import aligner.core.diffusion as diffusion

    *_, cand, prod = _instance(3)
    h = prior_vector(cand.prior)
    monkeypatch.setattr(diffusion, "_push", fault)
    monkeypatch.setattr(diffusion, "QUEUE_FRACTION", 2.0)  # no passes: the queue kernel alone
    with pytest.raises(ConvergenceError) as info:
        diffuse(prod, h, column_scale(prod), alpha=0.9, tol=1e-8)
    if fault is _early_exit_push:
        # nothing was pushed: the residual is still ||(1 - alpha) h||_1 = 0.1 (h sums to 1)
        assert info.value.iterations == 0
        assert info.value.residual == pytest.approx(0.1, rel=1e-12)
        assert "stopped before the residual tolerance" in str(info.value)
    else:
        assert not np.isfinite(info.value.residual)
        assert "not a finite number" in str(info.value)


@pytest.mark.filterwarnings("ignore::RuntimeWarning")  # inf - inf on the way, on purpose
@pytest.mark.parametrize("solver", ["push", "power"])
@pytest.mark.parametrize("bad", [np.nan, np.inf])
def test_non_finite_prior_raises_convergence_error(solver, bad):
    *_, cand, prod = _instance(3)
    h = prior_vector(cand.prior)
    h[2] = bad
    with pytest.raises(ConvergenceError, match="not a finite number"):
        diffuse(prod, h, column_scale(prod), alpha=0.5, tol=1e-8, solver=solver)


def test_power_cap_raises_and_the_error_gives_figures():
    *_, cand, prod = _instance(3)
    h = prior_vector(cand.prior)
    with pytest.raises(ConvergenceError, match="stopped after 3 steps") as info:
        diffuse(prod, h, column_scale(prod), alpha=0.9, tol=1e-12, solver="power", max_work=3)
    assert info.value.iterations == 3 and info.value.residual > 1e-12


@pytest.mark.parametrize("solver", ["push", "power"])
def test_every_returned_result_is_converged(solver):
    # the result's residual is the exact one, recomputed from the CSR pattern by a dense
    # product here (numpy), and within the tolerance
    (ea, ia, xa), (eb, ib, xb), cand, prod = _instance(7, 9, 8)
    h = prior_vector(cand.prior)
    s = column_scale(prod)
    res = diffuse(prod, h, s, alpha=0.85, tol=1e-9, solver=solver)
    P = prod.transition(s, 1.0).toarray()
    r = 0.15 * h - (res.x - 0.85 * P @ res.x)
    assert np.abs(r).sum() == pytest.approx(res.residual, rel=1e-6, abs=1e-15)
    assert res.residual <= 1e-9 and res.error_bound == pytest.approx(res.residual / 0.15)


# --------------------------------------------------------------------------- work caps and what is reported

def test_default_work_caps_are_the_documented_formulas():
    # the docstring's formulas: 200 m / (1 - alpha) + 10^6 pushes; 100 ln(1 / min(tol, 0.5)) / (1 - alpha) + 10
    assert default_work_cap("push", 50, 0.9, 1e-6) == int(200 * 50 / 0.1) + 10**6 == 1_100_000
    assert default_work_cap("push", 7, 0.5, 1e-3) == 1_002_800
    assert default_work_cap("power", 50, 0.9, 1e-6) == int(100 * math.log(1e6) / 0.1) + 10 == 13825
    assert default_work_cap("power", 50, 0.5, 0.9) == int(100 * math.log(2) / 0.5) + 10 == 148


@pytest.mark.parametrize("solver", ["push", "power"])
@pytest.mark.parametrize("bad", [-1, 2.5, True])
def test_bad_max_work_is_refused(solver, bad):
    *_, cand, prod = _instance(3)
    with pytest.raises(InvalidParameterError, match=rf"^max_work must be a whole number >= 0; got {bad!r}$") as info:
        diffuse(prod, prior_vector(cand.prior), column_scale(prod), alpha=0.5, solver=solver, max_work=bad)
    assert info.value.param == "max_work"


def test_zero_work_is_allowed_and_reported_as_not_converged():
    *_, cand, prod = _instance(3)
    for solver in ("push", "power"):
        with pytest.raises(ConvergenceError, match="stopped after 0 steps"):
            diffuse(prod, prior_vector(cand.prior), column_scale(prod), alpha=0.5, solver=solver, max_work=0)


def test_power_iterations_counted_by_a_reference_iteration():
    # Reference: the Jacobi iteration x <- alpha P x + (1 - alpha) h from x = 0 with a dense
    # numpy P built from the product's Kronecker definition, stopped at the first iterate
    # whose residual 1-norm is <= tol; every iteration touches every stored entry once.
    (ea, ia, xa), (eb, ib, xb), cand, prod = _instance(5)
    n1, n2 = len(ia) - 1, len(ib) - 1
    A = np.zeros((n1, n1)); A[ea[:, 0], ea[:, 1]] = A[ea[:, 1], ea[:, 0]] = 1
    B = np.zeros((n2, n2)); B[eb[:, 0], eb[:, 1]] = B[eb[:, 1], eb[:, 0]] = 1
    K = np.kron(A, B)
    P = K / K.sum(axis=0)[None, :]
    h = prior_vector(cand.prior)
    alpha, tol = 0.8, 1e-8
    x, t = np.zeros(len(h)), 0
    while np.abs((1 - alpha) * h - x + alpha * P @ x).sum() > tol:
        x = alpha * P @ x + (1 - alpha) * h
        t += 1
    res = diffuse(prod, h, column_scale(prod), alpha=alpha, tol=tol, solver="power")
    assert res.steps == t and res.edge_touches == t * int(K.sum())
    np.testing.assert_allclose(res.x, x, rtol=0, atol=1e-12)


def test_report_keys_and_values():
    *_, cand, prod = _instance(3)
    h = prior_vector(cand.prior)
    for solver, key in (("push", "pushes"), ("power", "iterations")):
        res = diffuse(prod, h, column_scale(prod), alpha=0.6, tol=1e-7, solver=solver)
        assert res.report() == {"solver": solver, "alpha": 0.6, "tol": 1e-7, key: res.steps,
                                "edge_touches": res.edge_touches, "residual_l1": res.residual,
                                "error_bound_l1": res.error_bound, "seconds": round(res.seconds, 4),
                                "edge_touches_per_second": round(res.edge_touches / res.seconds)}
        assert res.steps > 0 and res.edge_touches > 0 and res.seconds > 0
    res = diffuse(prod, h, column_scale(prod), alpha=0.0)
    assert (res.steps, res.edge_touches, res.residual, res.error_bound) == (0, 0, 0.0, 0.0)
    assert res.report()["edge_touches_per_second"] in (0, None)  # no work: a rate of 0, or none without time
    # a solve too quick for the clock (seconds exactly 0) reports no rate rather than dividing by 0
    import dataclasses

    instant = dataclasses.replace(diffuse(prod, h, column_scale(prod), alpha=0.6, tol=1e-7), seconds=0.0)
    assert instant.edge_touches > 0 and instant.report()["edge_touches_per_second"] is None


# --------------------------------------------------------------------------- edges of the contract

def test_prior_vector_cases():
    # h = prior / sum(prior); uniform when the prior sums to 0 (documented); empty stays empty
    np.testing.assert_allclose(prior_vector([0.1, 0.3]), [0.25, 0.75], rtol=1e-15)
    np.testing.assert_array_equal(prior_vector([1, 3]), [0.25, 0.75])
    np.testing.assert_array_equal(prior_vector([2.0, 6.0]), [0.25, 0.75])
    np.testing.assert_array_equal(prior_vector([0.0, 0.0, 0.0, 0.0]), [0.25] * 4)
    np.testing.assert_array_equal(prior_vector([5.0]), [1.0])
    assert prior_vector([1]).dtype == np.float64
    out = prior_vector(np.empty(0))
    assert out.shape == (0,) and out.dtype == np.float64


def test_defaults_trivial_cases_and_fields():
    *_, cand, prod = _instance(3)
    h = prior_vector(cand.prior)
    s = column_scale(prod)
    before = time.perf_counter()
    res = diffuse(prod, h, s)
    assert (res.alpha, res.tol, res.solver) == (0.9, 1e-6, "push")  # documented defaults
    assert 0.0 <= res.seconds <= time.perf_counter() - before
    np.testing.assert_array_equal(res.x, diffuse(prod, h, s, alpha=0.9, tol=1e-6).x)
    # alpha = 0 returns h itself, without any work
    before = time.perf_counter()
    res = diffuse(prod, h, s, alpha=0.0, tol=1e-3, solver="power")
    assert (res.solver, res.alpha, res.tol, res.steps, res.edge_touches, res.residual, res.error_bound) == \
        ("power", 0.0, 1e-3, 0, 0, 0.0, 0.0)
    assert 0.0 <= res.seconds <= time.perf_counter() - before
    # one candidate and no product edge: x = (1 - alpha) h (the system with P = 0)
    cand1 = build_candidates([[0, 0]], [1.0], 2, 2, top_k=None)
    ia = np.array([0, 1, 2]); xa = np.array([1, 0])
    prod1 = build_product(ia, xa, ia, xa, cand1)
    assert prod1.m == 1 and prod1.n_edges == 0
    res = diffuse(prod1, np.ones(1), column_scale(prod1), alpha=0.7, tol=1e-12)
    assert res.x.tolist() == [pytest.approx(0.3, abs=1e-15)] and res.steps == 1
    # no candidates at all: an empty result
    cand0 = build_candidates(np.empty((0, 2)), np.empty(0), 2, 2)
    prod0 = build_product(ia, xa, ia, xa, cand0)
    res = diffuse(prod0, np.empty(0), np.empty(0), alpha=0.5, solver="power")
    assert res.x.shape == (0,) and (res.solver, res.steps, res.residual) == ("power", 0, 0.0)


def test_warm_start_given_as_a_list():
    *_, cand, prod = _instance(4)
    h = prior_vector(cand.prior)
    s = column_scale(prod)
    cold = diffuse(prod, h, s, alpha=0.8, tol=1e-10)
    warm = diffuse(prod, h, s, alpha=0.8, tol=1e-10, x0=[0] * prod.m)  # integers, as a user may write
    np.testing.assert_allclose(warm.x, cold.x, atol=1e-9)
    again = diffuse(prod, h, s, alpha=0.8, tol=1e-10, x0=cold.x.tolist())  # already converged
    assert again.steps == 0 and np.array_equal(again.x, cold.x)


@pytest.mark.parametrize("tol", [0, 0.0, -1e-3, float("nan")])
def test_bad_tol_is_refused(tol):
    *_, cand, prod = _instance(3)
    with pytest.raises(InvalidParameterError, match=rf"^tol must be a number in \(0, inf\); got {tol!r}$") as info:
        diffuse(prod, prior_vector(cand.prior), column_scale(prod), tol=tol)
    assert info.value.param == "tol"


def test_bad_solver_is_refused():
    *_, cand, prod = _instance(3)
    with pytest.raises(InvalidParameterError, match=r"^solver must be one of push, power; got 'magic'$") as info:
        diffuse(prod, prior_vector(cand.prior), column_scale(prod), solver="magic")
    assert info.value.param == "solver"


def test_convergence_messages_name_the_cause_and_the_way_out(monkeypatch):
    import aligner.core.diffusion as diffusion

    *_, cand, prod = _instance(3)
    h = prior_vector(cand.prior)
    with pytest.raises(ConvergenceError) as info:
        diffuse(prod, h, column_scale(prod), alpha=0.9, tol=1e-12, max_work=5)
    # max_work is named only to a caller who gave one (it is a keyword of diffuse, not of align)
    assert str(info.value).startswith("the push solver stopped before the residual tolerance 1e-12; raise "
                                      "max_work, raise tol, lower alpha or try solver='power' (stopped after 5 "
                                      "steps")
    monkeypatch.setattr(diffusion, "_push", _nan_push)
    monkeypatch.setattr(diffusion, "QUEUE_FRACTION", 2.0)
    with pytest.raises(ConvergenceError) as info:
        diffuse(prod, h, column_scale(prod), alpha=0.9, tol=1e-8)
    assert str(info.value).startswith("the push solver produced a score or residual that is not a finite "
                                      "number; check the prior and the edge weights for inf or NaN (stopped "
                                      "after 1 steps")
    assert info.value.iterations == 1


def test_column_scale_is_zero_where_a_pair_has_no_neighbour():
    # documented: restricted scale 1 / deg_S(l), 0 for a pair with no neighbours in L;
    # product scale 1 / (deg_A(j) deg_B(j')), 0 where either degree is 0
    cand = build_candidates([[0, 0], [1, 1], [2, 2]], np.ones(3), 3, 3, top_k=None)
    ia = np.array([0, 1, 2, 2]); xa = np.array([1, 0])  # A: edge 0-1, node 2 bare
    prod = build_product(ia, xa, ia, xa, cand)
    np.testing.assert_array_equal(column_scale(prod, "restricted"), [1.0, 1.0, 0.0])
    deg = np.array([1, 1, 0])
    np.testing.assert_array_equal(column_scale(prod, "product", deg_a=deg, deg_b=np.array([2, 4, 3]),
                                               pairs=cand.pairs), [0.5, 0.25, 0.0])
    assert column_scale(prod).dtype == np.float64


def test_scores_are_floats_whatever_the_input_type():
    # documented dtypes: h and x are float64, also when a caller passes integers
    *_, cand, prod = _instance(3)
    h = np.zeros(prod.m, dtype=np.int64)
    h[0] = 1
    res = diffuse(prod, h, column_scale(prod), alpha=0.0)
    assert res.x.dtype == np.float64 and res.x.tolist() == h.tolist()
    assert prior_vector(np.array([], dtype=np.int64)).dtype == np.float64


def test_convergence_advice_names_only_what_the_caller_can_change(monkeypatch):
    # Found by fuzzing: the message said "raise max_work" to callers who cannot give it (aligner.align
    # and the command line have no such option). Common practice (docs/errors.md): a message says
    # what to do in the caller's terms. The default cap here is hit without a max_work given.
    import aligner.core.diffusion as diffusion

    *_, cand, prod = _instance(3)
    h = prior_vector(cand.prior)
    monkeypatch.setattr(diffusion, "default_work_cap", lambda *args: 5)
    for solver, other in (("push", "power"), ("power", "push")):
        with pytest.raises(ConvergenceError) as info:
            diffuse(prod, h, column_scale(prod), alpha=0.9, tol=1e-12, solver=solver)
        assert str(info.value).startswith(f"the {solver} solver stopped before the residual tolerance 1e-12; "
                                          f"raise tol, lower alpha or try solver='{other}' (stopped after 5 steps")
        # the command line's options in place of the keywords; a keyword without one is left out
        flags = {"tol": "--tol", "solver": "--solver"}
        assert info.value.shown(flags).startswith(f"the {solver} solver stopped before the residual tolerance "
                                                  f"1e-12; raise --tol or try --solver {other} (stopped after 5")


def test_default_work_caps_saturate_below_int64():
    # Found by fuzzing: alpha = 0.9999999999999999 passes the [0, 1) check, and the push cap
    # 200 m / (1 - alpha) overflowed the compiled kernels' int64 ("Int value is too large").
    # Common practice: a count handed to int64 code is clipped below 2**63 (here at 2**62).
    alpha = float(np.nextafter(1.0, 0.0))
    assert alpha == 0.9999999999999999
    for solver in ("push", "power"):
        assert default_work_cap(solver, 10**9, alpha, 1e-300) == 2**62 < np.iinfo(np.int64).max
    assert default_work_cap("push", 50, 1 - 2**-20, 1e-6) == int(200 * 50 * 2**20) + 10**6  # unclipped where it fits


def test_alpha_next_to_one_solves_where_the_mass_drains():
    # the same alpha through the push kernel: pairs without neighbours pass nothing on, so the solve
    # ends at once, x = (1 - alpha) h (the definition x = alpha P x + (1 - alpha) h with P = 0); it
    # failed while compiling the call, the default cap too large for int64
    alpha, n = float(np.nextafter(1.0, 0.0)), 12  # 200 n / (1 - alpha) > 2**63 from n = 6
    cand = build_candidates(np.repeat(np.arange(n), 2).reshape(n, 2), np.arange(1.0, n + 1), n, n, top_k=None)
    bare = np.zeros(n + 1, dtype=np.int64), np.zeros(0, dtype=np.int32)  # n nodes, no edges
    prod = build_product(*bare, *bare, cand)
    h = prior_vector(cand.prior)
    for solver in ("push", "power"):
        res = diffuse(prod, h, column_scale(prod), alpha=alpha, tol=1e-20, solver=solver)
        np.testing.assert_allclose(res.x, (1 - alpha) * h, rtol=1e-12)


def test_prior_vector_of_scores_summing_past_the_largest_float():
    # Checked against the definition (docs/method.md: h is the prior normalised to sum 1, so it does not
    # depend on the prior's scale): finite scores near 1e308 summed to inf, and h = prior / inf was all
    # zero, so the diffusion made 0 pushes and every score was 0, with exit status 0 (noticed by
    # differential testing).
    big = np.array([1e308, 5e307, 1e308, 2.5e307])
    h = prior_vector(big)
    np.testing.assert_allclose(h, big / 1e308 / (big / 1e308).sum(), rtol=1e-15)
    assert np.isclose(h.sum(), 1.0)


def test_alignment_does_not_depend_on_the_prior_scale_up_to_the_largest_float(tmp_path):
    # Scale invariance (h is the prior over its sum): a prior of 1e308 everywhere aligns as a prior of 1
    # everywhere does (noticed by differential testing: the first gave all-zero scores).
    import aligner
    from aligner.datasets.instances import as_frames, noisy_relabelled
    a, b, prior, _ = as_frames(noisy_relabelled(25, seed=2))
    one = aligner.align(a, b, prior=prior.assign(score=1.0))
    big = aligner.align(a, b, prior=prior.assign(score=1e308))
    assert big.summary["solver"]["pushes"] > 0
    np.testing.assert_allclose(big.pairs["score"].to_numpy(), one.pairs["score"].to_numpy(), rtol=1e-9)
    assert big.pairs[["node_a", "node_b"]].equals(one.pairs[["node_a", "node_b"]])
