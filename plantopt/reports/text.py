"""Plain-text reports for the terminal."""

from __future__ import annotations

from plantopt.flowsheet import Flowsheet
from plantopt.results import RunResult


def _fmt(v: float | None, width: int = 11) -> str:
    if v is None:
        return "-".rjust(width)
    a = abs(v)
    if a != 0 and (a >= 1e6 or a < 1e-3):
        return f"{v:{width}.3e}"
    return f"{v:{width}.4g}"


def _table(headers: list[str], rows: list[list[str]]) -> list[str]:
    widths = [max(len(h), *(len(r[i]) for r in rows)) if rows else len(h) for i, h in enumerate(headers)]
    line = "  ".join(h.ljust(w) for h, w in zip(headers, widths))
    out = [line, "  ".join("-" * w for w in widths)]
    for r in rows:
        out.append("  ".join(c.ljust(w) if i == 0 else c.rjust(w) for i, (c, w) in enumerate(zip(r, widths))))
    return out


def render_run(result: RunResult, *, streams: bool = True) -> str:
    """Terminal report of a simulation or optimization result."""
    L: list[str] = []
    title = {"simulate": "Steady-state simulation", "optimize": "Economic optimization"}.get(result.command, result.command)
    L.append(f"{title} of '{result.flowsheet_name}' ({result.flowsheet})")
    if result.data_notice:
        L.append(f"Note: {result.data_notice}")
    ok_word = "converged" if result.command == "simulate" else "optimal"
    L.append(f"Status: {result.status}" + ("" if result.status == ok_word else "  ** NOT " + ok_word.upper() + ": do not act on these numbers **"))
    L.append("")
    o = result.objective
    L.append(f"Profit: {o.value:,.2f} {o.unit}")
    for k, v in o.breakdown.items():
        L.append(f"  {k:<40s} {v:>14,.2f}")
    if result.decisions:
        L.append("")
        L.append("Decisions")
        rows = []
        for d in result.decisions:
            rc = f"{d.reduced_cost:.4g} {d.reduced_cost_unit}" if d.reduced_cost is not None else ""
            rows.append([d.name, _fmt(d.base), _fmt(d.value), _fmt(d.move), d.unit, _fmt(d.lower), _fmt(d.upper), d.at_bound or "", rc])
        L += _table(["decision", "base", "value", "move", "unit", "lower", "upper", "at bound", "reduced cost"], rows)
    if result.limits:
        L.append("")
        L.append("Limits")
        rows = []
        for lim in result.limits:
            state = "VIOLATED" if lim.violated else ("active" if lim.active else "")
            sp = f"{lim.shadow_price:.4g} {lim.shadow_price_unit}" if lim.shadow_price is not None else ""
            rows.append([lim.name, lim.kind, _fmt(lim.value), _fmt(lim.lower), _fmt(lim.upper), lim.unit, _fmt(lim.margin), state, sp])
        L += _table(["limit", "kind", "value", "lower", "upper", "unit", "margin", "state", "shadow price"], rows)
    if streams and result.streams:
        L.append("")
        L.append("Streams")
        s0 = result.streams[0]
        comps = list(s0.component_flows)
        headers = ["stream", "phase", f"T [{s0.temperature_unit}]", f"P [{s0.pressure_unit}]", f"flow [{s0.molar_flow_unit}]",
                   f"mass [{s0.mass_flow_unit}]"] + [f"x_{c}" for c in comps]
        rows = [[s.name, s.phase, _fmt(s.temperature, 9), _fmt(s.pressure, 9), _fmt(s.molar_flow, 9), _fmt(s.mass_flow, 9)]
                + [f"{s.mole_fractions[c]:.4f}" for c in comps] for s in result.streams]
        L += _table(headers, rows)
        L.append("")
        L.append("Units")
        for u in result.units:
            parts = [f"{k} = {_fmt(q.value, 0).strip()} {q.unit}".rstrip() for k, q in u.quantities.items()]
            L.append(f"  {u.name} ({u.type}): " + "; ".join(parts))
    if result.violations:
        L.append("")
        L.append("Not met at the returned point (worst first):")
        for v in result.violations:
            bound = f" {v.side} bound {v.bound:.6g}" if v.bound is not None else ""
            L.append(f"  {v.what} {v.name}: {v.value:.6g} {v.unit}, misses its{bound} by {v.violation:.4g} {v.unit}".rstrip())
    if result.balance is not None:
        b = result.balance
        L.append("")
        L.append(f"Overall balance: mass in {b.mass_in:,.6g} / out {b.mass_out:,.6g} {b.mass_unit} (closure {b.mass_relative:.1e}); "
                 f"energy closure {b.energy_relative:.1e}")
    sens = getattr(result, "sensitivity", None)
    if sens is not None:
        L.append("")
        L.append(f"Sensitivity of the optimum ({sens.method}; valid while the active set holds)")
        if sens.note:
            L.append(f"  ** {sens.note} **")
        names = list(sens.entries[0].d_decisions) if sens.entries else []
        rows = [[e.input, _fmt(e.value), e.unit, f"{e.d_profit:.5g} {e.d_profit_unit}"] + [_fmt(e.d_decisions[n]) for n in names]
                for e in sens.entries]
        L += _table(["input", "value", "unit", "d profit"] + [f"d {n}" for n in names], rows)
        if sens.entries:
            L.append("  (d decision in the decision's unit per the input's unit)")
    s = result.solver
    L.append("")
    kkt = ", ".join(f"{k} {v:.2e}" for k, v in s.kkt.items() if not k.endswith("_scaled"))
    L.append(f"Solver: {s.name}, status {s.status}, {s.iterations} iterations, {s.wall_time_s:.3f} s" + (f"; {kkt}" if kkt else ""))
    L.append("")
    L.append(result.notice)
    return "\n".join(L)


def render_inputs(rows: list[dict]) -> str:
    table = [[r["path"], f"{r['value']:.6g}", r["unit"], r["kind"]] for r in rows]
    return "\n".join(_table(["path", "value", "unit", "kind"], table))
