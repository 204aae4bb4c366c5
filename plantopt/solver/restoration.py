"""Feasibility restoration: the l1 elastic problem.

When the linearised constraints are inconsistent (or the QP fails) the
method minimises the l1 violation ``h(z) = sum_i max(cl_i - c_i, c_i - cu_i, 0)``.
:class:`ElasticNLP` is that minimisation as a smooth NLP in ``(z, p, n)``
(elastic variables ``p, n >= 0``; Fletcher, Practical Methods of
Optimization, 2nd ed., 1987, sec. 14.4; the restoration problem of
Waechter & Biegler 2006, sec. 3.3), which the driver solves with the
filter SQP itself (:func:`plantopt.solver.sqp._restore`): exact Hessian,
inertia test, filter and its own trust region. Its KKT conditions at a
point with a positive violation certify local infeasibility.

:func:`elastic_qp` is the elastic QP of one linearisation ::

    min  e'(p + n) + 1/2 d'(H + delta I)d
    s.t. cl - c <= J d - p + n <= cu - c,  p, n >= 0,  lb <= d <= ub

a kernel kept for diagnosing inconsistent linearisations (tested on its own).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from plantopt.solver.problem import scale_csc
from plantopt.solver.qp import solve_qp


@dataclass
class ElasticStep:
    """Solution of one elastic QP.

    Attributes
    ----------
    status : str
        ``"solved"`` or ``"failed"``.
    d : ndarray, shape (n,)
    y : ndarray, shape (m,)
        Row multipliers (casadi sign, ``|y| <= 1``).
    model_h : float
        l1 violation of the linearisation at ``d``.
    pred : float
        Predicted reduction of the l1 violation including the curvature term.
    """

    status: str
    d: np.ndarray
    y: np.ndarray
    model_h: float
    pred: float


def elastic_qp(
    H: sp.spmatrix, J: sp.spmatrix, c: np.ndarray, cl: np.ndarray, cu: np.ndarray,
    lb: np.ndarray, ub: np.ndarray, h: float,
) -> ElasticStep:
    """Solve the elastic QP of the module docstring.

    Parameters
    ----------
    H : sparse (n, n)
        Convex curvature term (caller regularises).
    J : sparse (m, n)
    c, cl, cu : ndarray, shape (m,)
        Constraint values and bounds (scaled).
    lb, ub : ndarray, shape (n,)
        Step bounds (variable bounds intersected with the trust region).
    h : float
        Current l1 violation, for the predicted reduction.
    """
    n, m = H.shape[0], J.shape[0]
    Im = sp.identity(m, format="csc")
    A = sp.hstack([J, -Im, Im], format="csc")
    Hb = sp.block_diag([H, sp.csc_matrix((2 * m, 2 * m))], format="csc")
    q = np.concatenate([np.zeros(n), np.ones(2 * m)])
    lo = np.concatenate([lb, np.zeros(2 * m)])
    hi = np.concatenate([ub, np.full(2 * m, np.inf)])
    res = solve_qp(Hb, q, A, cl - c, cu - c, lo, hi, do_polish=False)
    d = res.d[:n]
    if res.status != "solved":
        return ElasticStep("failed", d, res.y, np.inf, 0.0)
    lin = c + J @ d
    model_h = float(np.sum(np.maximum(np.maximum(cl - lin, lin - cu), 0.0)))
    pred = h - model_h - 0.5 * float(d @ (H @ d))
    return ElasticStep("solved", d, res.y, model_h, pred)


class ElasticNLP:
    """The smooth l1 feasibility problem of a scaled NLP, with the evaluator interface of ``CompiledNLP``.

    Variables ``w = (z, p, n)`` (``z`` scaled as in ``prob``; ``p, n >= 0``
    of the size of the constraint rows) and ::

        min  e'(p + n)   s.t.  cl <= c(z) - p + n <= cu,   zl <= z <= zu

    whose minimum value is the least l1 violation reachable from the start
    (the restoration problem of Waechter & Biegler 2006, sec. 3.3, without
    their proximity term, and the elastic mode of Fletcher 1987, sec. 14.4).
    Its linearisations are always consistent, so the filter SQP solves it
    without restoration; its KKT conditions at a point with ``e'(p + n) > 0``
    certify local infeasibility of the original problem.

    With ``z_ref`` and ``prox > 0`` the objective has the proximity term
    ``prox/2 ||z - z_ref||^2`` of Waechter & Biegler (2006, eq. (30)), which
    keeps restoration near the point it started from (without it the
    constraint curvature alone shapes the steps in ``z``; on the 1,000-unit
    site benchmark restoration moved the objective from -58.04 to -56.97 to
    remove a violation of 2e-3). Certification uses ``prox = 0``.

    Evaluations go through ``prob`` and are counted in the original NLP's
    counters; :meth:`reset_counts` is a no-op so those counts accumulate.
    """

    def __init__(self, prob, z_ref: np.ndarray | None = None, prox: float = 0.0):
        self.prob = prob
        self.z_ref = None if z_ref is None else np.asarray(z_ref, float).copy()
        self.prox = float(prox) if z_ref is not None else 0.0
        self.n = prob.cnlp.nx
        self.m = prob.cnlp.ng
        self.nx = self.n + 2 * self.m
        self.ng = self.m
        self.np_ = 0
        self.n_eval = prob.cnlp.n_eval
        m = self.m
        self._Im = sp.identity(m, format="csc")
        self._zero = sp.csc_matrix((2 * m, 2 * m))

    def reset_counts(self) -> None:
        """Counts accumulate in the original NLP's counters (see class docstring)."""

    def split(self, w: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        n, m = self.n, self.m
        return w[:n], w[n:n + m], w[n + m:]

    def f(self, w: np.ndarray, p: np.ndarray) -> float:
        val = float(np.sum(w[self.n:]))
        if self.prox:
            dz = w[:self.n] - self.z_ref
            val += 0.5 * self.prox * float(dz @ dz)
        return val

    def grad_f(self, w: np.ndarray, p: np.ndarray) -> np.ndarray:
        gz = self.prox * (w[:self.n] - self.z_ref) if self.prox else np.zeros(self.n)
        return np.concatenate([gz, np.ones(2 * self.m)])

    def g(self, w: np.ndarray, p: np.ndarray) -> np.ndarray:
        z, pp, nn = self.split(w)
        pr = self.prob
        return pr.sc.sg * pr.cnlp.g(pr.x(z), pr.p) - pp + nn

    def jac(self, w: np.ndarray, p: np.ndarray) -> sp.csc_matrix:
        z = w[:self.n]
        pr = self.prob
        J = scale_csc(pr.cnlp.jac(pr.x(z), pr.p), pr.sc.sg, pr.sc.dx)
        return sp.hstack([J, -self._Im, self._Im], format="csc")

    def hess(self, w: np.ndarray, p: np.ndarray, sigma: float, lam_g: np.ndarray) -> sp.csc_matrix:
        z = w[:self.n]
        pr = self.prob
        H = pr.cnlp.hess(pr.x(z), pr.p, 0.0, pr.sc.sg * np.asarray(lam_g, float))
        H = scale_csc(H, pr.sc.dx, pr.sc.dx)
        if self.prox:
            H = (H + (sigma * self.prox) * sp.identity(self.n, format="csc")).tocsc()
        return sp.block_diag([H, self._zero], format="csc")
