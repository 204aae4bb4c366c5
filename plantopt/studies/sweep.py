"""What-if sweeps: re-optimize the plant over a line, a grid or a list of
scenarios of input values, with warm starts, active-set breakpoints, resumable
output and any :class:`concurrent.futures.Executor`.

How a sweep is organised
------------------------
Points are numbered in grid order (the last ``--vary`` axis fastest). Each
point has a *neighbour*: the point one step back along the last axis on which
its index is not zero (so a grid is a spine along the first axis with branches
along the others; a scenario list links each row to its nearest earlier row).
A point is warm-started from its neighbour's solution, which makes the sweep a
forest of continuation chains. Every ``chain_length`` steps along an axis a
chain is cut and restarted cold, so that a long line still splits into chains
that run in parallel.

The chain structure depends only on the sweep (never on the executor or the
number of workers), and each point is solved from exactly the same start, so
the results are identical whichever executor runs them. Rows are kept in point
order in the output file, which is rewritten atomically as points finish; a
rerun with the same output file skips the points already there.

Where the active set (binding limits and decisions at a bound) differs between
two grid neighbours, the input value at which it changes is located by
bisection along that axis: the breakpoints of the active-set map.

Results are advisory; plant changes follow the site's management-of-change
procedure (:data:`plantopt.results.SAFETY_NOTICE`).
"""

from __future__ import annotations

import concurrent.futures as cf
import csv
import hashlib
import io
import itertools
import json
import math
import threading
import time
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import Any, Callable, Iterable, Mapping, Sequence

import numpy as np

from plantopt import units as U
from plantopt.errors import InputError, PlantoptError
from plantopt.flowsheet import Flowsheet
from plantopt.results import SAFETY_NOTICE, RunResult

CLI = "<command line>"

DEFAULT_CHAIN_LENGTH = 10
"""Points per continuation chain before a cold restart: long enough that warm
starts dominate the cost (one cold solve in ten), short enough that a 50-point
line gives five chains to run side by side."""

DEFAULT_BISECT_TOL = 1e-3
"""Breakpoints are located to this fraction of the grid step (about ten warm
solves per breakpoint)."""

MAX_POINTS = 100_000
"""Refuse sweeps larger than this (a typo such as N=1e6 would run for days)."""

_WRITE_INTERVAL_S = 0.5
"""Output is rewritten at most this often while points finish (always at the end)."""


# ---------------------------------------------------------------------- specification
@dataclass(frozen=True)
class Axis:
    """One varied input.

    Attributes
    ----------
    path : str
        Input address (see ``plantopt inputs``).
    values : tuple of float
        Values in ``unit``.
    unit : str
        Unit of ``values``: the one given on the command line, else the unit
        the file uses for that input ('' for dimensionless inputs).
    """

    path: str
    values: tuple[float, ...]
    unit: str

    def text(self, value: float) -> str:
        """Override text of one value, in this axis' unit."""
        return f"{value!r} {self.unit}" if self.unit else repr(value)


def parse_vary(spec: str, fs: Flowsheet, *, source: str = CLI) -> Axis:
    """Parse ``PATH=START:STOP:N`` (optionally ``PATH=START:STOP:N:UNIT``).

    ``START`` and ``STOP`` may carry a unit (``0.8 USD/kg``); otherwise they
    are in the unit given as the fourth field, else in the file's unit for
    that input. ``N`` points are spaced evenly, ends included.

    Raises
    ------
    InputError
        Naming ``--vary`` and what was expected.
    """
    path, sep, rng = spec.partition("=")
    path = path.strip()
    if not sep or not path or not rng.strip():
        raise InputError(source, "--vary", f"expected PATH=START:STOP:N, got {spec!r}")
    if path not in fs.inputs:
        near = [p for p in fs.inputs if p.split(".")[-1] == path.split(".")[-1]][:3]
        hint = f" (did you mean {', '.join(near)}?)" if near else " (see 'plantopt inputs')"
        raise InputError(source, f"--vary {path}", f"no such input{hint}")
    iv = fs.inputs[path]
    parts = [s.strip() for s in rng.split(":")]
    if len(parts) not in (3, 4):
        raise InputError(source, f"--vary {path}", f"expected START:STOP:N or START:STOP:N:UNIT, got {rng!r}")
    try:
        n = int(parts[2])
    except ValueError:
        raise InputError(source, f"--vary {path}", f"N must be a whole number of points, got {parts[2]!r}") from None
    if n < 1 or n > MAX_POINTS:
        raise InputError(source, f"--vary {path}", f"N must be between 1 and {MAX_POINTS}, got {n}")
    unit = parts[3] if len(parts) == 4 else None
    ends = []
    for label, txt in (("START", parts[0]), ("STOP", parts[1])):
        num, _, u = txt.partition(" ")
        try:
            val = float(num)
        except ValueError:
            raise InputError(source, f"--vary {path}", f"{label} must be a number (optionally with a unit), got {txt!r}") from None
        if not math.isfinite(val):
            raise InputError(source, f"--vary {path}", f"{label} must be finite, got {txt!r}")
        u = u.strip() or None
        if u and unit and u != unit:
            raise InputError(source, f"--vary {path}", f"{label} is in {u!r} but the range is in {unit!r}; use one unit")
        unit = unit or u
        ends.append(val)
    unit = unit if unit is not None else iv.unit
    if unit:
        # the unit must be one for this kind of input: let the unit layer say so
        U.parse_quantity(f"{ends[0]} {unit}", iv.kind, file=source, path=f"--vary {path}")
    elif iv.unit:
        unit = iv.unit
    # 12 significant digits: 0.82 rather than linspace's 0.8200000000000001 in the table
    vals = tuple(float(f"{v:.12g}") for v in np.linspace(ends[0], ends[1], n)) if n > 1 else (ends[0],)
    return Axis(path, vals, unit or "")


def read_scenarios(path: str | Path, fs: Flowsheet) -> tuple[list[str], list[dict[str, str]], list[str]]:
    """Read a scenarios CSV: a header of input addresses, one scenario per row.

    An optional column ``scenario`` names the rows. A cell is a number in the
    file's unit for that input, or a quantity with its unit (``0.9 USD/kg``).

    Returns
    -------
    paths, rows, names
        The addresses, each row as address -> override text, the row names.
    """
    src = str(path)
    from plantopt.flowsheet import read_input_bytes

    try:
        text = read_input_bytes(path, what="a scenario CSV file").decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InputError(src, "", f"not a readable UTF-8 CSV file (byte {exc.start})") from None
    reader = csv.reader(io.StringIO(text))
    try:
        header = [h.strip() for h in next(reader)]
    except StopIteration:
        raise InputError(src, "", "empty file; expected a header row of input addresses") from None
    paths = [h for h in header if h != "scenario"]
    if not paths:
        raise InputError(src, "header", "no input columns; expected input addresses such as economics.feeds.FEED_C3")
    for h in paths:
        if h not in fs.inputs:
            raise InputError(src, f"header.{h}", "no such input (see 'plantopt inputs')")
    if len(set(header)) != len(header):
        raise InputError(src, "header", "a column appears twice")
    rows: list[dict[str, str]] = []
    names: list[str] = []
    for lineno, rec in enumerate(reader, start=2):
        if not any(c.strip() for c in rec):
            continue
        if len(rec) != len(header):
            raise InputError(src, f"line {lineno}", f"expected {len(header)} cells, got {len(rec)}")
        cells = dict(zip(header, (c.strip() for c in rec)))
        row = {}
        for h in paths:
            if not cells[h]:
                raise InputError(src, f"line {lineno}.{h}", "empty cell; expected a value")
            row[h] = cells[h]
        rows.append(row)
        names.append(cells.get("scenario", "") or str(len(rows)))
    if not rows:
        raise InputError(src, "", "no scenarios below the header")
    if len(rows) > MAX_POINTS:
        raise InputError(src, "", f"{len(rows)} scenarios; at most {MAX_POINTS}")
    return paths, rows, names


@dataclass
class SweepPoint:
    """One point of a sweep.

    Attributes
    ----------
    index : int
        Point number (grid order, last axis fastest; or scenario row).
    coords : tuple of int
        Grid indices (one per axis); ``(row,)`` for scenarios.
    values : dict of str to float
        Varied address -> value (in the axis' unit; scenarios: the file's unit).
    overrides : dict of str to str
        ``--set`` style overrides that realise this point.
    neighbour : int or None
        Nearest earlier point (the continuation predecessor).
    axis : int or None
        Axis along which ``neighbour`` lies (None for scenarios and the first point).
    warm_parent : int or None
        ``neighbour`` unless the chain is cut here (then a cold start).
    """

    index: int
    coords: tuple[int, ...]
    values: dict[str, float]
    overrides: dict[str, str]
    neighbour: int | None
    axis: int | None
    warm_parent: int | None
    label: str = ""


def grid_points(axes: Sequence[Axis], *, chain_length: int | None = DEFAULT_CHAIN_LENGTH) -> list[SweepPoint]:
    """The points of a line or grid with their continuation structure."""
    shape = [len(a.values) for a in axes]
    strides = [int(np.prod(shape[k + 1:])) for k in range(len(shape))]
    pts = []
    for idx, coords in enumerate(itertools.product(*[range(n) for n in shape])):
        nb = ax = None
        for k in range(len(coords) - 1, -1, -1):
            if coords[k] > 0:
                # step back along the last axis with a non-zero index; later axes are 0 there
                nb, ax = idx - strides[k], k
                break
        cut = nb is not None and chain_length is not None and chain_length > 0 and coords[ax] % chain_length == 0
        pts.append(SweepPoint(
            index=idx, coords=tuple(coords),
            values={a.path: a.values[c] for a, c in zip(axes, coords)},
            overrides={a.path: a.text(a.values[c]) for a, c in zip(axes, coords)},
            neighbour=nb, axis=ax, warm_parent=None if cut else nb,
        ))
    return pts


def scenario_points(paths: Sequence[str], rows: Sequence[Mapping[str, str]], names: Sequence[str],
                    fs: Flowsheet, source: str) -> list[SweepPoint]:
    """Scenario rows as points; each warm-starts from the nearest earlier row
    (distance in SI values scaled by each column's spread)."""
    si = np.zeros((len(rows), len(paths)))
    disp = np.zeros_like(si)
    for i, row in enumerate(rows):
        for j, p in enumerate(paths):
            iv = fs.inputs[p]
            txt = row[p]
            try:
                num = float(txt)
                txt = f"{num} {iv.unit}" if iv.unit else num
            except ValueError:
                pass
            q = U.parse_quantity(txt, iv.kind, file=source, path=f"line {i + 2}.{p}")
            si[i, j] = U.to_si(q, iv.kind)
            disp[i, j] = U.from_si(si[i, j], iv.kind, iv.unit) if iv.unit else si[i, j]
    spread = np.ptp(si, axis=0) if len(rows) > 1 else np.ones(len(paths))
    spread = np.where(spread > 0, spread, 1.0)
    pts = []
    for i, row in enumerate(rows):
        nb = None
        if i > 0:
            d = np.sqrt((((si[:i] - si[i]) / spread) ** 2).sum(axis=1))
            nb = int(np.argmin(d))  # first of equals: deterministic
        pts.append(SweepPoint(index=i, coords=(i,), values={p: float(disp[i, j]) for j, p in enumerate(paths)},
                              overrides=dict(row), neighbour=nb, axis=None, warm_parent=nb, label=names[i]))
    return pts


# ---------------------------------------------------------------------- worker side
@dataclass
class _Task:
    """Everything a worker needs to solve one point (picklable)."""

    fs: Flowsheet
    base_overrides: dict[str, str]
    overrides: dict[str, str]
    solver: str
    options: dict | None
    warm: dict | None
    predict_from: dict[str, str] | None = None  # overrides of the point ``warm`` solved


_POOL: dict[str, list] = {}
"""Per-process pool of built (flowsheet, assembly) pairs, keyed by the
flowsheet's content and input values. Building the NLP costs a few tenths of
a second; a sweep builds it once per worker (threads each take their own)."""


def _fs_key(fs: Flowsheet) -> str:
    h = hashlib.sha256(fs.sha256.encode())
    for path, iv in fs.inputs.items():
        h.update(f"{path}={iv.si!r};".encode())
    return h.hexdigest()


def _acquire(fs: Flowsheet):
    key = _fs_key(fs)
    free = _POOL.setdefault(key, [])
    try:
        return key, free.pop()
    except IndexError:
        from plantopt.assembly import assemble

        return key, (fs, assemble(fs))


def _release(key: str, pair) -> None:
    _POOL.setdefault(key, []).append(pair)


def prime_pool(fs: Flowsheet, assembly: Any) -> None:
    """Offer an already built assembly of ``fs`` to in-process (and forked) workers."""
    _release(_fs_key(fs), (fs, assembly))


def warm_dict(ws: Mapping[str, Any] | None) -> dict | None:
    """A :func:`plantopt.studies.optimize.optimize` warm start from a result's
    ``warm_start`` block (same assembly, so entries match slot by slot)."""
    if not ws or ws.get("x") is None:
        return None
    out: dict[str, Any] = {"x": np.asarray(ws["x"], dtype=float)}
    if ws.get("lam_g") is not None:
        out["lam_g"] = np.asarray(ws["lam_g"], dtype=float)
    if ws.get("lam_x") is not None:
        out["lam_x"] = np.asarray(ws["lam_x"], dtype=float)
    if ws.get("radius") is not None:
        out["radius"] = float(ws["radius"])
    return out


_CASADI_LOCK = threading.RLock()
"""casadi's symbolic core is not thread-safe (building and evaluating
expressions from two threads crashed a Dask LocalCluster run with
processes=False), so threads of one process solve one at a time; processes
(a process pool, Dask with processes) give the parallelism."""


def _solve(task: _Task) -> tuple[RunResult | None, str]:
    with _CASADI_LOCK:
        return _solve_locked(task)


def _solve_locked(task: _Task) -> tuple[RunResult | None, str]:
    from plantopt.studies.optimize import optimize

    key, (fs, asm) = _acquire(task.fs)
    try:
        ov = dict(task.base_overrides)
        ov.update(task.overrides)
        warm = warm_dict(task.warm)
        if warm is not None and task.predict_from is not None:
            warm = _predict(fs, asm, warm, {**task.base_overrides, **task.predict_from}, ov)
        res = optimize(fs, assembly=asm, overrides=ov, solver=task.solver, warm_from=warm, options=task.options)
        return res, res.status
    except PlantoptError as exc:
        return None, f"error: {exc}"
    except (ArithmeticError, ValueError, RuntimeError, np.linalg.LinAlgError) as exc:
        # numerical breakdown at one point is that point's status, never the sweep's end
        return None, f"error: {type(exc).__name__}: {exc}"
    finally:
        _release(key, (fs, asm))


def _predict(fs: Flowsheet, asm: Any, warm: dict, parent_ov: Mapping[str, str], ov: Mapping[str, str]) -> dict:
    """First-order predictor: move the neighbour's solution along its KKT
    sensitivity to this point's inputs (x + dx/dq dq, lam + dlam/dq dq), the
    active set held; the solver then corrects. Falls back to the plain warm
    start where the KKT system cannot be used."""
    from plantopt.studies.sensitivity import kkt_derivatives
    from plantopt.studies.simulate import apply_overrides

    try:
        fs_p, fs_c = apply_overrides(fs, dict(parent_ov)), apply_overrides(fs, dict(ov))
        steps = {q: fs_c.inputs[q].si - fs_p.inputs[q].si for q in ov if fs_c.inputs[q].si != fs_p.inputs[q].si}
        if not steps:
            return warm
        kd = kkt_derivatives(fs, fs_p, asm, warm["x"], warm["lam_g"], warm.get("lam_x"), list(steps))
        if not kd["regular"]:
            return warm
        x = warm["x"] + sum(kd["dx"][q] * dq for q, dq in steps.items())
        lbx, ubx = asm.x_bounds()
        out = dict(warm)
        out["x"] = np.clip(x, lbx, ubx)
        out["lam_g"] = warm["lam_g"] + sum(kd["dlam"][q] * dq for q, dq in steps.items())
        return out
    except (InputError, ArithmeticError, ValueError, np.linalg.LinAlgError):
        return warm


def active_set(res: RunResult) -> tuple[str, ...]:
    """Binding limits and decisions at a bound, as sorted ``kind:name:side`` labels."""
    out = [f"limit:{l.name}:{l.active_side}" for l in res.limits if l.active]
    out += [f"decision:{d.name}:{d.at_bound}" for d in res.decisions if d.at_bound]
    return tuple(sorted(out))


def _record(res: RunResult | None, status: str) -> dict[str, Any]:
    """The flat record of one solved point (values keyed by column name)."""
    rec: dict[str, Any] = {"status": status}
    if res is None:
        return rec
    rec["objective"] = res.objective.value
    rec["iterations"] = res.solver.iterations
    for k, v in res.objective.breakdown.items():
        rec[f"profit.{k} [{res.objective.unit}]"] = v
    for d in res.decisions:
        rec[f"decision.{d.name} [{d.unit or '1'}]"] = d.value
    for l in res.limits:
        rec[f"limit.{l.name} [{l.unit or '1'}]"] = l.value
    if status == "optimal":
        rec["active_set"] = ";".join(active_set(res))
        for l in res.limits:
            if l.shadow_price is not None:
                rec[f"shadow_price.{l.name} [{res.objective.unit} per {l.unit or '1'}]"] = l.shadow_price
        for d in res.decisions:
            if d.reduced_cost is not None:
                rec[f"reduced_cost.{d.name} [{res.objective.unit} per {d.unit or '1'}]"] = d.reduced_cost
    return rec


def _run_point(task: _Task) -> dict[str, Any]:
    """Worker entry: solve one point; the record and, when optimal, its warm start."""
    res, status = _solve(task)
    ws = res.warm_start if (res is not None and status == "optimal") else None
    warm = {k: ws[k] for k in ("x", "lam_g", "lam_x", "radius")} if ws else None
    return {"record": _record(res, status), "warm": warm}


@dataclass
class _BisectTask:
    task: _Task  # overrides of the lower end; ``warm`` its solution
    path: str
    axis: Axis
    lo: float
    hi: float
    set_lo: tuple[str, ...]
    set_hi: tuple[str, ...]
    tol: float


def _run_bisect(bt: _BisectTask) -> dict[str, Any]:
    """Worker entry: locate where the active set changes between two neighbours.

    The bracket ``[lo, hi]`` keeps ``set_lo`` at ``lo`` and a different set at
    ``hi``; each midpoint is warm-started from the latest solution at the
    ``lo`` end, so the search is a short continuation of its own.
    """
    lo, hi, warm = bt.lo, bt.hi, bt.task.warm
    set_hi = bt.set_hi
    solves = iters = 0
    status = "located"
    while abs(hi - lo) > bt.tol:
        mid = 0.5 * (lo + hi)
        ov = dict(bt.task.overrides)
        ov[bt.path] = bt.axis.text(mid)
        t = _Task(bt.task.fs, bt.task.base_overrides, ov, bt.task.solver, bt.task.options, warm)
        res, st = _solve(t)
        solves += 1
        if res is None or st != "optimal":
            status = f"unresolved: {st} at {bt.path} = {mid!r}"
            break
        iters += res.solver.iterations
        s = active_set(res)
        if s == bt.set_lo:
            lo, warm = mid, {k: res.warm_start[k] for k in ("x", "lam_g", "lam_x", "radius")}
        else:
            hi, set_hi = mid, s
    return {"path": bt.path, "unit": bt.axis.unit, "lower": lo, "upper": hi, "value": 0.5 * (lo + hi),
            "before": ";".join(bt.set_lo), "after": ";".join(set_hi), "status": status,
            "solves": solves, "iterations": iters}


# ---------------------------------------------------------------------- results
@dataclass
class Breakpoint:
    """Where the active set changes along one axis (the other varied inputs fixed).

    ``value`` is the middle of the final bracket ``[lower, upper]`` (in the
    axis' unit); ``before``/``after`` are the active sets on either side.
    """

    path: str
    unit: str
    lower: float
    upper: float
    value: float
    before: str
    after: str
    status: str
    solves: int
    iterations: int
    between: tuple[int, int] = (0, 0)
    fixed: dict[str, float] = field(default_factory=dict)


@dataclass
class SweepResult:
    """Outcome of :func:`run_sweep`.

    Attributes
    ----------
    rows : list of dict
        One per point, in point order, keyed by :attr:`columns`.
    columns : list of str
    axes : list of Axis
        Empty for a scenarios sweep.
    breakpoints : list of Breakpoint
    skipped : int
        Points found already finished in the output file.
    notice : str
        :data:`plantopt.results.SAFETY_NOTICE`.
    """

    rows: list[dict[str, Any]]
    columns: list[str]
    axes: list[Axis]
    varied: list[str]
    breakpoints: list[Breakpoint]
    skipped: int = 0
    solved: int = 0
    wall_time_s: float = 0.0
    profit_unit: str = ""
    bisected: bool = False
    notice: str = SAFETY_NOTICE

    @property
    def total_iterations(self) -> int:
        return int(sum(int(r["iterations"]) for r in self.rows if r.get("iterations") not in (None, "")))

    @property
    def n_optimal(self) -> int:
        return sum(r.get("status") == "optimal" for r in self.rows)

    def column(self, name: str) -> list[Any]:
        return [r.get(name) for r in self.rows]


def columns_for(fs: Flowsheet, varied: Sequence[str], with_label: bool = False) -> list[str]:
    """The fixed column layout of a sweep of ``fs``: known before any solve, so
    every row (failed ones too) has the same columns."""
    pu = fs.profit_unit
    cols = ["point"] + (["scenario"] if with_label else []) + list(varied)
    cols += ["status", "objective", "iterations", "warm_from", "neighbour", "active_set_changed", "active_set"]
    terms = [f"revenue.{u}" for u in fs.product_prices] + [f"feed_cost.{u}" for u in fs.feed_prices]
    terms += [f"disposal.{u}" for u in fs.disposal_prices]
    for uid, model in fs.units.items():
        ut = model.utility()
        if ut is not None and ut in fs.utilities:
            terms.append(f"utility.{uid}.{ut}")
    terms += [f"fixed.{p.split('.')[-1]}" for p in fs.fixed_costs]
    cols += [f"profit.{t} [{pu}]" for t in terms]
    cols += [f"decision.{d.name} [{d.unit or '1'}]" for d in fs.decisions]
    for lim in fs.limits:
        cols.append(f"limit.{lim.name} [{lim.unit or _limit_unit(fs, lim)}]")
    for lim in fs.limits:
        cols.append(f"shadow_price.{lim.name} [{pu} per {lim.unit or _limit_unit(fs, lim)}]")
    cols += [f"reduced_cost.{d.name} [{pu} per {d.unit or '1'}]" for d in fs.decisions]
    return cols


def _limit_unit(fs: Flowsheet, lim) -> str:
    from plantopt.studies.core import display_unit

    return display_unit(fs, lim.qkind.name) or "1"


# ---------------------------------------------------------------------- files
def _cell(v: Any) -> str:
    if v is None:
        return ""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return repr(v) if math.isfinite(v) else ""
    return str(v)


def render_csv(columns: Sequence[str], rows: Iterable[Mapping[str, Any]]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(columns)
    for r in rows:
        w.writerow([_cell(r.get(c)) for c in columns])
    return buf.getvalue()


_NUMERIC_PREFIXES = ("profit.", "decision.", "limit.", "shadow_price.", "reduced_cost.")


def _parse_cell(col: str, text: str, varied: Sequence[str]) -> Any:
    if text == "":
        return None
    if col in ("point", "iterations", "warm_from", "neighbour"):
        return int(text)
    if col == "active_set_changed":
        return text == "true"
    if col == "objective" or col in varied or col.startswith(_NUMERIC_PREFIXES):
        return float(text)
    return text


def write_rows(path: str | Path, columns: Sequence[str], rows: Sequence[Mapping[str, Any]]) -> None:
    """Write the sweep table atomically, as CSV or parquet by the file's suffix."""
    from plantopt.reports.io import atomic_write_bytes, atomic_write_text

    p = Path(path)
    if p.suffix.lower() == ".parquet":
        import pyarrow as pa
        import pyarrow.parquet as pq

        data = {c: [r.get(c) for r in rows] for c in columns}
        arrays = {}
        for c, vals in data.items():
            if c in ("point", "iterations", "warm_from", "neighbour"):
                arrays[c] = pa.array(vals, type=pa.int64())
            elif c == "active_set_changed":
                arrays[c] = pa.array(vals, type=pa.bool_())
            elif c in ("status", "active_set", "scenario"):
                arrays[c] = pa.array([None if v is None else str(v) for v in vals], type=pa.string())
            else:
                arrays[c] = pa.array([None if v is None else float(v) for v in vals], type=pa.float64())
        table = pa.table(arrays)
        table = table.replace_schema_metadata({"notice": SAFETY_NOTICE})
        buf = io.BytesIO()
        pq.write_table(table, buf)
        atomic_write_bytes(p, buf.getvalue())
    else:
        atomic_write_text(p, render_csv(columns, rows))


def read_rows(path: str | Path, varied: Sequence[str]) -> tuple[list[str], list[dict[str, Any]]]:
    """Read a sweep table written by :func:`write_rows` (for resuming and plots)."""
    p = Path(path)
    src = str(path)
    try:
        if p.suffix.lower() == ".parquet":
            import pyarrow.parquet as pq

            t = pq.read_table(p)
            return list(t.column_names), t.to_pylist()
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError(src, "", "file not found") from None
    except Exception as exc:  # a damaged file must not crash the rerun
        raise InputError(src, "", f"not a readable sweep table ({exc}); remove it or choose another --out") from None
    reader = csv.reader(io.StringIO(text))
    try:
        cols = next(reader)
    except StopIteration:
        return [], []
    rows = []
    for lineno, rec in enumerate(reader, start=2):
        if len(rec) != len(cols):
            raise InputError(src, f"line {lineno}", f"expected {len(cols)} cells, got {len(rec)}; not a complete sweep table")
        try:
            rows.append({c: _parse_cell(c, v, varied) for c, v in zip(cols, rec)})
        except ValueError as exc:
            raise InputError(src, f"line {lineno}", f"unreadable cell ({exc})") from None
    return cols, rows


def check_output_path(path: str | Path, option: str, suffixes: Sequence[str]) -> None:
    """Refuse an output name with the wrong suffix or in a missing folder
    before any work is done (an hour-long sweep must not fail at its first write)."""
    p = Path(path)
    if p.suffix.lower() not in suffixes:
        raise InputError(CLI, option, f"expected a file name ending in {' or '.join(suffixes)}, got {str(path)!r}")
    folder = p.parent if str(p.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(CLI, option, f"folder {str(folder)!r} does not exist")
    if p.is_dir():
        raise InputError(CLI, option, f"{str(path)!r} is a folder; expected a file name")


def _state_path(out: str | Path) -> Path:
    p = Path(out)
    return p.with_name(p.name + ".state.json")


def breakpoints_path(out: str | Path) -> Path:
    """Where the breakpoints of a sweep written to ``out`` go (``OUT.breakpoints.csv``)."""
    p = Path(out)
    return p.with_name(p.stem + ".breakpoints.csv")


BREAKPOINT_COLUMNS = ["path", "unit", "value", "lower", "upper", "before", "after", "status", "between", "fixed",
                      "solves", "iterations"]


def write_breakpoints(path: str | Path, bps: Sequence[Breakpoint]) -> None:
    from plantopt.reports.io import atomic_write_text

    rows = []
    for b in bps:
        d = asdict(b)
        d["between"] = f"{b.between[0]}-{b.between[1]}"
        d["fixed"] = ";".join(f"{k}={v!r}" for k, v in b.fixed.items())
        rows.append(d)
    atomic_write_text(path, render_csv(BREAKPOINT_COLUMNS, rows))


# ---------------------------------------------------------------------- driver
class _Inline(cf.Executor):
    """Runs each task at submit time, in this process (the serial executor)."""

    def submit(self, fn, /, *args, **kwargs):
        f: cf.Future = cf.Future()
        try:
            f.set_result(fn(*args, **kwargs))
        except BaseException as exc:  # handed to the caller through the future
            f.set_exception(exc)
        return f


def _fingerprint(fs: Flowsheet, axes: Sequence[Axis], points: Sequence[SweepPoint], base: Mapping[str, str],
                 solver: str, warm: bool, chain_length: int | None, predict: bool = False) -> str:
    h = hashlib.sha256()
    h.update(json.dumps({"flowsheet": fs.sha256, "inputs": _fs_key(fs), "solver": solver, "warm": warm,
                         "chain": chain_length, "predict": predict, "base": dict(sorted(base.items())),
                         "axes": [[a.path, a.unit, list(a.values)] for a in axes],
                         "points": [p.overrides for p in points] if not axes else None}, sort_keys=True).encode())
    return h.hexdigest()


def run_sweep(
    fs: Flowsheet,
    *,
    vary: Sequence[str | Axis] | None = None,
    scenarios: str | Path | None = None,
    overrides: Mapping[str, Any] | None = None,
    solver: str = "sqp",
    options: dict | None = None,
    executor: cf.Executor | None = None,
    out: str | Path | None = None,
    warm: bool = True,
    chain_length: int | None = DEFAULT_CHAIN_LENGTH,
    bisect: bool = True,
    bisect_tol: float = DEFAULT_BISECT_TOL,
    predict: bool = False,
    assembly: Any = None,
    progress: Callable[[int, int, Mapping[str, Any]], None] | None = None,
    max_in_flight: int | None = None,
) -> SweepResult:
    """Re-optimize ``fs`` at every point of a line, grid or scenario list.

    Parameters
    ----------
    fs : Flowsheet
    vary : sequence of str or Axis, optional
        ``PATH=START:STOP:N`` specifications (one: a line; two or more: a grid).
    scenarios : path, optional
        A CSV whose columns are input addresses (instead of ``vary``).
    overrides : mapping, optional
        ``--set`` style overrides applied at every point.
    solver : {"sqp", "ipopt"}
    options : dict, optional
        Solver options (``tol``, ``max_iter``, ...).
    executor : concurrent.futures.Executor, optional
        Where points are solved (a process pool, a Dask ``client.get_executor()``,
        ...); ``None`` solves them here, one after another. Results do not depend
        on it.
    out : path, optional
        ``.csv`` or ``.parquet`` table, rewritten atomically as points finish;
        points already in it (same sweep) are skipped.
    warm : bool
        Warm-start each point from its neighbour (False: every point cold).
    chain_length : int or None
        Cold restart every this many steps along an axis (parallelism); None: never.
    bisect : bool
        Locate active-set breakpoints between grid neighbours.
    bisect_tol : float
        Breakpoint tolerance as a fraction of the grid step.
    predict : bool
        Move each warm start along the neighbour's KKT sensitivity first
        (a first-order predictor, see :mod:`plantopt.studies.sensitivity`).
    assembly : Assembly, optional
        A built assembly of ``fs`` to reuse in this process.
    progress : callable, optional
        ``progress(done, total, record)`` after each point.
    max_in_flight : int, optional
        Points submitted at once (default: all that are ready).

    Returns
    -------
    SweepResult

    Raises
    ------
    InputError
        Bad ``vary``/``scenarios``/``overrides``, a point value outside an
        input's range, or an output file from a different sweep.
    """
    from plantopt.studies.simulate import apply_overrides

    t0 = time.perf_counter()
    if (vary is None) == (scenarios is None):
        raise InputError(CLI, "--vary/--scenarios", "give either --vary (a line or grid) or --scenarios FILE.csv")
    base = {k: str(v) for k, v in (overrides or {}).items()}
    base_fs = apply_overrides(fs, base)  # validates --set once, with its own messages
    axes: list[Axis] = []
    if vary is not None:
        if not vary:
            raise InputError(CLI, "--vary", "expected at least one PATH=START:STOP:N")
        axes = [a if isinstance(a, Axis) else parse_vary(a, fs) for a in vary]
        if len({a.path for a in axes}) != len(axes):
            raise InputError(CLI, "--vary", "the same input is varied twice")
        if int(np.prod([len(a.values) for a in axes])) > MAX_POINTS:
            raise InputError(CLI, "--vary", f"the grid has more than {MAX_POINTS} points")
        points = grid_points(axes, chain_length=chain_length if warm else None)
        varied = [a.path for a in axes]
    else:
        src = str(scenarios)
        paths, srows, names = read_scenarios(scenarios, fs)
        points = scenario_points(paths, srows, names, fs, src)
        varied = list(paths)
    for k in base:
        if k in varied:
            raise InputError(CLI, f"--set {k}", "this input is also varied; drop one of them")
    if not warm:
        for p in points:
            p.warm_parent = None
    # every point's values are checked before any solve: bad input fails fast (exit 2)
    for pt in points:
        try:
            apply_overrides(base_fs, pt.overrides)
        except InputError as exc:
            if scenarios is None:
                raise
            raise InputError(str(scenarios), f"line {pt.index + 2}.{exc.path}", exc.problem) from None
    if out is not None:
        check_output_path(out, "--out", (".csv", ".parquet"))
    columns = columns_for(fs, varied, with_label=scenarios is not None)
    fp = _fingerprint(fs, axes, points, base, solver, warm, chain_length, predict)

    done: dict[int, dict[str, Any]] = {}
    warms: dict[int, dict | None] = {}
    sets: dict[int, tuple[str, ...] | None] = {}
    skipped = 0
    if out is not None and Path(out).exists():
        skipped = _resume(out, fp, columns, varied, points, done, warms)
        for i, rec in done.items():
            sets[i] = tuple(rec["active_set"].split(";")) if rec.get("status") == "optimal" and rec.get("active_set") else (
                () if rec.get("status") == "optimal" else None)

    children: dict[int, list[int]] = {}
    for pt in points:
        if pt.warm_parent is not None:
            children.setdefault(pt.warm_parent, []).append(pt.index)

    ex = executor or _Inline()
    # build (and compile) the NLP here once: the serial run uses it, and
    # workers forked from this process inherit it instead of rebuilding
    if assembly is None:
        from plantopt.assembly import assemble

        assembly = assemble(base_fs)
    assembly.compiled  # noqa: B018  (compiles the derivative functions)
    import plantopt.solver.ipopt  # noqa: F401  (imported before a fork, not in each worker)
    import plantopt.solver.sqp  # noqa: F401

    prime_pool(base_fs if base_fs is not fs else fs.copy(), assembly)

    total = len(points)
    last_write = [0.0]

    def flush(force: bool = False) -> None:
        if out is None:
            return
        now = time.perf_counter()
        if not force and now - last_write[0] < _WRITE_INTERVAL_S:
            return
        last_write[0] = now
        write_rows(out, columns, [done[i] for i in sorted(done)])
        # every warm start a chain continues from is kept, so that a rerun
        # after the table lost rows (or was cut short) restarts each chain
        # from the same point as the uninterrupted run would
        pending = {str(i): w for i, w in warms.items() if w is not None and children.get(i)}
        from plantopt.reports.io import atomic_write_text

        atomic_write_text(_state_path(out), json.dumps({"fingerprint": fp, "notice": SAFETY_NOTICE, "warm": pending}))

    def warm_for(pt: SweepPoint) -> tuple[dict | None, int | None]:
        # nearest optimal ancestor along the chain (a failed point passes its own start on)
        a = pt.warm_parent
        while a is not None:
            if warms.get(a) is not None:
                return warms[a], a
            if sets.get(a) is not None and a not in warms:
                return None, None  # finished before this run and its warm start is lost: start cold
            a = points[a].warm_parent
        return None, None

    def ready(pt: SweepPoint) -> bool:
        return pt.index not in done and (pt.warm_parent is None or pt.warm_parent in done)

    pending_futs: dict[cf.Future, tuple[SweepPoint, int | None]] = {}
    queue = [pt for pt in points if ready(pt)]
    submitted: set[int] = set()
    cap = max_in_flight or total
    solved = 0
    try:
        while queue or pending_futs:
            while queue and len(pending_futs) < cap:
                pt = queue.pop(0)
                if pt.index in submitted:
                    continue
                submitted.add(pt.index)
                w, src_i = warm_for(pt)
                task = _Task(base_fs, {}, pt.overrides, solver, options, w,
                             points[src_i].overrides if (predict and w is not None and src_i is not None) else None)
                pending_futs[ex.submit(_run_point, task)] = (pt, src_i)
            finished, _ = cf.wait(list(pending_futs), return_when=cf.FIRST_COMPLETED)
            for fut in sorted(finished, key=lambda f: pending_futs[f][0].index):
                pt, src_i = pending_futs.pop(fut)
                try:
                    outcome = fut.result()
                except Exception as exc:  # a worker lost or a pickling failure: that point's status
                    outcome = {"record": {"status": f"error: {type(exc).__name__}: {exc}"}, "warm": None}
                rec = _full_record(pt, outcome["record"], src_i, scenarios is not None)
                s = tuple(rec["active_set"].split(";")) if rec.get("active_set") else ()
                sets[pt.index] = s if rec["status"] == "optimal" else None
                if pt.neighbour is not None and sets.get(pt.neighbour) is not None and sets[pt.index] is not None:
                    rec["active_set_changed"] = sets[pt.neighbour] != sets[pt.index]
                done[pt.index] = rec
                warms[pt.index] = outcome["warm"]
                solved += 1
                for c in children.get(pt.index, []):
                    if ready(points[c]):
                        queue.append(points[c])
                queue.sort(key=lambda q: q.index)
                if progress:
                    progress(len(done), total, rec)
                flush()
        # neighbour flags of points from an earlier run are rebuilt here, in point order
        for pt in points:
            rec = done[pt.index]
            if pt.neighbour is not None and sets.get(pt.neighbour) is not None and sets.get(pt.index) is not None:
                rec["active_set_changed"] = sets[pt.neighbour] != sets[pt.index]
        bps: list[Breakpoint] = []
        if bisect and axes:
            bps = _breakpoints(ex, axes, points, done, warms, sets, base_fs, solver, options, bisect_tol)
    finally:
        flush(force=True)
    if out is not None and axes and bisect:
        write_breakpoints(breakpoints_path(out), bps)
    return SweepResult(rows=[done[i] for i in sorted(done)], columns=columns, axes=axes, varied=varied,
                       breakpoints=bps, skipped=skipped, solved=solved, wall_time_s=time.perf_counter() - t0,
                       profit_unit=fs.profit_unit, bisected=bool(bisect and axes))


def _full_record(pt: SweepPoint, rec: Mapping[str, Any], warm_src: int | None, scen: bool) -> dict[str, Any]:
    r: dict[str, Any] = {"point": pt.index}
    if scen:
        r["scenario"] = pt.label
    r.update(pt.values)
    r.update(rec)
    r["warm_from"] = warm_src
    r["neighbour"] = pt.neighbour
    return r


def _resume(out: str | Path, fp: str, columns: list[str], varied: list[str], points: list[SweepPoint],
            done: dict[int, dict], warms: dict[int, dict | None]) -> int:
    """Load the finished points of an earlier run of the same sweep."""
    src = str(out)
    st = _state_path(out)
    if st.exists():
        try:
            state = json.loads(st.read_text(encoding="utf-8"))
        except (OSError, json.JSONDecodeError) as exc:
            raise InputError(str(st), "", f"unreadable sweep state ({exc}); remove it to start the sweep afresh") from None
        if state.get("fingerprint") != fp:
            raise InputError(src, "", "holds a different sweep (flowsheet, inputs, ranges or solver differ); "
                                      "choose another --out or remove the file")
        for k, w in (state.get("warm") or {}).items():
            warms[int(k)] = w
    cols, rows = read_rows(out, varied)
    if not rows:
        return 0
    if cols != columns:
        raise InputError(src, "header", "columns differ from this sweep's; choose another --out or remove the file")
    for r in rows:
        i = r.get("point")
        if not isinstance(i, int) or not 0 <= i < len(points):
            raise InputError(src, f"point {i}", "not a point of this sweep; choose another --out or remove the file")
        for k, v in points[i].values.items():
            if r.get(k) is None or not math.isclose(float(r[k]), v, rel_tol=1e-12, abs_tol=1e-12):
                raise InputError(src, f"point {i}.{k}", f"value {r.get(k)} differs from this sweep's {v!r}; "
                                                      "choose another --out or remove the file")
        done[i] = r
    return len(done)


def _breakpoints(ex: cf.Executor, axes: Sequence[Axis], points: Sequence[SweepPoint], done, warms, sets,
                 base_fs: Flowsheet, solver: str, options: dict | None, tol_frac: float) -> list[Breakpoint]:
    """Bisect between every pair of grid neighbours whose active sets differ."""
    shape = [len(a.values) for a in axes]
    strides = [int(np.prod(shape[k + 1:])) for k in range(len(shape))]
    jobs = []
    for pt in points:
        for k, a in enumerate(axes):
            if pt.coords[k] + 1 >= shape[k]:
                continue
            j = pt.index + strides[k]
            sa, sb = sets.get(pt.index), sets.get(j)
            if sa is None or sb is None or sa == sb:
                continue
            step = abs(a.values[pt.coords[k] + 1] - a.values[pt.coords[k]])
            bt = _BisectTask(_Task(base_fs, {}, dict(pt.overrides), solver, options, warms.get(pt.index)),
                             a.path, a, a.values[pt.coords[k]], a.values[pt.coords[k] + 1], sa, sb,
                             max(tol_frac, 1e-12) * step)
            fixed = {b.path: pt.values[b.path] for kk, b in enumerate(axes) if kk != k}
            jobs.append((ex.submit(_run_bisect, bt), (pt.index, j), fixed))
    out = []
    for fut, between, fixed in jobs:
        try:
            d = fut.result()
        except Exception as exc:  # recorded, never fatal
            d = {"path": "", "unit": "", "lower": math.nan, "upper": math.nan, "value": math.nan, "before": "",
                 "after": "", "status": f"error: {type(exc).__name__}: {exc}", "solves": 0, "iterations": 0}
        out.append(Breakpoint(**d, between=between, fixed=fixed))
    return out


# ---------------------------------------------------------------------- executors
class executor_for:
    """Context manager giving the executor for ``workers`` / ``cluster`` settings.

    ``cluster`` (a Dask scheduler address such as ``tcp://host:8786``) wins;
    else ``workers`` > 1 gives a local process pool; else ``None`` (serial).
    Forked workers inherit this process's imports and any primed assembly.

    Raises
    ------
    InputError
        ``workers`` below 1, or the cluster unreachable / Dask not installed.
    """

    def __init__(self, workers: int | None = None, cluster: str | None = None):
        if workers is not None and workers < 1:
            raise InputError(CLI, "--workers", f"expected a whole number of at least 1, got {workers}")
        self.workers, self.cluster = workers, cluster
        self._client = None
        self._pool: cf.Executor | None = None

    def __enter__(self) -> cf.Executor | None:
        if self.cluster:
            try:
                from distributed import Client
            except ImportError:
                raise InputError(CLI, "--cluster", "needs dask.distributed: pip install 'plantopt[cluster]'") from None
            try:
                self._client = Client(self.cluster, timeout="20s")
            except (OSError, TimeoutError, ValueError) as exc:
                raise InputError(CLI, "--cluster", f"cannot reach a Dask scheduler at {self.cluster!r} ({exc})") from None
            # pure=False: two points with equal arguments are still two solves
            return self._client.get_executor(pure=False)
        if self.workers and self.workers > 1:
            import multiprocessing as mp

            ctx = mp.get_context("fork") if "fork" in mp.get_all_start_methods() else None
            self._pool = cf.ProcessPoolExecutor(max_workers=self.workers, mp_context=ctx)
            return self._pool
        return None

    def __exit__(self, *exc) -> None:
        if self._pool is not None:
            self._pool.shutdown(wait=True, cancel_futures=True)
        if self._client is not None:
            self._client.close()
