"""Parametric sensitivity of the optimum (NLP sensitivity analysis).

At a strict local optimum with linearly independent active constraints and
strict complementarity, the optimal point and multipliers are differentiable
functions of the inputs (Fiacco, *Introduction to Sensitivity and Stability
Analysis in Nonlinear Programming*, 1983; the result goes back to Fiacco 1976).
Differentiating the KKT conditions with the active set held fixed gives::

    [ H    A^T ] [ dx/dq ]     [ d(grad_x L)/dq ]
    [ A    0   ] [ dl/dq ] = - [ d(g_A - b_A)/dq ]

with L = f + l^T g (casadi's sign convention), H its Hessian in x, A the
Jacobian of the active rows (equalities, limit and decision rows at a bound,
variables at a bound) and b_A their bounds. An input q is either an entry of
the NLP parameter vector p (prices, equipment data, ...) or a row bound
(specification values, limit and decision bounds). The optimal profit's
derivative is the envelope theorem's: d(profit*)/dq = -(df/dq + l^T dg/dq) for
p entries and l_i for the bound of active row i.

Derivatives hold while the active set does not change (between the
breakpoints a sweep finds). Results are advisory; plant changes follow the
site's management-of-change procedure.
"""

from __future__ import annotations

from typing import Any, Mapping, Sequence

import casadi as ca
import numpy as np

from plantopt.assembly import ROW_SPEC, Assembly
from plantopt.errors import InputError
from plantopt.flowsheet import WHERE_DECISION, WHERE_LIMIT, WHERE_PARAM, WHERE_SPEC, Flowsheet
from plantopt.results import RunResult, Sensitivity, SensitivityEntry
from plantopt.studies.core import profit_factor, unit_size_si

ACTIVE_REL_TOL = 1e-6
"""A row or variable is active when its margin is below this fraction of its
bound's scale (the same rule as the reported active limits)."""

METHOD = "KKT sensitivity at the optimum, active set held fixed (Fiacco 1976)"


def _functions(asm: Assembly) -> ca.Function:
    # built once per assembly: the derivatives are symbolic in x, p and the multipliers
    fn = getattr(asm, "_sensitivity_fn", None)
    if fn is None:
        x, p, f, g = asm.nlp["x"], asm.nlp["p"], asm.nlp["f"], asm.nlp["g"]
        lam = ca.SX.sym("lam", g.shape[0])
        lag = f + ca.dot(lam, g)
        gx = ca.gradient(lag, x)
        fn = ca.Function("sensitivity", [x, p, lam],
                         [ca.hessian(lag, x)[0], ca.jacobian(gx, p), ca.jacobian(g, x), ca.jacobian(g, p),
                          ca.gradient(f, p), g])
        asm._sensitivity_fn = fn  # type: ignore[attr-defined]
    return fn


def default_inputs(fs: Flowsheet, asm: Assembly) -> list[str]:
    """Every price (feeds, products, disposal, utilities) in the objective."""
    return [p for p in asm.p_paths if fs.inputs[p].category == "price"]


def sensitivity(
    fs: Flowsheet,
    result: RunResult,
    *,
    assembly: Assembly,
    overrides: Mapping[str, Any] | None = None,
    inputs: Sequence[str] | None = None,
    source: str = "<command line>",
) -> Sensitivity:
    """First-order derivatives of optimal profit and decisions w.r.t. inputs.

    Parameters
    ----------
    fs : Flowsheet
    result : RunResult
        An optimal result of ``optimize(fs, assembly=assembly, overrides=overrides)``
        (its ``warm_start`` block holds x and the multipliers).
    assembly : Assembly
    overrides : mapping, optional
        The overrides the result was computed with.
    inputs : sequence of str, optional
        Input addresses; default :func:`default_inputs` (every price).

    Returns
    -------
    Sensitivity

    Raises
    ------
    InputError
        An unknown input address, or a result that is not optimal.
    """
    from plantopt.studies.simulate import apply_overrides

    asm = assembly
    fs2 = apply_overrides(fs, overrides)
    inputs = list(inputs) if inputs else default_inputs(fs, asm)
    for q in inputs:
        if q not in fs.inputs:
            raise InputError(source, f"--sensitivity {q}", "no such input (see 'plantopt inputs')")
    ws = result.warm_start
    if result.status != "optimal" or not ws or ws.get("x") is None:
        raise InputError(source, "--sensitivity", f"needs an optimal result (status is {result.status})")
    kd = kkt_derivatives(fs, fs2, asm, np.asarray(ws["x"], dtype=float), np.asarray(ws["lam_g"], dtype=float),
                         ws.get("lam_x"), inputs)
    J, cond, regular, act_rows, decs = kd["J"], kd["cond"], kd["regular"], kd["act_rows"], kd["decs"]
    pf = profit_factor(fs)
    entries = []
    for q in inputs:
        iv = fs2.inputs[q]
        dx, jp_col, dprofit_si = kd["dx"][q], kd["jp"][q], kd["dprofit"][q]
        qsize = unit_size_si(iv.kind.name, iv.unit)
        dd, du = {}, {}
        for d in fs.decisions:
            i = asm.spec_rows[d.input]
            dv_si = float(J[i, :] @ dx + jp_col[i])
            dk = fs.inputs[d.input].kind.name
            dd[d.name] = dv_si / unit_size_si(dk, d.unit) * qsize
            du[d.name] = f"{d.unit or '1'} per {iv.unit or '1'}"
        entries.append(SensitivityEntry(
            input=q, unit=iv.unit, value=iv.display(),
            d_profit=dprofit_si * pf * qsize, d_profit_unit=f"{fs.profit_unit} per {iv.unit or '1'}",
            d_decisions=dd, d_decisions_units=du))
    return Sensitivity(method=METHOD, entries=entries, active_rows=[asm.rows[i].name for i in act_rows
                                                                     if asm.rows[i].type != "residual" and
                                                                     not (asm.rows[i].type == ROW_SPEC and asm.rows[i].name not in decs)],
                       kkt_condition=cond if np.isfinite(cond) else None, regular=regular,
                       note="" if regular else "KKT matrix near singular (degenerate active set): least-squares derivatives, treat with care")


def kkt_derivatives(fs: Flowsheet, fs2: Flowsheet, asm: Assembly, x: np.ndarray, lam: np.ndarray,
                    lam_x: Any, inputs: Sequence[str]) -> dict[str, Any]:
    """SI derivatives at an optimum ``(x, lam)`` of ``fs2`` (``fs`` with its overrides).

    Returns a dict with, per input address, ``dx`` (dx/dq), ``dlam``
    (d lam_g/dq on the active rows), ``jp`` (dg/dq at fixed x) and ``dprofit``
    (USD/s per SI unit), and ``J``, ``cond``, ``regular``, ``act_rows``, ``decs``.
    """
    x = np.asarray(x, dtype=float)
    lam = np.asarray(lam, dtype=float)
    p = asm.p_values(fs2)
    lbg, ubg = asm.g_bounds("optimize", fs2)
    lbx, ubx = asm.x_bounds()
    H, Lxp, J, Jp, fp, g = (np.asarray(ca.DM(v)) for v in _functions(asm)(x, p, lam))
    g = g.ravel()
    fp = fp.ravel()

    def at(v, b):
        return np.isfinite(b) & (np.abs(v - b) <= ACTIVE_REL_TOL * np.maximum(1.0, np.abs(b)))

    lam_x = np.asarray(lam_x if lam_x is not None else np.zeros(len(x)), dtype=float)
    # a row's own scale (its Jacobian norm per nominal step of x) sets what
    # "at its bound" means: a heater duty of 4e-5 W against a 0 W bound is
    # active although 4e-5 exceeds an absolute 1e-6
    D = asm.x_nominal()
    row_scale = np.linalg.norm(J * D, axis=1)

    def at_row(b):
        return np.isfinite(b) & (np.abs(g - b) <= ACTIVE_REL_TOL * np.maximum.reduce([np.ones_like(b), np.abs(np.where(np.isfinite(b), b, 0.0)), row_scale]))

    # an interior-point optimum (IPOPT) stays a barrier's width off its
    # bounds: there a clearly nonzero multiplier with a small margin marks the row
    scale_b = np.maximum(1.0, row_scale)
    near = lambda b: np.isfinite(b) & (np.abs(g - b) <= 1e-4 * np.maximum(np.abs(np.where(np.isfinite(b), b, 0.0)), scale_b))
    strong = np.abs(lam) > 1e-6 * max(1.0, float(np.max(np.abs(lam)))) * 1e-3
    act_rows = np.flatnonzero((lbg == ubg) | at_row(lbg) | at_row(ubg) | ((near(lbg) | near(ubg)) & strong))
    # a variable bound enters only where its multiplier says it binds: a zero
    # flow of an absent component sits on its bound but is already fixed by
    # the feed's equations, and a second copy of that row would make the KKT
    # matrix singular (LICQ fails) without changing the solution
    lx_scale = max(1.0, float(np.max(np.abs(lam_x)))) if lam_x.size else 1.0
    act_x = np.flatnonzero((at(x, lbx) | at(x, ubx)) & (np.abs(lam_x) > 1e-9 * lx_scale))
    # keep only the bounds that are independent of the active rows (the
    # solver may split a multiplier between a feed's equation and the bound
    # of the same zero flow: the second copy adds nothing but singularity)
    base = J[act_rows, :] * asm.x_nominal()
    base = base / np.where(np.linalg.norm(base, axis=1) > 0, np.linalg.norm(base, axis=1), 1.0)[:, None]
    rank = np.linalg.matrix_rank(base) if len(act_rows) else 0
    keep = []
    for j in act_x:
        e = np.zeros((1, len(x)))
        e[0, j] = 1.0
        trial = np.vstack([base, e])
        r2 = np.linalg.matrix_rank(trial)
        if r2 > rank:
            base, rank = trial, r2
            keep.append(j)
    act_x = np.array(keep, dtype=int)
    n, m, k = len(x), len(act_rows), len(act_x)
    # scaled variables x = D xs (D: the assembly's nominal values) and rows
    # divided by their Jacobian norms, so SI magnitudes (Pa next to mol/s) do
    # not make the matrix look singular
    A = J[act_rows, :] * D
    rs = np.linalg.norm(A, axis=1)
    rs = np.where(rs > 0, rs, 1.0)
    A = A / rs[:, None]
    K = np.zeros((n + m + k, n + m + k))
    K[:n, :n] = H * np.outer(D, D)
    K[:n, n:n + m] = A.T
    K[n:n + m, :n] = A
    E = np.zeros((k, n))
    E[np.arange(k), act_x] = 1.0
    K[:n, n + m:] = E.T
    K[n + m:, :n] = E
    cond = float(np.linalg.cond(K))
    regular = bool(np.isfinite(cond) and cond < 1e12)
    row_pos = {int(r): i for i, r in enumerate(act_rows)}

    # which row each bound-type input sets
    bound_rows: dict[str, int] = {}
    for path, i in asm.spec_rows.items():
        bound_rows[path] = i
    for lim in fs.limits:
        for bp in (lim.lower_path, lim.upper_path):
            if bp:
                bound_rows[bp] = asm.limit_rows[lim.name]
    decs = {d.input: d for d in fs.decisions}
    for d in fs.decisions:
        bound_rows[d.lower_path] = bound_rows[d.upper_path] = asm.spec_rows[d.input]

    out = {"dx": {}, "dlam": {}, "jp": {}, "dprofit": {}}
    solve = (lambda r: np.linalg.solve(K, r)) if regular else (lambda r: np.linalg.lstsq(K, r, rcond=None)[0])
    for q in inputs:
        iv = fs2.inputs[q]
        rhs = np.zeros(n + m + k)
        dprofit_si = 0.0
        jp_col = np.zeros(len(g))
        if iv.where == WHERE_PARAM:
            j = asm.p_paths.index(q)
            rhs[:n] = -Lxp[:, j] * D
            rhs[n:n + m] = -Jp[act_rows, j] / rs
            jp_col = Jp[:, j]
            dprofit_si = -(fp[j] + float(lam @ Jp[:, j]))
        elif iv.where in (WHERE_SPEC, WHERE_LIMIT, WHERE_DECISION) and q in bound_rows:
            i = bound_rows[q]
            moves = True
            if iv.where == WHERE_SPEC and q in decs:
                moves = False  # a decision's base value is not a constraint when optimizing
            elif iv.where in (WHERE_LIMIT, WHERE_DECISION):
                side_b = lbg[i] if q.endswith(".lower") else ubg[i]
                moves = i in row_pos and abs(g[i] - side_b) <= 1e-4 * max(1.0, abs(side_b), row_scale[i])
            if moves and i in row_pos:
                rhs[n + row_pos[i]] = 1.0 / rs[row_pos[i]]  # d(g_i - b_i)/db_i = -1, moved to the right side
                dprofit_si = float(lam[i])
        sol = solve(rhs)
        out["dx"][q] = sol[:n] * D
        dl = np.zeros(len(g))
        dl[act_rows] = sol[n:n + m] / rs
        out["dlam"][q] = dl
        out["jp"][q] = jp_col
        out["dprofit"][q] = dprofit_si
    out.update(J=J, cond=cond, regular=regular, act_rows=act_rows, decs=decs)
    return out
