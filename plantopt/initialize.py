"""Start points for the simultaneous solve, from passes through the units.

A Newton or SQP solve of a whole flowsheet needs a start point near a
solution, above all for recycles and two-phase units. This module solves
each unit alone with its inlets fixed, in flow order from the feeds, which
is cheap and robust; a few passes around the recycles give the simultaneous
solve a good start. It is a start point only: the flowsheet's equations are
always solved together afterwards (no tearing in the final answer).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import casadi as ca
import numpy as np

from plantopt.solver import compile_nlp, solve_equations

if TYPE_CHECKING:  # pragma: no cover
    from plantopt.assembly import Assembly
    from plantopt.flowsheet import Flowsheet

_LOCAL_CACHE: dict = {}


def _unit_ports(fs: "Flowsheet", uid: str, model) -> list[tuple[str, str, list[str]]]:
    out = []
    for port in model.ports():
        mine = []
        for s, st in fs.streams.items():
            end = st.source if port.direction == "out" else st.dest
            if end and end[0] == uid and end[1] == port.name:
                mine.append((end[2], s))
        out.append((port.name, port.direction, [s for _, s in sorted(mine)]))
    return out


def _local_system(model, phases, spec_names):
    key = (model.signature(), tuple((k, tuple(v)) for k, v in sorted(phases.items())), tuple(spec_names))
    hit = _LOCAL_CACHE.get(key)
    if hit is not None:
        return hit
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
    nlp = {"x": x, "f": ca.SX(0), "g": ca.vertcat(*res) if res else ca.SX(0, 1), "p": p}
    compiled = compile_nlp(nlp) if x.shape[0] else None
    _LOCAL_CACHE[key] = compiled
    return compiled


def sequential_initial_point(asm: "Assembly", fs: "Flowsheet", passes: int = 3) -> np.ndarray:
    """Start point for the whole flowsheet (SI values of every NLP variable)."""
    system = fs.system
    n = system.n
    lbx, ubx = asm.x_bounds()
    x = np.zeros(len(asm.slots))
    known: set[str] = set()
    pvals = dict(zip(asm.p_paths, asm.p_values(fs)))

    def get_stream(s: str) -> np.ndarray:
        Fi, Ti, Pi = asm.stream_index[s]
        return np.concatenate([x[Fi], [x[Ti], x[Pi]]])

    def set_stream(s: str, v: np.ndarray) -> None:
        Fi, Ti, Pi = asm.stream_index[s]
        x[Fi] = np.maximum(v[:n], 0.0)
        x[Ti] = v[n]
        x[Pi] = v[n + 1]

    units = list(fs.units)
    ports = {u: _unit_ports(fs, u, fs.units[u]) for u in units}

    def order() -> list[str]:
        done: list[str] = []
        seen: set[str] = set()
        avail = set(known)
        remaining = list(units)
        while remaining:
            ready = [u for u in remaining if all(s in avail for _, d, ss in ports[u] if d == "in" for s in ss)]
            if not ready:
                # a recycle: take the unit with the most known inlets
                ready = [max(remaining, key=lambda u: sum(s in avail for _, d, ss in ports[u] if d == "in" for s in ss))]
            for u in ready[:1]:
                done.append(u)
                seen.add(u)
                remaining.remove(u)
                for _, d, ss in ports[u]:
                    if d == "out":
                        avail.update(ss)
        return done

    for sweep in range(passes):
        seq = order()
        for uid in seq:
            model = fs.units[uid]
            inl = [(pn, ss) for pn, d, ss in ports[uid] if d == "in"]
            outl = [(pn, ss) for pn, d, ss in ports[uid] if d == "out"]
            ins_known = [s for _, ss in inl for s in ss if s in known]
            # guess unknown inlets (recycles) from the known ones
            for _, ss in inl:
                for s in ss:
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
            spec_names = list(fs.specs[uid])
            local = _local_system(model, phases, spec_names)
            # outlet guesses: the inlets' total shared among the outlets
            in_tot = sum((get_stream(s) for _, ss in inl for s in ss), np.zeros(n + 2))
            first_in = get_stream(inl[0][1][0]) if inl else None
            n_out = sum(len(ss) for _, ss in outl)
            x0 = []
            for _, ss in outl:
                for s in ss:
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
            hint = {}
            if sweep == 0:
                try:
                    hint = model.initial_guess({pn: [(get_stream(s)[:n], get_stream(s)[n], get_stream(s)[n + 1]) for s in ss]
                                                for pn, ss in inl})
                except Exception:  # a guess only
                    hint = {}
            for v in model.variables():
                cur = x[vidx[v.name]]
                if sweep == 0:
                    cur = hint.get(v.name, 0.0)
                    cur = min(max(cur, v.lower), v.upper)
                xv.append(cur)
            x0v = np.concatenate(x0 + [np.array(xv)]) if (x0 or xv) else np.zeros(0)
            if local is not None and x0v.size:
                pin = [get_stream(s) for _, ss in inl for s in ss]
                ppar = []
                for prm in model.parameters():
                    base = prm.address or f"units.{uid}.{prm.name}"
                    if prm.per_component:
                        ppar.extend(pvals[f"{base}.{c}"] for c in system.names)
                    else:
                        ppar.append(pvals[base])
                pl = np.concatenate(pin + [np.array(ppar, dtype=float)]) if (pin or ppar) else np.zeros(0)
                nres = local.ng - len(spec_names)
                lbg = np.concatenate([np.zeros(nres), [fs.inputs[fs.specs[uid][sp]].si for sp in spec_names]])
                lo, hi = _local_bounds(asm, uid, model, outl, n)
                sol = _solve_local(local, np.clip(x0v, lo, hi), lo, hi, lbg, pl)
                if sol is None:
                    sol = x0v
            else:
                sol = x0v
            k = 0
            for _, ss in outl:
                for s in ss:
                    set_stream(s, sol[k:k + n + 2])
                    known.add(s)
                    k += n + 2
            for v in model.variables():
                x[vidx[v.name]] = sol[k]
                k += 1
    return np.clip(x, lbx, ubx)


def _solve_local(local, x0, lo, hi, rhs, p):
    """Solve one unit's equations; Newton first, then IPOPT (through casadi)
    as a more forgiving fallback for poor guesses. None if both fail."""
    try:
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
