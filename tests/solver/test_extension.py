"""The shift-limited step extension (qp.extended_qp) and the restoration no-progress guard.

Expected values are hand calculations (KKT conditions of two-variable QPs,
derived in the comments); they do not come from the code under test.
"""

import numpy as np
import pytest
import scipy.sparse as sp

import plantopt.solver.qp as qpmod
import plantopt.solver.sqp as sqpmod
from plantopt.bench.catalogue import BY_NAME, build
from plantopt.solver import Status, solve_nlp
from plantopt.solver.qp import QPResult, extended_qp, solve_qp_active_set

INF = np.inf


def _data(h1, h2=1.0):
    # min -x1 + 1/2 h1 x1^2 + 1/2 h2 x2^2  s.t.  x1 + x2 <= 5,  -10 <= x <= 10 (a trust region)
    H = sp.csc_matrix(np.diag([h1, h2]))
    g = np.array([-1.0, 0.0])
    A = sp.csr_matrix(np.array([[1.0, 1.0]]))
    l, u = np.array([-INF]), np.array([5.0])
    lb, ub = np.full(2, -10.0), np.full(2, 10.0)
    return H, g, A, l, u, lb, ub


def _shifted(H, g, A, l, u, lb, ub, delta):
    Hr = (H + delta * sp.identity(2)).tocsc()
    qp = solve_qp_active_set(Hr, g, A, l, u, lb, ub, np.zeros(1, int), np.zeros(2, int))
    assert qp is not None
    return Hr, qp


@pytest.mark.parametrize("h1, delta, d_shifted, d_ext, obj", [
    # H = diag(0, 1), delta = 1: shifted minimiser (1, 0), interior (d'Hd = 0
    # along x1, where the shift alone bounds the step). The projection of d
    # on the null space of the (empty) active set is p = d = (1, 0); the
    # unshifted model -x1 keeps falling along it, so the path d + s p runs to
    # the row x1 + x2 <= 5 (s = 4) before the region (s = 9): d = (5, 0),
    # model -5.
    (0.0, 1.0, 1.0, 5.0, -5.0),
    # H = diag(-0.1, 1) is indefinite, a shift delta = 1.1 gives Hr = diag(1, 2.1):
    # the shifted QP's minimiser (1, 0) is interior. Along p = (1, 0), p'Hp < 0,
    # so the unshifted model -x1 - 0.05 x1^2 has no minimum on the path; the
    # row x1 + x2 <= 5 is crossed at s = 4, before the region (s = 9):
    # d = (5, 0), model -5 - 0.05 * 25 = -6.25 (at (1, 0): -1.05).
    (-0.1, 1.1, 1.0, 5.0, -6.25),
    # H = diag(0.5, 1), delta = 1: shifted minimiser (2/3, 0). Along p = d the
    # unshifted model -x1 + x1^2 / 4 has its minimum at x1 = 2 (s* = delta
    # |p|^2 / p'Hp = 1 * (4/9) / (0.5 * 4/9) = 2, x1 = 2/3 + 2 * 2/3 = 2),
    # before the row (x1 = 5): d = (2, 0), model -1.
    (0.5, 1.0, 2.0 / 3.0, 2.0, -1.0),
], ids=["to_the_row", "negative_curvature_to_the_row", "to_the_model_minimum"])
def test_extension_stops_at_the_row_or_the_model_minimum(h1, delta, d_shifted, d_ext, obj):
    H, g, A, l, u, lb, ub = _data(h1)
    Hr, qp = _shifted(H, g, A, l, u, lb, ub, delta)
    assert qp.d == pytest.approx([d_shifted, 0.0], abs=1e-12)
    r = extended_qp(H, g, A, l, u, lb, ub, qp, delta)
    assert r is not None and r.info == "extended"
    assert r.d == pytest.approx([d_ext, 0.0], abs=1e-10)
    assert r.obj == pytest.approx(obj, abs=1e-10)


def test_extension_with_a_linear_objective_stops_at_the_row():
    # H = 0 (a linear objective): with delta = 1 (Hr = I) the shifted minimiser
    # is (1, 0); the path along p = (1, 0) goes to the row, d = (5, 0), where
    # -x1 is lower than at (1, 0).
    H, g, A, l, u, lb, ub = _data(0.0, 0.0)
    Hr, qp = _shifted(H, g, A, l, u, lb, ub, 1.0)
    r = extended_qp(H, g, A, l, u, lb, ub, qp, 1.0)
    assert r is not None and r.info == "extended"
    assert r.d == pytest.approx([5.0, 0.0], abs=1e-10)
    assert r.obj == pytest.approx(-5.0, abs=1e-10)
    assert (A @ r.d)[0] <= u[0] + 1e-12 and np.all(r.d >= lb) and np.all(r.d <= ub)


def test_no_extension_without_shift_or_when_the_model_is_the_limit():
    H, g, A, l, u, lb, ub = _data(1.0)
    qp = solve_qp_active_set(H, g, A, l, u, lb, ub, np.zeros(1, int), np.zeros(2, int))
    assert extended_qp(H, g, A, l, u, lb, ub, qp, 0.0) is None
    # H = diag(1, 1), delta = 1e-3: the unshifted model's minimum along p is at
    # s* = delta |p|^2 / p'Hp = 1e-3 -- the shift did not limit the step
    Hr, qp = _shifted(H, g, A, l, u, lb, ub, 1e-3)
    assert extended_qp(H, g, A, l, u, lb, ub, qp, 1e-3) is None


def test_extension_keeps_the_optimum_on_the_catalogue():
    pr = BY_NAME["hs071"]
    nlp, x0, lbx, ubx, lbg, ubg = build(pr)
    on = solve_nlp(nlp, x0, lbx, ubx, lbg, ubg, options={"extend_steps": True})
    off = solve_nlp(nlp, x0, lbx, ubx, lbg, ubg, options={"extend_steps": False})
    assert on.status == off.status == Status.OPTIMAL
    assert on.f == pytest.approx(off.f, rel=1e-8)


def test_restoration_returning_its_start_point_stops_the_solve(monkeypatch):
    # Every QP of the outer problem fails (as at a point where piqp and the
    # polish both fail); restoration's own QPs (more variables) are solved
    # normally. Restoration then hands back the point it started from; the
    # solve must stop with a failure instead of repeating to the limit.
    pr = BY_NAME["hs071"]
    nlp, x0, lbx, ubx, lbg, ubg = build(pr)
    n = len(np.atleast_1d(x0))
    real = sqpmod.solve_qp

    def failing(H, *a, **k):
        if H.shape[0] == n:
            z = np.zeros(n)
            return QPResult("failed", z, np.zeros(a[1].shape[0]), z.copy(), INF, False,
                            np.zeros(a[1].shape[0], int), np.zeros(n, int))
        return real(H, *a, **k)

    monkeypatch.setattr(sqpmod, "solve_qp", failing)
    monkeypatch.setattr(sqpmod, "solve_qp_active_set", lambda H, *a, **k: None if H.shape[0] == n
                        else qpmod.solve_qp_active_set(H, *a, **k))
    r = solve_nlp(nlp, x0, lbx, ubx, lbg, ubg, options={"max_iter": 200})
    assert r.status == Status.FAILED
    assert "restoration made no progress" in r.message
    assert r.iterations < 200
