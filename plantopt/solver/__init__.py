"""Nonlinear programming and nonlinear-equation solvers of plantopt.

Public interface::

    from plantopt.solver import solve_nlp, solve_equations, compile_nlp, NLPResult, Status

The package knows nothing of flowsheets or units: it works on casadi
expressions and numpy arrays only.

* :func:`solve_equations` -- square systems (rows with ``lbg == ubg``) by a
  dogleg trust-region Newton method (:mod:`.equations`); status
  ``converged`` or a failure status.
* :func:`solve_nlp` -- filter trust-region SQP (:mod:`.sqp` over the kernels
  :mod:`.qp`, :mod:`.filter`, :mod:`.restoration`, :mod:`.inertia`,
  :mod:`.scaling`, :mod:`.kkt`; constants and their sources in
  :mod:`.options`) or IPOPT via casadi (:mod:`.ipopt`) as a reference.
* :func:`compile_nlp` -- build the casadi derivative functions once for
  repeated solves (sweeps).

Non-convergence is a :class:`Status`, never an exception;
:class:`plantopt.errors.SolverError` means misuse (shapes, options).
"""

from plantopt.solver.equations import solve_equations
from plantopt.solver.nlp import CompiledNLP, compile_nlp
from plantopt.solver.result import NLPResult
from plantopt.solver.status import Status

__all__ = ["solve_nlp", "solve_equations", "compile_nlp", "CompiledNLP", "NLPResult", "Status"]


def __getattr__(name: str):  # solve_nlp is imported lazily until the SQP module lands
    if name == "solve_nlp":
        from plantopt.solver.api import solve_nlp

        return solve_nlp
    raise AttributeError(name)
