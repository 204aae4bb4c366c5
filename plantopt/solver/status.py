"""The one place where solver outcomes are enumerated."""

from __future__ import annotations

from enum import Enum


class Status(str, Enum):
    """Outcome of :func:`~plantopt.solver.solve_nlp` or :func:`~plantopt.solver.solve_equations`.

    A ``str`` enum so that results compare equal to plain strings and print
    readably in reports and JSON.
    """

    #: KKT conditions hold at the returned point to the requested tolerance.
    OPTIMAL = "optimal"
    #: Square system solved: scaled residual below tolerance.
    CONVERGED = "converged"
    #: Local infeasibility certified; the returned point is least infeasible.
    INFEASIBLE = "infeasible"
    #: Iteration budget spent; the returned point is the best one seen.
    ITERATION_LIMIT = "iteration_limit"
    #: Wall-time budget spent; the returned point is the best one seen.
    TIME_LIMIT = "time_limit"
    #: Anything else (stagnation, evaluation failures, QP trouble).
    FAILED = "failed"

    def __str__(self) -> str:
        return self.value


#: Statuses for which :attr:`NLPResult.success` is true.
SUCCESS_STATUSES = frozenset({Status.OPTIMAL, Status.CONVERGED})
