"""The NLP in scaled variables, as seen by the SQP kernels.

Scaled quantities: ``z = x / dx``, ``F = sf f``, ``c = sg g``. With the
scaled Lagrangian ``Ls = F + y'c + yx'z`` the casadi-convention
multipliers of the original problem are ``lam_g = sg y / sf`` and
``lam_x = yx / (dx sf)``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from plantopt.solver.nlp import CompiledNLP
from plantopt.solver.scaling import Scaling


def scale_csc(M: sp.csc_matrix, row: np.ndarray, col: np.ndarray) -> sp.csc_matrix:
    """``diag(row) @ M @ diag(col)`` for a CSC matrix, on its nonzeros only."""
    M = sp.csc_matrix(M)
    cols = np.repeat(np.arange(M.shape[1]), np.diff(M.indptr))
    data = M.data * row[M.indices] * col[cols]
    return sp.csc_matrix((data, M.indices, M.indptr), shape=M.shape)


def _diagonal_entries(M: sp.csc_matrix) -> tuple[np.ndarray, np.ndarray]:
    """Column of every stored entry of a CSC matrix, and which entries are diagonal."""
    cols = np.repeat(np.arange(M.shape[1]), np.diff(M.indptr))
    return cols, M.indices == cols


def with_diagonal(M: sp.csc_matrix) -> sp.csc_matrix:
    """``M`` (square CSC) with every diagonal entry stored, explicit zeros kept.

    Shifted Hessians ``H + delta I`` then keep the pattern of ``H``
    (:func:`shift_diagonal`), so the fixed-pattern KKT matrices of the
    inertia test and the QP polish see one pattern, not two (measured on the
    10,000-unit site: the KKT matrices of ``H`` and of ``H + delta I``
    differed in 10 of 1.3 million entries, which kept a second qdldl
    factorisation of 39 MB and a second assembly of 23 MB in the caches and
    cost extra symbolic analyses).
    """
    M = sp.csc_matrix(M)
    n = M.shape[0]
    cols, on_diag = _diagonal_entries(M)
    has = np.zeros(n, dtype=bool)
    has[M.indices[on_diag]] = True
    if has.all():
        return M
    miss = np.flatnonzero(~has)
    rows = np.concatenate([M.indices, miss])
    cc = np.concatenate([cols, miss])
    data = np.concatenate([M.data, np.zeros(miss.size)])
    order = np.lexsort((rows, cc))
    indptr = np.concatenate([[0], np.cumsum(np.bincount(cc, minlength=n))])
    return sp.csc_matrix((data[order], rows[order].astype(M.indices.dtype), indptr.astype(M.indptr.dtype)),
                         shape=M.shape)


def shift_diagonal(M: sp.csc_matrix, delta: float) -> sp.csc_matrix:
    """``M + delta I`` with the pattern of :func:`with_diagonal` of ``M`` (zeros kept)."""
    M = with_diagonal(M)
    if not delta:
        return M
    data = M.data.copy()
    data[_diagonal_entries(M)[1]] += delta
    return sp.csc_matrix((data, M.indices, M.indptr), shape=M.shape)


@dataclass
class ScaledProblem:
    """Scaled evaluators and bounds of one solve.

    Attributes
    ----------
    cnlp : CompiledNLP
    p : ndarray, shape (np,)
    sc : Scaling
    zl, zu : ndarray, shape (nx,)
        Scaled variable bounds.
    cl, cu : ndarray, shape (ng,)
        Scaled constraint bounds.
    """

    cnlp: CompiledNLP
    p: np.ndarray
    sc: Scaling
    zl: np.ndarray
    zu: np.ndarray
    cl: np.ndarray
    cu: np.ndarray

    def x(self, z: np.ndarray) -> np.ndarray:
        """Unscaled point, shape (nx,)."""
        return z * self.sc.dx

    def values(self, z: np.ndarray) -> tuple[float, np.ndarray] | None:
        """Scaled objective and constraints, or ``None`` if not finite."""
        x = self.x(z)
        try:
            f = self.cnlp.f(x, self.p)
            g = self.cnlp.g(x, self.p)
        except RuntimeError:  # casadi evaluation error counts as failed evaluation
            return None
        if not np.isfinite(f) or not np.isfinite(g).all():
            return None
        return self.sc.sf * f, self.sc.sg * g

    def derivatives(self, z: np.ndarray) -> tuple[np.ndarray, sp.csc_matrix] | None:
        """Scaled gradient (nx,) and Jacobian (ng, nx), or ``None`` if not finite."""
        x = self.x(z)
        gr = self.cnlp.grad_f(x, self.p)
        J = self.cnlp.jac(x, self.p)
        if not np.isfinite(gr).all() or not np.isfinite(J.data).all():
            return None
        return self.sc.sf * self.sc.dx * gr, scale_csc(J, self.sc.sg, self.sc.dx)

    def hessian(self, z: np.ndarray, sigma: float, y: np.ndarray) -> sp.csc_matrix | None:
        """Scaled Hessian of ``sigma F + y'c``, full symmetric (nx, nx)."""
        H = self.cnlp.hess(self.x(z), self.p, sigma * self.sc.sf, self.sc.sg * y)
        if not np.isfinite(H.data).all():
            return None
        return with_diagonal(scale_csc(H, self.sc.dx, self.sc.dx))

    def violation(self, c: np.ndarray) -> float:
        """l1 norm of the scaled constraint violation."""
        if c.size == 0:
            return 0.0
        return float(np.sum(np.maximum(np.maximum(self.cl - c, c - self.cu), 0.0)))

    def violation_inf(self, c: np.ndarray) -> float:
        """Max norm of the scaled constraint violation."""
        if c.size == 0:
            return 0.0
        return float(np.max(np.maximum(np.maximum(self.cl - c, c - self.cu), 0.0)))

    def unscale_multipliers(self, y: np.ndarray, yx: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Casadi-convention ``lam_g`` (ng,) and ``lam_x`` (nx,)."""
        return self.sc.sg * y / self.sc.sf, yx / (self.sc.dx * self.sc.sf)

    def scale_multipliers(self, lam_g: np.ndarray, lam_x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Inverse of :meth:`unscale_multipliers`."""
        return lam_g * self.sc.sf / self.sc.sg, lam_x * self.sc.dx * self.sc.sf
