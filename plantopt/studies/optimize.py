"""Economic optimization: the most profitable steady state within the limits."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any, Mapping

import numpy as np

from plantopt.assembly import Assembly, assemble
from plantopt.errors import InputError, StructureError
from plantopt.flowsheet import Flowsheet
from plantopt.results import RunResult
from plantopt.solver import solve_equations, solve_nlp
from plantopt.structure import check_structure
from plantopt.studies.core import build_result
from plantopt.studies.simulate import apply_overrides


def load_warm_start(path: str | Path, asm: Assembly) -> dict[str, Any]:
    """Read the warm-start block of an earlier result JSON and map it onto ``asm``.

    Variables and rows are matched by name, so a result of an edited
    flowsheet still warm-starts the parts they share.
    """
    from plantopt.flowsheet import read_input_bytes

    src = str(path)
    try:
        data = json.loads(read_input_bytes(path, what="a result JSON").decode("utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError, RecursionError) as exc:
        raise InputError(src, "", f"not a readable result JSON ({exc})") from None
    ws = data.get("warm_start") if isinstance(data, dict) else None
    if not isinstance(ws, dict) or not isinstance(ws.get("x"), list) or not isinstance(ws.get("x_paths"), list):
        raise InputError(src, "warm_start", "missing: the file is not a result written by 'plantopt optimize --json'")
    try:
        return _map_warm_start(ws, asm)
    except (TypeError, ValueError) as exc:
        raise InputError(src, "warm_start", f"expected lists of numbers and names as 'plantopt optimize --json' writes them ({exc})") from None


def _num(v: Any, missing: float) -> float:
    # JSON null stands for a non-finite number (see reports.io)
    return missing if v is None else float(v)


def _map_warm_start(ws: dict, asm: Assembly) -> dict[str, Any]:
    xmap = dict(zip(ws["x_paths"], ws["x"]))
    x = np.array([_num(xmap.get(s.path), np.nan) for s in asm.slots])
    out: dict[str, Any] = {"x": x, "matched": int(np.isfinite(x).sum())}
    if isinstance(ws.get("lam_g"), list) and isinstance(ws.get("g_names"), list):
        gmap = dict(zip(ws["g_names"], ws["lam_g"]))
        out["lam_g"] = np.array([_num(gmap.get(r.name), 0.0) for r in asm.rows])
    if isinstance(ws.get("lam_x"), list) and len(ws["lam_x"]) == len(ws["x_paths"]):
        lmap = dict(zip(ws["x_paths"], ws["lam_x"]))
        out["lam_x"] = np.array([_num(lmap.get(s.path), 0.0) for s in asm.slots])
    if ws.get("radius") is not None:
        out["radius"] = float(ws["radius"])
    return out


def failed_result(asm: Assembly, fs: Flowsheet, x: np.ndarray, solver: str, message: str):
    """An NLPResult with status "failed" at ``x`` (used when a solver raised)."""
    import casadi as ca

    from plantopt.solver import NLPResult, Status

    gfun = ca.Function("g", [asm.nlp["x"], asm.nlp["p"]], [asm.nlp["g"]])
    ffun = ca.Function("f", [asm.nlp["x"], asm.nlp["p"]], [asm.nlp["f"]])
    p = asm.p_values(fs)
    return NLPResult(status=Status.FAILED, x=np.asarray(x, float), f=float(ffun(x, p)), g=np.asarray(gfun(x, p)).ravel(),
                     lam_g=np.zeros(len(asm.rows)), lam_x=np.zeros(len(asm.slots)), iterations=0, n_eval={}, kkt={},
                     wall_time=0.0, solver=solver, message=message)


#: a variable whose start value is below this fraction of its model nominal keeps the model
#: nominal as its scale (zero flows, idle duties: their start value says nothing of their size)
START_SCALE_MIN = 1e-2


def variable_nominals(asm: Assembly, x0: np.ndarray) -> np.ndarray:
    """Typical magnitudes of the variables for scaling the optimization, shape (nx,), SI.

    The start point of an optimization is a converged steady state (the
    simulated base case, or an earlier optimum), so its values are the
    variables' own magnitudes; the unit models' nominals are only class-wide
    guesses (every stream flow of a site is scaled by the site's total feed,
    a header's total flow by 1 mol/s). A value below ``START_SCALE_MIN``
    of the model nominal keeps the model nominal.

    Measured on the site benchmark (``plantopt bench scale``): with the
    model nominals the 3,000-unit site's SQP took interior steps limited by
    the Hessian shift for 50 iterations (one train after another reaching
    its limit) and failed after 128 iterations; scaled by the start point it
    is optimal in 50 iterations.
    """
    nom = asm.x_nominal()
    x = np.abs(np.asarray(x0, dtype=float))
    ok = np.isfinite(x) & (x > START_SCALE_MIN * nom)
    return np.where(ok, x, nom)


def start_point(asm: Assembly, fs: Flowsheet) -> np.ndarray:
    """A start point for optimizing: the simulated base case where it converges,
    else the sequential estimate."""
    x0 = asm.initial_point(fs)
    lbx, ubx = asm.x_bounds()
    lbg, ubg = asm.g_bounds("simulate", fs)
    r = solve_equations(asm.compiled, x0, lbx, ubx, lbg, ubg, p=asm.p_values(fs),
                        options={"x_nominal": asm.x_nominal(), "max_iter": 200})
    return np.asarray(r.x, dtype=float) if np.all(np.isfinite(r.x)) else x0


def optimize(
    fs: Flowsheet,
    *,
    overrides: Mapping[str, Any] | None = None,
    solver: str = "sqp",
    warm_from: str | Path | dict | None = None,
    assembly: Assembly | None = None,
    options: dict | None = None,
) -> RunResult:
    """Most profitable steady state of ``fs`` within its limits and decision ranges.

    Parameters
    ----------
    fs : Flowsheet
    overrides : mapping, optional
        ``--set`` style input overrides.
    solver : {"sqp", "ipopt"}
        Our filter trust-region SQP, or IPOPT as an independent cross-check.
    warm_from : path or dict, optional
        An earlier result JSON (or an already loaded warm start) to start from.
    assembly : Assembly, optional
        Reuse a built assembly of ``fs`` (sweeps).
    options : dict, optional
        Extra solver options (``tol``, ``max_iter``, ``max_time``, ``verbose``).

    Returns
    -------
    RunResult
        ``status`` is ``"optimal"`` only when the solver verified the KKT
        conditions at the returned point.
    """
    fs2 = apply_overrides(fs, overrides)
    asm = assembly or assemble(fs)
    rep = check_structure(asm)
    if not rep.ok:
        raise StructureError(f"{fs.file}: the equation system is ill-posed: " + rep.lines()[0], rep.lines()[1:])
    warm = None
    if isinstance(warm_from, dict):
        warm = warm_from
    elif warm_from is not None:
        warm = load_warm_start(warm_from, asm)
    if warm is not None and np.isfinite(warm["x"]).all():
        x0 = warm["x"]
    else:
        x0 = start_point(asm, fs2)
        if warm is not None:
            mask = np.isfinite(warm["x"])
            x0 = np.where(mask, warm["x"], x0)
    lbx, ubx = asm.x_bounds()
    lbg, ubg = asm.g_bounds("optimize", fs2)
    opts = {"solver": solver, "x_nominal": variable_nominals(asm, x0)}
    opts.update(options or {})
    ws = None
    if warm is not None:
        ws = {k: v for k, v in warm.items() if k in ("lam_g", "lam_x", "radius") and v is not None}
        if "lam_g" in ws and "lam_x" not in ws:
            ws["lam_x"] = np.zeros(len(asm.slots))
        ws["x"] = x0
    try:
        res = solve_nlp(asm.compiled, x0, lbx, ubx, lbg, ubg, p=asm.p_values(fs2), options=opts, warm_start=ws)
    except Exception as exc:  # a numerical fault inside a solver must not lose the run
        res = failed_result(asm, fs2, x0, solver, f"solver raised {type(exc).__name__}: {exc}")
    status = str(getattr(res.status, "value", res.status))
    return build_result(asm, fs2, res, command="optimize", status=status,
                        overrides={k: str(v) for k, v in (overrides or {}).items()}, structure=rep.lines())
