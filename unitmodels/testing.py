"""Conformance suite: checks every unit model class must pass.

For a class's :meth:`~unitmodels.base.UnitModel.conformance_case` the
suite

1. checks the bookkeeping: residual count = unknowns (outlet streams as
   ``[F (n), T, P]`` plus internal variables) minus :meth:`dof`, the case's
   specifications pass :meth:`check_specs`, names line up;
2. solves the unit alone (damped Newton on residuals plus specification
   rows, inlets and parameters fixed);
3. at the solution checks that the component balance (element balance
   for reactors, atoms from formulas) closes to ``1e-8`` relative, that
   the energy balance ``sum H_in + Q + W - sum H_out`` closes to ``1e-8``
   relative, that outputs are finite, and that the casadi Jacobian of the
   residuals matches central finite differences.

Use :func:`check_case` (returns a list of problems) or :func:`solve_case`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import casadi as ca
import numpy as np

from unitmodels.base import ConformanceCase, Symbols, UnitModel

BALANCE_RTOL = 1e-8
JACOBIAN_RTOL = 1e-5


@dataclass
class Solved:
    """A unit solved alone.

    Attributes
    ----------
    case : ConformanceCase
    s : Symbols
        The unit's symbols.
    z_names : list of str
        Name of each entry of the flattened symbol vector ``z``.
    z : numpy.ndarray
        Solution: inlets as given, outlets and variables solved.
    p : numpy.ndarray
        Parameter values in :meth:`UnitModel.flatten` order.
    unknown : numpy.ndarray of bool
        Which entries of ``z`` were solved for.
    residual_norm : float
        Max-norm of the scaled residuals at the end.
    iterations : int
    """

    case: ConformanceCase
    s: Symbols
    z_names: list[str]
    z: np.ndarray
    p: np.ndarray
    unknown: np.ndarray
    residual_norm: float
    iterations: int

    def value(self, expr: Any) -> np.ndarray:
        """Evaluate an expression of the unit's symbols at the solution."""
        zs, ps = self.case.unit.flatten(self.s)
        f = ca.Function("v", [zs, ps], [ca.vec(ca.SX(expr) if not isinstance(expr, ca.SX) else expr)])
        return np.array(f(self.z, self.p)).ravel()


def phases_of(case: ConformanceCase) -> dict[str, list[str]]:
    """Phase of every port slot: inlets as given, outlets from the unit."""
    unit = case.unit
    inl = {port: [st[3] for st in streams] for port, streams in case.inlets.items()}
    outl = unit.outlet_phases(inl)
    phases = dict(inl)
    for p in unit.ports():
        if p.direction == "out":
            count = unit.port_counts.get(p.name, 1) if p.variadic else 1
            phases[p.name] = [p.phase or outl[p.name]] * count
    return phases


def _layout(unit: UnitModel, s: Symbols) -> tuple[list[str], list[bool]]:
    n = unit.system.n
    names: list[str] = []
    unknown: list[bool] = []
    for p in unit.ports():
        for k, _ in enumerate(s.ports(p.name)):
            tag = f"{p.name}[{k}]" if p.variadic else p.name
            names += [f"{tag}.F[{unit.system.names[i]}]" for i in range(n)] + [f"{tag}.T", f"{tag}.P"]
            unknown += [p.direction == "out"] * (n + 2)
    names += [v.name for v in unit.variables()]
    unknown += [True] * len(unit.variables())
    return names, unknown


def _param_vector(case: ConformanceCase) -> np.ndarray:
    unit = case.unit
    vals = []
    for q in unit.parameters():
        v = case.params.get(q.name, q.default)
        if v is None:
            raise ValueError(f"{unit.kind}: conformance case lacks parameter {q.name!r}")
        a = np.atleast_1d(np.asarray(v, float))
        want = unit.system.n if q.per_component else 1
        if a.size != want:
            raise ValueError(f"{unit.kind}: parameter {q.name!r} needs {want} values")
        vals.append(a)
    return np.concatenate(vals) if vals else np.zeros(0)


def _initial_z(case: ConformanceCase, s: Symbols, names: list[str]) -> np.ndarray:
    unit = case.unit
    n = unit.system.n
    first = None
    for streams in case.inlets.values():
        if streams:
            first = streams[0]
            break
    default = (np.asarray(first[0], float), float(first[1]), float(first[2])) if first else (np.ones(n), 300.0, 1.0e5)
    z: list[float] = []
    for p in unit.ports():
        for k, _ in enumerate(s.ports(p.name)):
            if p.direction == "in":
                F, T, P, _ph = case.inlets[p.name][k]
            else:
                g = case.guess.get(p.name)
                F, T, P = (g[k] if g is not None else default)
            z += list(np.asarray(F, float)) + [float(T), float(P)]
    for v in unit.variables():
        z.append(float(case.guess.get(v.name, v.nominal)))
    return np.array(z)


def solve_case(case: ConformanceCase, max_iter: int = 100, tol: float = 1e-12) -> Solved:
    """Solve one unit alone by damped Newton.

    Parameters
    ----------
    case : ConformanceCase
    max_iter : int
    tol : float
        Convergence on the max-norm of the row-scaled equations.

    Raises
    ------
    AssertionError
        Wrong equation count or no convergence.
    """
    unit = case.unit
    phases = phases_of(case)
    s = unit.symbols(phases)
    zs, ps = unit.flatten(s)
    names, unknown = _layout(unit, s)
    assert zs.numel() == len(names), "flatten() and the port layout disagree"
    res = unit.residuals(s)
    rows = list(res) + [unit.spec_expression(k, s) - v for k, v in case.specs.items()]
    g = ca.vertcat(*rows) if rows else ca.SX(0, 1)
    unk = np.array(unknown, bool)
    n_unk = int(unk.sum())
    assert g.numel() == n_unk, f"{unit.kind}: {g.numel()} equations (residuals + specs) for {n_unk} unknowns"
    z = _initial_z(case, s, names)
    p = _param_vector(case)
    if n_unk == 0:
        return Solved(case, s, names, z, p, unk, 0.0, 0)
    gf = ca.Function("g", [zs, ps], [g, ca.jacobian(g, zs)])
    idx = np.flatnonzero(unk)

    def evaluate(zz: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        gv, jv = gf(zz, p)
        return np.array(gv).ravel(), np.array(jv)[:, idx]

    gv, J = evaluate(z)
    # row scales from the starting Jacobian make the merit function unit-free
    scale = np.maximum(np.abs(J).max(axis=1), 1e-300)
    it = 0
    for it in range(1, max_iter + 1):
        if np.abs(gv / scale).max() < tol:
            break
        merit = float(np.linalg.norm(gv / scale))
        try:
            step = np.linalg.solve(J, -gv)
        except np.linalg.LinAlgError:
            step = np.linalg.lstsq(J, -gv, rcond=None)[0]
        # Armijo backtracking on the 2-norm of the row-scaled residuals
        t = 1.0
        while t > 1e-10:
            zt = z.copy()
            zt[idx] += t * step
            gt, Jt = evaluate(zt)
            if np.all(np.isfinite(gt)) and np.linalg.norm(gt / scale) <= (1 - 1e-4 * t) * merit:
                break
            t *= 0.5
        z, gv, J = zt, gt, Jt
    norm = float(np.abs(gv / scale).max())
    assert norm < 1e-9, f"{unit.kind}: Newton did not converge (scaled residual {norm:.3g} after {it} iterations)"
    return Solved(case, s, names, z, p, unk, norm, it)


def _balance_problems(sol: Solved) -> list[str]:
    unit = sol.case.unit
    s = sol.s
    sys = unit.system
    fin = [st for p in unit.ports() if p.direction == "in" for st in s.ports(p.name)]
    fout = [st for p in unit.ports() if p.direction == "out" for st in s.ports(p.name)]
    problems: list[str] = []
    if not fout or not fin:
        # feeds and products are the flowsheet's boundary: nothing to balance
        return problems
    Fin = sum((st.F for st in fin), ca.SX.zeros(sys.n))
    Fout = sum((st.F for st in fout), ca.SX.zeros(sys.n))
    if sol.case.reacting:
        _, A = sys.element_matrix()
        inv = sol.value(ca.mtimes(ca.DM(A), Fin))
        diff = sol.value(ca.mtimes(ca.DM(A), Fin - Fout))
        what = "element"
    else:
        inv = sol.value(Fin)
        diff = sol.value(Fin - Fout)
        what = "component"
    ref = max(np.abs(inv).sum(), np.abs(sol.value(Fout)).sum(), 1e-300)
    if np.abs(diff).max() > BALANCE_RTOL * ref:
        problems.append(f"{what} balance does not close: {diff} (relative {np.abs(diff).max() / ref:.2e})")
    hin = [sys.enthalpy_flow(st.F, st.T, st.phase) for st in fin]
    hout = [sys.enthalpy_flow(st.F, st.T, st.phase) for st in fout]
    q = unit.heat_duty(s)
    w = unit.work(s)
    terms = np.concatenate([sol.value(x) for x in hin + hout + [q, w]]) if hin + hout else np.zeros(1)
    net = sol.value(sum(hin) + q + w - sum(hout))[0]
    ref_e = max(np.abs(terms).max(), 1e-300)
    if abs(net) > BALANCE_RTOL * ref_e:
        problems.append(f"energy balance does not close: {net:.6g} W (relative {abs(net) / ref_e:.2e})")
    return problems


def jacobian_error(sol: Solved) -> float:
    """Largest scaled gap between the casadi Jacobian of the residuals (with
    respect to every stream, variable and parameter) and central differences."""
    unit = sol.case.unit
    zs, ps = unit.flatten(sol.s)
    res = unit.residuals(sol.s)
    if not res:
        return 0.0
    r = ca.vertcat(*res)
    x = ca.vertcat(zs, ps)
    f = ca.Function("r", [zs, ps], [r])
    jf = ca.Function("j", [zs, ps], [ca.jacobian(r, x)])
    x0 = np.concatenate([sol.z, sol.p])
    nz = sol.z.size
    J = np.array(jf(sol.z, sol.p))
    Jfd = np.zeros_like(J)
    for j in range(x0.size):
        h = 1e-6 * max(1.0, abs(x0[j]))
        xp, xm = x0.copy(), x0.copy()
        xp[j] += h
        xm[j] -= h
        fp = np.array(f(xp[:nz], xp[nz:])).ravel()
        fm = np.array(f(xm[:nz], xm[nz:])).ravel()
        Jfd[:, j] = (fp - fm) / (2 * h)
    # compare each entry against the size of its row times its column's typical value
    xs = np.maximum(np.abs(x0), 1.0)
    row = np.maximum(np.abs(J * xs).max(axis=1, keepdims=True), 1e-300)
    return float((np.abs(J - Jfd) * xs / row).max())


def check_case(case: ConformanceCase) -> list[str]:
    """Run every conformance check on one case; returns the problems found (empty = pass)."""
    unit = case.unit
    problems: list[str] = []
    msg = unit.check_specs(set(case.specs))
    if msg:
        problems.append(f"the case's specifications are refused: {msg}")
    if len(case.specs) != unit.dof():
        problems.append(f"case gives {len(case.specs)} specifications, dof() is {unit.dof()}")
    s = unit.symbols(phases_of(case))
    names, unknown = _layout(unit, s)
    nres = len(unit.residuals(s))
    if nres != sum(unknown) - unit.dof():
        problems.append(f"{nres} residuals but {sum(unknown)} unknowns - {unit.dof()} specifications")
    if len(unit.residual_names()) != nres:
        problems.append(f"residual_names() has {len(unit.residual_names())} entries for {nres} residuals")
    if problems:
        return problems
    sol = solve_case(case)
    problems += _balance_problems(sol)
    for name, (expr, _unit) in unit.outputs(sol.s).items():
        v = sol.value(expr)
        if not np.all(np.isfinite(v)):
            problems.append(f"output {name} is not finite: {v}")
    err = jacobian_error(sol)
    if err > JACOBIAN_RTOL:
        problems.append(f"casadi Jacobian differs from central differences by {err:.2e} (scaled)")
    return problems
