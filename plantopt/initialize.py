"""Start points for the simultaneous solve, from passes through the units.

A Newton or SQP solve of a whole flowsheet needs a start point near a
solution, above all for recycles and two-phase units. This module solves
each unit alone with its inlets fixed, in flow order from the feeds, which
is cheap and robust; a few passes around the recycles give the simultaneous
solve a good start. It is a start point only: the flowsheet's equations are
always solved together afterwards (no tearing in the final answer).

Cost stays linear in the number of units: the port-to-stream map is built
once, the flow order is found with a ready queue (not by rescanning every
unit per step), and each local system is compiled once per unit signature.
Small local systems (most units) are solved by a dense Newton iteration on
one cached casadi Function returning residual and Jacobian together; only
when that fails does the general solver (trust-region Newton, then IPOPT)
take over.
"""

from __future__ import annotations

import heapq
import math
from typing import TYPE_CHECKING

import casadi as ca
import numpy as np

from plantopt.flowsheet import port_map
from plantopt.solver import compile_nlp, solve_equations

if TYPE_CHECKING:  # pragma: no cover
    from plantopt.assembly import Assembly
    from plantopt.flowsheet import Flowsheet

_LOCAL_CACHE: dict = {}

#: local systems up to this many unknowns use the dense Newton fast path
#: (a dense LU of this size costs microseconds; larger ones, e.g. a mixer
#: with thousands of inlets, go to the sparse general solver)
FAST_MAX_UNKNOWNS = 64
_FAST_MAX_ITER = 40
#: a row is solved when |r_i| <= _FAST_RTOL (1 + |rhs_i| + sum_j |J_ij x_j|)
_FAST_RTOL = 1e-10


def _unit_ports(fs: "Flowsheet", uid: str, model, pmap=None) -> list[tuple[str, str, list[str]]]:
    pm = (pmap or port_map(fs))[uid]
    return [(port.name, port.direction, pm[port.name]) for port in model.ports()]


class _Local:
    """One unit's compiled local system and its fast dense-Newton function."""

    def __init__(self, compiled, fast):
        self.compiled = compiled
        self.ng = compiled.ng
        self.fast = fast  # Function (x, p) -> (r, dense J), or None


def _local_system(model, phases, spec_names):
    key = (model.signature(), tuple((k, tuple(v)) for k, v in sorted(phases.items())), tuple(spec_names))
    if key in _LOCAL_CACHE:
        return _LOCAL_CACHE[key]
    s = model.symbols(phases)
    res = list(model.residuals(s)) + [model.spec_expression(sp, s) for sp in spec_names]
    unknown, known = [], []
    for port in model.ports():
        for st in s.ports(port.name):
            (unknown if port.direction == "out" else known).extend([st.F, st.T, st.P])
    unknown += [s.x[v.name] for v in model.variables()]
    ps = [s.p[q.name] for q in model.parameters()]
    x = ca.vertcat(*unknown) if unknown else ca.SX(0, 1)
    p = ca.vertcat(*(known + ps)) if (known or ps) else ca.SX(0, 1)
    g = ca.vertcat(*res) if res else ca.SX(0, 1)
    nlp = {"x": x, "f": ca.SX(0), "g": g, "p": p}
    out = None
    if x.shape[0]:
        fast = None
        if x.shape[0] <= FAST_MAX_UNKNOWNS and g.shape[0] == x.shape[0]:
            fast = ca.Function("local_newton", [x, p], [g, ca.densify(ca.jacobian(g, x))])
        out = _Local(compile_nlp(nlp), fast)
    _LOCAL_CACHE[key] = out
    return out


def _flow_order(units: list[str], ins: dict[str, list[str]], outs: dict[str, list[str]], avail: set[str]) -> list[str]:
    """Units in flow order: repeatedly the first unit (file order) whose inlets
    are all known; when none is (a recycle), the unit with the most known
    inlets. A ready heap and a lazily updated most-known heap keep it
    O(n log n) instead of rescanning every unit per step."""
    avail = set(avail)
    pos = {u: i for i, u in enumerate(units)}
    consumers: dict[str, list[str]] = {}
    for u in units:
        for s in ins[u]:
            consumers.setdefault(s, []).append(u)
    missing = {u: sum(s not in avail for s in ins[u]) for u in units}
    nknown = {u: len(ins[u]) - missing[u] for u in units}
    ready = [pos[u] for u in units if missing[u] == 0]
    heapq.heapify(ready)
    most = [(-nknown[u], pos[u]) for u in units]
    heapq.heapify(most)
    remaining = set(units)
    done: list[str] = []
    while remaining:
        u = None
        while ready:
            c = units[heapq.heappop(ready)]
            if c in remaining:
                u = c
                break
        if u is None:
            while True:
                k, i = heapq.heappop(most)
                c = units[i]
                if c in remaining and -k == nknown[c]:
                    u = c
                    break
        remaining.discard(u)
        done.append(u)
        for s in outs[u]:
            if s in avail:
                continue
            avail.add(s)
            for v in consumers.get(s, ()):
                missing[v] -= 1
                nknown[v] += 1
                if v in remaining:
                    heapq.heappush(most, (-nknown[v], pos[v]))
                    if missing[v] == 0:
                        heapq.heappush(ready, pos[v])
    return done


def sequential_initial_point(asm: "Assembly", fs: "Flowsheet", passes: int = 3) -> np.ndarray:
    """Start point for the whole flowsheet (SI values of every NLP variable)."""
    system = fs.system
    n = system.n
    lbx, ubx = asm.x_bounds()
    x = np.zeros(len(asm.slots))
    known: set[str] = set()
    pvals = dict(zip(asm.p_paths, asm.p_values(fs)))
    slot_lo = np.array([s.lower for s in asm.slots])
    slot_hi = np.array([s.upper for s in asm.slots])

    def get_stream(s: str) -> np.ndarray:
        Fi, Ti, Pi = asm.stream_index[s]
        return np.concatenate([x[Fi], [x[Ti], x[Pi]]])

    def set_stream(s: str, v: np.ndarray) -> None:
        Fi, Ti, Pi = asm.stream_index[s]
        x[Fi] = np.maximum(v[:n], 0.0)
        x[Ti] = v[n]
        x[Pi] = v[n + 1]

    units = list(fs.units)
    pmap = getattr(asm, "_port_map", None) or port_map(fs)
    ports = {u: _unit_ports(fs, u, fs.units[u], pmap) for u in units}
    ins = {u: [s for _, d, ss in ports[u] if d == "in" for s in ss] for u in units}
    outs = {u: [s for _, d, ss in ports[u] if d == "out" for s in ss] for u in units}
    # per-unit constants, gathered once: parameter values, spec values, bounds of the unknowns
    statics: dict[str, tuple] = {}

    def unit_statics(uid: str, model, outl):
        hit = statics.get(uid)
        if hit is None:
            ppar = []
            for prm in model.parameters():
                base = prm.address or f"units.{uid}.{prm.name}"
                if prm.per_component:
                    ppar.extend(pvals[f"{base}.{c}"] for c in system.names)
                else:
                    ppar.append(pvals[base])
            spec_names = list(fs.specs[uid])
            spec_vals = np.array([fs.inputs[fs.specs[uid][sp]].si for sp in spec_names], dtype=float)
            idx = [i for _, ss in outl for s in ss for i in (*asm.stream_index[s][0], asm.stream_index[s][1], asm.stream_index[s][2])]
            lo = np.concatenate([slot_lo[idx], [v.lower for v in model.variables()]])
            hi = np.concatenate([slot_hi[idx], [v.upper for v in model.variables()]])
            hit = statics[uid] = (np.array(ppar, dtype=float), spec_names, spec_vals, lo, hi)
        return hit

    for sweep in range(passes):
        seq = _flow_order(units, ins, outs, known)
        for uid in seq:
            model = fs.units[uid]
            inl = [(pn, ss) for pn, d, ss in ports[uid] if d == "in"]
            outl = [(pn, ss) for pn, d, ss in ports[uid] if d == "out"]
            ins_known = [s for s in ins[uid] if s in known]
            # guess unknown inlets (recycles) from the known ones
            for s in ins[uid]:
                if s not in known:
                    if ins_known:
                        ref = sum(get_stream(k) for k in ins_known)
                        g = 0.1 * ref
                        first = get_stream(ins_known[0])
                        g[n], g[n + 1] = first[n], first[n + 1]
                    else:
                        g = np.concatenate([np.full(n, 1e-3), [300.0, 1e5]])
                    set_stream(s, g)
                    known.add(s)
            phases = {pn: [fs.streams[s].phase for s in ss] for pn, d, ss in ports[uid]}
            ppar, spec_names, spec_vals, lo, hi = unit_statics(uid, model, outl)
            local = _local_system(model, phases, spec_names)
            # outlet guesses: the inlets' total shared among the outlets
            pin = [get_stream(s) for s in ins[uid]]
            in_tot = sum(pin, np.zeros(n + 2))
            first_in = pin[0] if pin else None
            n_out = len(outs[uid])
            x0 = []
            for s in outs[uid]:
                if s in known and sweep > 0:
                    x0.append(get_stream(s))
                elif first_in is not None:
                    g = in_tot / max(n_out, 1)
                    g[n], g[n + 1] = first_in[n], first_in[n + 1]
                    x0.append(g)
                else:
                    x0.append(np.concatenate([np.full(n, 1.0), [300.0, 1e5]]))
            vidx = asm.unit_var_index[uid]
            xv = []
            for v in model.variables():
                cur = x[vidx[v.name]]
                if sweep == 0:
                    cur = min(max(0.0, v.lower), v.upper) if math.isfinite(v.lower) or math.isfinite(v.upper) else 0.0
                xv.append(cur)
            x0v = np.concatenate(x0 + [np.array(xv)]) if (x0 or xv) else np.zeros(0)
            if local is not None and x0v.size:
                pl = np.concatenate(pin + [ppar]) if (pin or ppar.size) else np.zeros(0)
                nres = local.ng - len(spec_names)
                lbg = np.concatenate([np.zeros(nres), spec_vals])
                sol = _solve_local(local, np.clip(x0v, lo, hi), lo, hi, lbg, pl)
                if sol is None:
                    sol = x0v
            else:
                sol = x0v
            k = 0
            for s in outs[uid]:
                set_stream(s, sol[k:k + n + 2])
                known.add(s)
                k += n + 2
            for v in model.variables():
                x[vidx[v.name]] = sol[k]
                k += 1
    return np.clip(x, lbx, ubx)


def _fast_newton(fast, x0, lo, hi, rhs, p):
    """Dense Newton with backtracking inside the bounds on a small local system.

    Returns the solution, or None when it does not converge (the caller
    then uses the general solver, so this only has to be right when it
    claims success)."""
    x = x0.copy()
    r, J = fast(x, p)
    r = np.asarray(r, dtype=float).ravel() - rhs
    J = np.asarray(J, dtype=float)
    # rows weighted by their typical term at the start (fixed, so the Newton
    # direction stays a descent direction of the merit): energy rows in W must
    # not drown a temperature row in K
    w = 1.0 / (1.0 + np.abs(rhs) + np.abs(J) @ np.abs(x))
    phi = float((w * r) @ (w * r))
    for _ in range(_FAST_MAX_ITER):
        if not np.isfinite(phi):
            return None
        scale = 1.0 + np.abs(rhs) + np.abs(J) @ np.abs(x)
        if np.all(np.abs(r) <= _FAST_RTOL * scale):
            return x
        try:
            d = np.linalg.solve(J, -r)
        except np.linalg.LinAlgError:
            # singular (e.g. a zero-flow guess): the minimum-norm least-squares
            # step still reduces the linearised residual
            d = np.linalg.lstsq(J, -r, rcond=None)[0]
        if not np.isfinite(d).all():
            return None
        t = 1.0
        for _ls in range(30):
            xt = np.clip(x + t * d, lo, hi)
            rt, Jt = fast(xt, p)
            rt = np.asarray(rt, dtype=float).ravel() - rhs
            pt = float((w * rt) @ (w * rt))
            if np.isfinite(pt) and pt <= (1.0 - 1e-4 * t) * phi:
                break
            t *= 0.5
        else:
            return None
        x, r, J, phi = xt, rt, np.asarray(Jt, dtype=float), pt
    return None


def _solve_local(local, x0, lo, hi, rhs, p):
    """Solve one unit's equations; dense Newton on small systems first, then the
    trust-region Newton, then IPOPT (through casadi) as a more forgiving
    fallback for poor guesses. None if all fail."""
    try:
        if isinstance(local, _Local):
            if local.fast is not None:
                sol = _fast_newton(local.fast, x0, lo, hi, rhs, p)
                if sol is not None:
                    return sol
            local = local.compiled
        r = solve_equations(local, x0, lo, hi, rhs, rhs, p=p, options={"max_iter": 60, "tol": 1e-9})
        if r.success:
            return np.asarray(r.x, dtype=float)
        from plantopt.solver import solve_nlp

        r2 = solve_nlp(local, x0, lo, hi, rhs, rhs, p=p, options={"solver": "ipopt", "max_iter": 200, "tol": 1e-8})
        if np.all(np.isfinite(r2.x)) and float(r2.kkt.get("feasibility", np.inf)) < 1e-6 * (1 + float(np.max(np.abs(rhs), initial=0))):
            return np.asarray(r2.x, dtype=float)
        if np.all(np.isfinite(r.x)):
            return np.asarray(r.x, dtype=float)
    except Exception:  # a start point only: never fail the run here
        return None
    return None


def _local_bounds(asm, uid, model, outl, n):
    lo, hi = [], []
    for _, ss in outl:
        for s in ss:
            Fi, Ti, Pi = asm.stream_index[s]
            for i in list(Fi) + [Ti, Pi]:
                lo.append(asm.slots[i].lower)
                hi.append(asm.slots[i].upper)
    for v in model.variables():
        lo.append(v.lower)
        hi.append(v.upper)
    return np.array(lo), np.array(hi)
