"""The direct active-set QP solve, the guarded KKT solve and the shift rule of Algorithm IC."""

import numpy as np
import pytest
import scipy.sparse as sp

from plantopt.solver.inertia import regularise
from plantopt.solver.options import DELTA_FIRST, SPLU_MAX
from plantopt.solver.qp import kkt_solve, solve_qp, solve_qp_active_set

INF = np.inf


def _nw_example_16_4():
    """Nocedal & Wright, Numerical Optimization, 2nd ed. (2006), Example 16.4:
    min (x1 - 1)^2 + (x2 - 2.5)^2 s.t. x1 - 2 x2 + 2 >= 0, -x1 - 2 x2 + 6 >= 0,
    -x1 + 2 x2 + 2 >= 0, x >= 0; solution x* = (1.4, 1.7) with the first
    constraint active (from memory; it is the projection of (1, 2.5) onto
    x1 - 2 x2 = -2, which the test recomputes)."""
    H = sp.csc_matrix(2.0 * np.eye(2))
    g = np.array([-2.0, -5.0])
    A = sp.csr_matrix(np.array([[1.0, -2.0], [-1.0, -2.0], [-1.0, 2.0]]))
    l = np.array([-2.0, -6.0, -2.0])
    u = np.full(3, INF)
    lb, ub = np.zeros(2), np.full(2, INF)
    return H, g, A, l, u, lb, ub


def test_projection_reference_of_example_16_4():
    # the quoted solution, recomputed: projection of (1, 2.5) onto the first constraint
    a, x0 = np.array([1.0, -2.0]), np.array([1.0, 2.5])
    x = x0 + (-2.0 - a @ x0) / (a @ a) * a
    assert x == pytest.approx([1.4, 1.7], abs=1e-15)


@pytest.mark.parametrize("guess_rows", [(-1, 0, 0), (0, 0, 0), (-1, -1, 0)])
def test_active_set_solve_finds_example_16_4(guess_rows):
    H, g, A, l, u, lb, ub = _nw_example_16_4()
    qp = solve_qp_active_set(H, g, A, l, u, lb, ub, np.array(guess_rows), np.zeros(2, int))
    assert qp is not None
    assert qp.d == pytest.approx([1.4, 1.7], abs=1e-12)
    # stationarity H d + g + A'y = 0 gives y_1 = -0.8 (casadi sign: negative at a lower bound)
    assert qp.y == pytest.approx([-0.8, 0.0, 0.0], abs=1e-12)
    assert list(qp.active_rows) == [-1, 0, 0]
    # the interior-point path agrees
    ip = solve_qp(H, g, A, l, u, lb, ub)
    assert ip.d == pytest.approx(qp.d, abs=1e-8)


def test_active_set_solve_refuses_a_saddle():
    # H = diag(1, -1): with no constraint active on x2 the KKT point of the
    # guess is a saddle (wrong inertia); it must not be returned as a QP solution
    H = sp.csc_matrix(np.diag([1.0, -1.0]))
    g = np.array([1.0, 0.0])
    A = sp.csr_matrix((0, 2))
    lb, ub = np.array([-1.0, -1.0]), np.array([1.0, 1.0])
    none = np.zeros(0)
    assert solve_qp_active_set(H, g, A, none, none, lb, ub, np.zeros(0, int), np.zeros(2, int)) is None
    # with x2 at its upper bound the reduced Hessian is the positive 1x1 block:
    # d = (-1, 1) with multiplier yx_2 = -(H d + g)_2 = 1 > 0 at the upper bound
    qp = solve_qp_active_set(H, g, A, none, none, lb, ub, np.zeros(0, int), np.array([0, 1]))
    assert qp is not None
    assert qp.d == pytest.approx([-1.0, 1.0], abs=1e-12)
    assert qp.yx == pytest.approx([0.0, 1.0], abs=1e-12)


def test_kkt_solve_with_inertia_rejects_indefinite_null_space():
    from plantopt.solver.qp import _masked_kkt_solve

    H = sp.csc_matrix(np.diag([1.0, -1.0, 2.0]))
    M = sp.csr_matrix(np.array([[1.0, 0.0, 0.0]]))  # null space spans e2, e3: e2 has -1
    g, b = np.ones(3), np.zeros(1)
    act_r, act_b, b_b = np.array([-1]), np.zeros(3, int), np.zeros(3)
    assert _masked_kkt_solve(H, g, M, act_r, act_b, b, b_b, True) is None
    # without the inertia requirement the (nonsingular) system is solved
    d, y, yx = _masked_kkt_solve(H, g, M, act_r, act_b, b, b_b, False)
    K = np.block([[H.toarray(), M.toarray().T], [M.toarray(), np.zeros((1, 1))]])
    assert K @ np.concatenate([d, y]) == pytest.approx(np.concatenate([-g, b]), abs=1e-12)
    assert np.all(yx == 0)
    # the active set's own matrix gives the same solution
    d2, y2 = kkt_solve(H, g, M, b)
    assert d2 == pytest.approx(d, abs=1e-12) and y2 == pytest.approx(y, abs=1e-12)


def test_kkt_solve_skips_superlu_above_its_size_limit(monkeypatch):
    # SuperLU crashed the process on large polish systems (see options.SPLU_MAX):
    # when the qdldl path fails, SuperLU is called only up to SPLU_MAX rows
    import plantopt.solver.qp as qpmod

    calls = []
    real = qpmod.spla.splu

    def spy(K, *a, **k):
        calls.append(K.shape[0])
        return real(K, *a, **k)

    monkeypatch.setattr(qpmod, "_kkt_solve_qd", lambda *a, **k: None)  # as if qdldl broke down
    monkeypatch.setattr(qpmod.spla, "splu", spy)
    for n, expect_call in ((10, True), (SPLU_MAX, False)):
        calls.clear()
        H = sp.identity(n, format="csc")
        M = sp.csr_matrix(np.ones((1, n)))
        out = kkt_solve(H, np.zeros(n), M, np.array([1.0]))
        assert bool(calls) is expect_call
        if expect_call:  # d = 1/n each, y = -1/n: the exact solution
            assert out[0] == pytest.approx(np.full(n, 1.0 / n))
        else:
            assert out is None


def test_regularise_first_trial_shift():
    # Waechter & Biegler (2006), Math. Programming 106, Algorithm IC: first
    # trial 1e-4, then a third of the previous shift, grown by 8 on failure;
    # here floored at 1e-4 (see inertia.regularise). H = diag(1, -1e-6)
    # needs delta > 1e-6; diag(1, -1e-3) needs delta > 1e-3.
    A = sp.csr_matrix((0, 2))
    assert regularise(sp.csc_matrix(np.diag([1.0, -1e-6])), A, 0.0) == pytest.approx(DELTA_FIRST)
    assert regularise(sp.csc_matrix(np.diag([1.0, -1e-6])), A, 3e-3) == pytest.approx(1e-3)
    assert regularise(sp.csc_matrix(np.diag([1.0, -1e-3])), A, 0.0) == pytest.approx(6.4e-3)  # 1e-4, 8e-4 fail


@pytest.mark.parametrize("rel, direct", [
    ("flowsheets/demo.toml", True),
    # measured: no direct solve is accepted on this loop (the interior-point path does all)
    ("flowsheets/methanol_loop.toml", False),
    ("tests/data/series_cstr.toml", True),
])
def test_sqp_with_direct_active_set_qps_matches_ipopt(rel, direct):
    # the option qp_active_set (on by default, see options.DEFAULTS) end to
    # end: same optimum as IPOPT on the same NLP, and whether QPs took the direct path
    from pathlib import Path

    from plantopt import load_flowsheet
    from plantopt.assembly import assemble
    from plantopt.solver import Status, solve_nlp
    from plantopt.studies.optimize import start_point

    fs = load_flowsheet(Path(__file__).resolve().parents[2] / rel)
    asm = assemble(fs)
    x0 = start_point(asm, fs)
    lbx, ubx = asm.x_bounds()
    lbg, ubg = asm.g_bounds("optimize")
    common = dict(p=asm.p_values())
    ri = solve_nlp(asm.compiled, x0, lbx, ubx, lbg, ubg, options={"solver": "ipopt", "x_nominal": asm.x_nominal()},
                   **common)
    r = solve_nlp(asm.compiled, x0, lbx, ubx, lbg, ubg, options={"x_nominal": asm.x_nominal(), "qp_active_set": True},
                  **common)
    assert ri.status == Status.OPTIMAL
    assert r.status == Status.OPTIMAL, r.message
    assert r.f == pytest.approx(ri.f, rel=1e-6, abs=1e-9)
    assert any(h.get("qp_active_set") for h in r.history) is direct


@pytest.mark.parametrize("seed", range(5))
def test_masked_kkt_matches_the_reduced_system(seed):
    # one pattern for every active set: the inertia and the solution must be
    # those of the reduced KKT system [[H, M'], [M, 0]] on the active rows and
    # bounds, checked against numpy's dense eigenvalues and solve
    from plantopt.solver.inertia import inertia, masked_kkt_upper
    from plantopt.solver.qp import _masked_kkt_solve

    rng = np.random.default_rng(seed)
    n, m = 12, 7
    B = rng.standard_normal((n, n))
    H = B + B.T  # indefinite in general
    A = rng.standard_normal((m, n)) * (rng.random((m, n)) < 0.5)
    on_r = rng.random(m) < 0.5
    on_b = rng.random(n) < 0.3
    M = np.vstack([A[on_r], np.eye(n)[on_b]])
    k = M.shape[0]
    Z = np.linalg.svd(M)[2][k:].T if k else np.eye(n)  # null-space basis (M has full row rank a.s.)
    pd_on_null = bool(np.all(np.linalg.eigvalsh(Z.T @ H @ Z) > 0)) if Z.size else True
    U = masked_kkt_upper(sp.csc_matrix(H), sp.csr_matrix(A), on_r, on_b, 0.0, 1e-10)
    pos, neg, zero = inertia(U, upper=True)
    assert (pos == n and neg == m + n) is pd_on_null
    g = rng.standard_normal(n)
    b_r, b_b = rng.standard_normal(m), rng.standard_normal(n)
    K = np.block([[H, M.T], [M, np.zeros((k, k))]])
    ref = np.linalg.solve(K, np.concatenate([-g, b_r[on_r], b_b[on_b]]))
    act_r, act_b = on_r.astype(int) * -1, on_b.astype(int) * -1
    out = _masked_kkt_solve(sp.csc_matrix(H), g, sp.csr_matrix(A), act_r, act_b, b_r, b_b, False)
    assert out is not None
    d, y, yx = out
    assert d == pytest.approx(ref[:n], abs=1e-8)
    assert y[on_r] == pytest.approx(ref[n:n + on_r.sum()], abs=1e-8)
    assert yx[on_b] == pytest.approx(ref[n + on_r.sum():], abs=1e-8)
    assert np.all(y[~on_r] == 0) and np.all(yx[~on_b] == 0)


def test_polish_keeps_one_of_a_one_entry_row_and_its_bound():
    # min (d1 - 2)^2 + (d2 - 2)^2 s.t. 2 d1 <= 2 (a row with one entry) and the
    # bound d1 <= 1.5. From an empty guess both are violated; both active would
    # make the KKT matrix singular. The tighter row binds: d = (1, 2), and
    # stationarity 2 (d1 - 2) + 2 y = 0 gives y = 1 (positive at an upper bound).
    H = sp.csc_matrix(2.0 * np.eye(2))
    g = np.array([-4.0, -4.0])
    A = sp.csr_matrix(np.array([[2.0, 0.0]]))
    l, u = np.array([-INF]), np.array([2.0])
    lb, ub = np.full(2, -INF), np.array([1.5, INF])
    qp = solve_qp_active_set(H, g, A, l, u, lb, ub, np.zeros(1, int), np.zeros(2, int))
    assert qp is not None
    assert qp.d == pytest.approx([1.0, 2.0], abs=1e-12)
    assert qp.y == pytest.approx([1.0], abs=1e-12)
    assert qp.yx == pytest.approx([0.0, 0.0], abs=1e-12)
    assert list(qp.active_rows) == [1] and list(qp.active_bounds) == [0, 0]
    # the bound tighter than the row: the bound binds instead, d1 = 0.5, yx_1 = 3
    ub2 = np.array([0.5, INF])
    qp = solve_qp_active_set(H, g, A, l, u, lb, ub2, np.zeros(1, int), np.zeros(2, int))
    assert qp is not None
    assert qp.d == pytest.approx([0.5, 2.0], abs=1e-12)
    assert qp.yx == pytest.approx([3.0, 0.0], abs=1e-12)
    assert list(qp.active_rows) == [0] and list(qp.active_bounds) == [1, 0]


def test_polish_releases_a_slightly_wrong_signed_multiplier():
    # min 1/2 |d|^2 + g'd with g = (-1e3, 1e-7) and d <= 0, guessed both active:
    # the multipliers are yx = -g = (1e3, -1e-7); the second is on the wrong
    # side of an upper bound by 1e-10 of max|yx|, above the KKT tolerance
    # (1e-8). Released, d2 = -g2 = -1e-7: the exact solution.
    H = sp.csc_matrix(np.eye(2))
    g = np.array([-1e3, 1e-7])
    A = sp.csr_matrix((0, 2))
    none = np.zeros(0)
    lb, ub = np.full(2, -INF), np.zeros(2)
    qp = solve_qp_active_set(H, g, A, none, none, lb, ub, np.zeros(0, int), np.array([1, 1]))
    assert qp is not None
    assert qp.d == pytest.approx([0.0, -1e-7], abs=1e-15)
    assert qp.yx == pytest.approx([1e3, 0.0], abs=1e-9)
    assert list(qp.active_bounds) == [1, 0]


def test_direct_qp_reports_the_active_set_it_solved():
    # d2 is decoupled and unconstrained at its optimum d2 = 0, which is also
    # its upper bound: left out of the guess, it stays out of the reported
    # active set (a zero-multiplier bound reported active would enter the
    # next KKT matrix as a dependent row)
    H = sp.csc_matrix(np.diag([1.0, 1.0]))
    g = np.array([1.0, 0.0])
    A = sp.csr_matrix((0, 2))
    none = np.zeros(0)
    lb, ub = np.full(2, -INF), np.array([INF, 0.0])
    qp = solve_qp_active_set(H, g, A, none, none, lb, ub, np.zeros(0, int), np.zeros(2, int))
    assert qp is not None
    assert qp.d == pytest.approx([-1.0, 0.0], abs=1e-15)
    assert list(qp.active_bounds) == [0, 0]
