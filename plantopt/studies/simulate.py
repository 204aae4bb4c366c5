"""Steady-state simulation: the square system with decisions at their base values."""

from __future__ import annotations

from typing import Any, Mapping

import numpy as np

from plantopt.assembly import Assembly, assemble
from plantopt.errors import StructureError
from plantopt.flowsheet import Flowsheet
from plantopt.results import RunResult
from plantopt.solver import solve_equations
from plantopt.structure import check_structure
from plantopt.studies.core import build_result


def apply_overrides(fs: Flowsheet, overrides: Mapping[str, Any] | None) -> Flowsheet:
    """A copy of ``fs`` with ``--set`` style overrides applied (address to value text)."""
    if not overrides:
        return fs
    # each override checked alone and the combination as a whole (decision
    # ranges around their base, composition sums, limit bounds in order)
    return fs.with_overrides(overrides)


def simulate(
    fs: Flowsheet,
    *,
    overrides: Mapping[str, Any] | None = None,
    assembly: Assembly | None = None,
    options: dict | None = None,
) -> RunResult:
    """Solve the flowsheet's square system at the decisions' base values.

    Parameters
    ----------
    fs : Flowsheet
    overrides : mapping of str to value, optional
        Input addresses and values (bare numbers in the file's unit).
    assembly : Assembly, optional
        A prebuilt assembly of ``fs`` (reused, not rebuilt).
    options : dict, optional
        Passed to the Newton solver (``tol``, ``max_iter``, ``verbose``).

    Returns
    -------
    RunResult
        ``status`` is ``"converged"`` or the solver's failure status.

    Raises
    ------
    StructureError
        The system is not square or is structurally singular.
    """
    fs2 = apply_overrides(fs, overrides)
    asm = assembly or assemble(fs)
    rep = check_structure(asm)
    if not rep.ok:
        raise StructureError(f"{fs.file}: the square system cannot be solved: " + rep.lines()[0], rep.lines()[1:])
    x0 = asm.initial_point(fs2)
    lbx, ubx = asm.x_bounds()
    lbg, ubg = asm.g_bounds("simulate", fs2)
    # tight: overall balances must close to ~1e-10 relative, not just the scaled residual
    opts = {"x_nominal": asm.x_nominal(), "max_iter": 200, "tol": 1e-12}
    opts.update(options or {})
    res = solve_equations(asm.compiled, x0, lbx, ubx, lbg, ubg, p=asm.p_values(fs2), options=opts)
    status = str(getattr(res.status, "value", res.status))
    return build_result(asm, fs2, res, command="simulate", status=status,
                        overrides={k: str(v) for k, v in (overrides or {}).items()}, structure=rep.lines())
