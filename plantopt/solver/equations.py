"""Square nonlinear systems: Newton's method with a dogleg trust region.

The equations are the rows with ``lbg == ubg``; the method works on the
scaled residual ``F(z) = S (g_E(D z) - b)`` with ``D = diag(x_nominal)`` and
``S`` the row scaling, and minimises the merit ``phi = 1/2 ||F||_2^2`` with
Powell's dogleg (M. J. D. Powell, "A hybrid method for nonlinear equations",
in Numerical Methods for Nonlinear Algebraic Equations, 1970; see also
Nocedal & Wright, Numerical Optimization, 2nd ed., sec. 11.2). The Newton
direction is computed by sparse LU (``scipy.sparse.linalg.splu``); when the
Jacobian is singular a Levenberg-Marquardt direction replaces it. Iterates
stay inside ``[lbx, ubx]`` by projecting the trial point onto the box.
"""

from __future__ import annotations

import time
from typing import Any

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from plantopt.errors import SolverError
from plantopt.solver.nlp import CompiledNLP, check_inputs, compile_nlp
from plantopt.solver.options import EQUATION_DEFAULTS, RATIO_EXPAND, RATIO_SHRINK, resolve_options
from plantopt.solver.result import NLPResult
from plantopt.solver.scaling import make_scaling, variable_scale
from plantopt.solver.status import Status

#: a trial point is accepted when it achieves this fraction of predicted decrease
_ETA = 1e-4


def _newton_direction(Js: sp.csc_matrix, F: np.ndarray) -> np.ndarray | None:
    try:
        d = -spla.splu(Js).solve(F)
    except RuntimeError:  # exactly singular
        return None
    return d if np.isfinite(d).all() else None


def _lm_direction(Js: sp.csc_matrix, F: np.ndarray) -> np.ndarray:
    # Regularised normal equations: a descent direction for phi even when the
    # Jacobian is singular; mu is relative to the size of J'J.
    JtJ = (Js.T @ Js).tocsc()
    mu = 1e-8 * max(1.0, abs(JtJ).max()) if JtJ.nnz else 1.0
    A = (JtJ + mu * sp.identity(Js.shape[1], format="csc")).tocsc()
    return -spla.splu(A).solve(Js.T @ F)


def _dogleg(dN: np.ndarray, g: np.ndarray, Js: sp.csc_matrix, radius: float) -> np.ndarray:
    if np.linalg.norm(dN) <= radius:
        return dN
    gn2 = float(g @ g)
    Jg = Js @ g
    t = gn2 / max(float(Jg @ Jg), 1e-300)
    dC = -t * g
    nC = np.linalg.norm(dC)
    if nC >= radius:
        return -radius / np.sqrt(gn2) * g
    # point on the segment dC -> dN at distance radius
    v = dN - dC
    a, b, c = v @ v, 2 * dC @ v, dC @ dC - radius**2
    tau = (-b + np.sqrt(max(b * b - 4 * a * c, 0.0))) / (2 * a)
    return dC + tau * v


def solve_equations(
    nlp: dict | CompiledNLP,
    x0: Any,
    lbx: Any = None,
    ubx: Any = None,
    lbg: Any = None,
    ubg: Any = None,
    *,
    p: Any = None,
    options: dict[str, Any] | None = None,
) -> NLPResult:
    """Solve the square system ``g_i(x) = lbg_i`` for the rows with ``lbg == ubg``.

    Parameters
    ----------
    nlp : dict or CompiledNLP
        Casadi-style NLP; ``f`` is ignored.
    x0 : array_like, shape (nx,)
        Start point (projected onto the bounds).
    lbx, ubx : array_like, shape (nx,)
        Variable bounds kept by projection (``+-inf`` for none).
    lbg, ubg : array_like, shape (ng,)
        Rows with ``lbg == ubg`` are the equations; other rows are ignored.
    p : array_like, shape (np,), optional
        Parameter values.
    options : dict, optional
        ``tol`` (scaled residual max-norm, default 1e-9), ``max_iter``
        (default 100), ``max_time`` (s), ``verbose``, ``x_nominal``,
        ``g_nominal`` (typical magnitudes of all ``ng`` rows).

    Returns
    -------
    NLPResult
        Status ``converged`` on success, otherwise ``iteration_limit``,
        ``time_limit`` or ``failed`` with the least-residual point found.

    Raises
    ------
    SolverError
        On bad shapes or when the number of equations differs from ``nx``.
    """
    t0 = time.perf_counter()
    opts = resolve_options(options, EQUATION_DEFAULTS)
    cnlp = compile_nlp(nlp)
    x0, lbx, ubx, lbg, ubg, p = check_inputs(cnlp, x0, lbx, ubx, lbg, ubg, p)
    eq = np.flatnonzero(np.isfinite(lbg) & (lbg == ubg))
    if eq.size != cnlp.nx:
        raise SolverError(
            f"solve_equations needs a square system: {eq.size} equations "
            f"(rows with lbg == ubg) for {cnlp.nx} variables"
        )
    cnlp.reset_counts()
    tol, max_iter, max_time = float(opts["tol"]), int(opts["max_iter"]), float(opts["max_time"])
    verbose = int(opts["verbose"])
    dx = variable_scale(opts["x_nominal"], cnlp.nx)
    b = lbg[eq]
    x = np.clip(x0, lbx, ubx)
    zl, zu = lbx / dx, ubx / dx

    def resid(xv: np.ndarray) -> np.ndarray:
        return cnlp.g(xv, p)[eq] - b

    r = resid(x)
    J = cnlp.jac(x, p)[eq, :] if cnlp.nx else sp.csc_matrix((0, 0))
    gnom = opts["g_nominal"]
    if gnom is not None:
        gnom = np.abs(np.asarray(gnom, dtype=float).reshape(-1))
        if gnom.shape != (cnlp.ng,):
            raise SolverError(f"option 'g_nominal' must have shape ({cnlp.ng},), got {gnom.shape}")
        gnom = gnom[eq]
    sg = make_scaling(dx, None, J, gnom).sg
    history: list[dict[str, Any]] = []
    status, message = Status.FAILED, ""
    it = 0

    if not np.isfinite(r).all():
        status, message = Status.FAILED, "residual is not finite at the start point"
        F = sg * r
    else:
        F = sg * r
        z = x / dx
        radius = max(1.0, float(np.linalg.norm(z)))
        best = (np.max(np.abs(F)) if F.size else 0.0, x.copy())
        if verbose:
            print(f"{'iter':>4} {'|F|_inf':>12} {'radius':>10} {'ratio':>9}")
        while True:
            fnorm = float(np.max(np.abs(F))) if F.size else 0.0
            if fnorm < best[0]:
                best = (fnorm, x.copy())
            if fnorm < tol:
                status, message = Status.CONVERGED, f"scaled residual {fnorm:.3e} < tol {tol:.1e}"
                break
            if it >= max_iter:
                status, message = Status.ITERATION_LIMIT, f"{max_iter} iterations"
                break
            if time.perf_counter() - t0 > max_time:
                status, message = Status.TIME_LIMIT, f"max_time {max_time} s reached"
                break
            if radius < 1e-14 * max(1.0, float(np.linalg.norm(z))):
                status, message = Status.FAILED, "trust region collapsed: no decrease of the residual"
                break
            if not np.isfinite(J.data).all():
                status, message = Status.FAILED, "Jacobian not finite at the current point"
                break
            it += 1
            Js = (sp.diags(sg) @ J @ sp.diags(dx)).tocsc()
            grad = Js.T @ F
            dN = _newton_direction(Js, F)
            kind = "newton"
            if dN is None:
                dN, kind = _lm_direction(Js, F), "lm"
            d = _dogleg(dN, grad, Js, radius)
            # Projection keeps iterates inside the box; the model is then
            # evaluated at the projected step so the ratio stays honest.
            zt = np.clip(z + d, zl, zu)
            d = zt - z
            Fm = F + Js @ d
            pred = 0.5 * (F @ F - Fm @ Fm)
            if pred <= 0:
                # projected step useless: try the projected steepest-descent step
                d = np.clip(z - radius / max(np.linalg.norm(grad), 1e-300) * grad, zl, zu) - z
                zt = z + d
                Fm = F + Js @ d
                pred = 0.5 * (F @ F - Fm @ Fm)
                kind = "gradient"
            xt = zt * dx
            rt = resid(xt)
            dnorm = float(np.linalg.norm(d))
            if not np.isfinite(rt).all() or pred <= 0:
                ratio = -np.inf
            else:
                Ft = sg * rt
                ratio = 0.5 * (F @ F - Ft @ Ft) / pred
            if ratio < RATIO_SHRINK:
                radius = max(dnorm, 1e-300) / 4.0 if dnorm > 0 else radius / 4.0
            elif ratio > RATIO_EXPAND and dnorm >= 0.99 * radius:
                radius *= 2.0
            accepted = ratio > _ETA
            history.append(
                {"iter": it, "residual": fnorm, "radius": radius, "ratio": float(ratio),
                 "step": dnorm, "kind": kind, "accepted": bool(accepted)}
            )
            if verbose:
                print(f"{it:4d} {fnorm:12.4e} {radius:10.3e} {ratio:9.2e} {kind}")
            if accepted:
                x, z, r, F = xt, zt, rt, sg * rt
                J = cnlp.jac(x, p)[eq, :]
        if status is not Status.CONVERGED:
            x = best[1]
            r = resid(x)
            F = sg * r
    g = cnlp.g(x, p)
    fval = float(cnlp.f(x, p))
    feas = float(np.max(np.abs(r))) if r.size else 0.0
    feas_s = float(np.max(np.abs(F))) if F.size else 0.0
    kkt = {"stationarity": 0.0, "feasibility": feas, "complementarity": 0.0,
           "stationarity_scaled": 0.0, "feasibility_scaled": feas_s, "complementarity_scaled": 0.0}
    empty = np.zeros(0, dtype=int)
    active = {"x_lower": np.flatnonzero(x <= lbx), "x_upper": np.flatnonzero(x >= ubx),
              "g_lower": empty, "g_upper": empty}
    return NLPResult(
        status=status, x=x, f=fval, g=g, lam_g=np.zeros(cnlp.ng), lam_x=np.zeros(cnlp.nx),
        iterations=it, n_eval=dict(cnlp.n_eval), kkt=kkt, wall_time=time.perf_counter() - t0,
        history=history, active_set=active,
        warm_start={"x": x.copy(), "lam_g": np.zeros(cnlp.ng), "lam_x": np.zeros(cnlp.nx),
                    "radius": None, "active_set": active},
        solver="newton", message=message,
    )
