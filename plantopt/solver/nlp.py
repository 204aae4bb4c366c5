"""Compilation of a casadi NLP dictionary into the functions the solvers call."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable

import casadi as ca
import numpy as np
import scipy.sparse as sp

from plantopt.errors import SolverError


class _SparseFn:
    """A casadi Function with one sparse matrix output, returned as scipy CSC.

    The sparsity pattern is fixed at compile time, so only the nonzeros are
    copied per call.
    """

    def __init__(self, fn: ca.Function):
        self.fn = fn
        spy = fn.sparsity_out(0)
        self.shape = (spy.size1(), spy.size2())
        self.indptr = np.array(spy.colind(), dtype=np.int64)
        self.indices = np.array(spy.row(), dtype=np.int64)

    def __call__(self, *args: Any) -> sp.csc_matrix:
        out = self.fn(*args)
        data = np.array(out.nonzeros(), dtype=float)
        return sp.csc_matrix((data, self.indices, self.indptr), shape=self.shape)


@dataclass
class CompiledNLP:
    """Casadi Functions of one NLP, built once and reused across solves.

    Attributes
    ----------
    nx, ng, np_ : int
        Numbers of variables, constraint rows and parameters.
    nlp : dict
        The original casadi-style dictionary (used by the IPOPT reference).
    n_eval : dict of str to int
        Cumulative evaluation counts (reset by each solve).
    hess_lag : _SparseFn
        The Lagrangian Hessian, generated on first use (see :func:`compile_nlp`).
    """

    nlp: dict
    nx: int
    ng: int
    np_: int
    f_fn: ca.Function
    grad_f_fn: ca.Function
    g_fn: ca.Function
    jac_g: _SparseFn
    hess_builder: Callable[[], _SparseFn] | None = field(default=None, repr=False)
    n_eval: dict[str, int] = field(default_factory=dict)
    _hess_lag: _SparseFn | None = field(default=None, repr=False)

    @property
    def has_hessian(self) -> bool:
        """Whether :attr:`hess_lag` has been generated."""
        return self._hess_lag is not None

    @property
    def hess_lag(self) -> _SparseFn:
        """Hessian of ``sigma f + lam_g' g`` as a sparse Function of (x, p, sigma, lam_g)."""
        if self._hess_lag is None:
            self._hess_lag = self.hess_builder()
            self.hess_builder = None
        return self._hess_lag

    @property
    def jac_g_sparsity(self) -> sp.csc_matrix:
        """Structural pattern of the constraint Jacobian, boolean CSC (ng, nx)."""
        j = self.jac_g
        return sp.csc_matrix((np.ones(j.indices.size, bool), j.indices, j.indptr), shape=j.shape)

    @property
    def hess_sparsity(self) -> sp.csc_matrix:
        """Structural pattern of the Lagrangian Hessian (full storage), boolean CSC (nx, nx)."""
        hs = self.hess_lag
        return sp.csc_matrix((np.ones(hs.indices.size, bool), hs.indices, hs.indptr), shape=hs.shape)

    def reset_counts(self) -> None:
        """Zero the evaluation counters."""
        self.n_eval = {"f": 0, "grad_f": 0, "g": 0, "jac_g": 0, "hess_lag": 0}

    # Each evaluator returns plain numpy arrays; NaN/Inf are left for the
    # caller to detect, because a failed evaluation is a rejected step, not
    # an error.
    def f(self, x: np.ndarray, p: np.ndarray) -> float:
        """Objective value (scalar)."""
        self.n_eval["f"] += 1
        return float(self.f_fn(x, p))

    def grad_f(self, x: np.ndarray, p: np.ndarray) -> np.ndarray:
        """Objective gradient, shape (nx,)."""
        self.n_eval["grad_f"] += 1
        return np.array(self.grad_f_fn(x, p), dtype=float).reshape(-1)

    def g(self, x: np.ndarray, p: np.ndarray) -> np.ndarray:
        """Constraint values, shape (ng,)."""
        self.n_eval["g"] += 1
        if self.ng == 0:
            return np.zeros(0)
        return np.array(self.g_fn(x, p), dtype=float).reshape(-1)

    def jac(self, x: np.ndarray, p: np.ndarray) -> sp.csc_matrix:
        """Constraint Jacobian, sparse (ng, nx)."""
        self.n_eval["jac_g"] += 1
        return self.jac_g(x, p)

    def hess(self, x: np.ndarray, p: np.ndarray, sigma: float, lam_g: np.ndarray) -> sp.csc_matrix:
        """Hessian of ``sigma f + lam_g' g``, full symmetric sparse (nx, nx)."""
        self.n_eval["hess_lag"] += 1
        return self.hess_lag(x, p, sigma, lam_g)


def compile_nlp(nlp: dict | CompiledNLP) -> CompiledNLP:
    """Build the casadi Functions of an NLP once.

    Parameters
    ----------
    nlp : dict or CompiledNLP
        ``{"x": column, "f": scalar, "g": column, "p": column (optional)}``
        with casadi SX or MX expressions. A :class:`CompiledNLP` is returned
        unchanged.

    Returns
    -------
    CompiledNLP

    Raises
    ------
    SolverError
        If the dictionary is malformed (missing ``x``, non-scalar ``f``,
        non-column ``x``/``g``/``p``, unknown keys).
    """
    if isinstance(nlp, CompiledNLP):
        return nlp
    if not isinstance(nlp, dict) or "x" not in nlp:
        raise SolverError("nlp must be a dict with at least the key 'x'")
    unknown = set(nlp) - {"x", "f", "g", "p"}
    if unknown:
        raise SolverError(f"unknown nlp keys {sorted(unknown)}; allowed: x, f, g, p")
    x = nlp["x"]
    if not isinstance(x, (ca.SX, ca.MX)) or x.size2() != 1:
        raise SolverError("nlp['x'] must be a casadi SX/MX column vector")
    sym = type(x)
    f = nlp.get("f", sym(0))
    g = nlp.get("g", sym(0, 1))
    p = nlp.get("p", sym.sym("p", 0))
    f = sym(f) if not isinstance(f, (ca.SX, ca.MX)) else f
    g = sym(g) if not isinstance(g, (ca.SX, ca.MX)) else g
    if f.numel() != 1:
        raise SolverError(f"nlp['f'] must be scalar, got shape {f.shape}")
    if g.numel() > 0 and g.size2() != 1:
        raise SolverError(f"nlp['g'] must be a column, got shape {g.shape}")
    if g.numel() == 0:
        g = sym(0, 1)
    if p.numel() > 0 and p.size2() != 1:
        raise SolverError(f"nlp['p'] must be a column, got shape {p.shape}")
    nx, ng, npar = x.size1(), g.size1(), p.numel()

    def hessian() -> _SparseFn:
        # Generated on first use: only the optimizer needs it (simulations,
        # start points and the IPOPT reference, which differentiates on its
        # own, never do). On the 10,000-unit site benchmark it is the largest
        # single item of the build: ~4 million instructions, ~380 MB with the
        # expression graph the Function keeps alive.
        sigma = sym.sym("sigma")
        lam = sym.sym("lam_g", ng)
        lag = sigma * f + (ca.dot(lam, g) if ng else 0)
        hess = ca.hessian(lag, x)[0]
        return _SparseFn(ca.Function("hess_lag", [x, p, sigma, lam], [hess]))

    jac = ca.jacobian(g, x)
    cnlp = CompiledNLP(
        nlp=dict(nlp),
        nx=nx,
        ng=ng,
        np_=npar,
        f_fn=ca.Function("f", [x, p], [f]),
        grad_f_fn=ca.Function("grad_f", [x, p], [ca.densify(ca.gradient(f, x))]),
        g_fn=ca.Function("g", [x, p], [ca.densify(g)]),
        jac_g=_SparseFn(ca.Function("jac_g", [x, p], [jac])),
        hess_builder=hessian,
    )
    cnlp.reset_counts()
    return cnlp


def _vec(name: str, v: Any, n: int, default: float | None = None) -> np.ndarray:
    if v is None:
        if default is None:
            raise SolverError(f"{name} is required")
        return np.full(n, float(default))
    a = np.asarray(v, dtype=float)
    if a.ndim == 0:
        return np.full(n, float(a))
    a = a.reshape(-1) if a.ndim == 2 and 1 in a.shape else a
    if a.shape != (n,):
        raise SolverError(f"{name} must have shape ({n},), got {np.shape(v)}")
    return a.copy()


def check_inputs(
    cnlp: CompiledNLP, x0: Any, lbx: Any, ubx: Any, lbg: Any, ubg: Any, p: Any
) -> tuple[np.ndarray, ...]:
    """Validate and broadcast the numeric inputs of a solve.

    Scalars broadcast; ``None`` bounds mean unbounded.

    Returns
    -------
    x0, lbx, ubx, lbg, ubg, p : ndarray
        Float vectors of shapes (nx,), (nx,), (nx,), (ng,), (ng,), (np,).

    Raises
    ------
    SolverError
        On wrong shapes, NaN entries or crossed bounds.
    """
    nx, ng = cnlp.nx, cnlp.ng
    x0 = _vec("x0", x0, nx)
    lbx = _vec("lbx", lbx, nx, -np.inf)
    ubx = _vec("ubx", ubx, nx, np.inf)
    lbg = _vec("lbg", lbg, ng, -np.inf)
    ubg = _vec("ubg", ubg, ng, np.inf)
    p = _vec("p", p, cnlp.np_, 0.0 if cnlp.np_ == 0 else None) if cnlp.np_ else np.zeros(0)
    for name, a in (("x0", x0), ("lbx", lbx), ("ubx", ubx), ("lbg", lbg), ("ubg", ubg), ("p", p)):
        if np.isnan(a).any():
            raise SolverError(f"{name} contains NaN")
    if not np.isfinite(x0).all() or not np.isfinite(p).all():
        raise SolverError("x0 and p must be finite")
    if (lbx > ubx).any():
        raise SolverError(f"lbx > ubx at indices {np.flatnonzero(lbx > ubx).tolist()}")
    if (lbg == np.inf).any() or (ubg == -np.inf).any() or (lbx == np.inf).any() or (ubx == -np.inf).any():
        raise SolverError("a lower bound of +inf or an upper bound of -inf can never be met")
    if (lbg > ubg).any():
        raise SolverError(f"lbg > ubg at rows {np.flatnonzero(lbg > ubg).tolist()}")
    return x0, lbx, ubx, lbg, ubg, p
