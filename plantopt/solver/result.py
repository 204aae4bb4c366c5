"""Result record returned by every solver entry point."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from plantopt.solver.status import SUCCESS_STATUSES, Status


@dataclass(frozen=True)
class NLPResult:
    """Outcome of one solve.

    Multipliers follow casadi's ``nlpsol`` convention: the Lagrangian is
    ``L = f + lam_g' g + lam_x' x``, so for minimisation a multiplier is
    negative at an active lower bound and positive at an active upper bound.

    Attributes
    ----------
    status : Status
        Outcome (see :class:`~plantopt.solver.status.Status`).
    x : ndarray, shape (n,)
        Returned point (best point seen when not successful).
    f : float
        Objective at ``x``.
    g : ndarray, shape (m,)
        Constraint values at ``x``.
    lam_g : ndarray, shape (m,)
        Constraint multipliers (casadi sign convention).
    lam_x : ndarray, shape (n,)
        Bound multipliers (casadi sign convention).
    iterations : int
        Major iterations performed.
    n_eval : dict of str to int
        Number of evaluations of each compiled function.
    kkt : dict of str to float
        ``stationarity``, ``feasibility``, ``complementarity`` and their
        ``*_scaled`` counterparts, recomputed at ``x`` with exact derivatives.
    wall_time : float
        Seconds spent in the solve.
    history : list of dict
        One record per iteration (see the iteration log).
    active_set : dict of str to ndarray
        Index arrays ``x_lower``, ``x_upper``, ``g_lower``, ``g_upper`` of
        bounds met to 1e-9 (relative); equality rows are in both ``g`` lists.
    warm_start : dict
        What :func:`~plantopt.solver.solve_nlp` needs to resume: ``x``,
        ``lam_g``, ``lam_x``, ``radius``, ``active_set``.
    solver : str
        ``"sqp"``, ``"ipopt"`` or ``"newton"``.
    message : str
        Human-readable explanation of the status.
    """

    status: Status
    x: np.ndarray
    f: float
    g: np.ndarray
    lam_g: np.ndarray
    lam_x: np.ndarray
    iterations: int
    n_eval: dict[str, int]
    kkt: dict[str, float]
    wall_time: float
    history: list[dict[str, Any]] = field(default_factory=list)
    active_set: dict[str, np.ndarray] = field(default_factory=dict)
    warm_start: dict[str, Any] = field(default_factory=dict)
    solver: str = "sqp"
    message: str = ""

    @property
    def success(self) -> bool:
        """True when the status is ``optimal`` or ``converged``."""
        return self.status in SUCCESS_STATUSES
