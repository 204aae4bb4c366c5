"""Square-system solver against known roots and analytic solutions."""

import casadi as ca
import numpy as np
import pytest
from scipy.optimize import brentq

from plantopt.errors import SolverError
from plantopt.solver import Status, solve_equations


def _sys(expr_fn, n):
    x = ca.SX.sym("x", n)
    return {"x": x, "f": 0, "g": ca.vertcat(*expr_fn(x))}


def test_circle_and_line_known_root():
    nlp = _sys(lambda x: [x[0] ** 2 + x[1] ** 2 - 4, x[0] - x[1]], 2)
    r = solve_equations(nlp, [1.0, 0.5], lbg=[0, 0], ubg=[0, 0])
    assert r.status == Status.CONVERGED and r.success
    # analytic root (sqrt 2, sqrt 2)
    np.testing.assert_allclose(r.x, [np.sqrt(2), np.sqrt(2)], rtol=1e-10)
    assert r.kkt["feasibility"] < 1e-9


def test_cosine_fixed_point():
    # x = cos x; root 0.7390851332151607 (Dottie number), checked here with brentq
    nlp = _sys(lambda x: [x[0] - ca.cos(x[0])], 1)
    # residual tol 1e-13 bounds the root error by 1e-13 / |1 + sin x| < 1e-13
    r = solve_equations(nlp, [3.0], lbg=[0], ubg=[0], options={"tol": 1e-13})
    root = brentq(lambda t: t - np.cos(t), 0, 1, xtol=1e-15)
    assert r.success
    assert abs(r.x[0] - root) < 1e-10


def test_powell_badly_scaled():
    # More, Garbow & Hillstrom (1981) problem 3, start (0, 1); root
    # (1.098159e-5, 9.106146) -- from memory; verified below through the
    # residual and a 1-D reduction solved by brentq.
    nlp = _sys(lambda x: [1e4 * x[0] * x[1] - 1, ca.exp(-x[0]) + ca.exp(-x[1]) - 1.0001], 2)
    r = solve_equations(nlp, [0.0, 1.0], lbg=[0, 0], ubg=[0, 0], options={"max_iter": 200})
    assert r.status == Status.CONVERGED
    x2 = brentq(lambda t: np.exp(-1e-4 / t) + np.exp(-t) - 1.0001, 1.0, 20.0, xtol=1e-14)
    np.testing.assert_allclose(r.x, [1e-4 / x2, x2], rtol=1e-7)
    np.testing.assert_allclose(r.x, [1.098159e-5, 9.106146], rtol=1e-5)


def test_bounds_select_the_root_and_are_respected():
    # (x - 1)(x + 2) = 0: from -3 Newton reaches -2; with lbx = 0 it must reach 1
    nlp = _sys(lambda x: [(x[0] - 1) * (x[0] + 2)], 1)
    free = solve_equations(nlp, [-3.0], lbg=[0], ubg=[0])
    assert free.success and abs(free.x[0] + 2) < 1e-10
    boxed = solve_equations(nlp, [-3.0], lbx=[0.0], ubx=[10.0], lbg=[0], ubg=[0])
    assert boxed.success and abs(boxed.x[0] - 1) < 1e-10


def test_log_domain_kept_by_bounds():
    # log(x) + x - 2 = 0 only defined for x > 0; root by brentq. A first
    # Newton step from 10 would go negative; bounds and NaN-rejection keep it valid.
    nlp = _sys(lambda x: [ca.log(x[0]) + x[0] - 2], 1)
    r = solve_equations(nlp, [10.0], lbx=[1e-6], lbg=[0], ubg=[0])
    root = brentq(lambda t: np.log(t) + t - 2, 0.1, 5, xtol=1e-15)
    assert r.success and abs(r.x[0] - root) < 1e-10


def test_bratu_against_analytic_solution():
    # u'' + lam e^u = 0 on (0,1), u(0)=u(1)=0. Analytic (lower branch):
    # u = -2 ln(cosh((t-1/2) th/2) / cosh(th/4)), th = sqrt(2 lam) cosh(th/4).
    lam, n = 1.0, 200
    h = 1.0 / (n + 1)
    u = ca.SX.sym("u", n)
    up = ca.vertcat(0, u, 0)
    g = (up[2:] - 2 * up[1:-1] + up[:-2]) / h**2 + lam * ca.exp(u)
    r = solve_equations({"x": u, "g": g}, np.zeros(n), lbg=0, ubg=0)
    assert r.success
    th = brentq(lambda t: t - np.sqrt(2 * lam) * np.cosh(t / 4), 0.1, 4)
    t = np.arange(1, n + 1) * h
    exact = -2 * np.log(np.cosh((t - 0.5) * th / 2) / np.cosh(th / 4))
    # second-order discretisation: error ~ h^2 * |u''''| / 12, well below 1e-5 here
    assert np.max(np.abs(r.x - exact)) < 1e-5


def test_no_root_reports_failure_with_least_residual_point():
    nlp = _sys(lambda x: [x[0] ** 2 + 1], 1)
    r = solve_equations(nlp, [2.0], lbg=[0], ubg=[0], options={"max_iter": 60})
    assert r.status in (Status.FAILED, Status.ITERATION_LIMIT)
    assert not r.success
    # least residual of x^2 + 1 is at x = 0
    assert abs(r.x[0]) < 1e-2
    assert r.kkt["feasibility"] >= 1.0


def test_inequality_rows_are_ignored():
    x = ca.SX.sym("x", 2)
    nlp = {"x": x, "g": ca.vertcat(x[0] + x[1] - 3, x[0] - x[1] - 1, x[0] * 100)}
    r = solve_equations(nlp, [0, 0], lbg=[0, 0, -np.inf], ubg=[0, 0, 1.0])
    assert r.success
    np.testing.assert_allclose(r.x, [2.0, 1.0], rtol=1e-12)


def test_non_square_raises_with_counts():
    x = ca.SX.sym("x", 3)
    nlp = {"x": x, "g": ca.vertcat(x[0] - 1, x[1] - 2)}
    with pytest.raises(SolverError, match="2 equations .* 3 variables"):
        solve_equations(nlp, np.zeros(3), lbg=[0, 0], ubg=[0, 0])


def test_unknown_option_raises():
    nlp = _sys(lambda x: [x[0] - 1], 1)
    with pytest.raises(SolverError, match="unknown solver option"):
        solve_equations(nlp, [0.0], lbg=[0], ubg=[0], options={"tolerance": 1e-3})


def test_bad_shape_raises():
    nlp = _sys(lambda x: [x[0] - 1, x[1]], 2)
    with pytest.raises(SolverError, match="x0 must have shape"):
        solve_equations(nlp, [0.0, 0.0, 1.0], lbg=[0, 0], ubg=[0, 0])


def test_scaling_by_nominals_converges_on_large_magnitudes():
    # flows of order 1e4 and pressures of order 1e5: root (2e4, 3e5)
    nlp = _sys(lambda x: [x[0] * x[1] - 6e9, x[1] - 15 * x[0]], 2)
    r = solve_equations(nlp, [1e4, 1e5], lbg=0, ubg=0,
                        options={"x_nominal": [1e4, 1e5], "g_nominal": [1e9, 1e5]})
    assert r.success
    np.testing.assert_allclose(r.x, [2e4, 3e5], rtol=1e-10)


def test_non_finite_trial_points_are_rejected():
    # 1/x - 1/2 = 0 (root 2) from x = 5: the Newton step -7.5 is cut by the
    # radius 5 to x = 0, where the residual is infinite; that trial must be
    # rejected (ratio -inf) and the radius shrunk, not raised.
    nlp = _sys(lambda x: [1 / x[0] - 0.5], 1)
    r = solve_equations(nlp, [5.0], lbg=[0], ubg=[0])
    assert r.success and abs(r.x[0] - 2.0) < 1e-8
    assert any(h["ratio"] == -np.inf and not h["accepted"] for h in r.history)


def test_verbose_log_and_counts(capsys):
    nlp = _sys(lambda x: [x[0] ** 3 - 8], 1)
    r = solve_equations(nlp, [1.5], lbg=[0], ubg=[0], options={"verbose": 1})
    out = capsys.readouterr().out
    assert "iter" in out and "|F|_inf" in out and len(out.splitlines()) >= 3
    assert r.success and abs(r.x[0] - 2.0) < 1e-9 and r.solver == "newton"
    assert r.n_eval["jac_g"] >= 1 and r.iterations == len(r.history)
