"""Public entry point :func:`solve_nlp`."""

from __future__ import annotations

from typing import Any

from plantopt.errors import SolverError
from plantopt.solver.nlp import CompiledNLP, check_inputs, compile_nlp
from plantopt.solver.options import DEFAULTS, SOLVERS, resolve_options
from plantopt.solver.result import NLPResult


def solve_nlp(
    nlp: dict | CompiledNLP,
    x0: Any,
    lbx: Any = None,
    ubx: Any = None,
    lbg: Any = None,
    ubg: Any = None,
    *,
    p: Any = None,
    options: dict[str, Any] | None = None,
    warm_start: dict[str, Any] | None = None,
) -> NLPResult:
    """Minimise ``f(x, p)`` s.t. ``lbg <= g(x, p) <= ubg``, ``lbx <= x <= ubx``.

    Parameters
    ----------
    nlp : dict or CompiledNLP
        Casadi-style ``{"x", "f", "g", "p"}``; pass the result of
        :func:`compile_nlp` to avoid rebuilding derivatives in sweeps.
    x0 : array_like, shape (nx,) or None
        Start point; ``None`` takes ``warm_start["x"]``.
    lbx, ubx : array_like, shape (nx,)
        Variable bounds (``+-inf`` or ``None`` for none).
    lbg, ubg : array_like, shape (ng,)
        Constraint bounds; ``lbg == ubg`` marks an equality.
    p : array_like, shape (np,), optional
        Parameter values.
    options : dict, optional
        ``solver`` ("sqp" or "ipopt"), ``tol`` (scaled KKT, 1e-8),
        ``max_iter`` (200), ``max_time`` (s), ``verbose`` (0/1),
        ``x_nominal`` (nx,), ``g_nominal`` (ng,).
    warm_start : dict, optional
        ``NLPResult.warm_start`` of an earlier solve: multipliers and the
        trust radius are reused (and the point, when ``x0`` is None).

    Returns
    -------
    NLPResult

    Raises
    ------
    SolverError
        On bad shapes, unknown options or an unknown solver name.
    """
    opts = resolve_options(options, DEFAULTS)
    if opts["solver"] not in SOLVERS:
        raise SolverError(f"unknown solver {opts['solver']!r}; choose one of {SOLVERS}")
    cnlp = compile_nlp(nlp)
    if x0 is None:
        if not warm_start or warm_start.get("x") is None:
            raise SolverError("x0 is required (or a warm_start with 'x')")
        x0 = warm_start["x"]
    x0, lbx, ubx, lbg, ubg, p = check_inputs(cnlp, x0, lbx, ubx, lbg, ubg, p)
    if opts["solver"] == "ipopt":
        from plantopt.solver.ipopt import ipopt_solve

        return ipopt_solve(cnlp, x0, lbx, ubx, lbg, ubg, p, opts, warm_start)
    from plantopt.solver.sqp import sqp_solve

    return sqp_solve(cnlp, x0, lbx, ubx, lbg, ubg, p, opts, warm_start)
