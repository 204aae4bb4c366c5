"""Variable, constraint and objective scaling.

Variables are scaled by the user's typical magnitudes, ``z = x / x_nominal``.
Constraint rows and the objective are scaled by the gradient rule of IPOPT
(Waechter & Biegler 2006, sec. 3.8; option ``nlp_scaling_max_gradient=100``):
``s = min(1, GRAD_SCALE_MAX / ||gradient in z||_inf)``, clipped to
``[SCALE_MIN, 1]``, evaluated once at the start point. User ``g_nominal``
overrides the rule for the constraints (``s_i = 1 / g_nominal_i``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from plantopt.errors import SolverError
from plantopt.solver.options import GRAD_SCALE_MAX, SCALE_MIN


@dataclass(frozen=True)
class Scaling:
    """Diagonal scaling factors.

    Attributes
    ----------
    dx : ndarray, shape (nx,)
        Variable nominal magnitudes; scaled variable ``z = x / dx``.
    sg : ndarray, shape (ng,)
        Constraint row factors; scaled row ``sg * g``.
    sf : float
        Objective factor; scaled objective ``sf * f``.
    """

    dx: np.ndarray
    sg: np.ndarray
    sf: float


def _positive(name: str, v: object, n: int) -> np.ndarray:
    a = np.abs(np.asarray(v, dtype=float).reshape(-1))
    if a.size == 1 and n != 1:
        a = np.full(n, a[0])
    if a.shape != (n,):
        raise SolverError(f"option {name!r} must have shape ({n},), got {np.shape(v)}")
    if not np.isfinite(a).all():
        raise SolverError(f"option {name!r} must be finite")
    # a zero "typical magnitude" carries no scale information: use 1 there
    return np.where(a > 0, a, 1.0)


def variable_scale(x_nominal: object, nx: int, name: str = "x_nominal") -> np.ndarray:
    """Nominal magnitudes, shape (nx,); ones when not given, zeros replaced by 1."""
    return np.ones(nx) if x_nominal is None else _positive(name, x_nominal, nx)


def gradient_rule(row_norms: np.ndarray) -> np.ndarray:
    """IPOPT's max-gradient rule: ``min(1, 100/||grad||_inf)`` clipped to ``[1e-8, 1]``."""
    with np.errstate(divide="ignore"):
        s = np.where(row_norms > 0, GRAD_SCALE_MAX / np.maximum(row_norms, 1e-300), 1.0)
    return np.clip(s, SCALE_MIN, 1.0)


def row_inf_norms(J: sp.spmatrix) -> np.ndarray:
    """Max-abs of each row of a sparse matrix, shape (rows,)."""
    if J.shape[0] == 0:
        return np.zeros(0)
    a = abs(sp.csr_matrix(J))
    return np.asarray(a.max(axis=1).todense()).reshape(-1)


def make_scaling(
    dx: np.ndarray,
    grad_f: np.ndarray | None,
    J: sp.spmatrix,
    g_nominal: object | None,
) -> Scaling:
    """Scaling factors from derivatives at the start point.

    Parameters
    ----------
    dx : ndarray, shape (nx,)
        Variable nominal magnitudes.
    grad_f : ndarray, shape (nx,) or None
        Objective gradient at the start point (None: objective unscaled).
    J : sparse (ng, nx)
        Constraint Jacobian at the start point.
    g_nominal : array_like or None
        User typical magnitudes of the constraint rows.
    """
    ng = J.shape[0]
    if g_nominal is not None:
        sg = 1.0 / _positive("g_nominal", g_nominal, ng)
    else:
        norms = row_inf_norms(sp.csr_matrix(J) @ sp.diags(dx)) if ng else np.zeros(0)
        norms = np.where(np.isfinite(norms), norms, 0.0)
        sg = gradient_rule(norms)
    sf = 1.0
    if grad_f is not None and grad_f.size and np.isfinite(grad_f).all():
        sf = float(gradient_rule(np.array([np.max(np.abs(grad_f * dx))]))[0])
    return Scaling(dx=dx, sg=sg, sf=sf)
