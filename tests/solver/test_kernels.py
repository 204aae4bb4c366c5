"""Kernels of the SQP method tested on their own."""

import sys

import casadi as ca
import numpy as np
import pytest
import scipy.linalg as sla
import scipy.sparse as sp

from plantopt.solver import kkt as kktmod
from plantopt.solver.filter import Filter, acceptable_to_current, update_radius
from plantopt.solver.inertia import inertia, kkt_matrix, regularise
from plantopt.solver.options import FILTER_BETA, FILTER_GAMMA
from plantopt.solver.qp import kkt_solve, solve_qp
from plantopt.solver.restoration import elastic_qp

INF = np.inf


# --- filter -----------------------------------------------------------------

def test_filter_envelope_and_domination():
    flt = Filter(h_max=10.0)
    flt.add(1.0, 5.0)
    # inside the envelope: slightly less violation but not by the factor beta
    assert not flt.acceptable(0.995, 5.0)
    # enough violation decrease: h <= beta * h_j
    assert flt.acceptable(FILTER_BETA * 1.0, 100.0)
    # enough objective decrease: f <= f_j - gamma h
    assert flt.acceptable(2.0, 5.0 - FILTER_GAMMA * 2.0 - 1e-12)
    assert not flt.acceptable(2.0, 5.0 - 0.5 * FILTER_GAMMA * 2.0)
    # above the upper bound h_max never acceptable
    assert not flt.acceptable(10.0, -1e9)
    # a dominating entry removes the dominated one
    flt.add(3.0, 9.0)
    flt.add(0.5, 4.0)
    assert flt.entries == [(0.5, 4.0)] or sorted(flt.entries) == [(0.5, 4.0)]
    flt.add(2.0, 1.0)
    assert sorted(flt.entries) == [(0.5, 4.0), (2.0, 1.0)]


def test_acceptable_to_current_point():
    assert acceptable_to_current(0.5, 10.0, 1.0, 0.0)
    assert not acceptable_to_current(1.0, 0.0, 1.0, 0.0)
    assert acceptable_to_current(1.0, -0.1, 1.0, 0.0)


@pytest.mark.parametrize(
    "ratio, step, boundary, expected",
    [
        (0.1, 2.0, True, 0.5),  # rho < 0.25: min(radius, ||d||) / 4
        (0.1, 8.0, True, 2.0),
        (-np.inf, 4.0, True, 1.0),  # failed evaluation
        (np.nan, 4.0, True, 1.0),
        (0.5, 8.0, True, 8.0),  # 0.25 <= rho <= 0.75 keeps
        (0.9, 8.0, True, 16.0),  # rho > 0.75 at the boundary doubles
        (0.9, 3.0, False, 8.0),  # ... but not inside
    ],
)
def test_radius_rule(ratio, step, boundary, expected):
    assert update_radius(8.0, ratio, step, boundary) == expected


# --- inertia ----------------------------------------------------------------

def test_inertia_matches_eigenvalues():
    rng = np.random.default_rng(0)
    for _ in range(20):
        n, m = 6, 2
        Q = rng.standard_normal((n, n))
        H = Q @ np.diag(rng.uniform(-1, 2, n)) @ Q.T
        A = rng.standard_normal((m, n))
        K = kkt_matrix(sp.csc_matrix(H), sp.csc_matrix(A), 0.0, eps=1e-10)
        ev = np.linalg.eigvalsh(K.toarray())
        pos, neg, zero = inertia(K)
        assert (pos, neg) == (int(np.sum(ev > 0)), int(np.sum(ev < 0))) and zero == 0


def test_regularise_gives_null_space_convexity():
    rng = np.random.default_rng(1)
    n, m = 8, 3
    Q = np.linalg.qr(rng.standard_normal((n, n)))[0]  # orthogonal: eigenvalues as given
    H = Q @ np.diag(np.r_[-3.0, -1.0, rng.uniform(0.5, 2, n - 2)]) @ Q.T
    A = rng.standard_normal((m, n))
    delta = regularise(sp.csc_matrix(H), sp.csc_matrix(A))
    Z = sla.null_space(A)
    assert np.linalg.eigvalsh(Z.T @ (H + delta * np.eye(n)) @ Z).min() > 0
    # no correction when already convex (smallest eigenvalue -3 + 10 > 0)
    Hc = H + 10 * np.eye(n)
    assert regularise(sp.csc_matrix(Hc), sp.csc_matrix(A)) == 0.0


# --- QP ---------------------------------------------------------------------

def _random_qp(seed):
    rng = np.random.default_rng(seed)
    n, m = 6, 4
    Q = rng.standard_normal((n, n))
    H = Q @ Q.T + 0.1 * np.eye(n)
    g = rng.standard_normal(n)
    A = rng.standard_normal((m, n))
    l = np.array([0.0, -INF, -0.3, -1.0])
    u = np.array([0.0, 0.2, INF, 1.0])
    lb, ub = -0.5 * np.ones(n), 0.5 * np.ones(n)
    return H, g, A, l, u, lb, ub


@pytest.mark.parametrize("seed", range(5))
def test_qp_polish_matches_kkt_solve_and_ipopt(seed):
    H, g, A, l, u, lb, ub = _random_qp(seed)
    r = solve_qp(sp.csc_matrix(H), g, sp.csc_matrix(A), l, u, lb, ub)
    assert r.status == "solved" and r.polished
    # an exact KKT solve on the identified active set reproduces the step
    rows, bnds = np.flatnonzero(r.active_rows), np.flatnonzero(r.active_bounds)
    M = sp.vstack([sp.csr_matrix(A)[rows], sp.eye(len(g), format="csr")[bnds]], format="csc")
    b = np.r_[np.where(r.active_rows[rows] < 0, l[rows], u[rows]),
              np.where(r.active_bounds[bnds] < 0, lb[bnds], ub[bnds])]
    d, lam = kkt_solve(sp.csc_matrix(H), g, M, b)
    np.testing.assert_allclose(r.d, d, atol=1e-12)
    # stationarity with casadi signs: H d + g + A'y + yx = 0, to rounding
    assert np.max(np.abs(H @ r.d + g + A.T @ r.y + r.yx)) < 1e-12
    # independent reference: IPOPT on the same QP
    x = ca.SX.sym("d", len(g))
    sol = ca.nlpsol("q", "ipopt", {"x": x, "f": ca.dot(g, x) + 0.5 * ca.dot(x, ca.mtimes(ca.DM(H), x)),
                                   "g": ca.mtimes(ca.DM(A), x)},
                    {"ipopt.print_level": 0, "print_time": False, "ipopt.tol": 1e-12,
                     "ipopt.sb": "yes"})(x0=0, lbx=lb, ubx=ub, lbg=l, ubg=u)
    np.testing.assert_allclose(r.d, np.array(sol["x"]).ravel(), atol=1e-7)
    np.testing.assert_allclose(r.y, np.array(sol["lam_g"]).ravel(), atol=1e-6)
    np.testing.assert_allclose(r.yx, np.array(sol["lam_x"]).ravel(), atol=1e-6)


def test_qp_reports_infeasibility():
    H = sp.identity(2, format="csc")
    A = sp.csc_matrix(np.array([[1.0, 1.0], [1.0, 1.0]]))
    r = solve_qp(H, np.zeros(2), A, np.array([2.0, -INF]), np.array([INF, 1.0]),
                 -10 * np.ones(2), 10 * np.ones(2))
    assert r.status == "infeasible"


# --- restoration ------------------------------------------------------------

def test_elastic_qp_on_inconsistent_linearisation():
    # rows d1 >= 1 and d1 <= -1 (c = 0): least l1 violation 2 for any d1 in [-1, 1]
    H = 1e-8 * sp.identity(2, format="csc")
    J = sp.csc_matrix(np.array([[1.0, 0.0], [1.0, 0.0]]))
    c = np.zeros(2)
    cl, cu = np.array([1.0, -INF]), np.array([INF, -1.0])
    es = elastic_qp(H, J, c, cl, cu, -5 * np.ones(2), 5 * np.ones(2), h=2.0)
    assert es.status == "solved"
    assert abs(es.model_h - 2.0) < 1e-7
    assert abs(es.pred) < 1e-7  # no decrease possible: stationary for the violation
    assert -1 - 1e-7 <= es.d[0] <= 1 + 1e-7


def test_elastic_qp_trust_region_limits_decrease():
    # row d1 + d2 = 3 from c = 0 with radius 1: best linearised violation 1
    H = 1e-8 * sp.identity(2, format="csc")
    J = sp.csc_matrix(np.array([[1.0, 1.0]]))
    es = elastic_qp(H, J, np.zeros(1), np.array([3.0]), np.array([3.0]), -np.ones(2), np.ones(2), h=3.0)
    assert abs(es.model_h - 1.0) < 1e-7
    np.testing.assert_allclose(es.d, [1.0, 1.0], atol=1e-6)
    assert abs(es.y[0] - (-1.0)) < 1e-6  # multiplier of a row still violated below is -1


# --- KKT measures -----------------------------------------------------------

def test_kkt_measures_sign_convention():
    # min x s.t. x >= 1 as a row: lam = -1 satisfies 1 + lam = 0 (casadi sign)
    J = sp.csc_matrix(np.array([[1.0]]))
    args = (np.array([1.0]), J, np.array([1.0]), np.array([1.0]), np.array([INF]),
            np.array([1.0]), np.array([-INF]), np.array([INF]))
    good = kktmod.measures(*args, np.array([-1.0]), np.zeros(1))
    assert good == {"stationarity": 0.0, "feasibility": 0.0, "complementarity": 0.0}
    bad = kktmod.measures(*args, np.array([1.0]), np.zeros(1))  # wrong sign: no upper bound
    assert bad["complementarity"] >= 1.0 and bad["stationarity"] == 2.0
    y, yx = kktmod.ls_multipliers(args[0], J, args[2], args[3], args[4], args[5], args[6], args[7],
                                  np.array([-1]), np.array([0]))
    assert y[0] == pytest.approx(-1.0, abs=1e-14) and yx[0] == 0.0


def test_inertia_when_qdldl_breaks_down():
    # [[0, 1], [1, 0]] has eigenvalues +-1 but a zero first pivot without pivoting
    K = sp.csc_matrix(np.array([[0.0, 1.0], [1.0, 0.0]]))
    assert inertia(K) == (1, 1, 0)
    # H with zero diagonal (a variable entering only linearly), PD on null(A)
    H = sp.csc_matrix(np.diag([0.0, 1.0, 1.0]))
    A = sp.csc_matrix(np.array([[1.0, 0.0, 0.0]]))
    # at most the zero-pivot shift DELTA_TINY * max|H| = 1e-10, no real correction
    assert regularise(H, A) <= 1e-10
    # truly negative curvature on null(A) still gets a real correction
    Hn = sp.csc_matrix(np.diag([0.0, -1.0, 1.0]))
    assert regularise(Hn, A) > 1.0


def test_finsler_leaves_dense_rows_out_and_stays_a_certificate():
    from plantopt.solver.inertia import _Finsler
    from plantopt.solver.options import FINSLER_ROW_MAX
    rng = np.random.default_rng(3)
    n = FINSLER_ROW_MAX + 40
    # sparse rows (2 entries each) and one dense row over every variable
    rows = [np.eye(1, n, k).ravel() - np.eye(1, n, k + 1).ravel() for k in range(0, n - 1, 7)]
    A = np.vstack(rows + [rng.uniform(0.5, 1.5, n)])
    Z = sla.null_space(A)
    for ev in (np.r_[rng.uniform(0.5, 2, 10), -2.0, rng.uniform(0.5, 2, n - 11)], rng.uniform(0.5, 2, n)):
        H = np.diag(ev)
        f = _Finsler(sp.csc_matrix(H), sp.csc_matrix(A), 2.0)
        assert f.U.nnz <= 3 * n  # diagonal plus the 2x2 blocks of the sparse rows: no dense fill
        for delta in (0.0, 1e-3, 0.1, 1.0, 3.0):
            if f(delta):  # whenever certified, truly positive definite on null(A)
                assert np.linalg.eigvalsh(Z.T @ (H + delta * np.eye(n)) @ Z).min() > 0
        assert f(3.0)  # every shift above the most negative eigenvalue of H is certified
    # the whole correction still gives positive curvature on null(A)
    delta = regularise(sp.csc_matrix(H), sp.csc_matrix(A))
    assert np.linalg.eigvalsh(Z.T @ (H + delta * np.eye(n)) @ Z).min() > 0


def test_qp_degenerate_vertex_multipliers_bounded():
    # min -d1 - d2 with d1 <= 1, d2 <= 1, d1 + d2 <= 2: three active rows for
    # two variables; multipliers form the segment y = (1 - t, 1 - t, t), t in [0, 1]
    H = 1e-8 * sp.identity(2, format="csc")
    A = sp.csc_matrix(np.array([[1.0, 0.0], [0.0, 1.0], [1.0, 1.0]]))
    r = solve_qp(H, np.array([-1.0, -1.0]), A, -INF * np.ones(3), np.array([1.0, 1.0, 2.0]),
                 -10 * np.ones(2), 10 * np.ones(2))
    assert r.status == "solved"
    np.testing.assert_allclose(r.d, [1.0, 1.0], atol=1e-7)
    assert np.max(np.abs(np.array([-1.0, -1.0]) + H @ r.d + A.T @ r.y + r.yx)) < 1e-7
    assert (r.y >= -1e-9).all() and (r.y <= 1 + 1e-7).all()


def test_kkt_upper_is_the_upper_triangle():
    rng = np.random.default_rng(3)
    B = rng.standard_normal((5, 5))
    H = sp.csc_matrix(B + B.T)
    A = sp.csc_matrix(rng.standard_normal((2, 5)))
    from plantopt.solver.inertia import kkt_upper
    full = kkt_matrix(H, A, 0.3, eps=1e-7).toarray()
    np.testing.assert_array_equal(kkt_upper(H, A, 0.3, eps=1e-7).toarray(), np.triu(full))


def _rss_mb() -> float:
    with open("/proc/self/status") as fh:
        for line in fh:
            if line.startswith("VmRSS"):
                return int(line.split()[1]) / 1024.0
    raise RuntimeError("no VmRSS")


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc/self/status")
def test_factor_upper_breakdowns_do_not_leak():
    # qdldl.Solver leaks its workspace when its constructor raises on a
    # matrix that is not quasi-definite (measured: ~6 MB per failure at
    # n = 12,379). factor_upper builds each solver on a dominant matrix of
    # the same pattern; breakdowns then show in the pivots only. 40 new
    # patterns of an indefinite banded matrix (n = 20,000),
    # each breaking down: qdldl.Solver called on them directly grew RSS by
    # 115 MB over the last 35 (measured with qdldl 0.1.9.post1).
    import qdldl

    from plantopt.solver import inertia as inertia_mod

    n = 20_000
    before = None
    for k in range(40):
        # a few entries in the band (no fill beyond it), at new places each time
        i = np.random.default_rng(k).choice(n - 3, size=50, replace=False)
        extra = sp.csc_matrix((np.full(50, 0.5), (i, i + 3)), shape=(n, n))
        M = sp.diags([np.full(n - 1, 1.0), np.where(np.arange(n) % 2, -1.0, 1e-30), np.full(n - 1, 1.0)],
                     [-1, 0, 1], format="csc") + extra + extra.T
        U = sp.triu(M, format="csc")
        if k == 0:
            with pytest.raises(RuntimeError):
                qdldl.Solver(U, upper=True)  # the raw constructor refuses it
        fac = inertia_mod.factor_upper(U)
        d = np.asarray(fac.factors()[1]).reshape(-1)
        # indefinite: not all pivots finite and positive
        assert not (np.isfinite(d).all() and (d > 0).all())
        if k == 4:
            before = _rss_mb()  # after the first patterns (allocator warm-up)
    assert _rss_mb() - before < 60.0


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_finsler_with_masks_equals_the_active_rows_and_keeps_its_pattern(seed):
    # The masked form (all rows of J, weights 0/1, bounds as identity rows)
    # must give the matrix of the explicit active rows value for value, with
    # one sparsity pattern for every active set; the certificate is checked
    # against the null-space eigenvalues (numpy).
    from plantopt.solver.inertia import _Finsler
    rng = np.random.default_rng(seed)
    n, m = 30, 18
    J = sp.random(m, n, density=0.15, random_state=seed, format="csr") + sp.csr_matrix(
        (np.ones(m), (np.arange(m), np.arange(m))), shape=(m, n))
    Hd = rng.normal(size=(n, n))
    Hd = 0.5 * (Hd + Hd.T)
    Hd[np.abs(Hd) < 0.8] = 0.0
    H = sp.csc_matrix(Hd)
    patterns = set()
    for trial in range(4):
        on_r = rng.random(m) < 0.6
        on_b = rng.random(n) < 0.2
        E = sp.csr_matrix((np.ones(on_b.sum()), (np.arange(on_b.sum()), np.flatnonzero(on_b))), shape=(on_b.sum(), n))
        A = sp.vstack([J[np.flatnonzero(on_r)], E], format="csc")
        f_ref = _Finsler(H, A, 2.0)
        f_mask = _Finsler(H, J, 2.0, on_r, on_b)
        assert np.allclose(f_mask.U.toarray(), f_ref.U.toarray(), rtol=1e-14, atol=1e-14)
        patterns.add((f_mask.U.indptr.tobytes(), f_mask.U.indices.tobytes()))
        Z = sla.null_space(A.toarray())
        for delta in (0.0, 0.5, 2.0, 5.0):
            assert f_mask(delta) == f_ref(delta)
            if f_mask(delta) and Z.size:
                assert np.linalg.eigvalsh(Z.T @ (Hd + delta * np.eye(n)) @ Z).min() > 0
    assert len(patterns) == 1


def test_rounding_level_step_may_cost_its_predicted_objective():
    """Regression from the 10,000-unit site benchmark (values as logged there): at a KKT point
    the last Newton step was predicted to raise the scaled objective by 1.9e-12, raised it by
    1.2e-12 and cut the violation from 2.0e-9 to 4.8e-10. Judged against rounding alone it was
    rejected and the solve ended as failed."""
    from plantopt.solver.filter import rounding_step_acceptable

    F = -24.4
    case = dict(h=1.972e-9, ht=4.833e-10, h_noise=2.546e-8, f=F, ft=F + 1.183e-12, f_noise=5.428e-13, pred=-1.895e-12)
    assert rounding_step_acceptable(**case)
    assert not case["ft"] <= case["f"] + case["f_noise"]  # the rule before: rounding alone
    # more objective than predicted plus rounding: refused
    assert not rounding_step_acceptable(**{**case, "ft": F + 1.895e-12 + 5.428e-13 + 1e-13})
    # a predicted decrease allows no increase beyond rounding
    assert not rounding_step_acceptable(**{**case, "pred": 1e-13, "ft": F + 1e-12})
    assert rounding_step_acceptable(**{**case, "pred": 1e-13, "ft": F + 5e-13})
    # violation worse beyond its rounding level: refused
    assert not rounding_step_acceptable(**{**case, "ht": 1.972e-9 + 2.6e-8})


def test_shifted_hessian_keeps_one_pattern():
    """H and H + delta I share one sparsity pattern (explicit zeros kept on the diagonal), so
    the fixed-pattern KKT factorisations see one matrix structure; values checked against numpy."""
    from plantopt.solver.problem import shift_diagonal, with_diagonal

    rng = np.random.default_rng(7)
    for _ in range(50):
        n = int(rng.integers(1, 25))
        A = sp.random(n, n, density=0.25, random_state=int(rng.integers(1_000_000)), format="csc")
        A = (A + A.T).tocsc()
        A.data[rng.random(A.nnz) < 0.2] = 0.0  # structural zeros as casadi stores them
        W, S = with_diagonal(A), shift_diagonal(A, 0.3)
        assert np.array_equal(W.toarray(), A.toarray())
        np.testing.assert_allclose(S.toarray(), A.toarray() + 0.3 * np.eye(n))
        assert np.array_equal(S.indptr, W.indptr) and np.array_equal(S.indices, W.indices)
        cols = np.repeat(np.arange(n), np.diff(W.indptr))
        assert np.array_equal(np.sort(W.indices[W.indices == cols]), np.arange(n))
