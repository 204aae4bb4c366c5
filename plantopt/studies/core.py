"""Shared pieces of the studies: solving an assembled flowsheet and turning
solver numbers back into quantities in the file's units."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from plantopt import __version__
from plantopt import units as U
from plantopt.assembly import ROW_DIRECTION, ROW_LIMIT, Assembly
from plantopt.flowsheet import Flowsheet
from plantopt.results import (
    Balance,
    DecisionResult,
    LimitResult,
    Objective,
    QuantityValue,
    RunResult,
    SolverSummary,
    StreamResult,
    UnitResult,
    Violation,
)

DEFAULT_DISPLAY = {
    "temperature": "degC",
    "temperature_difference": "K",
    "pressure": "bar",
    "pressure_difference": "bar",
    "molar_flow": "kmol/h",
    "mass_flow": "kg/h",
    "power": "kW",
    "energy": "MJ",
    "volume": "m**3",
    "volume_flow": "m**3/h",
}
"""Display units where the file names none (common practice on plant reports)."""

ACTIVE_TOL = 1e-6
"""A limit is active when its margin is below this fraction of its scale."""


def display_unit(fs: Flowsheet, kind: str) -> str:
    if kind == "currency_rate":
        return fs.profit_unit
    return fs.display.get(kind, DEFAULT_DISPLAY.get(kind, U.si_unit_text(kind)))


def to_display(value_si: float, kind: str, unit: str) -> float:
    if not unit or kind in ("dimensionless", "fraction"):
        return float(value_si)
    try:
        return U.from_si(value_si, kind, unit)
    except Exception:
        return float(value_si)


def unit_size_si(kind: str, unit: str) -> float:
    """SI size of one ``unit`` of a kind, as a difference (1 degC = 1 K)."""
    if not unit or kind in ("dimensionless", "fraction"):
        return 1.0
    k = U.resolve_kind(kind)
    return float(U.Q_(1.0, U.delta_unit(unit)).to(k.si).magnitude)


def difference_to_display(value_si: float, kind: str, unit: str) -> float:
    return value_si / unit_size_si(kind, unit)


def profit_factor(fs: Flowsheet) -> float:
    """Profit unit per USD/s."""
    return float(U.Q_(1.0, "USD/s").to(fs.profit_unit).magnitude)


def build_result(
    asm: Assembly,
    fs: Flowsheet,
    res: Any,
    *,
    command: str,
    status: str,
    overrides: dict[str, str] | None = None,
    structure: list[str] | None = None,
) -> RunResult:
    """Turn a solver result into a :class:`RunResult` in display units."""
    x = np.asarray(res.x, dtype=float)
    rep = asm.evaluate_report(x, fs)
    pf = profit_factor(fs)
    lam_g = np.asarray(res.lam_g, dtype=float) if res.lam_g is not None else np.zeros(len(asm.rows))
    optimizing = command == "optimize"
    # limit and decision values are constraint rows; every solver returns g at x
    g_all = np.asarray(res.g, dtype=float)

    streams = []
    for sname, st in fs.streams.items():
        pre = f"streams.{sname}."
        tu, pu = display_unit(fs, "temperature"), display_unit(fs, "pressure")
        fu, mu = display_unit(fs, "molar_flow"), display_unit(fs, "mass_flow")
        streams.append(StreamResult(
            name=sname, phase=st.phase,
            source=f"{st.source[0]}.{st.source[1]}" if st.source else None,
            destination=f"{st.dest[0]}.{st.dest[1]}" if st.dest else None,
            temperature=to_display(rep[pre + "temperature"], "temperature", tu), temperature_unit=tu,
            pressure=to_display(rep[pre + "pressure"], "pressure", pu), pressure_unit=pu,
            molar_flow=to_display(rep[pre + "molar_flow"], "molar_flow", fu), molar_flow_unit=fu,
            mass_flow=to_display(rep[pre + "mass_flow"], "mass_flow", mu), mass_flow_unit=mu,
            component_flows={c: to_display(rep[f"{pre}component_flow.{c}"], "molar_flow", fu) for c in fs.system.names},
            mole_fractions={c: rep[f"{pre}mole_fraction.{c}"] for c in fs.system.names},
        ))

    units = []
    kinds = dict(zip(asm.report_names, asm.report_kinds))
    for uid in fs.units:
        qs = {}
        pre = f"units.{uid}."
        for name, val in rep.items():
            if name.startswith(pre):
                k = kinds[name]
                du = display_unit(fs, k)
                qs[name[len(pre):]] = QuantityValue(value=to_display(val, k, du), unit=du)
        units.append(UnitResult(name=uid, type=fs.unit_types[uid], quantities=qs))

    limits = []
    for lim in fs.limits:
        i = asm.limit_rows[lim.name]
        val_si = float(g_all[i])
        k = lim.qkind.name
        unit = lim.unit or display_unit(fs, k)
        lo = fs.inputs[lim.lower_path].si if lim.lower_path else None
        hi = fs.inputs[lim.upper_path].si if lim.upper_path else None
        scale = max(1.0, abs(lo or 0.0), abs(hi or 0.0))
        margins = []
        if lo is not None:
            margins.append(("lower", val_si - lo))
        if hi is not None:
            margins.append(("upper", hi - val_si))
        side, m_si = min(margins, key=lambda t: t[1])
        tol = ACTIVE_TOL * scale
        # an interior-point optimum sits a little off its bounds: a limit with
        # a clearly nonzero multiplier of the right sign and a small margin is
        # active too (the multiplier, not the margin, decides at a breakpoint)
        lam = float(lam_g[i])
        right_sign = (lam < 0) if side == "lower" else (lam > 0)
        f_scale = max(1.0, abs(float(res.f)))
        binding = right_sign and abs(lam) * scale > 1e-6 * f_scale and m_si <= 1e-4 * scale
        active = optimizing and (abs(m_si) <= tol or binding)
        lr = LimitResult(
            name=lim.name, kind=lim.kind, quantity=lim.quantity, value=to_display(val_si, k, unit),
            lower=to_display(lo, k, unit) if lo is not None else None,
            upper=to_display(hi, k, unit) if hi is not None else None,
            lower_path=lim.lower_path, upper_path=lim.upper_path, unit=unit, active=bool(active),
            active_side=side if active else None, violated=bool(m_si < -tol),
            margin=difference_to_display(m_si, k, unit), description=lim.description,
        )
        if active:
            # d(profit*)/d(bound) = lam_g for f = -profit (casadi convention)
            lr.shadow_price = float(lam_g[i]) * pf * unit_size_si(k, unit)
            lr.shadow_price_unit = f"{fs.profit_unit} per {unit or '1'}"
        limits.append(lr)

    decisions = []
    for d in fs.decisions:
        i = asm.spec_rows[d.input]
        iv = fs.inputs[d.input]
        val_si = float(g_all[i])
        k = iv.kind.name
        lo, hi = fs.inputs[d.lower_path].si, fs.inputs[d.upper_path].si
        scale = max(1.0, abs(lo), abs(hi))
        at = None
        if optimizing:
            lam = float(lam_g[i])
            f_scale = max(1.0, abs(float(res.f)))
            significant = abs(lam) * scale > 1e-6 * f_scale
            if val_si - lo <= ACTIVE_TOL * scale or (lam < 0 and significant and val_si - lo <= 1e-4 * scale):
                at = "lower"
            elif hi - val_si <= ACTIVE_TOL * scale or (lam > 0 and significant and hi - val_si <= 1e-4 * scale):
                at = "upper"
        delta = val_si - iv.si
        if abs(delta) <= 1e-9 * max(1.0, abs(iv.si)):
            delta = 0.0  # solver round-off, not a move
        dr = DecisionResult(
            path=d.input, name=d.name, value=to_display(val_si, k, d.unit), base=iv.display(),
            move=difference_to_display(delta, k, d.unit), unit=d.unit,
            lower=to_display(lo, k, d.unit), upper=to_display(hi, k, d.unit), at_bound=at,
        )
        if at:
            dr.reduced_cost = float(lam_g[i]) * pf * unit_size_si(k, d.unit)
            dr.reduced_cost_unit = f"{fs.profit_unit} per {d.unit or '1'}"
        decisions.append(dr)

    mu, eu = display_unit(fs, "mass_flow"), display_unit(fs, "power")
    b = {k: rep[f"balance.{k}"] for k in ("mass_in", "mass_out", "enthalpy_in", "enthalpy_out", "heat_added", "work_added")}
    e_scale = max(abs(b["enthalpy_in"]), abs(b["enthalpy_out"]), abs(b["heat_added"]), abs(b["work_added"]), 1e-30)
    balance = Balance(
        mass_in=to_display(b["mass_in"], "mass_flow", mu), mass_out=to_display(b["mass_out"], "mass_flow", mu), mass_unit=mu,
        mass_relative=abs(b["mass_in"] - b["mass_out"]) / max(abs(b["mass_in"]), 1e-30),
        enthalpy_in=to_display(b["enthalpy_in"], "power", eu), enthalpy_out=to_display(b["enthalpy_out"], "power", eu),
        heat_added=to_display(b["heat_added"], "power", eu), work_added=to_display(b["work_added"], "power", eu), energy_unit=eu,
        energy_relative=abs(b["enthalpy_in"] + b["heat_added"] + b["work_added"] - b["enthalpy_out"]) / e_scale,
    )
    violations = [] if status in ("optimal", "converged") else explain_violations(asm, fs, res, limits, command)
    breakdown = {name: rep[f"profit.{name}"] * pf for name in asm.breakdown_names}
    obj = Objective(value=rep["profit.total"] * pf, unit=fs.profit_unit, breakdown=breakdown)
    kkt = {k: float(v) for k, v in (res.kkt or {}).items() if v is not None and math.isfinite(float(v))}
    solver = SolverSummary(name=res.solver, status=str(getattr(res.status, "value", res.status)), iterations=int(res.iterations),
                           wall_time_s=float(res.wall_time), kkt=kkt, evaluations=dict(res.n_eval or {}), message=res.message or "")
    ws = None
    if getattr(res, "warm_start", None):
        ws = {"x": [float(v) for v in x], "lam_g": [float(v) for v in lam_g],
              "lam_x": [float(v) for v in np.asarray(res.lam_x, dtype=float)] if res.lam_x is not None else None,
              "radius": float(res.warm_start.get("radius")) if res.warm_start.get("radius") is not None else None,
              "x_paths": [s.path for s in asm.slots], "g_names": [r.name for r in asm.rows]}
    return RunResult(
        command=command, status=status, flowsheet=fs.file, flowsheet_name=fs.name, flowsheet_sha256=fs.sha256,
        tool_version=__version__, data_notice=fs.notice, objective=obj, decisions=decisions, limits=limits,
        streams=streams, units=units, solver=solver, balance=balance, violations=violations, structure=structure or [], overrides=dict(overrides or {}),
        warm_start=ws,
    )


def explain_violations(asm: Assembly, fs: Flowsheet, res: Any, limits: list[LimitResult], command: str,
                       top: int = 15) -> list[Violation]:
    """Limits and equations not met at the returned (least-infeasible) point, worst first.

    Limits are reported in their own units; equations by name with their
    residual in SI, relative to the size of the row's bound.
    """
    out: list[Violation] = []
    if command == "optimize":
        for lim in limits:
            if lim.violated:
                side = "lower" if lim.lower is not None and lim.value < lim.lower else "upper"
                bound = lim.lower if side == "lower" else lim.upper
                scale = max(abs(bound or 0.0), abs(lim.value), 1e-12)
                out.append(Violation(what="limit", name=lim.name, value=lim.value, bound=bound, side=side,
                                     violation=abs(lim.margin), unit=lim.unit, relative=abs(lim.margin) / scale))
    g = np.asarray(res.g, dtype=float) if res.g is not None else None
    if g is not None and len(g) == len(asm.rows):
        lbg, ubg = asm.g_bounds(command if command in ("simulate", "optimize") else "simulate", fs)
        try:
            scales = asm.row_scales(np.asarray(res.x, dtype=float), fs)
        except Exception:  # a report aid only
            scales = np.ones(len(asm.rows))
        for i, row in enumerate(asm.rows):
            if row.type in (ROW_LIMIT,):
                continue
            v = max(lbg[i] - g[i], g[i] - ubg[i], 0.0)
            if not np.isfinite(v) or v <= 0:
                continue
            b = lbg[i] if g[i] < lbg[i] else ubg[i]
            scale = max(abs(b), scales[i], 1e-12)
            if v / scale < 1e-7:
                continue
            what = "utility direction" if row.type == ROW_DIRECTION else ("specification" if row.type == "spec" else "equation")
            unit = U.si_unit_text(row.kind) if row.kind not in ("dimensionless", "fraction") else ""
            out.append(Violation(what=what, name=row.name, value=float(g[i]), bound=float(b), side="lower" if g[i] < lbg[i] else "upper",
                                 violation=float(v), unit=unit, relative=float(v / scale)))
    out.sort(key=lambda v: -v.relative)
    return out[:top]
