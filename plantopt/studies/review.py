"""Change-request review: the present operating point against a proposed one.

Before a setpoint change goes to a change request the engineer must show
what moves, what binds and how much margin remains to every limit, now and
after the change, and whether the plant can be walked from one steady state
to the other without crossing a limit on the way. :func:`review` does this
with square simulations only (no optimization): both points are simulated,
every limit's margin is measured, the sensitivities of the margins to the
moves are taken by finite differences, and a move plan is checked step by
step; where the straight ramp would cross a limit, orderings and splits of
the moves are searched for one that stays inside.

The review is advisory (:data:`plantopt.results.SAFETY_NOTICE`): it checks a
model, not the plant, and the change still follows the site's
management-of-change procedure.
"""

from __future__ import annotations

import csv
import datetime as _dt
import io
import json
import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Optional

import numpy as np
from pydantic import BaseModel, ConfigDict, Field

from plantopt import __version__
from plantopt import units as U
from plantopt.assembly import Assembly, assemble
from plantopt.errors import InputError, InputErrors, StructureError
from plantopt.flowsheet import Flowsheet
from plantopt.results import SAFETY_NOTICE, RunResult
from plantopt.solver import solve_equations
from plantopt.structure import check_structure
from plantopt.studies.core import ACTIVE_TOL, build_result, profit_factor, to_display, unit_size_si

DEFAULT_NEAR = 0.05
"""Default near-active band, as a fraction of a limit's scale (see :func:`limit_scale`).

Five per cent is the usual alarm-to-trip spacing on plant instrumentation
(common practice), so a limit within 5 % of its scale is one an operator
would already watch; a smaller band hides limits that a disturbance of
ordinary size would reach.
"""

DEFAULT_STEPS = 4
"""Intermediate points checked on the straight ramp from current to proposed."""

MAX_PLAN_SIMULATIONS = 600
"""Budget of simulations for the search of a safe ordering (about a minute
on one core for a plant the size of the demo)."""

MAX_SPLITS = 3
"""Orderings are tried with each move whole, then halved, then in thirds."""

POINT_SUFFIXES = (".toml", ".csv", ".json")


# ============================================================================ point files
@dataclass
class OperatingPoint:
    """Decision values of one operating point, read from a file or the flowsheet.

    Attributes
    ----------
    source : str
        File name, or ``"<flowsheet base values>"``.
    form : str
        ``"base"``, ``"toml"``, ``"csv"`` or ``"result"`` (a result JSON).
    values_si : dict of str to float
        Decision input address to value in SI, for every decision.
    given : list of str
        Addresses the file gave (the rest are the flowsheet's base values).
    warnings : list of str
        Things the reviewer should know (an unverified optimum, another
        flowsheet version, inputs overridden in the run that made the file).
    result : dict or None
        The raw result JSON when ``form == "result"`` (shadow prices are read
        from it).
    """

    source: str
    form: str
    values_si: dict[str, float]
    given: list[str] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    result: Optional[dict] = None


def base_point(fs: Flowsheet) -> OperatingPoint:
    """The flowsheet's own base values of its decisions (the present setpoints)."""
    return OperatingPoint("<flowsheet base values>", "base", {d.input: fs.inputs[d.input].si for d in fs.decisions})


def _decision_key(fs: Flowsheet, key: str) -> str | None:
    """The decision input address meant by ``key`` (an address or a decision name)."""
    for d in fs.decisions:
        if key in (d.input, d.name):
            return d.input
    return None


def _value_si(fs: Flowsheet, src: str, where: str, addr: str, value: Any, unit: Any) -> float:
    """Parse one point value (with its unit) for decision input ``addr``.

    A bare number is refused for a dimensional input: a point file for a
    change request must say its units (degC against K is a 273 K mistake).
    """
    iv = fs.inputs[addr]
    if unit is not None and not isinstance(unit, str):
        raise InputError(src, where, f"expected the unit as text, got {type(unit).__name__}")
    if isinstance(value, str) and unit:
        value = f"{value} {unit}"
    elif isinstance(value, (int, float)) and not isinstance(value, bool) and unit:
        value = f"{value!r} {unit}"
    q = U.parse_quantity(value, iv.kind, file=src, path=where)
    si = U.to_si(q, iv.kind)
    if not (iv.lower <= si <= iv.upper):
        raise InputError(src, where, f"value {value} is outside the physical range of {addr}")
    return si


def _flatten(d: dict, prefix: str = "") -> dict[str, Any]:
    """Nested TOML tables to dotted keys (``units.R.temperature = ...`` unquoted
    makes nested tables); an inline ``{value, unit}`` table is a leaf."""
    out: dict[str, Any] = {}
    for k, v in d.items():
        key = f"{prefix}{k}"
        if isinstance(v, dict) and not (set(v) <= {"value", "unit"} and "value" in v):
            out.update(_flatten(v, key + "."))
        else:
            out[key] = v
    return out


def _entries_toml(src: str, text: str) -> tuple[list[tuple[str, str, Any, Any]], list[InputError]]:
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        return [], [InputError(src, "", f"not valid TOML ({exc})")]
    errors = [InputError(src, k, "unknown key (expected 'description', 'notice' and a [values] table)")
              for k in doc if k not in ("description", "notice", "values")]
    vals = doc.get("values")
    if not isinstance(vals, dict) or not vals:
        errors.append(InputError(src, "values", "missing: give a [values] table of decision address (or name) = \"value unit\""))
        return [], errors
    entries = []
    for key, v in _flatten(vals).items():
        where = f"values.{key}"
        if isinstance(v, dict):
            entries.append((key, where, v.get("value"), v.get("unit")))
        else:
            entries.append((key, where, v, None))
    return entries, errors


def _entries_csv(src: str, text: str) -> tuple[list[tuple[str, str, Any, Any]], list[InputError]]:
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
    rows = list(csv.reader(io.StringIO("\n".join(lines))))
    if not rows:
        return [], [InputError(src, "", "empty: expected a header 'path,value,unit' and one row per decision")]
    head = [h.strip().lower() for h in rows[0]]
    if "path" not in head or "value" not in head:
        return [], [InputError(src, "line 1", f"expected a header with columns path, value and unit, got {','.join(rows[0])!r}")]
    ip, ivl = head.index("path"), head.index("value")
    iu = head.index("unit") if "unit" in head else None
    entries, errors = [], []
    for n, r in enumerate(rows[1:], start=2):
        if len(r) != len(head):
            errors.append(InputError(src, f"row {n - 1}", f"expected {len(head)} columns ({','.join(head)}), got {len(r)}"))
            continue
        num = r[ivl].strip()
        try:
            value: Any = float(num)
        except ValueError:
            value = num
        unit = r[iu].strip() if iu is not None else None
        entries.append((r[ip].strip(), f"row {n - 1} ({r[ip].strip()}).value", value, unit or None))
    return entries, errors


def _entries_json(src: str, data: Any) -> tuple[list[tuple[str, str, Any, Any]], list[InputError]]:
    if not isinstance(data, dict) or not isinstance(data.get("decisions"), list):
        return [], [InputError(src, "decisions", "missing: expected a result JSON written by 'plantopt optimize --json' "
                               "(or simulate) with a list of decisions")]
    entries, errors = [], []
    for i, d in enumerate(data["decisions"]):
        where = f"decisions[{i}]"
        if not isinstance(d, dict) or not isinstance(d.get("path"), str):
            errors.append(InputError(src, where + ".path", "expected a decision with a 'path' (text)"))
            continue
        v = d.get("value")
        if not isinstance(v, (int, float)) or isinstance(v, bool):
            errors.append(InputError(src, where + ".value", f"expected a number, got {v!r}"))
            continue
        entries.append((d["path"], where + ".value", float(v), d.get("unit") or None))
    return entries, errors


def load_point(path: str | Path, fs: Flowsheet) -> OperatingPoint:
    """Read an operating point file for the decisions of ``fs``.

    Parameters
    ----------
    path : str or Path
        ``.toml``: ``description`` and a ``[values]`` table whose keys are
        decision input addresses or decision names and whose values carry
        units (``"85 kmol/h"`` or ``{ value = 85, unit = "kmol/h" }``).
        ``.csv``: a header ``path,value,unit`` and one row per decision.
        ``.json``: a result written by ``plantopt optimize --json`` (or
        ``simulate --json``); its decisions' values are read.
    fs : Flowsheet

    Returns
    -------
    OperatingPoint
        Decisions not in the file keep the flowsheet's base value.

    Raises
    ------
    InputError, InputErrors
        Missing or unreadable file, unknown addresses, values without or
        with wrong units, duplicates; every problem of the file at once.
    """
    src = str(path)
    p = Path(path)
    suffix = p.suffix.lower()
    if suffix not in POINT_SUFFIXES:
        raise InputError(src, "", f"expected a point file ending in {', '.join(POINT_SUFFIXES)}, got {p.suffix or 'no suffix'!r}")
    from plantopt.flowsheet import read_input_bytes

    try:
        text = read_input_bytes(p, what="a point file").decode("utf-8")
    except UnicodeDecodeError as exc:
        raise InputError(src, "", f"not UTF-8 text (byte {exc.start})") from None
    data = None
    if suffix == ".toml":
        entries, errors = _entries_toml(src, text)
        form = "toml"
    elif suffix == ".csv":
        entries, errors = _entries_csv(src, text)
        form = "csv"
    else:
        try:
            data = json.loads(text)
        except json.JSONDecodeError as exc:
            raise InputError(src, "", f"not valid JSON ({exc})") from None
        entries, errors = _entries_json(src, data)
        form = "result"
    values = {d.input: fs.inputs[d.input].si for d in fs.decisions}
    given: list[str] = []
    names = ", ".join(f"{d.name} ({d.input})" for d in fs.decisions)
    for key, where, value, unit in entries:
        addr = _decision_key(fs, key)
        if addr is None:
            errors.append(InputError(src, where, f"{key!r} is not a decision of {fs.file} (decisions: {names})"))
            continue
        if addr in given:
            errors.append(InputError(src, where, f"{addr} is given twice"))
            continue
        try:
            values[addr] = _value_si(fs, src, where, addr, value, unit)
            given.append(addr)
        except InputErrors as exc:
            errors += exc.errors
        except InputError as exc:
            errors.append(exc)
    if errors:
        raise InputErrors(errors)
    if not given:
        raise InputError(src, "", "no decision values in the file")
    pt = OperatingPoint(src, form, values, given, result=data)
    missing = [d.name for d in fs.decisions if d.input not in given]
    if missing:
        pt.warnings.append(f"{src}: no value for {', '.join(missing)}; the flowsheet's base value is used")
    if data is not None:
        if data.get("flowsheet_sha256") and data["flowsheet_sha256"] != fs.sha256:
            pt.warnings.append(f"{src} was computed for another version of the flowsheet (sha256 "
                               f"{str(data['flowsheet_sha256'])[:12]}..., this file {fs.sha256[:12]}...)")
        if data.get("command") == "optimize" and data.get("status") != "optimal":
            pt.warnings.append(f"{src}: the optimize run ended with status {data.get('status')!r}; "
                               "the proposed point is not a verified optimum")
        if data.get("overrides"):
            pt.warnings.append(f"{src}: the run that wrote it overrode inputs ({', '.join(sorted(data['overrides']))}); "
                               "this review uses the flowsheet's own values of those inputs")
    return pt


# ============================================================================ result models
class _M(BaseModel):
    model_config = ConfigDict(extra="forbid")


class MoveEntry(_M):
    """One decision's move. ``relative`` is change / |current| on the absolute
    SI scale (kelvin, pascal), so it does not depend on the display unit;
    ``fraction_of_range`` is change / (upper - lower) of the decision's range."""

    path: str
    name: str
    unit: str
    current: float
    proposed: float
    change: float
    relative: Optional[float] = None
    fraction_of_range: float
    lower: float
    upper: float
    outside_range: bool = False


class LimitAtPoint(_M):
    """A limit at one point: ``margin`` to the nearer bound in the limit's unit
    (negative when violated), ``margin_fraction`` = margin / scale."""

    value: float
    margin: float
    margin_fraction: float
    side: str
    active: bool
    near: bool
    violated: bool
    state: str


class LimitEntry(_M):
    name: str
    kind: str
    quantity: str
    unit: str
    description: str = ""
    bounds: list[Optional[float]]
    scale: float
    near_band: float
    current: Optional[LimitAtPoint] = None
    proposed: Optional[LimitAtPoint] = None
    margin_change: Optional[float] = None
    becomes_active: bool = False
    loses_margin: bool = False
    shadow_price: Optional[float] = None
    shadow_price_unit: Optional[str] = None


class SensitivityEntry(_M):
    """How one move acts on one limit's margin.

    ``per_unit`` is d(margin)/d(decision) at the current point (central
    finite difference of simulations), in limit unit per decision unit;
    ``linear`` is per_unit times the move; ``alone`` the margin change
    simulated with this move alone. Negative values consume margin.
    """

    limit: str
    decision: str
    side: str
    per_unit: float
    unit: str
    linear: float
    alone: Optional[float] = None
    share_of_margin: Optional[float] = None


class PlanStep(_M):
    index: int
    label: str
    values: dict[str, float]
    status: str
    safe: bool
    profit: Optional[float] = None
    min_margin_fraction: Optional[float] = None
    worst_limit: Optional[str] = None
    crossed: list[dict[str, Any]] = Field(default_factory=list)


class MovePlan(_M):
    name: str
    description: str
    splits: int = 1
    order: list[str] = Field(default_factory=list)
    safe: bool
    steps: list[PlanStep] = Field(default_factory=list)


class ProfitSummary(_M):
    unit: str
    current: Optional[float] = None
    proposed: Optional[float] = None
    gain: Optional[float] = None
    breakdown: dict[str, dict[str, Optional[float]]] = Field(default_factory=dict)


class ReviewResult(_M):
    """Result of ``plantopt review``; ``status`` is ``clear``, ``blocked`` or ``failed``."""

    command: str = "review"
    status: str
    blocking: list[str] = Field(default_factory=list)
    warnings: list[str] = Field(default_factory=list)
    flowsheet: str
    flowsheet_name: str
    flowsheet_sha256: str
    tool_version: str
    date: str
    notice: str = SAFETY_NOTICE
    data_notice: str = ""
    current_source: str
    proposed_source: str
    near: float
    steps: int
    moves: list[MoveEntry]
    limits: list[LimitEntry]
    profit: ProfitSummary
    sensitivities: list[SensitivityEntry] = Field(default_factory=list)
    ramp: Optional[MovePlan] = None
    suggested_plan: Optional[MovePlan] = None
    plan_search: str = ""
    simulations: int = 0
    current_status: str = ""
    proposed_status: str = ""
    current_result: Optional[RunResult] = None
    proposed_result: Optional[RunResult] = None


# ============================================================================ the engine
@dataclass
class _Sol:
    ok: bool
    status: str
    x: np.ndarray
    g: np.ndarray
    res: Any
    margin: np.ndarray  # SI, nearer side
    side: list[str]
    profit: float


class _Budget(Exception):
    pass


class _Engine:
    """Square solves of one assembled flowsheet at changing decision values.

    Only the decisions' specification rows change between points, so one
    assembly serves every solve, and each solve starts from a neighbouring
    converged point (continuation), which is both quicker and safer than a
    cold start along a ramp; a cold start is the fallback.
    """

    def __init__(self, fs: Flowsheet, asm: Assembly):
        self.fs, self.asm = fs, asm
        rep = check_structure(asm)
        if not rep.ok:
            raise StructureError(f"{fs.file}: the square system cannot be solved: " + rep.lines()[0], rep.lines()[1:])
        self.structure = rep.lines()
        self.work = fs.copy()
        self.paths = [d.input for d in fs.decisions]
        self.lbx, self.ubx = asm.x_bounds()
        self.lim_rows = np.array([asm.limit_rows[l.name] for l in fs.limits], dtype=int)
        self.lo = np.array([fs.inputs[l.lower_path].si if l.lower_path else np.nan for l in fs.limits])
        self.hi = np.array([fs.inputs[l.upper_path].si if l.upper_path else np.nan for l in fs.limits])
        # the same tolerance build_result uses to call a limit active or violated
        self.tol = np.array([ACTIVE_TOL * max(1.0, abs(a) if np.isfinite(a) else 0.0, abs(b) if np.isfinite(b) else 0.0)
                             for a, b in zip(self.lo, self.hi)])
        self.pf = profit_factor(fs)
        self.count = 0
        self.budget = math.inf
        self.cache: dict[tuple, _Sol] = {}

    def set_point(self, u: np.ndarray) -> Flowsheet:
        for path, v in zip(self.paths, u):
            self.work.inputs[path].si = float(v)
        return self.work

    def margins(self, g: np.ndarray) -> tuple[np.ndarray, list[str]]:
        v = g[self.lim_rows]
        ml, mu = v - self.lo, self.hi - v
        m = np.fmin(ml, mu)
        side = ["lower" if (np.isfinite(a) and (not np.isfinite(b) or a <= b)) else "upper" for a, b in zip(ml, mu)]
        return m, side

    def side_margin(self, g: np.ndarray, sides: list[str]) -> np.ndarray:
        v = g[self.lim_rows]
        return np.array([v[j] - self.lo[j] if s == "lower" else self.hi[j] - v[j] for j, s in enumerate(sides)])

    def solve(self, u: np.ndarray, x0: np.ndarray | None = None) -> _Sol:
        key = tuple(float(a) for a in u)
        if key in self.cache:
            return self.cache[key]
        if self.count >= self.budget:
            raise _Budget()
        fs = self.set_point(u)
        lbg, ubg = self.asm.g_bounds("simulate", fs)
        p = self.asm.p_values(fs)
        # same tolerances as plantopt.studies.simulate, so the margins agree with it
        opts = {"x_nominal": self.asm.x_nominal(), "max_iter": 200, "tol": 1e-12}
        res = None
        for start in ([x0] if x0 is not None else []) + [None]:
            xs = self.asm.initial_point(fs) if start is None else start
            self.count += 1
            res = solve_equations(self.asm.compiled, xs, self.lbx, self.ubx, lbg, ubg, p=p, options=opts)
            if res.success and np.all(np.isfinite(res.x)):
                break
        status = str(getattr(res.status, "value", res.status))
        x = np.asarray(res.x, dtype=float)
        g = np.asarray(res.g, dtype=float)
        ok = bool(res.success and np.all(np.isfinite(x)))
        m, side = self.margins(g) if ok else (np.full(len(self.lim_rows), np.nan), ["lower"] * len(self.lim_rows))
        profit = float(self.asm.evaluate_report(x, fs)["profit.total"]) * self.pf if ok else float("nan")
        sol = _Sol(ok, status, x, g, res, m, side, profit)
        self.cache[key] = sol
        return sol

    def run_result(self, u: np.ndarray, sol: _Sol) -> RunResult:
        fs = self.set_point(u).copy()
        out = build_result(self.asm, fs, sol.res, command="simulate", status=sol.status, structure=self.structure)
        out.warm_start = None  # solver restart data: bulky and of no use to a reader of the review
        return out


# ============================================================================ helpers
def limit_scale(fs: Flowsheet, j: int, values_si: list[float]) -> float:
    """The scale (SI) against which a limit's margin is judged.

    A two-sided limit: its range, upper - lower. A one-sided limit: the
    bound's magnitude on the absolute SI scale (kelvin, pascal), so that the
    near band does not change with the display unit (a band of 5 % of
    '200 degC' would differ from 5 % of '392 degF'). A bound of zero has no
    magnitude: a fraction uses its full range 1, anything else the larger
    magnitude of the limited quantity at the two points.
    """
    lim = fs.limits[j]
    lo = fs.inputs[lim.lower_path].si if lim.lower_path else None
    hi = fs.inputs[lim.upper_path].si if lim.upper_path else None
    if lo is not None and hi is not None and hi > lo:
        return hi - lo
    b = abs(lo if lo is not None else hi)
    if b > 0:
        return b
    if lim.qkind.name in ("fraction", "dimensionless"):
        return 1.0
    vals = [abs(v) for v in values_si if v is not None and math.isfinite(v)]
    return max(vals + [1e-12]) or 1.0


def _fmt_value(v: float, unit: str) -> str:
    return f"{v:.6g} {unit}".rstrip()


class _Ctx:
    """What the review needs about the limits and decisions, in display units."""

    def __init__(self, fs: Flowsheet, eng: _Engine, u_cur: np.ndarray, u_prop: np.ndarray, cur: _Sol, prop: _Sol, near: float):
        self.fs, self.eng, self.near = fs, eng, near
        self.u_cur, self.u_prop = u_cur, u_prop
        self.delta = u_prop - u_cur
        self.cur, self.prop = cur, prop
        self.n_lim = len(fs.limits)
        vals = [[s.g[eng.lim_rows[j]] if s.ok else None for s in (cur, prop)] for j in range(self.n_lim)]
        self.scale = np.array([limit_scale(fs, j, vals[j]) for j in range(self.n_lim)])
        self.lim_unit = [l.unit or "" for l in fs.limits]
        self.lim_size = np.array([unit_size_si(l.qkind.name, l.unit) for l in fs.limits])
        self.dec_size = np.array([unit_size_si(d.qkind.name, d.unit) for d in fs.decisions])

    def display(self, j: int, v_si: float) -> float:
        lim = self.fs.limits[j]
        return to_display(v_si, lim.qkind.name, lim.unit)

    def dec_display(self, i: int, v_si: float) -> float:
        d = self.fs.decisions[i]
        return to_display(v_si, d.qkind.name, d.unit)

    def at_point(self, j: int, sol: _Sol) -> LimitAtPoint:
        m = float(sol.margin[j])
        tol = float(self.eng.tol[j])
        violated = m < -tol
        active = abs(m) <= tol
        near = (not violated) and (not active) and m <= self.near * self.scale[j]
        state = "violated" if violated else "active" if active else "near" if near else "clear"
        return LimitAtPoint(value=self.display(j, float(sol.g[self.eng.lim_rows[j]])), margin=m / self.lim_size[j],
                            margin_fraction=m / self.scale[j], side=sol.side[j], active=active, near=near,
                            violated=violated, state=state)

    def crossed(self, sol: _Sol) -> list[int]:
        """Limits a step crosses: violated there and worse than at the current
        point (a limit already violated today is not made a step's fault
        unless the step makes it worse)."""
        m, tol = sol.margin, self.eng.tol
        base = np.where(self.cur.ok, self.cur.margin, np.inf)
        return [j for j in range(self.n_lim) if m[j] < -tol[j] and m[j] < base[j] - tol[j]]

    def step(self, index: int, label: str, u: np.ndarray, sol: _Sol) -> PlanStep:
        values = {d.name: self.dec_display(i, u[i]) for i, d in enumerate(self.fs.decisions)}
        if not sol.ok:
            return PlanStep(index=index, label=label, values=values, status=sol.status, safe=False)
        frac = sol.margin / self.scale
        jw = int(np.argmin(frac)) if self.n_lim else None
        cr = [{"limit": self.fs.limits[j].name, "value": self.display(j, float(sol.g[self.eng.lim_rows[j]])),
               "margin": float(sol.margin[j] / self.lim_size[j]), "unit": self.lim_unit[j]} for j in self.crossed(sol)]
        return PlanStep(index=index, label=label, values=values, status=sol.status, safe=not cr, profit=sol.profit,
                        min_margin_fraction=float(frac[jw]) if jw is not None else None,
                        worst_limit=self.fs.limits[jw].name if jw is not None else None, crossed=cr)


# ============================================================================ move plans
def _ramp(ctx: _Ctx, steps: int) -> MovePlan:
    """Every decision moved together in ``steps + 1`` equal increments."""
    eng = ctx.eng
    out = [ctx.step(0, "current", ctx.u_cur, ctx.cur)]
    x = ctx.cur.x
    for k in range(1, steps + 1):
        t = k / (steps + 1)
        u = ctx.u_cur + t * ctx.delta
        sol = eng.solve(u, x)
        out.append(ctx.step(k, f"{100 * t:.0f} % of every move", u, sol))
        if sol.ok:
            x = sol.x
    out.append(ctx.step(steps + 1, "proposed", ctx.u_prop, ctx.prop))
    return MovePlan(name="simultaneous ramp", description=f"all moves together, checked at {steps} intermediate points",
                    safe=all(s.safe for s in out[1:]), steps=out)


def _search(ctx: _Ctx, steps: int, splits: int) -> tuple[list[tuple[int, int, list[tuple[np.ndarray, _Sol]]]], int] | None:
    """Depth-first search for a safe sequence of single-decision moves.

    Each moving decision is moved in ``splits`` equal parts, one decision
    at a time; a state is how many parts of each move are done. A state
    from which no safe way to the proposed point exists is remembered, so
    with ``splits = 1`` every ordering of the moves is covered by at most
    n 2^(n-1) ramps rather than n! sequences. Candidates are tried
    best-first (largest smallest margin fraction after the move). Each part
    is checked at ceil(steps / splits) intermediate points and its end.
    """
    eng = ctx.eng
    moving = [i for i in range(len(ctx.delta)) if ctx.delta[i] != 0.0]
    goal = tuple([splits] * len(moving))
    dead: set[tuple] = set()
    inner = max(1, math.ceil(steps / splits))

    def u_of(c: tuple, extra: tuple[int, float] | None = None) -> np.ndarray:
        u = ctx.u_cur.copy()
        for n, i in enumerate(moving):
            f = c[n] / splits
            if extra and extra[0] == n:
                f += extra[1] / splits
            u[i] = ctx.u_cur[i] + f * ctx.delta[i] if f < 1.0 else ctx.u_prop[i]
        return u

    def safe(sol: _Sol) -> bool:
        return sol.ok and not ctx.crossed(sol)

    def dfs(c: tuple, x: np.ndarray):
        if c == goal:
            return []
        cands = []
        for n in range(len(moving)):
            if c[n] >= splits:
                continue
            c2 = c[:n] + (c[n] + 1,) + c[n + 1:]
            if c2 in dead:
                continue
            u2 = u_of(c2)
            sol = eng.solve(u2, x)
            if not safe(sol):
                dead.add(c2)
                continue
            cands.append((float(np.min(sol.margin / ctx.scale)) if ctx.n_lim else 0.0, n, c2, u2, sol))
        cands.sort(key=lambda t: -t[0])
        for _, n, c2, u2, sol in cands:
            pts, xw, ok = [], x, True
            for s in range(1, inner + 1):
                u = u_of(c, (n, s / (inner + 1)))
                sp = eng.solve(u, xw)
                pts.append((u, sp))
                if not safe(sp):
                    ok = False
                    break
                xw = sp.x
            if not ok:
                continue
            pts.append((u2, sol))
            rest = dfs(c2, sol.x)
            if rest is not None:
                return [(moving[n], c[n] + 1, pts)] + rest
        dead.add(c)
        return None

    path = dfs(tuple([0] * len(moving)), ctx.cur.x)
    return (path, inner) if path is not None else None


def _sequence_plan(ctx: _Ctx, path, splits: int) -> MovePlan:
    fs = ctx.fs
    out = [ctx.step(0, "current", ctx.u_cur, ctx.cur)]
    order = []
    k = 0
    for i, part, pts in path:
        d = fs.decisions[i]
        what = d.name if splits == 1 else f"{d.name} (part {part} of {splits})"
        order.append(what)
        for n, (u, sol) in enumerate(pts):
            k += 1
            last = n == len(pts) - 1
            label = f"{what}: {'done' if last else f'{100 * (n + 1) / len(pts):.0f} %'}"
            out.append(ctx.step(k, label, u, sol))
    desc = ("one decision at a time, in this order" if splits == 1
            else f"one decision at a time, each move in {splits} equal parts, in this order")
    return MovePlan(name="sequence", description=desc, splits=splits, order=order, safe=all(s.safe for s in out), steps=out)


# ============================================================================ the review
def review(
    fs: Flowsheet,
    proposed: OperatingPoint,
    current: OperatingPoint | None = None,
    *,
    near: float = DEFAULT_NEAR,
    steps: int = DEFAULT_STEPS,
    assembly: Assembly | None = None,
    plan_budget: int = MAX_PLAN_SIMULATIONS,
    keep_runs: bool = True,
) -> ReviewResult:
    """Review a change of operating point: margins at both points, moves, a move plan.

    Parameters
    ----------
    fs : Flowsheet
    proposed : OperatingPoint
        The point the change request asks for (see :func:`load_point`).
    current : OperatingPoint, optional
        The present point; default the flowsheet's base values.
    near : float
        Near-active band as a fraction of each limit's scale
        (:func:`limit_scale`); default :data:`DEFAULT_NEAR`.
    steps : int
        Intermediate points checked on the straight ramp.
    assembly : Assembly, optional
        A prebuilt assembly of ``fs`` (reused for every simulation).
    plan_budget : int
        Most simulations spent searching for a safe ordering.
    keep_runs : bool
        Keep the two full simulation results (streams, units) in the result.

    Returns
    -------
    ReviewResult
        ``status`` ``"clear"`` when both points converge, the proposed point
        violates no limit and lies within every decision's range, and the
        straight ramp stays inside every limit; ``"blocked"`` when the
        proposed point or a ramp step violates a limit (a safe sequence, if
        one was found, is in ``suggested_plan``); ``"failed"`` when a
        simulation did not converge.

    Raises
    ------
    InputError
        ``near`` or ``steps`` out of range.
    StructureError
        The square system cannot be solved.
    """
    if not (isinstance(near, (int, float)) and math.isfinite(near) and 0.0 <= near < 1.0):
        raise InputError("<command line>", "--near", f"expected a fraction in [0, 1), got {near!r}")
    if not (isinstance(steps, int) and 0 <= steps <= 100):
        raise InputError("<command line>", "--steps", f"expected a whole number from 0 to 100, got {steps!r}")
    current = current or base_point(fs)
    asm = assembly or assemble(fs)
    eng = _Engine(fs, asm)
    paths = eng.paths
    u_cur = np.array([current.values_si[p] for p in paths])
    u_prop = np.array([proposed.values_si[p] for p in paths])
    # a move below solver round-off is no move
    delta = u_prop - u_cur
    tiny = np.abs(delta) <= 1e-12 * np.maximum(1.0, np.abs(u_cur))
    u_prop = np.where(tiny, u_cur, u_prop)

    blocking: list[str] = []
    warnings = list(current.warnings) + list(proposed.warnings)
    cur = eng.solve(u_cur)
    prop = eng.solve(u_prop, cur.x if cur.ok else None)
    ctx = _Ctx(fs, eng, u_cur, u_prop, cur, prop, near)

    moves = []
    for i, d in enumerate(fs.decisions):
        lo, hi = fs.inputs[d.lower_path].si, fs.inputs[d.upper_path].si
        k = d.qkind.name
        # the tolerance build_result uses to call a decision at its bound
        rtol = ACTIVE_TOL * max(1.0, abs(lo), abs(hi))
        outside = not (lo - rtol <= u_prop[i] <= hi + rtol)
        ch = (u_prop[i] - u_cur[i])
        moves.append(MoveEntry(
            path=d.input, name=d.name, unit=d.unit, current=ctx.dec_display(i, u_cur[i]), proposed=ctx.dec_display(i, u_prop[i]),
            change=ch / ctx.dec_size[i], relative=ch / abs(u_cur[i]) if u_cur[i] != 0 else None,
            fraction_of_range=ch / (hi - lo) if hi > lo else 0.0, lower=to_display(lo, k, d.unit), upper=to_display(hi, k, d.unit),
            outside_range=outside))
        if outside:
            blocking.append(f"proposed {d.name} = {_fmt_value(ctx.dec_display(i, u_prop[i]), d.unit)} is outside its range "
                            f"[{to_display(lo, k, d.unit):g}, {to_display(hi, k, d.unit):g}] {d.unit}".rstrip())
        if not (lo - rtol <= u_cur[i] <= hi + rtol):
            warnings.append(f"current {d.name} lies outside its decision range")

    # shadow prices come from the optimize result, where the multipliers are
    shadow: dict[str, tuple[float, str]] = {}
    if proposed.result and proposed.result.get("command") == "optimize":
        for lr in proposed.result.get("limits") or []:
            if isinstance(lr, dict) and isinstance(lr.get("shadow_price"), (int, float)):
                shadow[str(lr.get("name"))] = (float(lr["shadow_price"]), str(lr.get("shadow_price_unit") or ""))

    limits = []
    for j, lim in enumerate(fs.limits):
        lo, hi = eng.lo[j], eng.hi[j]
        e = LimitEntry(name=lim.name, kind=lim.kind, quantity=lim.quantity, unit=ctx.lim_unit[j], description=lim.description,
                       bounds=[ctx.display(j, lo) if np.isfinite(lo) else None, ctx.display(j, hi) if np.isfinite(hi) else None],
                       scale=float(ctx.scale[j] / ctx.lim_size[j]), near_band=float(near * ctx.scale[j] / ctx.lim_size[j]))
        if cur.ok:
            e.current = ctx.at_point(j, cur)
        if prop.ok:
            e.proposed = ctx.at_point(j, prop)
        if e.current and e.proposed:
            e.margin_change = e.proposed.margin - e.current.margin
            e.loses_margin = bool(prop.margin[j] < cur.margin[j] - eng.tol[j])
            e.becomes_active = (e.proposed.active or e.proposed.near) and not (e.current.active or e.current.near)
        if lim.name in shadow:
            e.shadow_price, e.shadow_price_unit = shadow[lim.name]
        if e.proposed and e.proposed.violated:
            blocking.append(f"BLOCKING: at the proposed point limit {lim.name} is violated: value "
                            f"{_fmt_value(e.proposed.value, e.unit)}, margin {e.proposed.margin:.4g} {e.unit}".rstrip())
        if e.current and e.current.violated:
            warnings.append(f"limit {lim.name} is already violated at the current point (margin {e.current.margin:.4g} {e.unit})".rstrip())
        limits.append(e)

    bd_c = _breakdown(eng, cur, current, fs)
    bd_p = _breakdown(eng, prop, proposed, fs)
    profit = ProfitSummary(unit=fs.profit_unit, current=cur.profit if cur.ok else None, proposed=prop.profit if prop.ok else None)
    if cur.ok and prop.ok:
        profit.gain = prop.profit - cur.profit
        for kname in bd_c:
            profit.breakdown[kname] = {"current": bd_c[kname], "proposed": bd_p.get(kname),
                                       "change": bd_p.get(kname, 0.0) - bd_c[kname]}

    out = ReviewResult(
        status="clear", flowsheet=fs.file, flowsheet_name=fs.name, flowsheet_sha256=fs.sha256, tool_version=__version__,
        date=_dt.datetime.now(_dt.timezone.utc).astimezone().isoformat(timespec="seconds"), data_notice=fs.notice,
        current_source=current.source, proposed_source=proposed.source, near=float(near), steps=steps, moves=moves,
        limits=limits, profit=profit, current_status=cur.status, proposed_status=prop.status)
    if keep_runs:
        if cur.ok:
            out.current_result = eng.run_result(u_cur, cur)
        if prop.ok:
            out.proposed_result = eng.run_result(u_prop, prop)
    if not cur.ok or not prop.ok:
        which = [n for n, s in (("current", cur), ("proposed", prop)) if not s.ok]
        blocking.insert(0, f"FAILED: the simulation of the {' and '.join(which)} point did not converge "
                        f"({', '.join(s.status for s in (cur, prop) if not s.ok)}); nothing can be concluded about its limits")
        out.status, out.blocking, out.warnings, out.simulations = "failed", blocking, warnings, eng.count
        return out

    out.sensitivities = _sensitivities(ctx)
    out.ramp = _ramp(ctx, steps)
    failed_steps = [s for s in out.ramp.steps if s.status not in ("converged", "optimal")]
    for s in out.ramp.steps[1:-1]:
        for c in s.crossed:
            blocking.append(f"BLOCKING: ramp step {s.index} ({s.label}) crosses limit {c['limit']}: value "
                            f"{_fmt_value(c['value'], c['unit'])}, margin {c['margin']:.4g} {c['unit']}".rstrip())
    if failed_steps:
        blocking.append("FAILED: the simulation did not converge at ramp step(s) "
                        + ", ".join(f"{s.index} ({s.label})" for s in failed_steps))
    proposed_blocks = any(m.outside_range for m in moves) or any(e.proposed and e.proposed.violated for e in limits)
    if not out.ramp.safe and not proposed_blocks:
        eng.budget = eng_budget_end = eng.count + plan_budget
        found = None
        tried = []
        try:
            for k in range(1, MAX_SPLITS + 1):
                tried.append(k)
                r = _search(ctx, steps, k)
                if r is not None:
                    found = (r[0], k)
                    break
        except _Budget:
            pass
        eng.budget = math.inf
        desc = ", ".join("every ordering of whole moves" if k == 1 else f"orderings of moves in {k} parts" for k in tried)
        if found:
            out.suggested_plan = _sequence_plan(ctx, found[0], found[1])
            out.plan_search = f"a safe sequence was found (searched: {desc})"
        else:
            stopped = eng.count >= eng_budget_end
            out.plan_search = (f"no safe sequence found among the orderings tried ({desc}"
                               + (f"; the search of the last stopped at its budget of {plan_budget} simulations" if stopped else "") + ")")
    elif proposed_blocks:
        out.plan_search = "no move plan can help: the proposed point itself is blocking"
    else:
        out.plan_search = "the simultaneous ramp stays inside every limit"
    if failed_steps:
        out.status = "failed"
    elif blocking:
        out.status = "blocked"
    out.blocking, out.warnings, out.simulations = blocking, warnings, eng.count
    return out


def _breakdown(eng: _Engine, sol: _Sol, pt: OperatingPoint, fs: Flowsheet) -> dict[str, float]:
    if not sol.ok:
        return {}
    rep = eng.asm.evaluate_report(sol.x, eng.set_point(np.array([pt.values_si[p] for p in eng.paths])))
    return {n: float(rep[f"profit.{n}"]) * eng.pf for n in eng.asm.breakdown_names}


def _sensitivities(ctx: _Ctx) -> list[SensitivityEntry]:
    """d(margin)/d(decision) at the current point by central differences.

    The step is 1e-3 of the decision's range: far above the square solve's
    round-off (scaled residual 1e-12) and small enough that the second-order
    error of a central difference is negligible for smooth unit models. At a
    range bound the difference is one-sided. The margin is taken on the side
    that is nearer at the proposed point (the side the change matters for).
    """
    fs, eng = ctx.fs, ctx.eng
    sides = ctx.prop.side
    m0 = eng.side_margin(ctx.cur.g, sides)
    out = []
    for i, d in enumerate(fs.decisions):
        if ctx.delta[i] == 0.0:
            continue
        lo, hi = fs.inputs[d.lower_path].si, fs.inputs[d.upper_path].si
        h = 1e-3 * (hi - lo) if hi > lo else 1e-3 * max(abs(ctx.u_cur[i]), 1.0)
        up = ctx.u_cur.copy()
        dn = ctx.u_cur.copy()
        up[i] = min(ctx.u_cur[i] + h, max(hi, ctx.u_cur[i]))
        dn[i] = max(ctx.u_cur[i] - h, min(lo, ctx.u_cur[i]))
        sp, sm = eng.solve(up, ctx.cur.x), eng.solve(dn, ctx.cur.x)
        one = ctx.u_cur.copy()
        one[i] = ctx.u_prop[i]
        so = eng.solve(one, ctx.cur.x)
        if not (sp.ok and sm.ok) or up[i] == dn[i]:
            continue
        dm = (eng.side_margin(sp.g, sides) - eng.side_margin(sm.g, sides)) / (up[i] - dn[i])
        alone = eng.side_margin(so.g, sides) - m0 if so.ok else None
        for j, lim in enumerate(fs.limits):
            per = float(dm[j] * ctx.dec_size[i] / ctx.lim_size[j])
            lin = float(dm[j] * ctx.delta[i] / ctx.lim_size[j])
            al = float(alone[j] / ctx.lim_size[j]) if alone is not None else None
            share = float((alone[j] if alone is not None else dm[j] * ctx.delta[i]) / m0[j]) if m0[j] > eng.tol[j] else None
            out.append(SensitivityEntry(limit=lim.name, decision=d.name, side=sides[j], per_unit=per,
                                        unit=f"{ctx.lim_unit[j] or '1'} per {d.unit or '1'}", linear=lin, alone=al,
                                        share_of_margin=share))
    return out


def review_files(flowsheet: str | Path, proposed: str | Path, current: str | Path | None = None, **kw: Any) -> tuple[Flowsheet, ReviewResult]:
    """Load the flowsheet and the point files, then :func:`review` (for the command line)."""
    from plantopt.flowsheet import load_flowsheet

    fs = load_flowsheet(flowsheet)
    errors: list[InputError] = []
    pts = []
    for f in (proposed, current):
        if f is None:
            pts.append(None)
            continue
        try:
            pts.append(load_point(f, fs))
        except InputErrors as exc:
            errors += exc.errors
            pts.append(None)
        except InputError as exc:
            errors.append(exc)
            pts.append(None)
    if errors:
        raise InputErrors(errors)
    return fs, review(fs, pts[0], pts[1], **kw)
