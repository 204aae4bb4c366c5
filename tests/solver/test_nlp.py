"""solve_nlp on the catalogue, compared with published optima and with IPOPT."""

import casadi as ca
import numpy as np
import pytest

from plantopt.bench.catalogue import BY_NAME, CATALOGUE, build
from plantopt.errors import SolverError
from plantopt.solver import NLPResult, Status, compile_nlp, solve_nlp

OPTIMAL = [p for p in CATALOGUE if p.kind != "infeasible"]
INFEASIBLE = [p for p in CATALOGUE if p.kind == "infeasible"]

_cache: dict = {}


def _solve(pr, solver):
    key = (pr.name, solver)
    if key not in _cache:
        nlp, x0, lbx, ubx, lbg, ubg = build(pr)
        _cache[key] = solve_nlp(nlp, x0, lbx, ubx, lbg, ubg, options={"solver": solver})
    return _cache[key]


@pytest.mark.parametrize("pr", OPTIMAL, ids=lambda p: p.name)
def test_optimal_matches_reference_and_ipopt(pr):
    r = _solve(pr, "sqp")
    ref = _solve(pr, "ipopt")
    assert ref.status == Status.OPTIMAL, "reference IPOPT must solve the catalogue problem"
    assert r.status == Status.OPTIMAL, r.message
    # published (HS, see catalogue for the number and "from memory" notes) or analytic f*
    if pr.f_star is not None:
        assert abs(r.f - pr.f_star) <= pr.f_rtol * max(1.0, abs(pr.f_star))
    # same local solution as IPOPT
    assert abs(r.f - ref.f) <= 1e-6 * max(1.0, abs(ref.f))
    if pr.x_star is not None:
        np.testing.assert_allclose(r.x, pr.x_star, rtol=1e-5, atol=pr.x_atol)
    # KKT recomputed at the returned point, scaled, below the default tol
    for k in ("stationarity", "feasibility", "complementarity"):
        assert r.kkt[k + "_scaled"] < 1e-8, k
    # Multipliers: against the analytic values where the catalogue derives
    # them (the sharper reference: IPOPT's multiplier of a weakly active
    # constraint converges slowly), else against IPOPT where they are unique.
    if pr.unique_multipliers and pr.lam_g_star is None and pr.lam_x_star is None:
        scale = 1.0 + np.max(np.abs(np.r_[ref.lam_g, ref.lam_x]), initial=0.0)
        np.testing.assert_allclose(r.lam_g, ref.lam_g, atol=1e-5 * scale)
        np.testing.assert_allclose(r.lam_x, ref.lam_x, atol=1e-5 * scale)
    if pr.lam_g_star is not None:
        np.testing.assert_allclose(r.lam_g, pr.lam_g_star, atol=1e-8)
    if pr.lam_x_star is not None:
        np.testing.assert_allclose(r.lam_x, pr.lam_x_star, atol=1e-8)


@pytest.mark.parametrize("pr", INFEASIBLE, ids=lambda p: p.name)
def test_infeasible_is_certified(pr):
    r = _solve(pr, "sqp")
    assert r.status == Status.INFEASIBLE and not r.success
    assert _solve(pr, "ipopt").status == Status.INFEASIBLE


def test_least_infeasible_points():
    # disc x^2 + y^2 <= 1 vs x + y >= 3: the l1 violation
    # max(0, |x|^2 - 1) + max(0, 3 - x - y) is least at (1/sqrt2, 1/sqrt2) on the disc
    # (gradient of the disc row has unit-norm direction (1, 1)/sqrt 2 there)
    r = _solve(BY_NAME["infeasible_disc_halfplane"], "sqp")
    assert r.g[1] == pytest.approx(np.sqrt(2), abs=1e-5)
    r = _solve(BY_NAME["infeasible_square"], "sqp")
    assert abs(r.x[0]) < 1e-4  # x^2 + 1 least at 0
    r = _solve(BY_NAME["infeasible_bounds"], "sqp")
    np.testing.assert_allclose(r.x, [2.0, 2.0], atol=1e-6)  # x1 x2 largest at the corner


def test_multiplier_signs_equal_casadi():
    pr = BY_NAME["signs"]
    nlp, x0, lbx, ubx, lbg, ubg = build(pr)
    r = solve_nlp(nlp, x0, lbx, ubx, lbg, ubg)
    sol = ca.nlpsol("s", "ipopt", nlp, {"ipopt.print_level": 0, "print_time": False,
                                        "ipopt.sb": "yes", "ipopt.tol": 1e-12})(
        x0=x0, lbx=lbx, ubx=ubx, lbg=lbg, ubg=ubg)
    np.testing.assert_allclose(r.lam_g, np.array(sol["lam_g"]).ravel(), atol=1e-6)
    np.testing.assert_allclose(r.lam_x, np.array(sol["lam_x"]).ravel(), atol=1e-6)
    # active upper row +, active lower row -, lower bound -, upper bound + (analytic)
    assert r.lam_g[0] > 0 and r.lam_g[2] < 0 and r.lam_x[2] < 0 and r.lam_x[4] > 0
    assert set(r.active_set["g_upper"]) == {0} and set(r.active_set["g_lower"]) == {2}
    assert set(r.active_set["x_lower"]) == {2} and set(r.active_set["x_upper"]) == {4}


def _param_nlp():
    # min (x1 - p)^2 + (x2 - 2p)^2 s.t. x1 + x2 <= 3: for 3p > 3 the row is active,
    # x = (p, 2p) - t (1, 1) with t = (3p - 3)/2, lam = 2t
    x = ca.SX.sym("x", 2)
    p = ca.SX.sym("p")
    return {"x": x, "p": p, "f": (x[0] - p) ** 2 + (x[1] - 2 * p) ** 2, "g": x[0] + x[1]}


def test_compiled_nlp_reused_and_parameters():
    c = compile_nlp(_param_nlp())
    fn = c.hess_lag.fn
    assert compile_nlp(c) is c
    for pv in (0.5, 2.0, 3.0):
        r = solve_nlp(c, [0, 0], lbg=-np.inf, ubg=3.0, p=[pv])
        assert r.success
        t = max(0.0, (3 * pv - 3) / 2)
        np.testing.assert_allclose(r.x, [pv - t, 2 * pv - t], atol=1e-9)
        np.testing.assert_allclose(r.lam_g, [2 * t], atol=1e-9)
    assert c.hess_lag.fn is fn
    # patterns: (x1 - p)^2 + (x2 - 2p)^2 has a diagonal Hessian; the row x1 + x2 is dense
    assert c.hess_sparsity.toarray().tolist() == [[True, False], [False, True]]
    assert c.jac_g_sparsity.toarray().tolist() == [[True, True]]


def test_warm_start_sweep_not_slower():
    c = compile_nlp(_param_nlp())
    prev = solve_nlp(c, [0, 0], lbg=-np.inf, ubg=3.0, p=[2.0])
    cold = solve_nlp(c, [0, 0], lbg=-np.inf, ubg=3.0, p=[2.1])
    warm = solve_nlp(c, None, lbg=-np.inf, ubg=3.0, p=[2.1], warm_start=prev.warm_start)
    assert warm.success and cold.success
    np.testing.assert_allclose(warm.x, cold.x, atol=1e-9)
    assert warm.iterations <= cold.iterations
    assert set(prev.warm_start) >= {"x", "lam_g", "lam_x", "radius", "active_set"}


def test_iteration_and_time_limits_return_best_point():
    pr = BY_NAME["hs039"]
    nlp, x0, lbx, ubx, lbg, ubg = build(pr)
    r = solve_nlp(nlp, x0, lbx, ubx, lbg, ubg, options={"max_iter": 2})
    assert r.status == Status.ITERATION_LIMIT and not r.success and r.iterations == 2
    assert np.isfinite(r.x).all()
    r = solve_nlp(nlp, x0, lbx, ubx, lbg, ubg, options={"max_time": 0.0})
    assert r.status == Status.TIME_LIMIT


def test_evaluation_failure_rejects_step():
    # f = (log x)^2 is undefined for x <= 0 and concave for x > e, where the
    # first trust-region step from 3 (radius 10) leaves the domain.
    x = ca.SX.sym("x")
    r = solve_nlp({"x": x, "f": ca.log(x) ** 2}, [3.0])
    assert r.success and abs(r.x[0] - 1.0) < 1e-8  # analytic minimiser x = 1
    assert np.isfinite(r.f)
    # the NaN trial was seen and rejected (ratio -inf), not raised
    assert any(not h["accepted"] and h["ratio"] == -np.inf for h in r.history)


def test_badly_scaled_with_nominals_matches_ipopt():
    # flow ~ 1e4 kg/h, pressure ~ 1e5 Pa, fraction ~ 1e-3; optimum checked against IPOPT
    x = ca.SX.sym("x", 3)
    f = (x[0] / 1e4 - 2) ** 2 + (x[1] / 1e5 - 3) ** 2 + (x[2] / 1e-3 - 1) ** 2
    g = ca.vertcat(x[0] * x[1] / 1e9 - 4, x[2] * 1e3 + x[0] / 1e4)
    args = dict(lbx=[0, 0, 0], ubx=[1e6, 1e7, 1], lbg=[-np.inf, 0], ubg=[0, 2.5])
    opts = {"x_nominal": [1e4, 1e5, 1e-3]}
    r = solve_nlp({"x": x, "f": f, "g": g}, [1e4, 1e5, 1e-3], **args, options=opts)
    ref = solve_nlp({"x": x, "f": f, "g": g}, [1e4, 1e5, 1e-3], **args,
                    options=dict(opts, solver="ipopt"))
    assert r.success and ref.success
    assert abs(r.f - ref.f) <= 1e-6 * max(1, abs(ref.f))
    np.testing.assert_allclose(r.x, ref.x, rtol=1e-5)


def test_sparse_chain_against_ipopt():
    # discretised optimal control: x_{k+1} = x_k + h (x_k - x_k^3/3 + u_k), bounds on u
    N, h = 100, 0.05
    xs, us = ca.SX.sym("x", N + 1), ca.SX.sym("u", N)
    w = ca.vertcat(xs, us)
    f = h * ca.sumsqr(xs - 1) + h * ca.sumsqr(us)
    g = ca.vertcat(xs[0] - 0.0, xs[1:] - xs[:-1] - h * (xs[:-1] - xs[:-1] ** 3 / 3 + us))
    lbx = np.r_[-np.inf * np.ones(N + 1), -0.5 * np.ones(N)]
    ubx = np.r_[np.inf * np.ones(N + 1), 0.5 * np.ones(N)]
    c = compile_nlp({"x": w, "f": f, "g": g})
    r = solve_nlp(c, np.zeros(2 * N + 1), lbx, ubx, 0, 0)
    ref = solve_nlp(c, np.zeros(2 * N + 1), lbx, ubx, 0, 0, options={"solver": "ipopt"})
    assert r.success and ref.success
    assert abs(r.f - ref.f) <= 1e-6 * abs(ref.f)
    np.testing.assert_allclose(r.lam_g, ref.lam_g, atol=1e-5 * (1 + np.abs(ref.lam_g).max()))


def test_deterministic_and_frozen():
    pr = BY_NAME["hs071"]
    nlp, x0, lbx, ubx, lbg, ubg = build(pr)
    a = solve_nlp(nlp, x0, lbx, ubx, lbg, ubg)
    b = solve_nlp(nlp, x0, lbx, ubx, lbg, ubg)
    assert np.array_equal(a.x, b.x) and a.iterations == b.iterations
    assert isinstance(a, NLPResult) and a.solver == "sqp"
    with pytest.raises(AttributeError):
        a.f = 0.0  # frozen dataclass
    assert Status.OPTIMAL == "optimal" and a.success
    assert set(a.n_eval) == {"f", "grad_f", "g", "jac_g", "hess_lag"} and a.n_eval["f"] > 0
    assert a.history and {"iter", "f", "violation", "optimality", "radius", "ratio", "kind"} <= set(a.history[0])


def test_verbose_log(capsys):
    pr = BY_NAME["hs071"]
    nlp, x0, lbx, ubx, lbg, ubg = build(pr)
    solve_nlp(nlp, x0, lbx, ubx, lbg, ubg, options={"verbose": 1})
    out = capsys.readouterr().out
    for word in ("iter", "objective", "violation", "optimality", "radius", "ratio", "shift", "step"):
        assert word in out.splitlines()[0]
    assert len(out.splitlines()) >= 3
    solve_nlp(nlp, x0, lbx, ubx, lbg, ubg)
    assert capsys.readouterr().out == ""


def test_misuse_raises():
    x = ca.SX.sym("x", 2)
    nlp = {"x": x, "f": ca.sumsqr(x), "g": x[0]}
    with pytest.raises(SolverError, match="unknown solver option"):
        solve_nlp(nlp, [0, 0], options={"tolerance": 1})
    with pytest.raises(SolverError, match="unknown solver"):
        solve_nlp(nlp, [0, 0], options={"solver": "magic"})
    with pytest.raises(SolverError, match="lbg must have shape"):
        solve_nlp(nlp, [0, 0], lbg=[0, 0])
    with pytest.raises(SolverError, match="x0 must have shape"):
        solve_nlp(nlp, [0, 0, 0])
    with pytest.raises(SolverError, match="x_nominal"):
        solve_nlp(nlp, [0, 0], options={"x_nominal": [1.0, 2.0, 3.0]})
    with pytest.raises(SolverError, match="nlp"):
        solve_nlp({"f": 1}, [0.0])


@pytest.mark.parametrize("theta", [0.1, 0.5])
def test_second_order_correction_on_maratos_example(theta):
    # min 2(x1^2 + x2^2 - 1) - x1 s.t. x1^2 + x2^2 = 1 (Nocedal & Wright 2006,
    # Example 15.4): x* = (1, 0), f* = -1, 3 + 2 lam = 0 -> lam = -3/2.
    # From feasible points on the circle the full SQP step raises both f and
    # the violation (Maratos effect) and is rejected; the correction rescues it.
    x = ca.SX.sym("x", 2)
    nlp = {"x": x, "f": 2 * (x[0] ** 2 + x[1] ** 2 - 1) - x[0], "g": x[0] ** 2 + x[1] ** 2}
    r = solve_nlp(nlp, [np.cos(theta), np.sin(theta)], lbg=1, ubg=1)
    assert r.success
    np.testing.assert_allclose(r.x, [1.0, 0.0], atol=1e-9)
    assert r.f == pytest.approx(-1.0, abs=1e-10)
    np.testing.assert_allclose(r.lam_g, [-1.5], atol=1e-9)
    assert r.history[0]["kind"] == "correction"


@pytest.mark.parametrize("theta", [0.3, 1.0])
def test_accepted_step_that_raises_the_violation_is_corrected(theta):
    # min -x1 s.t. x1^2 + x2^2 = 1 (hand calculation: x* = (1, 0), f* = -1,
    # -1 + 2 lam x1 = 0 -> lam = 1/2). From a point on the circle the first QP
    # step runs along the tangent: f falls by more than the model predicts
    # (f is linear), so the filter accepts it, but it leaves the circle by
    # |d|^2. With soc_accepted the second-order correction pulls the point
    # back towards the circle in the same iteration.
    x = ca.SX.sym("x", 2)
    nlp = {"x": x, "f": -x[0], "g": x[0] ** 2 + x[1] ** 2}
    x0 = [np.cos(theta), np.sin(theta)]
    on = solve_nlp(nlp, x0, lbg=1, ubg=1, options={"soc_accepted": True})
    off = solve_nlp(nlp, x0, lbg=1, ubg=1, options={"soc_accepted": False})
    for r in (on, off):
        assert r.success
        np.testing.assert_allclose(r.x, [1.0, 0.0], atol=1e-8)
        assert r.f == pytest.approx(-1.0, abs=1e-8)  # feasibility tol 1e-8
        np.testing.assert_allclose(r.lam_g, [0.5], atol=1e-8)
    assert off.history[0]["kind"] == "objective"
    assert on.history[0]["kind"] == "corrected"
    # the corrected point is closer to the circle than the plain step's
    assert on.history[0]["violation"] < 0.7 * off.history[0]["violation"]
    assert on.history[0]["f"] < x0[0] * -1.0
