"""Randomised cross-checks against IPOPT (hypothesis draws the problem data)."""

import casadi as ca
import numpy as np
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from plantopt.solver import Status, compile_nlp, solve_nlp


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(seed=st.integers(0, 2**31 - 1), n=st.integers(2, 6), m=st.integers(0, 4))
@example(seed=26743403, n=3, m=0)  # last step's predicted decrease below rounding of f
@example(seed=4, n=6, m=4)  # QP stopped by residuals alone, before complementarity
@example(seed=28907, n=4, m=0)  # bound nearly active: polish must release it
@example(seed=5350, n=4, m=2)  # last step raises the violation by round-off only
def test_random_convex_problems_match_ipopt(seed, n, m):
    # strictly convex objective (unique minimiser), linear rows and a
    # curved convex row; feasible by construction (x = 0 satisfies all rows)
    rng = np.random.default_rng(seed)
    Q = rng.standard_normal((n, n))
    P = Q @ Q.T + 0.5 * np.eye(n)
    q = rng.standard_normal(n) * 3
    A = rng.standard_normal((m, n))
    x = ca.SX.sym("x", n)
    f = 0.5 * ca.dot(x, ca.mtimes(ca.DM(P), x)) + ca.dot(ca.DM(q), x) + 0.1 * ca.sumsqr(x) ** 2
    g = ca.vertcat(ca.mtimes(ca.DM(A), x), ca.sumsqr(x)) if m else ca.sumsqr(x)
    lbg = np.r_[-rng.uniform(0.1, 1, m), -np.inf]
    ubg = np.r_[rng.uniform(0.1, 1, m), rng.uniform(0.5, 2)]
    lbx = np.where(rng.random(n) < 0.3, -rng.uniform(0, 0.5, n), -np.inf)
    ubx = np.where(rng.random(n) < 0.3, rng.uniform(0, 0.5, n), np.inf)
    c = compile_nlp({"x": x, "f": f, "g": g})
    x0 = rng.uniform(-1, 1, n)
    r = solve_nlp(c, x0, lbx, ubx, lbg, ubg)
    ref = solve_nlp(c, x0, lbx, ubx, lbg, ubg, options={"solver": "ipopt", "tol": 1e-10})
    assert ref.status == Status.OPTIMAL
    assert r.status == Status.OPTIMAL, r.message
    assert abs(r.f - ref.f) <= 1e-6 * max(1.0, abs(ref.f))
    np.testing.assert_allclose(r.x, ref.x, atol=1e-5)
    # convex with linear + one curved row and generic data: multipliers unique
    scale = 1 + np.max(np.abs(np.r_[ref.lam_g, ref.lam_x]))
    np.testing.assert_allclose(r.lam_g, ref.lam_g, atol=1e-5 * scale)
    np.testing.assert_allclose(r.lam_x, ref.lam_x, atol=1e-5 * scale)


@pytest.mark.slow
def test_long_sparse_chain_against_ipopt():
    # 4001 variables, 2001 equality rows, bounds on the controls
    N, h = 2000, 0.05
    xs, us = ca.SX.sym("x", N + 1), ca.SX.sym("u", N)
    f = h * ca.sumsqr(xs - 1) + h * ca.sumsqr(us)
    g = ca.vertcat(xs[0], xs[1:] - xs[:-1] - h * (xs[:-1] - xs[:-1] ** 3 / 3 + us))
    lbx = np.r_[-np.inf * np.ones(N + 1), -0.5 * np.ones(N)]
    ubx = np.r_[np.inf * np.ones(N + 1), 0.5 * np.ones(N)]
    c = compile_nlp({"x": ca.vertcat(xs, us), "f": f, "g": g})
    r = solve_nlp(c, np.zeros(2 * N + 1), lbx, ubx, 0, 0, options={"max_iter": 400})
    ref = solve_nlp(c, np.zeros(2 * N + 1), lbx, ubx, 0, 0, options={"solver": "ipopt", "max_iter": 1000})
    assert ref.status == Status.OPTIMAL and r.status == Status.OPTIMAL
    assert abs(r.f - ref.f) <= 1e-6 * abs(ref.f)
