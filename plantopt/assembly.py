"""Flowsheet to NLP, and NLP results back to quantities.

The flowsheet becomes one equation-oriented casadi NLP::

    x  = [stream variables (F_i, T, P per stream), unit internal variables]
    p  = [every addressable input that enters an equation or the objective]
    g  = [unit residuals (= 0), specification rows (= value, or a decision's
          range when optimizing), limit rows (within their bounds),
          utility-direction rows]
    f  = -profit  (USD/s; minimised)

Specification values and limit bounds live in ``lbg``/``ubg`` and prices
and equipment data in ``p``, so every input can be overridden without
rebuilding. Unit models of the same signature share one casadi Function.
Units are stripped here (everything is SI); :class:`Assembly` maps the
numbers back.
"""

from __future__ import annotations

import gc
import math
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

import casadi as ca
import numpy as np

from plantopt import units as U
from plantopt.flowsheet import (
    STREAM_COMPONENT_QUANTITIES,
    STREAM_QUANTITIES,
    WHERE_PARAM,
    Flowsheet,
    port_map,
)
from unitmodels.base import STREAM_P_BOUNDS, STREAM_T_BOUNDS, StreamSym, Symbols, UnitModel

ROW_RESIDUAL = "residual"
ROW_SPEC = "spec"
ROW_LIMIT = "limit"
ROW_DIRECTION = "direction"


@dataclass(frozen=True, slots=True)
class Slot:
    """One NLP variable: its address, kind and scale."""

    path: str
    kind: str
    lower: float
    upper: float
    nominal: float


@dataclass(frozen=True, slots=True)
class Row:
    """One constraint row of the NLP.

    Attributes
    ----------
    name : str
        ``units.R1.eq3`` for residuals, the input address for
        specification rows, ``limits.<name>`` for limits.
    type : str
        One of the ``ROW_*`` constants.
    owner : str
        Unit name (residual, spec) or limit / decision name.
    """

    name: str
    type: str
    owner: str
    kind: str = "dimensionless"


@dataclass
class Assembly:
    """The NLP of a flowsheet and the map between it and the flowsheet.

    Attributes
    ----------
    nlp : dict
        ``{"x", "f", "g", "p"}`` casadi SX expressions.
    slots : list of Slot
        One per entry of x.
    rows : list of Row
        One per entry of g.
    p_paths : list of str
        Input address of each entry of p.
    """

    fs: Flowsheet
    nlp: dict
    slots: list[Slot]
    rows: list[Row]
    p_paths: list[str]
    stream_index: dict[str, tuple[np.ndarray, int, int]]
    unit_var_index: dict[str, dict[str, int]]
    spec_rows: dict[str, int]
    limit_rows: dict[str, int]
    direction_rows: dict[str, int]
    report: ca.Function
    report_names: list[str]
    report_kinds: list[str]
    breakdown_names: list[str]
    _compiled: Any = None
    _unit_functions: dict = field(default_factory=dict)

    # ------------------------------------------------------------------ numbers
    @property
    def compiled(self):
        """The solver's compiled form of the NLP (built once, on first use)."""
        if self._compiled is None:
            from plantopt.solver import compile_nlp

            self._compiled = compile_nlp(self.nlp)
        return self._compiled

    @property
    def n_equations(self) -> int:
        return sum(r.type in (ROW_RESIDUAL, ROW_SPEC) for r in self.rows)

    def p_values(self, fs: Flowsheet | None = None) -> np.ndarray:
        fs = fs or self.fs
        return np.array([fs.inputs[p].si for p in self.p_paths], dtype=float)

    def x_nominal(self) -> np.ndarray:
        return np.array([s.nominal for s in self.slots])

    def x_bounds(self) -> tuple[np.ndarray, np.ndarray]:
        return np.array([s.lower for s in self.slots]), np.array([s.upper for s in self.slots])

    def g_bounds(self, mode: str = "simulate", fs: Flowsheet | None = None) -> tuple[np.ndarray, np.ndarray]:
        """Row bounds for ``mode`` ``"simulate"`` (decisions fixed at their base
        values, limits not enforced) or ``"optimize"`` (decisions within their
        range, limits enforced)."""
        fs = fs or self.fs
        m = len(self.rows)
        lbg = np.zeros(m)
        ubg = np.zeros(m)
        decisions = {d.input: d for d in fs.decisions}
        for path, i in self.spec_rows.items():
            v = fs.inputs[path].si
            lbg[i] = ubg[i] = v
            if mode == "optimize" and path in decisions:
                d = decisions[path]
                lbg[i] = fs.inputs[d.lower_path].si
                ubg[i] = fs.inputs[d.upper_path].si
        for lim in fs.limits:
            i = self.limit_rows[lim.name]
            if mode == "optimize":
                lbg[i] = fs.inputs[lim.lower_path].si if lim.lower_path else -math.inf
                ubg[i] = fs.inputs[lim.upper_path].si if lim.upper_path else math.inf
            else:
                lbg[i], ubg[i] = -math.inf, math.inf
        for name, i in self.direction_rows.items():
            sign = self._direction_sign[name]
            if mode == "optimize":
                lbg[i], ubg[i] = (0.0, math.inf) if sign > 0 else (-math.inf, 0.0)
            else:
                lbg[i], ubg[i] = -math.inf, math.inf
        return lbg, ubg

    def row_scales(self, x: np.ndarray, fs: Flowsheet | None = None) -> np.ndarray:
        """Typical size of the terms of each constraint row at x: max_j |dg_i/dx_j| * nominal_j."""
        import scipy.sparse as sp

        # the compiled NLP's Jacobian: regenerating it here would double the derivative work
        J = self.compiled.jac_g(np.asarray(x, dtype=float), self.p_values(fs)).tocsr()
        J = J @ sp.diags(self.x_nominal())
        return np.asarray(abs(J).max(axis=1).todense()).ravel()

    def evaluate_report(self, x: np.ndarray, fs: Flowsheet | None = None) -> dict[str, float]:
        """All reportable quantities (SI) at x: stream data, unit outputs, profit terms."""
        vals = np.asarray(self.report(x, self.p_values(fs))).ravel()
        return dict(zip(self.report_names, vals.tolist()))

    # ------------------------------------------------------------------ initial point
    def initial_point(self, fs: Flowsheet | None = None, passes: int = 3) -> np.ndarray:
        """A start point from sequential passes through the units.

        Each unit's own equations are solved with its inlets fixed, in flow
        order from the feeds; streams of a recycle not yet known start as a
        tenth of the unit's known inlets. A few passes give the simultaneous
        Newton solve a point near the solution.
        """
        from plantopt.initialize import sequential_initial_point

        return sequential_initial_point(self, fs or self.fs, passes=passes)


def _stream_quantities(system: Any, st: StreamSym) -> dict[str, Any]:
    tot = ca.sum1(st.F)
    mw = ca.DM(system.mw)
    mass = ca.dot(mw, st.F)
    # small floor keeps fractions defined at zero flow; 1e-12 mol/s is far
    # below any flow a plant reports
    eps = 1e-12
    out = {"temperature": st.T, "pressure": st.P, "molar_flow": tot, "mass_flow": mass}
    for i, c in enumerate(system.names):
        out[f"mole_fraction.{c}"] = st.F[i] / (tot + eps)
        out[f"mass_fraction.{c}"] = mw[i] * st.F[i] / (mass + eps)
        out[f"component_flow.{c}"] = st.F[i]
        out[f"component_mass_flow.{c}"] = mw[i] * st.F[i]
    return out


def _stream_kinds(system: Any) -> dict[str, str]:
    k = dict(STREAM_QUANTITIES)
    for c in system.names:
        for q, kind in STREAM_COMPONENT_QUANTITIES.items():
            k[f"{q}.{c}"] = kind
    return k


@lru_cache(maxsize=None)
def _kind_of_si_unit(unit: str) -> str:
    # pint parsing costs ~0.1 ms; thousands of units repeat a handful of unit texts
    return U.kind_key(U.kind_for_si_unit(unit or "dimensionless"))


@lru_cache(maxsize=None)
def _kind_of_unit(unit: str) -> str:
    return U.kind_key(U.resolve_kind(unit)) if unit else "dimensionless"


def _column(exprs: list[Any]) -> Any:
    return ca.vertcat(*[e if isinstance(e, ca.SX) else ca.SX(e) for e in exprs]) if exprs else ca.SX(0, 1)


class _UnitForm:
    """What one unit signature contributes, as one casadi Function of the unit's
    local (z, p): residuals, specification expressions, outputs, heat duty, work.

    Built once per signature and called on each unit's symbolic slices; the
    call is evaluated in C++ and is far cheaper than re-running the unit
    model's Python for every unit of a large site."""

    def __init__(self, model: UnitModel, phases: dict[str, list[str]], spec_names: list[str], index: int):
        local = model.symbols(phases)
        zl, pl = model.flatten(local)
        res = list(model.residuals(local))
        specs = [model.spec_expression(sp, local) for sp in spec_names]
        outs = dict(model.outputs(local))
        for spec in (sp.name for sp in model.specs()):
            if spec not in outs and "." not in spec:
                try:
                    outs[spec] = (model.spec_expression(spec, local), next(x.kind for x in model.specs() if x.name == spec))
                except Exception:
                    pass
        for v in model.variables():
            outs.setdefault(v.name, (local.x[v.name], v.unit or "dimensionless"))
        self.n_res, self.n_spec = len(res), len(specs)
        self.out_names = list(outs)
        self.out_kinds = [_kind_of_unit(outs[q][1]) for q in self.out_names]
        self.out_index = {q: i for i, q in enumerate(self.out_names)}
        exprs = res + specs + [outs[q][0] for q in self.out_names] + [model.heat_duty(local), model.work(local)]
        col = _column(exprs)
        if col.shape[0] != len(exprs):
            raise ValueError(f"{model.kind}: a residual, specification or output is not scalar")
        self.fn = ca.Function(f"{model.kind}_{index}", [zl, pl], [col])


def _as_positions(v: Any) -> np.ndarray:
    if v.numel() == 0:
        return np.zeros(0, dtype=np.int64)
    return np.rint(np.array(ca.DM(v), dtype=float).ravel()).astype(np.int64)


def _flat_positions(model: UnitModel, port_streams: dict[str, list[str]],
                    stream_index: dict[str, tuple[np.ndarray, int, int]], var_index: dict[str, int],
                    p_index: dict[str, int], uid: str) -> tuple[np.ndarray, np.ndarray]:
    """Positions in the NLP's x and p of the unit's flattened (z, p).

    ``model.flatten`` itself stacks the positions (as numbers instead of
    symbols), so the order is the one its Function is called with."""
    ports: dict[str, Any] = {}
    for port in model.ports():
        lst = []
        for sname in port_streams[port.name]:
            Fi, Ti, Pi = stream_index[sname]
            lst.append(StreamSym(ca.DM(Fi.astype(float)), float(Ti), float(Pi), ""))
        ports[port.name] = lst if port.variadic else lst[0]
    xv = {v.name: float(var_index[v.name]) for v in model.variables()}
    pv: dict[str, Any] = {}
    for prm in model.parameters():
        base = prm.address or f"units.{uid}.{prm.name}"
        if prm.per_component:
            pv[prm.name] = ca.DM([float(p_index[f"{base}.{c}"]) for c in model.system.names])
        else:
            pv[prm.name] = float(p_index[base])
    z, pz = model.flatten(Symbols(ports, xv, pv))
    return _as_positions(z), _as_positions(pz)


def _report_function(x: Any, p: Any, tail_exprs: list[Any], q_fn: ca.Function,
                     stream_idx: list[tuple[np.ndarray, int, int]], units: Any,
                     unit_vals: dict[str, tuple[Any, "_UnitForm"]],
                     form_units: dict[int, list[tuple[str, np.ndarray, np.ndarray]]], n_direct: int) -> ca.Function:
    """The report Function (x, p) -> every reportable quantity, in report order.

    Stream quantities and unit outputs are evaluated by mapping the stream
    quantity Function and each unit form's Function over their streams and
    units (the same instructions as the inlined expressions, so the same
    values); only profit terms and balances are SX expressions. Inlining
    everything made the report an SX Function of ~1.6 million instructions
    whose expression graph stayed alive with it: ~90 MB of the 10,000-unit
    site benchmark's build."""
    X = ca.MX.sym("x", x.shape[0])
    P = ca.MX.sym("p", p.shape[0])
    parts: list[Any] = []
    size = 0
    S = len(stream_idx)
    if S:
        n = len(stream_idx[0][0])
        Fi = np.concatenate([si[0] for si in stream_idx]).tolist()
        Ti = [int(si[1]) for si in stream_idx]
        Pi = [int(si[2]) for si in stream_idx]
        out = q_fn.map(S)(ca.reshape(X[Fi], n, S), ca.reshape(X[Ti], 1, S), ca.reshape(X[Pi], 1, S))
        parts.append(ca.vec(out))
        size += out.numel()
    start: dict[str, int] = {}
    for group in form_units.values():
        form = unit_vals[group[0][0]][1]
        nout, k = len(form.out_names), len(group)
        if not nout:
            continue
        zi = np.concatenate([g[1] for g in group]).tolist()
        pi = np.concatenate([g[2] for g in group]).tolist()
        nz, npz = len(group[0][1]), len(group[0][2])
        Z = ca.reshape(X[zi], nz, k) if nz else ca.MX(0, k)
        PZ = ca.reshape(P[pi], npz, k) if npz else ca.MX(0, k)
        k0 = form.n_res + form.n_spec
        R = form.fn.map(k)(Z, PZ)
        parts.append(ca.vec(R[k0:k0 + nout, :]))
        for j, g in enumerate(group):
            start[g[0]] = size + j * nout
        size += nout * k
    order = [np.arange(S * q_fn.numel_out(0))]
    for uid in units:
        nout = len(unit_vals[uid][1].out_names)
        if nout:
            order.append(np.arange(start[uid], start[uid] + nout))
    if tail_exprs:
        tail = ca.Function("report_totals", [x, p], [_column(tail_exprs)])
        parts.append(tail(X, P))
        order.append(np.arange(size, size + len(tail_exprs)))
    perm = np.concatenate(order)
    if perm.size != n_direct + len(tail_exprs):
        raise AssertionError("report columns do not match their names")
    col = ca.vertcat(*parts) if parts else ca.MX(0, 1)
    if not np.array_equal(perm, np.arange(perm.size)):
        col = col[perm.tolist()]
    return ca.Function("report", [X, P], [col])


def assemble(fs: Flowsheet) -> Assembly:
    """Build the NLP of a checked flowsheet.

    Parameters
    ----------
    fs : Flowsheet
        From :func:`plantopt.flowsheet.load_flowsheet`.

    Returns
    -------
    Assembly
    """
    # Assembly creates hundreds of thousands of long-lived objects (symbols,
    # slots, rows) and no reference cycles worth collecting; the cyclic
    # collector's full passes over them made the build superlinear in size.
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        return _assemble(fs)
    finally:
        if was_enabled:
            gc.enable()


def _assemble(fs: Flowsheet) -> Assembly:
    system = fs.system
    n = system.n
    slots: list[Slot] = []
    xs: list[Any] = []

    def new_var(path: str, kind: str, lower: float, upper: float, nominal: float) -> Any:
        v = ca.SX.sym(path)
        # a nominal scale must be a positive magnitude; 0 (unknown) means 1
        nominal = abs(nominal) if nominal and np.isfinite(nominal) else 1.0
        slots.append(Slot(path, kind, lower, upper, nominal))
        xs.append(v)
        return v

    # scale of flows from the feeds' specifications
    f_scale = 0.0
    for u in fs.feeds:
        sp = fs.specs.get(u, {})
        if "molar_flow" in sp:
            f_scale += fs.inputs[sp["molar_flow"]].si
        elif "mass_flow" in sp:
            f_scale += fs.inputs[sp["mass_flow"]].si / float(np.mean(system.mw))
    f_nominal = max(f_scale / max(n, 1), 1e-6)

    streams: dict[str, StreamSym] = {}
    stream_index: dict[str, tuple[np.ndarray, int, int]] = {}
    for sname, st in fs.streams.items():
        start = len(xs)
        F = ca.vertcat(*[new_var(f"streams.{sname}.component_flow.{c}", "molar_flow", 0.0, math.inf, f_nominal) for c in system.names])
        T = new_var(f"streams.{sname}.temperature", "temperature", *STREAM_T_BOUNDS, 300.0)
        P = new_var(f"streams.{sname}.pressure", "pressure", *STREAM_P_BOUNDS, 1e5)
        streams[sname] = StreamSym(F, T, P, st.phase)
        stream_index[sname] = (np.arange(start, start + n), start + n, start + n + 1)

    # parameters: every input that lives in p
    p_paths = [path for path, iv in fs.inputs.items() if iv.where == WHERE_PARAM]
    p_sym = {path: ca.SX.sym(path) for path in p_paths}
    p_index = {path: i for i, path in enumerate(p_paths)}

    rows: list[Row] = []
    gs: list[Any] = []
    spec_rows: dict[str, int] = {}
    unit_var_index: dict[str, dict[str, int]] = {}
    functions: dict[tuple, ca.Function] = {}
    forms: dict[tuple, _UnitForm] = {}
    # per unit: the Function's output column and the form (outputs by name)
    unit_vals: dict[str, tuple[Any, _UnitForm]] = {}
    # per form: its units and the positions of their (z, p) in the NLP's (x, p),
    # for the report (which calls the forms' Functions instead of inlining them)
    form_units: dict[int, list[tuple[str, np.ndarray, np.ndarray]]] = {}
    pmap = port_map(fs)

    for uid, model in fs.units.items():
        # the unit's port streams, in port order
        port_streams: dict[str, Any] = {}
        phases: dict[str, list[str]] = {}
        for port in model.ports():
            syms = [streams[s] for s in pmap[uid][port.name]]
            phases[port.name] = [s.phase for s in syms]
            port_streams[port.name] = syms if port.variadic else syms[0]
        xv = {}
        unit_var_index[uid] = {}
        for v in model.variables():
            unit_var_index[uid][v.name] = len(xs)
            xv[v.name] = new_var(f"units.{uid}.{v.name}", _kind_of_si_unit(v.unit or "dimensionless"), v.lower, v.upper, v.nominal)
        pv = {}
        for prm in model.parameters():
            if prm.per_component:
                base = prm.address or f"units.{uid}.{prm.name}"
                pv[prm.name] = ca.vertcat(*[p_sym[f"{base}.{c}"] for c in system.names])
            else:
                pv[prm.name] = p_sym[prm.address or f"units.{uid}.{prm.name}"]
        s = Symbols(port_streams, xv, pv)
        phase_key = tuple((k, tuple(v)) for k, v in sorted(phases.items()))
        spec_items = list(fs.specs[uid].items())
        key = (model.signature(), phase_key, tuple(sp for sp, _ in spec_items))
        form = forms.get(key)
        if form is None:
            form = forms[key] = _UnitForm(model, phases, [sp for sp, _ in spec_items], len(forms))
            functions[(model.signature(), phase_key)] = form.fn
        z, pz = model.flatten(s)
        r = form.fn(z, pz)
        unit_vals[uid] = (r, form)
        form_units.setdefault(id(form), []).append((uid, *_flat_positions(model, pmap[uid], stream_index,
                                                                          unit_var_index[uid], p_index, uid)))
        names = model.residual_names()
        for i in range(form.n_res):
            rows.append(Row(f"units.{uid}.{names[i] if i < len(names) else f'eq{i}'}", ROW_RESIDUAL, uid))
        if form.n_res:
            gs.append(r[:form.n_res])
        for spec, path in spec_items:
            spec_rows[path] = len(rows)
            rows.append(Row(path, ROW_SPEC, uid, fs.inputs[path].kind.name))
        if form.n_spec:
            gs.append(r[form.n_res:form.n_res + form.n_spec])

    # reportable quantities and limits
    report_names: list[str] = []
    report_kinds: list[str] = []
    report_exprs: list[Any] = []
    skinds = _stream_kinds(system)
    # one Function of (F, T, P) for every stream quantity, called on each stream
    ls = StreamSym(ca.SX.sym("F", n), ca.SX.sym("T"), ca.SX.sym("P"), "liquid")
    lq = _stream_quantities(system, ls)
    q_names = list(lq)
    q_index = {q: i for i, q in enumerate(q_names)}
    q_fn = ca.Function("stream_quantities", [ls.F, ls.T, ls.P], [_column([lq[q] for q in q_names])])
    # stream quantities enter the NLP's graph only where a limit uses them; the
    # report evaluates q_fn on every stream without inlining it (_report_function)
    stream_vals: dict[str, Any] = {}

    def stream_value(sname: str) -> Any:
        v = stream_vals.get(sname)
        if v is None:
            st = streams[sname]
            v = stream_vals[sname] = q_fn(st.F, st.T, st.P)
        return v

    for sname in streams:
        report_names.extend(f"streams.{sname}.{q}" for q in q_names)
        report_kinds.extend(skinds[q] for q in q_names)
    for uid in fs.units:
        form = unit_vals[uid][1]
        report_names.extend(f"units.{uid}.{q}" for q in form.out_names)
        report_kinds.extend(form.out_kinds)
    n_direct = len(report_names)  # streams and unit outputs; the rest (profit, balances) is report_exprs

    def unit_output(uid: str, q: str) -> Any:
        r, form = unit_vals[uid]
        return r[form.n_res + form.n_spec + form.out_index[q]]

    def unit_duty(uid: str) -> Any:
        r, form = unit_vals[uid]
        return r[r.shape[0] - 2]

    def unit_work(uid: str) -> Any:
        r, form = unit_vals[uid]
        return r[r.shape[0] - 1]

    def quantity_expr(address: str) -> Any:
        if "+" in address:  # a sum of addresses (checked by the loader to share one kind)
            total = ca.SX(0)
            for a in address.split("+"):
                total = total + quantity_expr(a.strip())
            return total
        parts = address.split(".")
        if parts[0] == "streams":
            return stream_value(parts[1])[q_index[".".join(parts[2:])]]
        # output names may contain dots (a reactor's node10.temperature)
        return unit_output(parts[1], ".".join(parts[2:]))

    limit_rows: dict[str, int] = {}
    for lim in fs.limits:
        limit_rows[lim.name] = len(rows)
        rows.append(Row(f"limits.{lim.name}", ROW_LIMIT, lim.name, lim.qkind.name))
        gs.append(quantity_expr(lim.quantity))

    # economics: profit in USD/s
    terms: list[tuple[str, Any]] = []
    mw = ca.DM(system.mw)

    def amount(price_path: str, F: Any) -> Any:
        iv = fs.inputs[price_path]
        flow = ca.dot(mw, F) if iv.kind.name == "price_per_mass" else ca.sum1(F)
        return p_sym[price_path] * flow

    # first stream (in stream order) leaving / entering each unit
    first_end: dict[tuple[str, str], str] = {}
    for sname, st in fs.streams.items():
        if st.source:
            first_end.setdefault((st.source[0], "out"), sname)
        if st.dest:
            first_end.setdefault((st.dest[0], "in"), sname)

    def port_F(uid: str, direction: str) -> Any:
        return streams[first_end[(uid, direction)]].F

    for uid, path in fs.product_prices.items():
        terms.append((f"revenue.{uid}", amount(path, port_F(uid, "in"))))
    for uid, path in fs.feed_prices.items():
        terms.append((f"feed_cost.{uid}", -amount(path, port_F(uid, "out"))))
    for uid, path in fs.disposal_prices.items():
        terms.append((f"disposal.{uid}", -amount(path, port_F(uid, "in"))))
    direction_rows: dict[str, int] = {}
    direction_sign: dict[str, int] = {}
    for uid, model in fs.units.items():
        ut = model.utility()
        if ut is None or ut not in fs.utilities:
            continue
        info = fs.utilities[ut]
        if info.type == "electricity":
            load = unit_work(uid)
            sign = +1
        else:
            q = unit_duty(uid)
            # heating utilities deliver heat (Q >= 0); cooling water removes it
            sign = -1 if info.type == "cooling_water" else +1
            load = q if sign > 0 else -q
        if info.type == "fuel":
            load = load / info.efficiency
        price = p_sym[info.price_path]
        terms.append((f"utility.{uid}.{ut}", -price * load / info.energy_per_amount))
        name = f"units.{uid}.{'work' if info.type == 'electricity' else 'duty'}_direction"
        direction_rows[name] = len(rows)
        direction_sign[name] = sign
        rows.append(Row(name, ROW_DIRECTION, uid, "power"))
        gs.append(unit_work(uid) if info.type == "electricity" else unit_duty(uid))
    for path in fs.fixed_costs:
        terms.append((f"fixed.{path.split('.')[-1]}", -p_sym[path]))

    profit = ca.sum1(_column([e for _, e in terms])) if terms else ca.SX(0)
    breakdown_names = [t[0] for t in terms]
    for name, e in terms:
        report_names.append(f"profit.{name}")
        report_kinds.append("currency_rate")
        report_exprs.append(e)
    report_names.append("profit.total")
    report_kinds.append("currency_rate")
    report_exprs.append(profit)

    # overall balances of the plant boundary: feeds in, products out, heat and work added
    h_fns: dict[str, ca.Function] = {}

    def enthalpy_flow(sym: StreamSym) -> Any:
        fn = h_fns.get(sym.phase)
        if fn is None:
            Fs, Ts = ca.SX.sym("F", n), ca.SX.sym("T")
            fn = h_fns[sym.phase] = ca.Function("enthalpy_flow", [Fs, Ts], [system.enthalpy_flow(Fs, Ts, sym.phase)])
        return fn(sym.F, sym.T)

    m_in, m_out, hl_in, hl_out = [], [], [], []
    for sname, st in fs.streams.items():
        sym = streams[sname]
        if st.source and fs.unit_types[st.source[0]] == "feed":
            m_in.append(ca.dot(mw, sym.F))
            hl_in.append(enthalpy_flow(sym))
        if st.dest and fs.unit_types[st.dest[0]] == "product":
            m_out.append(ca.dot(mw, sym.F))
            hl_out.append(enthalpy_flow(sym))

    def total(exprs: list[Any]) -> Any:
        return ca.sum1(_column(exprs)) if exprs else ca.SX(0)

    mass_in, mass_out, h_in, h_out = total(m_in), total(m_out), total(hl_in), total(hl_out)
    heat = total([unit_duty(uid) for uid in fs.units])
    work = total([unit_work(uid) for uid in fs.units])
    for name, e, kind in (("mass_in", mass_in, "mass_flow"), ("mass_out", mass_out, "mass_flow"),
                          ("enthalpy_in", h_in, "power"), ("enthalpy_out", h_out, "power"),
                          ("heat_added", heat, "power"), ("work_added", work, "power")):
        report_names.append(f"balance.{name}")
        report_kinds.append(kind)
        report_exprs.append(e)

    x = ca.vertcat(*xs)
    p = ca.vertcat(*[p_sym[q] for q in p_paths]) if p_paths else ca.SX(0, 1)
    g = _column(gs)
    nlp = {"x": x, "f": -profit, "g": g, "p": p}
    report = _report_function(x, p, report_exprs, q_fn, [stream_index[s] for s in streams], fs.units,
                              unit_vals, form_units, n_direct)
    asm = Assembly(fs, nlp, slots, rows, p_paths, stream_index, unit_var_index, spec_rows, limit_rows,
                   direction_rows, report, report_names, report_kinds, breakdown_names)
    asm._direction_sign = direction_sign  # type: ignore[attr-defined]
    asm._unit_functions = functions
    asm._port_map = pmap  # type: ignore[attr-defined]
    return asm
