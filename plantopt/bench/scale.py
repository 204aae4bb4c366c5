"""``plantopt bench scale``: generated sites from 10 to 10,000 unit operations, SQP beside IPOPT.

For each size the site of :func:`plantopt.bench.generators.site_flowsheet`
(invented data) goes through the real pipeline: TOML text ->
``loads_flowsheet`` -> ``assemble`` -> structure check -> derivative
generation (``compile_nlp``) -> sequential start point and simulation.
Every requested solver then starts from that same point on that same
compiled NLP with the optimizing bounds.

Each size runs in its own process, and each solver in a process forked
from it after the build, so ``peak_mb`` (``getrusage`` ``ru_maxrss`` of the
solver's process: the build's pages plus the solve's) is not polluted by a
larger size, and one solver's memory is not counted for the other. A size
that runs past ``--timeout`` is killed and reported as such.

The per-iteration split:

* SQP: time inside the NLP evaluators (casadi calls and their conversion to
  scipy, timed by wrapping the compiled NLP's methods), time in sparse
  factorizations and QP solves (``splu``, ``qdldl``, ``piqp`` and the dense
  ``ldl`` fallback, timed by wrapping them in this process only), and the
  rest: Python in the SQP driver.
* IPOPT: casadi's own timers: time in the NLP callbacks versus the rest
  (IPOPT's linear algebra, MUMPS, and its bookkeeping).

Speed and memory targets live here, never in timed tests.
"""

from __future__ import annotations

import argparse
import json
import math
import multiprocessing as mp
import os
import resource
import sys
import time
import traceback
from contextlib import contextmanager
from typing import Any, Iterator

import numpy as np

DEFAULT_SIZES = (10, 100, 1000, 10000)
#: relative tolerance for "the limit is at its bound" when comparing active sets
ACTIVE_RTOL = 1e-6


def _maxrss_mb() -> float:
    """Peak resident set of this process, MB (Linux reports ru_maxrss in KiB)."""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def _rss_mb() -> float | None:
    """Current resident set of this process, MB (None where /proc is missing)."""
    try:
        with open("/proc/self/statm") as fh:
            return int(fh.read().split()[1]) * os.sysconf("SC_PAGE_SIZE") / 2**20
    except (OSError, ValueError, IndexError):
        return None


# ---------------------------------------------------------------- build
def build_case(units: int, header_fanout: int = 16, hessian: bool = True) -> dict[str, Any]:
    """Generate, load, assemble, check, differentiate and start one site.

    The Lagrangian Hessian, which only the SQP uses, is generated last, after
    the start point and simulation (``hessian=True``), or left to the first
    solve that needs it (``hessian=False``): it is the largest item of the
    build, and generated before the simulation it had the simulation's own
    transient memory on top of it.

    Returns
    -------
    dict
        ``fs``, ``asm``, ``x0`` and the timings (s) ``gen_s``, ``load_s``,
        ``assemble_s``, ``structure_s``, ``derivatives_s`` (constraint
        Jacobian, gradient and, with ``hessian``, the Hessian),
        ``hessian_s``, ``start_s``, ``build_s`` (assembly + derivative
        generation), plus sizes and ``stage_rss_mb`` (resident set after each
        stage, MB, and the peak so far).
    """
    from plantopt.assembly import assemble
    from plantopt.bench.generators import site_flowsheet, site_units, trains_for_units
    from plantopt.flowsheet import loads_flowsheet
    from plantopt.solver import solve_equations
    from plantopt.structure import check_structure

    out: dict[str, Any] = {}
    mem: dict[str, Any] = {}

    def stage(name: str) -> None:
        mem[name] = {"rss": _rss_mb(), "peak": _maxrss_mb()}

    stage("start")
    trains = trains_for_units(units, header_fanout)
    t = time.perf_counter()
    text = site_flowsheet(trains, header_fanout=header_fanout)
    out["gen_s"] = time.perf_counter() - t
    t = time.perf_counter()
    # the size limit guards hand-written files; generated sites are larger by design
    fs = loads_flowsheet(text, f"site_{trains}.toml", max_bytes=max(len(text.encode()) + 1, 4 << 20))
    del text
    out["load_s"] = time.perf_counter() - t
    stage("load")
    t = time.perf_counter()
    asm = assemble(fs)
    out["assemble_s"] = time.perf_counter() - t
    stage("assemble")
    t = time.perf_counter()
    rep = check_structure(asm)
    out["structure_s"] = time.perf_counter() - t
    stage("structure")
    if not rep.ok:
        raise RuntimeError("generated site is ill-posed: " + "; ".join(rep.lines()[:5]))
    t = time.perf_counter()
    cnlp = asm.compiled
    out["derivatives_s"] = time.perf_counter() - t
    stage("derivatives")
    t = time.perf_counter()
    x0 = asm.initial_point(fs)
    out["initial_point_s"] = time.perf_counter() - t
    stage("initial_point")
    lbx, ubx = asm.x_bounds()
    lbg, ubg = asm.g_bounds("simulate", fs)
    r = solve_equations(cnlp, x0, lbx, ubx, lbg, ubg, p=asm.p_values(fs),
                        options={"x_nominal": asm.x_nominal(), "max_iter": 200})
    out["simulate_converged"] = bool(r.success)
    if np.all(np.isfinite(r.x)):
        x0 = np.asarray(r.x, dtype=float)
    out["start_s"] = time.perf_counter() - t
    stage("simulate")
    out["hessian_s"] = None
    if hessian:
        t = time.perf_counter()
        cnlp.hess_lag  # generated on first use
        out["hessian_s"] = time.perf_counter() - t
        out["derivatives_s"] += out["hessian_s"]
        stage("hessian")
    out["build_s"] = out["assemble_s"] + out["derivatives_s"]
    out.update(units=site_units(trains, header_fanout), trains=trains, nx=cnlp.nx, ng=cnlp.ng,
               nnz_jac=int(cnlp.jac_g.indices.size),
               nnz_hess=int(cnlp.hess_lag.indices.size) if hessian else None,
               stage_rss_mb=mem, fs=fs, asm=asm, x0=x0)
    return out


# ---------------------------------------------------------------- timing wrappers
class _Clock:
    """Accumulates the time spent in wrapped callables, in total and by name."""

    def __init__(self) -> None:
        self.t = 0.0
        self.n = 0
        self.by: dict[str, list[float]] = {}

    def wrap(self, fn, name: str = ""):
        def timed(*a, **k):
            t = time.perf_counter()
            try:
                return fn(*a, **k)
            finally:
                dt = time.perf_counter() - t
                self.t += dt
                self.n += 1
                e = self.by.setdefault(name, [0, 0.0])
                e[0] += 1
                e[1] += dt
        return timed

    def detail(self) -> dict[str, dict[str, float]]:
        return {k: {"calls": int(v[0]), "s": float(v[1])} for k, v in sorted(self.by.items())}


class _ModuleProxy:
    """A module with some attributes replaced (everything else passes through)."""

    def __init__(self, mod, **over):
        self._mod, self._over = mod, over

    def __getattr__(self, name):
        return self._over[name] if name in self._over else getattr(self._mod, name)


@contextmanager
def _linalg_clock() -> Iterator[_Clock]:
    """Time sparse factorizations and QP solves in this process (the solver's
    modules look these up at call time, so patching their module globals here
    measures without editing them)."""
    import piqp
    import qdldl
    import scipy.linalg as sla
    import scipy.sparse.linalg as spla

    import plantopt.solver.inertia as inertia
    import plantopt.solver.qp as qpmod

    clock = _Clock()

    def timed_class(cls, prefix: str, methods: tuple[str, ...], time_init: bool):
        # a solver object whose construction and named methods are timed
        # (qdldl's refactorisations and solves are linear algebra too)
        class Timed:
            def __init__(self, *a, **k):
                make = clock.wrap(cls, prefix) if time_init else cls
                self._s = make(*a, **k)

            def __getattr__(self, name):
                attr = getattr(self._s, name)
                return clock.wrap(attr, f"{prefix}.{name}") if name in methods else attr
        return Timed

    _PIQP = timed_class(piqp.SparseSolver, "piqp", ("setup", "solve", "update"), False)
    _QD = timed_class(qdldl.Solver, "qdldl", ("update", "solve", "factors"), True)

    saved = (spla.splu, sla.ldl, inertia.qdldl, qpmod.piqp)
    spla.splu = clock.wrap(spla.splu, "splu")
    sla.ldl = clock.wrap(sla.ldl, "dense ldl")
    inertia.qdldl = _ModuleProxy(qdldl, Solver=_QD)
    qpmod.piqp = _ModuleProxy(piqp, SparseSolver=_PIQP)
    try:
        yield clock
    finally:
        spla.splu, sla.ldl, inertia.qdldl, qpmod.piqp = saved


def _active_limits(asm, g: np.ndarray, lbg: np.ndarray, ubg: np.ndarray) -> list[str]:
    out = []
    for name, i in asm.limit_rows.items():
        for b in (lbg[i], ubg[i]):
            if math.isfinite(b) and abs(g[i] - b) <= ACTIVE_RTOL * max(1.0, abs(b)):
                out.append(name)
    return sorted(set(out))


def run_solver(case: dict[str, Any], solver: str, max_iter: int = 500, max_time: float = math.inf) -> dict[str, Any]:
    """Solve the case's NLP from its start point with one solver; one result row."""
    from plantopt.solver import solve_nlp

    asm, fs, x0 = case["asm"], case["fs"], case["x0"]
    cnlp = asm.compiled
    lbx, ubx = asm.x_bounds()
    lbg, ubg = asm.g_bounds("optimize", fs)
    from plantopt.studies.optimize import variable_nominals

    opts = {"solver": solver, "x_nominal": variable_nominals(asm, x0), "max_iter": max_iter}
    if math.isfinite(max_time):
        opts["max_time"] = max_time
    setup_s = 0.0
    if solver == "ipopt":
        # IPOPT builds its own derivative functions (casadi nlpsol on top of the
        # compiled f and g) when first called; build it here so that the solve
        # time compares like with like, and report the setup as its own column
        from plantopt.solver.ipopt import _solver
        from plantopt.solver.options import DEFAULTS, resolve_options
        from plantopt.solver.scaling import variable_scale

        o = resolve_options(opts, DEFAULTS)
        dx = variable_scale(o["x_nominal"], cnlp.nx)
        sg = np.ones(cnlp.ng) if o["g_nominal"] is None else 1.0 / variable_scale(o["g_nominal"], cnlp.ng, "g_nominal")
        t = time.perf_counter()
        _solver(cnlp, dx, sg, o)
        setup_s = time.perf_counter() - t
    elif not cnlp.has_hessian:
        # the Lagrangian Hessian, which only our SQP uses, is generated in the
        # SQP's own process (build_case(hessian=False)): its setup, as
        # nlpsol's derivative generation is IPOPT's, and IPOPT's process does
        # not carry its memory (~420 MB at 10,000 units)
        t = time.perf_counter()
        cnlp.hess_lag
        setup_s = time.perf_counter() - t
    n_cached = len(getattr(cnlp, "_ipopt_cache", {}))
    ev = _Clock()
    saved = {k: getattr(cnlp, k) for k in ("f", "grad_f", "g", "jac", "hess")}
    for k, fn in saved.items():
        setattr(cnlp, k, ev.wrap(fn, k))
    t = time.perf_counter()
    try:
        with _linalg_clock() as la:
            res = solve_nlp(cnlp, x0, lbx, ubx, lbg, ubg, p=asm.p_values(fs), options=opts)
    finally:
        for k in saved:
            delattr(cnlp, k)  # back to the class's bound methods
    wall = time.perf_counter() - t
    row: dict[str, Any] = {
        "units": case["units"], "trains": case["trains"], "solver": solver,
        "status": str(getattr(res.status, "value", res.status)),
        "objective": -float(res.f) * 3600.0, "objective_unit": "USD/h",
        "iterations": int(res.iterations), "n_eval": {k: int(v) for k, v in res.n_eval.items()},
        "wall_s": wall, "message": res.message,
        "feasibility": float(res.kkt.get("feasibility", float("nan"))),
        "active_limits": _active_limits(asm, np.asarray(res.g), lbg, ubg),
    }
    row["setup_s"] = setup_s
    if solver == "ipopt":
        if len(getattr(cnlp, "_ipopt_cache", {})) != n_cached:
            row["setup_note"] = "IPOPT solver was rebuilt inside the solve (setup counted in wall_s)"
        stats = {}
        for fn in getattr(cnlp, "_ipopt_cache", {}).values():
            stats = fn.stats()  # the solver just used (one cache entry per option set)
        ev_t = sum(float(v) for k, v in stats.items() if k.startswith("t_wall_nlp_"))
        row.update(eval_detail={k[len("t_wall_"):]: float(v) for k, v in stats.items() if k.startswith("t_wall_nlp_")},
                   eval_s=ev_t, linalg_s=None, other_s=max(float(stats.get("t_wall_total", wall)) - ev_t, 0.0),
                   overhead_s=max(wall - float(stats.get("t_wall_total", wall)), 0.0))
    else:
        row.update(eval_s=ev.t, linalg_s=la.t, other_s=max(wall - ev.t - la.t, 0.0), overhead_s=0.0,
                   eval_detail=ev.detail(), linalg_detail=la.detail(),
                   qp_active_set=sum(1 for h in res.history if h.get("qp_active_set")))
    row["peak_mb"] = _maxrss_mb()
    return row


# ---------------------------------------------------------------- processes
def _solver_child(case, solver, max_iter, max_time, conn) -> None:
    try:
        conn.send(run_solver(case, solver, max_iter, max_time))
    except BaseException as exc:  # report, never hang the parent
        conn.send({"error": f"{type(exc).__name__}: {exc}", "trace": traceback.format_exc()})
    conn.close()


def _size_worker(units: int, solvers: list[str], max_iter: int, max_time: float, fanout: int, conn) -> None:
    try:
        t = time.perf_counter()
        case = build_case(units, fanout, hessian=False)
        info = {k: v for k, v in case.items() if k not in ("fs", "asm", "x0")}
        info["build_peak_mb"] = _maxrss_mb()
        info["pipeline_s"] = time.perf_counter() - t
        conn.send(("built", info))
        ctx = mp.get_context("fork")
        for s in solvers:
            a, b = ctx.Pipe(duplex=False)
            pr = ctx.Process(target=_solver_child, args=(case, s, max_iter, max_time, b))
            pr.start()
            b.close()
            try:
                row = a.recv()
            except EOFError:
                row = {"error": f"solver process died (exit code {pr.exitcode})"}
            pr.join()
            conn.send(("solved", s, row))
    except BaseException as exc:
        conn.send(("error", f"{type(exc).__name__}: {exc}", traceback.format_exc()))
    conn.close()


def run_size(units: int, solvers: list[str], *, max_iter: int = 500, max_time: float = math.inf,
             timeout: float = math.inf, fanout: int = 16, log=print) -> list[dict[str, Any]]:
    """Build one size in a fresh process and run each solver; result rows (failures included)."""
    ctx = mp.get_context("fork")
    a, b = ctx.Pipe(duplex=False)
    pr = ctx.Process(target=_size_worker, args=(units, solvers, max_iter, max_time, fanout, b))
    t0 = time.perf_counter()
    pr.start()
    b.close()
    info: dict[str, Any] = {"units_requested": units}
    rows: list[dict[str, Any]] = []
    done: set[str] = set()
    while True:
        left = timeout - (time.perf_counter() - t0)
        if left > 0 and not a.poll(min(left, 5.0)):
            if pr.is_alive():
                continue
            if not a.poll(0):
                for s in solvers:
                    if s not in done:
                        rows.append(_row(info, s, {"status": f"crashed (exit code {pr.exitcode})"}))
                break
        if left <= 0:
            pr.kill()
            pr.join()
            stage = "build" if "nx" not in info else "solve"
            for s in solvers:
                if s not in done:
                    rows.append(_row(info, s, {"status": f"timeout ({stage})", "wall_s": None}))
            log(f"  size {units}: killed after {timeout:g} s during the {stage}")
            break
        try:
            msg = a.recv()
        except EOFError:
            for s in solvers:
                if s not in done:
                    rows.append(_row(info, s, {"status": f"crashed (exit code {pr.exitcode})"}))
            break
        if msg[0] == "built":
            info.update(msg[1])
            log(f"  size {info['units']} ({info['trains']} trains): nx={info['nx']} ng={info['ng']} "
                f"load {info['load_s']:.1f} s, assemble {info['assemble_s']:.1f} s, derivatives "
                f"{info['derivatives_s']:.1f} s, start {info['start_s']:.1f} s, peak {info['build_peak_mb']:.0f} MB")
        elif msg[0] == "solved":
            done.add(msg[1])
            r = msg[2]
            if "error" in r:
                r = {"status": "error", "message": r["error"], "trace": r.get("trace", "")}
            rows.append(_row(info, msg[1], r))
            log(f"  size {info.get('units')}: {msg[1]} {rows[-1]['status']} in {rows[-1].get('wall_s') or float('nan'):.2f} s"
                + (f" ({rows[-1].get('message')})" if rows[-1]["status"] in ("error", "failed") else ""))
        else:
            log(f"  size {units}: {msg[1]}")
            for s in solvers:
                rows.append(_row(info, s, {"status": "error", "message": msg[1]}))
            break
        if len(done) == len(solvers):
            break
    pr.join(timeout=10)
    return rows


def _row(info: dict[str, Any], solver: str, r: dict[str, Any]) -> dict[str, Any]:
    row = {"units": info.get("units", info.get("units_requested")), "solver": solver, "status": None,
           "objective": None, "iterations": None, "wall_s": None, "peak_mb": None}
    for k in ("trains", "nx", "ng", "nnz_jac", "nnz_hess", "gen_s", "load_s", "assemble_s", "structure_s",
              "derivatives_s", "hessian_s", "initial_point_s", "start_s", "build_s", "simulate_converged",
              "build_peak_mb", "stage_rss_mb"):
        if k in info:
            row[k] = info[k]
    row.update({k: v for k, v in r.items() if k not in ("units", "trains")})
    row["build_s"] = info.get("build_s")
    return row


# ---------------------------------------------------------------- table
def _fmt(v: Any, spec: str) -> str:
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "-"
    return format(v, spec)


def table(rows: list[dict[str, Any]]) -> str:
    """The benchmark table (one line per size and solver) and the agreement per size."""
    head = (f"{'units':>6} {'nx':>7} {'solver':>6} {'status':>16} {'profit USD/h':>14} {'iter':>5} {'f/J/H evals':>13} "
            f"{'build s':>8} {'load s':>7} {'start s':>8} {'setup s':>8} {'solve s':>8} {'s/iter':>7} {'eval':>6} {'linalg':>6} "
            f"{'other':>6} {'peak MB':>8}")
    lines = [head, "-" * len(head)]
    for r in rows:
        ne = r.get("n_eval") or {}
        fe = ne.get("f", ne.get("nlp_f"))
        je = ne.get("jac_g", ne.get("nlp_jac_g"))
        he = ne.get("hess_lag", ne.get("nlp_hess_l"))
        evals = "-" if fe is None else f"{fe}/{je}/{he}"
        it = r.get("iterations")
        wall = r.get("wall_s")
        per = wall / it if (wall is not None and it) else None
        lines.append(
            f"{_fmt(r.get('units'), 'd'):>6} {_fmt(r.get('nx'), 'd'):>7} {r['solver']:>6} {str(r.get('status'))[:16]:>16} "
            f"{_fmt(r.get('objective'), '.6f'):>14} {_fmt(it, 'd'):>5} {evals:>13} {_fmt(r.get('build_s'), '.2f'):>8} "
            f"{_fmt(r.get('load_s'), '.2f'):>7} {_fmt(r.get('start_s'), '.2f'):>8} {_fmt(r.get('setup_s'), '.2f'):>8} "
            f"{_fmt(wall, '.2f'):>8} "
            f"{_fmt(per, '.3f'):>7} {_fmt(r.get('eval_s'), '.2f'):>6} {_fmt(r.get('linalg_s'), '.2f'):>6} "
            f"{_fmt(r.get('other_s'), '.2f'):>6} {_fmt(r.get('peak_mb'), '.0f'):>8}")
    by_size: dict[Any, dict[str, dict]] = {}
    for r in rows:
        by_size.setdefault(r["units"], {})[r["solver"]] = r
    notes = []
    for u, d in by_size.items():
        if "sqp" in d and "ipopt" in d and d["sqp"].get("objective") is not None and d["ipopt"].get("objective") is not None:
            a, b = d["sqp"]["objective"], d["ipopt"]["objective"]
            rel = abs(a - b) / max(1.0, abs(b))
            same = d["sqp"].get("active_limits") == d["ipopt"].get("active_limits")
            ratio = (d["sqp"]["wall_s"] / d["ipopt"]["wall_s"]) if d["ipopt"].get("wall_s") else float("nan")
            # both statuses optimal and the profits apart: two local optima of a
            # nonconvex site (DEVELOPERS.md), so say which one is higher
            higher = ("" if rel <= 1e-6 or not (d["sqp"].get("status") == d["ipopt"].get("status") == "optimal")
                      else f" ({'SQP' if a > b else 'IPOPT'} higher: two local optima)")
            notes.append(f"{u:>6} units: profit rel. diff {rel:.1e}{higher}, active limits {'agree' if same else 'DIFFER'} "
                         f"({len(d['sqp'].get('active_limits') or [])} vs {len(d['ipopt'].get('active_limits') or [])}), "
                         f"SQP/IPOPT solve wall {ratio:.2f}")
    legend = ("build = assembly + first-derivative generation (shared by both solvers); start = sequential start point + "
              "simulation; setup = each solver's second derivatives, not in solve (SQP: the Lagrangian Hessian Function; "
              "IPOPT: casadi nlpsol on the compiled f and g); "
              "eval = NLP evaluations (SQP: wrapped evaluators; IPOPT: casadi t_wall_nlp_*); linalg = SQP's "
              "factorizations and QP solves (splu, qdldl incl. refactorisations and solves, piqp, dense ldl); other = the rest of the solve (SQP: Python "
              "driver; IPOPT: its linear algebra and bookkeeping); peak = ru_maxrss of the solver's process "
              "(forked after the build, so it includes the build)")
    return "\n".join(lines + [""] + notes + ["", legend])


def growth(rows: list[dict[str, Any]], key: str, solver: str) -> float | None:
    """Least-squares exponent b of ``key ~ units**b`` over the sizes that finished."""
    pts = [(r["units"], r[key]) for r in rows if r["solver"] == solver and r.get(key) and r.get("status") in ("optimal", "converged")]
    if len(pts) < 2:
        return None
    u, v = np.log([p[0] for p in pts]), np.log([p[1] for p in pts])
    return float(np.polyfit(u, v, 1)[0])


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="plantopt bench scale", description=__doc__.split("\n")[0])
    ap.add_argument("--sizes", default=",".join(map(str, DEFAULT_SIZES)), help="unit operations per site, comma-separated")
    ap.add_argument("--solvers", default="sqp,ipopt", help="comma-separated: sqp, ipopt")
    ap.add_argument("--json", metavar="FILE", help='write {"results": [...]} here')
    ap.add_argument("--max-iter", type=int, default=500)
    ap.add_argument("--max-time", type=float, default=math.inf, help="solver time limit per solve, s")
    ap.add_argument("--timeout", type=float, default=math.inf, help="kill a size (build and solves) after this many s")
    ap.add_argument("--fanout", type=int, default=16, help="most outlets of one feed-header splitter")
    a = ap.parse_args(argv)
    sizes = [int(s) for s in a.sizes.split(",") if s.strip()]
    solvers = [s.strip() for s in a.solvers.split(",") if s.strip()]
    bad = [s for s in solvers if s not in ("sqp", "ipopt")]
    if bad or not sizes or any(s < 1 for s in sizes):
        print(f"plantopt bench scale: bad --solvers {bad} or --sizes {a.sizes!r}", file=sys.stderr)
        return 2
    # import every solver module now: each size's solves then run the code as it was at
    # the start of the run, even if the files change during a long benchmark
    import plantopt.solver.inertia  # noqa: F401
    import plantopt.solver.ipopt  # noqa: F401
    import plantopt.solver.qp  # noqa: F401
    import plantopt.solver.sqp  # noqa: F401

    print("Generated sites (invented data): parallel trains sharing a feed header, a steam header and a blended product.")
    rows: list[dict[str, Any]] = []
    for u in sizes:
        rows += run_size(u, solvers, max_iter=a.max_iter, max_time=a.max_time, timeout=a.timeout, fanout=a.fanout)
        if a.json:  # written after every size, so a long run keeps what finished
            _write_json(a.json, rows)
    print()
    print(table(rows))
    for s in solvers:
        for key in ("build_s", "wall_s"):
            b = growth(rows, key, s)
            if b is not None:
                print(f"growth of {key} with units ({s}): ~ n^{b:.2f}")
    return 0


def _write_json(path: str, rows: list[dict[str, Any]]) -> None:
    tmp = f"{path}.tmp{os.getpid()}"
    with open(tmp, "w", encoding="utf-8") as fh:
        json.dump({"results": rows}, fh, indent=1, default=str)
    os.replace(tmp, path)


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
