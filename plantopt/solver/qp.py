"""Sparse QP subproblems: piqp plus an active-set polish.

The QP is ::

    min_d  g'd + 1/2 d'Hd   s.t.  l <= A d <= u,   lb <= d <= ub

solved by the proximal interior-point method piqp (R. Schwan, Y. Jiang,
D. Kuhn, C. N. Jones, "PIQP: A proximal interior-point quadratic
programming solver", IEEE CDC 2023). Its multipliers are accurate to about
the interior-point tolerance; a "polish" then solves the equality-
constrained KKT system on the identified active set with a sparse LU and
keeps the result only when it is primal feasible and dual sign-consistent.

Multipliers use the casadi convention: ``L = q(d) + y'(A d) + yx'd``, so
``y_i < 0`` at an active lower bound and ``y_i > 0`` at an active upper one.
piqp reports ``z_u - z_l`` in this same convention (checked in the tests).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import piqp
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from plantopt.solver.inertia import factor_upper, kkt_matrix, kkt_upper, masked_kkt_upper
from plantopt.solver.kkt import ls_multipliers
from plantopt.solver.options import EXTEND_MIN, KKT_POLISH_EPS, PIQP_FIRST_ITER, POLISH_SIGN_TOL, SPLU_MAX


@dataclass
class QPResult:
    """Solution of one QP.

    Attributes
    ----------
    status : str
        ``"solved"``, ``"infeasible"`` or ``"failed"``.
    d : ndarray, shape (n,)
    y : ndarray, shape (m,)
        Row multipliers (casadi sign).
    yx : ndarray, shape (n,)
        Bound multipliers (casadi sign).
    obj : float
        ``g'd + 1/2 d'Hd``.
    polished : bool
        Whether the active-set polish was accepted.
    active_rows, active_bounds : ndarray of int
        Indices with sign (-1 lower, +1 upper, 0 inactive), shapes (m,), (n,).
    """

    status: str
    d: np.ndarray
    y: np.ndarray
    yx: np.ndarray
    obj: float
    polished: bool
    active_rows: np.ndarray
    active_bounds: np.ndarray
    info: str = ""


def _converged(info) -> bool:
    """piqp stopped at its iteration limit with residuals and the mean complementarity converged.

    Only the duality gap (primal minus dual objective) then stalls, at its
    round-off floor: the iterate is accepted as solved.
    """
    return info.primal_res <= 1e-8 and info.dual_res <= 1e-8 and info.mu <= 1e-14


def _classify(val: np.ndarray, lo: np.ndarray, hi: np.ndarray, mult: np.ndarray) -> np.ndarray:
    # Interior-point rule: a constraint is active when its multiplier is
    # larger than its slack; equalities are always active.
    act = np.zeros(val.size, dtype=int)
    eq = lo == hi
    sl = val - lo
    su = hi - val
    scale = 1.0 + np.abs(val)
    act[(mult < 0) & (-mult > sl) & np.isfinite(lo)] = -1
    act[(mult > 0) & (mult > su) & np.isfinite(hi)] = 1
    act[(sl <= 1e-12 * scale) & np.isfinite(lo) & (act == 0)] = -1
    act[(su <= 1e-12 * scale) & np.isfinite(hi) & (act == 0)] = 1
    act[eq & np.isfinite(lo)] = np.where(act[eq & np.isfinite(lo)] == 0, -1, act[eq & np.isfinite(lo)])
    return act


def kkt_solve(
    H: sp.spmatrix, g: np.ndarray, M: sp.spmatrix, b: np.ndarray,
) -> tuple[np.ndarray, np.ndarray] | None:
    """Solve ``[[H, M'], [M, 0]] [d; y] = [-g; b]``.

    ``qdldl`` on the regularised quasi-definite matrix first; SuperLU for
    systems up to :data:`~plantopt.solver.options.SPLU_MAX` rows when that
    fails. Returns ``None`` when the matrix is singular (e.g. dependent
    active rows).
    """
    n, k = H.shape[0], M.shape[0]
    K = kkt_matrix(H, M, 0.0, 0.0)
    rhs = np.concatenate([-g, b])
    sol = _kkt_solve_qd(H, M, K, rhs)
    if sol is not None:
        return sol[:n], sol[n:]
    if n + k > SPLU_MAX:
        return None
    try:
        lu = spla.splu(K)
        sol = lu.solve(rhs)
        sol = sol + lu.solve(rhs - K @ sol)
    except RuntimeError:
        # Degenerate active set (dependent active rows, e.g. more active
        # constraints than variables at a vertex): factor the regularised
        # matrix [[H + eps I, M'], [M, -eps I]] and refine against the exact
        # one, as OSQP's polish does (Stellato et al., Math. Prog. Comp. 12,
        # 2020, sec. 4); accepted only if the exact residual is small.
        if k == 0:
            return None
        eps = 1e-9 * max(1.0, float(abs(K).max()))
        Kr = kkt_matrix(H, M, eps, eps)
        try:
            lu = spla.splu(Kr)
        except RuntimeError:
            return None
        sol = np.zeros(n + k)
        for _ in range(25):
            res = rhs - K @ sol
            if np.max(np.abs(res)) <= 1e-12 * max(1.0, np.max(np.abs(rhs))):
                break
            sol = sol + lu.solve(res)
        if np.max(np.abs(rhs - K @ sol)) > 1e-9 * max(1.0, np.max(np.abs(rhs))):
            return None
    if not np.isfinite(sol).all():
        return None
    return sol[:n], sol[n:]


def _kkt_solve_qd(H: sp.spmatrix, M: sp.spmatrix, K: sp.csc_matrix, rhs: np.ndarray) -> np.ndarray | None:
    """``K sol = rhs`` by ``qdldl`` on the regularised ``[[H + eps I, M'], [M, -eps I]]``.

    The regularised matrix is quasi-definite when ``H + eps I`` is positive
    definite, so its unpivoted ``LDL'`` (AMD order inside qdldl) exists and is
    stable (Vanderbei, SIAM J. Optim. 5, 1995); iterative refinement against
    the exact ``K`` removes the regularisation, as OSQP's polish does
    (Stellato et al., Math. Prog. Comp. 12, 2020, sec. 4). The same fallback
    rule as below applies: accepted only when the exact residual is below
    ``1e-9`` relative. Measured on the 1,000-unit site benchmark (n = 12,379):
    SuperLU on the (mostly singular) polish KKT systems took 0.15 s per
    factorisation, two per polish; this path a fraction of that. ``None`` when
    qdldl breaks down or the refinement does not converge (the SuperLU path
    then decides).
    """
    eps = 1e-9 * max(1.0, float(np.max(np.abs(K.data), initial=0.0)))
    try:
        fac = factor_upper(kkt_upper(H, M, eps, eps))
    except (ValueError, RuntimeError):
        return None
    scale = max(1.0, float(np.max(np.abs(rhs), initial=0.0)))
    sol = np.zeros(rhs.size)
    res = rhs
    for _ in range(25):
        sol = sol + fac.solve(res)
        if not np.isfinite(sol).all():
            return None
        res = rhs - K @ sol
        if np.max(np.abs(res), initial=0.0) <= 1e-12 * scale:
            break
    if np.max(np.abs(res), initial=0.0) > 1e-9 * scale:
        return None
    return sol


def _masked_kkt_solve(
    H: sp.csc_matrix, g: np.ndarray, A: sp.spmatrix, act_r: np.ndarray, act_b: np.ndarray,
    b_r: np.ndarray, b_b: np.ndarray, need_inertia: bool,
) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
    """Equality-constrained KKT solve on an active set, with one sparsity pattern for every set.

    Every row of ``A`` and every bound keeps its place in the matrix
    ``[[H + eps I, A', I], [A, -D_r, 0], [I, 0, -D_b]]``; an inactive one
    gets the pivot ``-KKT_INACTIVE_PIVOT`` (its multiplier ``A_i d / D_ii``
    vanishes and it adds ``A_i'A_i / D_ii``, at the rounding level, to
    ``H``), an active one ``-eps``. The pattern then never changes, so
    ``qdldl`` keeps its ordering and symbolic analysis and only refactors
    (:func:`~plantopt.solver.inertia.factor_upper`); a pattern per active
    set cost a new analysis each time (measured on the 1,000-unit site: 72
    analyses, 28 ms each). Iterative refinement against the exact reduced
    system removes ``eps`` and the inactive pivots, as in
    :func:`_kkt_solve_qd`. Each inactive row or bound adds one negative
    pivot, so the inertia test asks for ``n`` positive and ``m + n``
    negative pivots.

    Returns
    -------
    (d, y, yx) or None
        Step (n,), row multipliers (m,) and bound multipliers (n,), zero off
        the active set; ``None`` on a breakdown, a wrong inertia (with
        ``need_inertia``) or a refinement that does not converge.
    """
    n, m = H.shape[0], A.shape[0]
    Ar = sp.csr_matrix(A)
    on_r, on_b = act_r != 0, act_b != 0
    scale_k = max(1.0, float(np.max(np.abs(H.data), initial=0.0)), float(np.max(np.abs(Ar.data), initial=0.0)))
    eps = KKT_POLISH_EPS * scale_k
    U = masked_kkt_upper(H, A, on_r, on_b, eps, eps)
    try:
        fac = factor_upper(U)
        if need_inertia:
            # the pivots come in AMD order: only their sign counts matter
            dpiv = np.asarray(fac.factors()[1]).reshape(-1)
            if not (np.isfinite(dpiv).all() and int((dpiv > 0).sum()) == n
                    and int((dpiv < 0).sum()) == m + n):
                return None
    except (ValueError, RuntimeError):
        return None
    on = np.concatenate([on_r, on_b])
    b = np.concatenate([np.where(on_r, b_r, 0.0), np.where(on_b, b_b, 0.0)])
    rhs_scale = max(1.0, float(np.max(np.abs(g), initial=0.0)), float(np.max(np.abs(b), initial=0.0)))
    d, lam = np.zeros(n), np.zeros(m + n)
    r_d, r_c = -g.astype(float), b.copy()
    res = np.inf
    for _ in range(25):
        sol = fac.solve(np.concatenate([r_d, r_c]))
        if not np.isfinite(sol).all():
            return None
        d = d + sol[:n]
        lam = np.where(on, lam + sol[n:], 0.0)
        # residual of the exact system on the active set
        r_d = -g - H @ d - Ar.T @ lam[:m] - lam[m:]
        r_c = np.where(on, b - np.concatenate([Ar @ d, d]), 0.0)
        res = max(float(np.max(np.abs(r_d), initial=0.0)), float(np.max(np.abs(r_c), initial=0.0)))
        if res <= 1e-12 * rhs_scale:
            break
    if res > 1e-9 * rhs_scale:
        return None
    return d, lam[:m], lam[m:]


def _singleton_rows(A: sp.csr_matrix) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Rows of ``A`` with one nonzero: (row indices, their column, their coefficient)."""
    cnt = np.diff(A.indptr)
    rows = np.flatnonzero(cnt == 1)
    pos = A.indptr[rows]
    return rows, A.indices[pos], A.data[pos]


def _drop_twins(
    single: tuple[np.ndarray, np.ndarray, np.ndarray], act_r: np.ndarray, act_b: np.ndarray,
    l: np.ndarray, u: np.ndarray, lb: np.ndarray, ub: np.ndarray,
) -> None:
    """Keep only one of a one-entry row and the bound of its variable in the active set (in place).

    A row ``l_i <= a d_j <= u_i`` is a bound on ``d_j``; with both it and
    ``d_j``'s own bound active the KKT matrix is singular. The tighter of
    the two on the same side stays (an equality row always stays); on
    opposite sides the row stays. Measured on the 1,000-unit site: the
    polish added 195 such rows together with the bounds of the same
    variables in one round, and every such round broke down.
    """
    rows, cols, coef = single
    if rows.size == 0:
        return
    both = (act_r[rows] != 0) & (act_b[cols] != 0) & (coef != 0)
    if not both.any():
        return
    i, j, a = rows[both], cols[both], coef[both]
    sr = act_r[i]
    val = np.where(sr < 0, l[i], u[i]) / a
    side = sr * np.sign(a).astype(int)
    sb = act_b[j]
    bv = np.where(sb < 0, lb[j], ub[j])
    row_tighter = np.where(side > 0, val <= bv, val >= bv)
    keep_row = (l[i] == u[i]) | (side != sb) | row_tighter
    act_b[j[keep_row]] = 0
    act_r[i[~keep_row]] = 0


def polish(
    H: sp.spmatrix, g: np.ndarray, A: sp.spmatrix, l: np.ndarray, u: np.ndarray,
    lb: np.ndarray, ub: np.ndarray, act_r: np.ndarray, act_b: np.ndarray,
    feas_tol: float = 1e-9, rounds: int = 4, need_inertia: bool = False,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray] | None:
    """Re-solve the QP as an equality-constrained one on a given active set.

    The guess from the interior-point iterate is corrected for a few
    rounds: constraints with a wrongly signed multiplier are released and
    violated ones are added, then the KKT system is solved again.

    Parameters
    ----------
    H, g, A, l, u, lb, ub
        QP data as in the module docstring.
    act_r, act_b : ndarray of int, shapes (m,), (n,)
        -1/+1 for rows/bounds active at lower/upper, 0 otherwise.
    feas_tol : float
        Relative primal feasibility tolerance of the polished step.
    rounds : int
        Active-set corrections tried.
    need_inertia : bool
        Accept a round only if ``H`` is positive definite on the null space
        of its active constraints (see :func:`_masked_kkt_solve`); the result is then
        a strict local minimiser of the QP even where ``H`` is indefinite.

    Returns
    -------
    (d, y, yx, act_r, act_b) or None
        Step, multipliers and the active set of the accepted round;
        ``None`` when no round gives a nonsingular, primal feasible,
        sign-consistent solution.
    """
    n = H.shape[0]
    A = sp.csr_matrix(A)
    Hc = sp.csc_matrix(H)
    act_r, act_b = act_r.copy(), act_b.copy()
    ineq = l != u
    free = lb != ub
    single = _singleton_rows(A)
    seen: set[bytes] = set()
    for _ in range(rounds):
        _drop_twins(single, act_r, act_b, l, u, lb, ub)
        key = act_r.tobytes() + act_b.tobytes()
        if key in seen:
            # the corrections cycle: the remaining rounds would repeat the
            # same (deterministic) solves and fail the same way
            return None
        seen.add(key)
        b_r = np.where(act_r < 0, l, u)
        b_b = np.where(act_b < 0, lb, ub)
        out = _masked_kkt_solve(Hc, g, A, act_r, act_b, b_r, b_b, need_inertia)
        if out is None and not need_inertia:
            # the fixed-pattern path broke down: the active set's own matrix
            # (qdldl, then SuperLU for small systems) decides
            rows = np.flatnonzero(act_r)
            bnds = np.flatnonzero(act_b)
            E = sp.csr_matrix((np.ones(bnds.size), (np.arange(bnds.size), bnds)), shape=(bnds.size, n))
            M = sp.vstack([A[rows], E], format="csc")
            sol = kkt_solve(Hc, g, M, np.concatenate([b_r[rows], b_b[bnds]]))
            if sol is not None:
                y = np.zeros(A.shape[0])
                yx = np.zeros(n)
                y[rows] = sol[1][: rows.size]
                yx[bnds] = sol[1][rows.size:]
                out = sol[0], y, yx
        if out is None:
            return None
        d, y, yx = out
        lam = np.concatenate([y[act_r != 0], yx[act_b != 0]])
        Ad = A @ d
        tol_r = feas_tol * (1.0 + np.abs(Ad))
        tol_b = feas_tol * (1.0 + np.abs(d))
        scale = POLISH_SIGN_TOL * max(1.0, float(np.max(np.abs(lam), initial=0.0)))
        bad_r = ineq & (((act_r == -1) & (y > scale)) | ((act_r == 1) & (y < -scale)))
        bad_b = free & (((act_b == -1) & (yx > scale)) | ((act_b == 1) & (yx < -scale)))
        lo_r, hi_r = (Ad < l - tol_r) & (act_r == 0), (Ad > u + tol_r) & (act_r == 0)
        lo_b, hi_b = (d < lb - tol_b) & (act_b == 0), (d > ub + tol_b) & (act_b == 0)
        if not (bad_r.any() or bad_b.any() or lo_r.any() or hi_r.any() or lo_b.any() or hi_b.any()):
            return d, y, yx, act_r, act_b
        act_r[bad_r], act_b[bad_b] = 0, 0
        act_r[lo_r], act_r[hi_r] = -1, 1
        act_b[lo_b], act_b[hi_b] = -1, 1
    return None


def solve_qp_active_set(
    H: sp.spmatrix, g: np.ndarray, A: sp.spmatrix, l: np.ndarray, u: np.ndarray,
    lb: np.ndarray, ub: np.ndarray, act_r: np.ndarray, act_b: np.ndarray,
) -> QPResult | None:
    """The QP solved from a predicted active set, or ``None``.

    SQP iterates near a solution keep their active set, so the previous
    QP's active set is a good guess: :func:`polish` with the guess solves one
    equality-constrained KKT system (a few when constraints enter or leave)
    instead of an interior-point run (measured on the 1,000-unit site
    benchmark: piqp 0.18 s per QP, this path one or two sparse
    factorisations). The answer is accepted only when it is a KKT point of
    the QP -- primal feasible, multipliers of the right signs -- and ``H``
    is positive definite on the null space of its active constraints, so it
    is a strict local minimiser of the QP (Nocedal & Wright 2006, Thm. 16.4
    with the second-order condition of Thm. 12.6); no shift of ``H`` is
    needed then. ``None`` sends the caller to :func:`solve_qp`.

    Parameters
    ----------
    H, g, A, l, u, lb, ub
        QP data as in the module docstring (``H`` unshifted).
    act_r, act_b : ndarray of int, shapes (m,), (n,)
        Predicted active rows and bounds (-1 lower, +1 upper, 0 inactive).
    """
    A = sp.csr_matrix(A)
    act_b = np.where((act_b < 0) & ~np.isfinite(lb) | (act_b > 0) & ~np.isfinite(ub), 0, act_b)
    act_r = np.where((act_r < 0) & ~np.isfinite(l) | (act_r > 0) & ~np.isfinite(u), 0, act_r)
    pol = polish(H, g, A, l, u, lb, ub, act_r, act_b, need_inertia=True)
    if pol is None:
        return None
    d, y, yx, ar, ab = pol
    if not np.isfinite(d).all():
        return None
    # The solved active set is the prediction for the next QP, not a
    # re-classification of d: a bound that the polish released can sit at
    # its value with a zero multiplier (its direction fixed by the active
    # rows); classified active again, it made the next KKT matrix singular
    # (measured on the 1,000-unit site: 256 such bounds, the direct QP
    # refused in every second iteration).
    obj = float(g @ d + 0.5 * d @ (H @ d))
    return QPResult("solved", d, y, yx, obj, True, ar, ab, info="active set")


def solve_qp(
    H: sp.spmatrix, g: np.ndarray, A: sp.spmatrix, l: np.ndarray, u: np.ndarray,
    lb: np.ndarray, ub: np.ndarray, *, do_polish: bool = True, eps: float = 1e-10,
    max_iter: int = 100,
) -> QPResult:
    """Solve a sparse convex QP (see module docstring) with piqp, then polish.

    Parameters
    ----------
    H : sparse (n, n)
        Symmetric Hessian (full storage), assumed PSD on the feasible set's
        relevant subspace (the caller regularises it).
    g : ndarray, shape (n,)
    A : sparse (m, n)
    l, u : ndarray, shape (m,)
        Row bounds, ``l == u`` for equalities, ``+-inf`` for none.
    lb, ub : ndarray, shape (n,)
        Bounds on ``d`` (finite or infinite).
    do_polish : bool
        Apply the active-set polish.
    eps : float
        piqp absolute/relative tolerance.
    max_iter : int
        piqp iteration limit.

    Returns
    -------
    QPResult
    """
    n, m = H.shape[0], A.shape[0]
    A = sp.csr_matrix(A)
    eq = np.flatnonzero(l == u)
    # free rows (both bounds infinite) carry no constraint; piqp warns on them
    ineq = np.flatnonzero((l != u) & (np.isfinite(l) | np.isfinite(u)))
    solver = piqp.SparseSolver()
    s = solver.settings
    s.verbose = False
    s.eps_abs = eps
    s.eps_rel = eps
    # A first run with a short iteration limit (options.PIQP_FIRST_ITER): on
    # flowsheet QPs piqp's duality gap stalls at a round-off floor after its
    # residuals and mu have converged, and the rest of the limit was spent
    # on a drift of non-unique multipliers.
    s.max_iter = min(max_iter, PIQP_FIRST_ITER)
    # The duality gap is piqp's complementarity measure: without it the
    # interior-point iterate can stop with small residuals but far from the
    # active face. Absolute gap at the QP tolerance, relative at piqp's default.
    s.check_duality_gap = True
    s.eps_duality_gap_abs = max(eps, 1e-8)  # piqp's defaults; the gap is a
    s.eps_duality_gap_rel = 1e-9            # difference of large sums (round-off)
    P = sp.triu(H, format="csc")
    Aeq = sp.csc_matrix(A[eq]) if eq.size else None
    G = sp.csc_matrix(A[ineq]) if ineq.size else None
    solver.setup(
        P, np.asarray(g, float),
        Aeq, l[eq] if eq.size else None,
        G, l[ineq] if ineq.size else None, u[ineq] if ineq.size else None,
        np.asarray(lb, float), np.asarray(ub, float),
    )
    st = solver.solve()
    res = solver.result
    for first_pass in (True, False):
        if st == piqp.PIQP_PRIMAL_INFEASIBLE:
            z = np.zeros(n)
            return QPResult("infeasible", z, np.zeros(m), z.copy(), np.inf, False,
                            np.zeros(m, int), np.zeros(n, int))
        d = np.array(res.x, dtype=float)
        y = np.zeros(m)
        if eq.size:
            y[eq] = np.array(res.y)
        if ineq.size:
            y[ineq] = np.array(res.z_u) - np.array(res.z_l)
        yx = np.array(res.z_bu) - np.array(res.z_bl)
        ok = st == piqp.PIQP_SOLVED and np.isfinite(d).all()
        info = res.info
        if st == piqp.PIQP_MAX_ITER_REACHED and np.isfinite(d).all() and _converged(info):
            # residuals and the mean complementarity product converged; only the
            # gap (primal minus dual objective) stalls at its round-off floor
            ok = True
        Ad = A @ d
        act_r = _classify(Ad, l, u, y)
        act_b = _classify(d, lb, ub, yx)
        polished = False
        if do_polish and np.isfinite(d).all():
            pol = polish(H, g, A, l, u, lb, ub, act_r, act_b)
            if pol is not None:
                d, y, yx, act_r, act_b = pol
                polished = True
                ok = True
        if not (first_pass and st == piqp.PIQP_MAX_ITER_REACHED and max_iter > s.max_iter
                and not _converged(info) and not polished):
            break
        # The short first run neither converged nor stalled at the gap floor,
        # and its active set did not polish into a KKT point of the QP: run
        # again with the caller's limit (piqp restarts from scratch). A
        # polished first run is kept: it is feasible with right-signed
        # multipliers (measured on the 10,000-unit site: every QP was re-run,
        # 186 piqp solves for 93 QPs, 728 s).
        s.max_iter = max_iter
        st = solver.solve()
        res = solver.result
    if ok and not polished:
        # Degenerate vertex (dependent active constraints): the interior-point
        # multipliers are one point of an unbounded-looking affine set and can
        # be huge with cancelling signs, which would poison the next
        # Lagrangian Hessian. Least-squares multipliers on the active set
        # (minimum norm, sign-cleaned) satisfy the same stationarity.
        r0 = g + H @ d
        res_ip = np.max(np.abs(r0 + A.T @ y + yx), initial=0.0)
        y2, yx2 = ls_multipliers(r0, A, Ad, l, u, d, lb, ub, act_r, act_b)
        res_ls = np.max(np.abs(r0 + A.T @ y2 + yx2), initial=0.0)
        if res_ls <= 10.0 * res_ip + 1e-9 * (1.0 + np.max(np.abs(r0), initial=0.0)):
            y, yx = y2, yx2
    if not ok:
        return QPResult("failed", d, y, yx, np.inf, False, act_r, act_b, info=str(st))
    obj = float(g @ d + 0.5 * d @ (H @ d))
    return QPResult("solved", d, y, yx, obj, polished, act_r, act_b, info=str(st))


def extended_qp(
    H: sp.spmatrix, g: np.ndarray, A: sp.spmatrix, l: np.ndarray, u: np.ndarray,
    lb: np.ndarray, ub: np.ndarray, qp: QPResult, delta: float,
) -> QPResult | None:
    """A longer QP step when the Hessian shift ``delta`` limited an interior step, or ``None``.

    The QP was solved with ``Hr = H + delta I`` because ``H`` is not
    positive definite on the null space of the predicted active set. Along
    directions of small or negative curvature the shift alone then bounds
    the step, near ``|g|/delta`` -- a proximal step, not the model's
    minimiser. Measured on the site benchmark (3,000 units, parallel trains
    each heading for its own limit): every step was interior with ``d'Hd``
    1 to 2 % of ``d'Hr d`` and an actual/predicted reduction of exactly 2,
    each step brought one more train to its limit, and the SQP needed
    about one iteration per train.

    With ``p`` the projection of ``d`` onto the null space of the active
    rows and bounds (``A_S p = 0``, ``p = 0`` on active bounds), the shifted
    QP's stationarity gives ``(g + H d)'p = -delta ||p||^2 < 0``: the
    unshifted model keeps decreasing from ``d`` along ``p`` up to its own
    minimum ``s* = delta ||p||^2 / p'Hp`` (none when ``p'Hp <= 0``). The
    step ``d + s p`` goes to ``s*`` or to the first inactive row or bound
    (the trust region's included) that the path meets, and is returned when
    it is materially longer than ``d`` (``EXTEND_MIN``) and lowers the
    unshifted model; the next QP then finds the constraint it reached in its
    predicted active set. An earlier version also solved the QP directly on
    the active set enlarged by every row crossed before ``s*`` (with ``H``,
    then ``Hr``): measured on the site benchmark (2026-12-02) that solve was
    certified once in 5 extensions at 1,000 units, never in 26 at 3,000 and
    82 at 10,000, and its failed factorisations took 30 % of the 3,000-unit
    solve (21.0 s against 14.5 s without it, 37 iterations both).

    Parameters
    ----------
    H : sparse (n, n)
        Unshifted Hessian.
    g, A, l, u, lb, ub
        QP data as in the module docstring.
    qp : QPResult
        Solution of the QP with ``Hr``, and its active set.
    delta : float
        The shift used (> 0).

    Returns
    -------
    QPResult or None
        ``obj`` is the unshifted model ``g'd + 1/2 d'Hd``; ``info`` is
        ``"extended"``; multipliers and active set are the shifted QP's.
    """
    n = H.shape[0]
    d = qp.d
    dn = float(np.max(np.abs(d), initial=0.0))
    if not (delta > 0.0) or dn == 0.0 or qp.status != "solved":
        return None
    A = sp.csr_matrix(A)
    act_r = np.asarray(qp.active_rows).copy()
    act_r[(l == u) & (act_r == 0)] = 1  # equalities are always active
    act_b = np.asarray(qp.active_bounds)
    # projection: min 1/2 |p|^2 - d'p subject to A_S p = 0, p_B = 0
    eye = sp.identity(n, format="csc")
    sol = _masked_kkt_solve(eye, -d, A, act_r, act_b, np.zeros(A.shape[0]), np.zeros(n), False)
    if sol is None:
        return None
    p = sol[0]
    pmax = float(np.max(np.abs(p), initial=0.0))
    pp = float(p @ p)
    if not np.isfinite(pp) or pp <= 0.0 or pmax < EXTEND_MIN * dn:
        return None
    pHp = float(p @ (H @ p))
    s_star = delta * pp / pHp if pHp > 0.0 else np.inf

    def crossings(v, w, lo, hi, act, tiny):
        free = (act == 0) & (np.abs(w) > tiny)  # rounding-level components do not block
        with np.errstate(divide="ignore", invalid="ignore"):
            up = np.where(free & (w > 0) & np.isfinite(hi), (hi - v) / w, np.inf)
            dw = np.where(free & (w < 0) & np.isfinite(lo), (lo - v) / w, np.inf)
        return np.maximum(np.minimum(up, dw), 0.0)

    def model(x: np.ndarray) -> float:
        return float(g @ x + 0.5 * x @ (H @ x))  # the unshifted model

    obj_d = model(d)
    a_max = max(1.0, float(np.max(np.abs(A.data), initial=1.0)))
    s_r = crossings(A @ d, A @ p, l, u, act_r, 1e-12 * pmax * a_max)
    s_b = crossings(d, p, lb, ub, act_b, 1e-12 * pmax)
    s = min(s_star, float(np.min(s_b, initial=np.inf)), float(np.min(s_r, initial=np.inf)))
    if not np.isfinite(s) or s * pmax < EXTEND_MIN * dn:
        return None
    de = d + s * p
    obj = model(de)
    if not obj < obj_d:
        return None
    return QPResult("solved", de, qp.y, qp.yx, obj, qp.polished, qp.active_rows, qp.active_bounds,
                    info="extended")
