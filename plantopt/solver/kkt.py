"""First-order optimality measures and least-squares multipliers.

For ``min f(x)`` s.t. ``cl <= c(x) <= cu``, ``xl <= x <= xu`` with the
Lagrangian ``L = f + y'c + yx'x`` (casadi sign convention) the measures are

* stationarity   ``||grad f + J'y + yx||_inf``
* feasibility    ``max(max(cl - c, c - cu, 0), max(xl - x, x - xu, 0))``
* complementarity ``max_i |y_i^-| min(c_i - cl_i, 1)`` and
  ``|y_i^+| min(cu_i - c_i, 1)`` (same for bounds), where ``y^- = min(y, 0)``
  belongs to the lower and ``y^+ = max(y, 0)`` to the upper bound. Capping
  the slack at 1 makes a multiplier on a missing (infinite) bound count as
  a violation of size ``|y|`` instead of an infinite product.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from plantopt.solver.inertia import factor_upper, kkt_matrix, kkt_upper
from plantopt.solver.options import SIGN_QP_MAX


def measures(
    grad: np.ndarray, J: sp.spmatrix, c: np.ndarray, cl: np.ndarray, cu: np.ndarray,
    x: np.ndarray, xl: np.ndarray, xu: np.ndarray, y: np.ndarray, yx: np.ndarray,
) -> dict[str, float]:
    """KKT residuals (see module docstring); all inputs in one consistent scaling."""
    stat = grad + (J.T @ y if J.shape[0] else 0.0) + yx
    viol_c = np.maximum(np.maximum(cl - c, c - cu), 0.0) if c.size else np.zeros(0)
    viol_x = np.maximum(np.maximum(xl - x, x - xu), 0.0)

    def comp(v, lo, hi, lam):
        if v.size == 0:
            return 0.0
        eq = lo == hi
        sl = np.minimum(np.where(np.isfinite(lo), np.maximum(v - lo, 0.0), 1.0), 1.0)
        su = np.minimum(np.where(np.isfinite(hi), np.maximum(hi - v, 0.0), 1.0), 1.0)
        cm = np.maximum(np.maximum(-lam, 0.0) * sl, np.maximum(lam, 0.0) * su)
        cm[eq & np.isfinite(lo)] = 0.0
        return float(np.max(cm))

    return {
        "stationarity": float(np.max(np.abs(stat), initial=0.0)),
        "feasibility": float(max(np.max(viol_c, initial=0.0), np.max(viol_x, initial=0.0))),
        "complementarity": max(comp(c, cl, cu, y), comp(x, xl, xu, yx)),
    }


def _ls_solve(M: sp.csc_matrix, grad: np.ndarray) -> np.ndarray | None:
    # Augmented system [[I, M'], [M, 0]] [r; lam] = [-grad; 0]: lam minimises
    # ||grad + M'lam||_2 without forming M M'. Unregularised first; a tiny
    # -eps I block only when M is rank deficient (multipliers non-unique).
    n, k = M.shape[1], M.shape[0]
    if k == 0:
        return np.zeros(0)
    rhs = np.concatenate([-grad, np.zeros(k)])
    I = sp.identity(n, format="csc")
    K0 = kkt_matrix(I, M, 0.0, 0.0)
    # Fast path: [[I, M'], [M, -eps I]] is quasi-definite, so qdldl's
    # unpivoted LDL' is stable for any ordering (Vanderbei, SIAM J. Optim. 5,
    # 1995); iterative refinement against the unregularised K0 removes the
    # eps bias where M has full row rank. SuperLU (below) was 40% of the
    # solve time on the methanol loop flowsheet (two factorisations per call
    # when M is rank deficient).
    eps_qd = 1e-10
    try:
        fac = factor_upper(kkt_upper(I, M, 0.0, eps_qd))
        sol = fac.solve(rhs)
        scale = max(1.0, float(np.max(np.abs(rhs), initial=0.0)))
        for _ in range(10):
            res = rhs - K0 @ sol
            if np.max(np.abs(res), initial=0.0) <= 1e-13 * scale:
                break
            sol = sol + fac.solve(res)
        if np.isfinite(sol).all():
            return sol[n:]
    except (ValueError, RuntimeError):
        pass
    for eps in (0.0, 1e-12):
        K = kkt_matrix(I, M, 0.0, eps) if eps else K0
        try:
            lu = spla.splu(K)
        except RuntimeError:
            continue
        sol = lu.solve(rhs)
        if eps:
            for _ in range(5):  # refine towards the unregularised system
                sol = sol + lu.solve(rhs - K0 @ sol)
        if np.isfinite(sol).all():
            return sol[n:]
    return None


def ls_multipliers(
    grad: np.ndarray, J: sp.spmatrix, c: np.ndarray, cl: np.ndarray, cu: np.ndarray,
    x: np.ndarray, xl: np.ndarray, xu: np.ndarray, act_r: np.ndarray, act_b: np.ndarray,
    max_rounds: int = 5,
) -> tuple[np.ndarray, np.ndarray]:
    """Least-squares multipliers on an active set, with sign clean-up.

    Parameters
    ----------
    grad : ndarray, shape (n,)
    J : sparse (m, n)
    c, cl, cu : ndarray, shape (m,)
    x, xl, xu : ndarray, shape (n,)
    act_r, act_b : ndarray of int, shapes (m,), (n,)
        -1 active at lower, +1 at upper, 0 inactive.
    max_rounds : int
        Re-solves after dropping wrongly signed inequality multipliers.

    Returns
    -------
    y, yx : ndarray
        Multipliers (casadi sign) with zero regularisation where ``M`` has
        full row rank.
    """
    n, m = x.size, c.size
    act_r, act_b = act_r.copy(), act_b.copy()
    J = sp.csr_matrix(J)
    y, yx = np.zeros(m), np.zeros(n)
    for _ in range(max_rounds):
        rows, bnds = np.flatnonzero(act_r), np.flatnonzero(act_b)
        E = sp.csr_matrix((np.ones(bnds.size), (np.arange(bnds.size), bnds)), shape=(bnds.size, n))
        M = sp.vstack([J[rows], E], format="csc")
        lam = _ls_solve(M, grad)
        if lam is None:
            break
        y, yx = np.zeros(m), np.zeros(n)
        y[rows], yx[bnds] = lam[: rows.size], lam[rows.size:]
        bad_r = ((act_r == -1) & (y > 0) | (act_r == 1) & (y < 0)) & (cl != cu)
        bad_b = ((act_b == -1) & (yx > 0) | (act_b == 1) & (yx < 0)) & (xl != xu)
        if not bad_r.any() and not bad_b.any():
            break
        act_r[bad_r] = 0
        act_b[bad_b] = 0
    return y, yx


def near_active(v: np.ndarray, lo: np.ndarray, hi: np.ndarray, tol: float) -> np.ndarray:
    """-1/+1/0 classification of values within ``tol`` of a finite bound."""
    act = np.zeros(v.size, dtype=int)
    act[np.isfinite(lo) & (v - lo <= tol)] = -1
    act[np.isfinite(hi) & (hi - v <= tol) & (act == 0)] = 1
    eq = np.isfinite(lo) & (lo == hi)
    act[eq & (act == 0)] = -1
    return act


def sign_multipliers(
    grad: np.ndarray, J: sp.spmatrix, cl: np.ndarray, cu: np.ndarray, xl: np.ndarray, xu: np.ndarray,
    act_r: np.ndarray, act_b: np.ndarray, eps: float = 1e-12,
) -> tuple[np.ndarray, np.ndarray] | None:
    """Multipliers minimising the stationarity residual under the sign conditions.

    Solves the convex QP ::

        min 1/2 ||r||^2   s.t.   r - M'lam = grad,   lam_i <= 0 (active lower),
                                                     lam_i >= 0 (active upper)

    with ``M`` the active rows of ``J`` and the identity rows of the active
    bounds (equality rows and fixed variables unrestricted). At a point
    with dependent active constraints (e.g. a component flow fixed at zero
    both by its balance and by its bound) the multipliers are not unique,
    and those of an interior-point QP or of unconstrained least squares can
    carry a wrong sign although a sign-consistent set exists; this QP finds
    it when it exists (``r = 0``). Solved with piqp (sparse: the Hessian
    is the identity on ``r``).

    Returns
    -------
    (y, yx) or None
        Casadi-sign multipliers, or None when piqp fails or the QP has more
        than :data:`~plantopt.solver.options.SIGN_QP_MAX` variables.
    """
    import piqp

    n, m = grad.size, J.shape[0]
    rows, bnds = np.flatnonzero(act_r), np.flatnonzero(act_b)
    k = rows.size + bnds.size
    if k == 0:
        return np.zeros(m), np.zeros(n)
    if n + k > SIGN_QP_MAX:
        return None
    J = sp.csr_matrix(J)
    E = sp.csr_matrix((np.ones(bnds.size), (np.arange(bnds.size), bnds)), shape=(bnds.size, n))
    M = sp.vstack([J[rows], E], format="csr")
    sign = np.concatenate([act_r[rows], act_b[bnds]])
    free = np.concatenate([cl[rows] == cu[rows], xl[bnds] == xu[bnds]])
    lo = np.where(~free & (sign > 0), 0.0, -np.inf)
    hi = np.where(~free & (sign < 0), 0.0, np.inf)
    P = sp.block_diag([sp.identity(n), eps * sp.identity(k)], format="csc")
    Aeq = sp.hstack([sp.identity(n, format="csr"), -M.T], format="csc")
    solver = piqp.SparseSolver()
    s = solver.settings
    s.verbose = False
    s.eps_abs = s.eps_rel = 1e-12
    s.max_iter = 200
    solver.setup(P, np.zeros(n + k), Aeq, np.asarray(grad, float), None, None, None,
                 np.concatenate([np.full(n, -np.inf), lo]), np.concatenate([np.full(n, np.inf), hi]))
    st = solver.solve()
    if st not in (piqp.PIQP_SOLVED, piqp.PIQP_MAX_ITER_REACHED):
        return None
    lam = np.array(solver.result.x, dtype=float)[n:]
    if not np.isfinite(lam).all():
        return None
    # clip the interior-point round-off into the sign cone
    lam = np.clip(lam, lo, hi)
    y, yx = np.zeros(m), np.zeros(n)
    y[rows], yx[bnds] = lam[: rows.size], lam[rows.size:]
    return y, yx
