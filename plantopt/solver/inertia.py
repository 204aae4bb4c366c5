"""Inertia of quasi-definite KKT matrices and Hessian regularisation.

The matrix ``K = [[H + delta I, A'], [A, -eps I]]`` with ``A`` the equality
rows has the "correct" inertia ``(n, m, 0)`` exactly when ``H + delta I``
is positive definite on the null space of ``A`` (for full-rank ``A``; the
``-eps I`` block keeps ``K`` nonsingular when ``A`` is rank deficient).
The inertia is read off the signs of the pivots ``D`` of the ``LDL'``
factorisation computed by ``qdldl``: by Sylvester's law of inertia the
counts of positive and negative pivots equal those of eigenvalues.

When the inertia is wrong ``delta`` is raised geometrically, as in the
inertia correction of Waechter & Biegler (2006, Math. Programming 106,
sec. 3.1, Algorithm IC).

``qdldl`` does not pivot: on a KKT matrix whose ``H + delta I`` block is
indefinite (not quasi-definite) it can break down or lose all accuracy
although the inertia is correct. A second, stable test is therefore used
(Finsler's lemma, cf. Nocedal & Wright 2006, Theorem 17.5 and the
augmented Lagrangian Hessian of sec. 17.3): if ``H + delta I + rho A'A`` is
positive definite then ``H + delta I`` is positive definite on the null
space of ``A``. A positive definite matrix factors stably without pivoting
in any order, so all pivots of its ``LDL'`` being positive is a reliable
certificate. (Measured on the methanol loop flowsheet: the KKT test broke
down for every ``delta < 6.4e-3`` although ``delta = 1.7e-9`` already gave
the correct inertia; the over-shift shortened every step to ``~|g|/delta``
and the method made no progress in 200 iterations.)
"""

from __future__ import annotations

import numpy as np
import qdldl
import scipy.linalg as sla
import scipy.sparse as sp

from plantopt.solver.options import (
    DELTA_DECREASE, DELTA_FIRST, DELTA_GROW, DELTA_MAX, DELTA_TINY,
    DENSE_INERTIA_MAX, EPS_QD, FINSLER_RATIO, FINSLER_ROW_MAX, KKT_INACTIVE_PIVOT, PIVOT_CLEAN,
)


#: qdldl factorisations kept for reuse, most recent first: (indptr, indices, solver)
_FACTORS: list[tuple[np.ndarray, np.ndarray, "qdldl.Solver"]] = []
_FACTORS_KEPT = 6


def factor_upper(U: sp.spmatrix) -> "qdldl.Solver":
    """qdldl ``LDL'`` of a symmetric matrix given by its upper triangle (CSC).

    When an earlier matrix had the same sparsity pattern, its solver is
    refactored by ``Solver.update``, which keeps the symbolic analysis (AMD
    ordering and elimination tree) and only redoes the numeric factorisation:
    the inertia test factors the same pattern for each tried shift, and the
    pattern recurs across iterations while the active set is unchanged
    (measured on the 100-unit site benchmark: 1.7 ms for a new solver against
    0.4 ms for an update). The factors are those of a fresh factorisation
    (same ordering, same arithmetic). A breakdown (zero pivot; the matrix
    is not quasi-definite) does not raise: ``Solver.update`` reports none
    (checked with qdldl 0.1.9), it shows as zero or non-finite pivots in
    ``factors()[1]`` and as a solve that fails iterative refinement, which is
    what every caller tests. The returned solver is shared: use it before
    the next call, which may refactor it.
    """
    if not isinstance(U, sp.csc_matrix):
        U = sp.csc_matrix(U)
    if not U.has_sorted_indices:
        U.sort_indices()
    for k, (ip, ix, fac) in enumerate(_FACTORS):
        if ip.size == U.indptr.size and ix.size == U.indices.size and np.array_equal(ip, U.indptr) \
                and np.array_equal(ix, U.indices):
            del _FACTORS[k]
            fac.update(U, upper=True)
            _FACTORS.insert(0, (ip, ix, fac))
            return fac
    # The solver is built on a positive definite matrix of the same pattern
    # and then refactored with the real values: a qdldl.Solver whose
    # constructor raises on a breakdown leaks its workspace (measured with
    # qdldl 0.1.9.post1: ~6 MB per failed construction at n = 12,379; the
    # SQP's memory grew by ~200 MB per solve at 1,000 units, and the Finsler
    # test breaks down on every too-small shift), while a failed update()
    # does not. The symbolic analysis
    # depends on the pattern only, so it stays valid and is cached even when
    # this matrix breaks down.
    fac = qdldl.Solver(_dominant(U), upper=True)
    _FACTORS.insert(0, (U.indptr.copy(), U.indices.copy(), fac))
    del _FACTORS[_FACTORS_KEPT:]
    fac.update(U, upper=True)
    return fac


def _dominant(U: sp.csc_matrix) -> sp.csc_matrix:
    """Same pattern as the upper triangle ``U``, values made symmetric diagonally dominant.

    Every column must hold its diagonal entry (all our KKT and Finsler
    matrices store it explicitly). A symmetric strictly diagonally dominant
    matrix with a positive diagonal is positive definite, so its ``LDL'``
    exists in any order.
    """
    n = U.shape[0]
    cols = np.repeat(np.arange(n), np.diff(U.indptr))
    rows = U.indices
    off = rows != cols
    a = np.abs(U.data) * off
    row_sum = np.bincount(rows, weights=a, minlength=n) + np.bincount(cols, weights=a, minlength=n)
    data = np.where(off, U.data, 1.0 + row_sum[rows])
    return sp.csc_matrix((data, U.indices, U.indptr), shape=U.shape)


class _Assembly:
    """Upper-triangular CSC matrix assembled from a fixed list of triplet positions.

    Built once from the row and column indices of all contributions
    (duplicates allowed); afterwards ``matrix(values)`` sums the values into
    the stored pattern with one ``bincount``, without the sort of a COO to
    CSC conversion (measured on the 1,000-unit site: 2.3 ms per masked KKT
    matrix by conversion).
    """

    def __init__(self, rows: np.ndarray, cols: np.ndarray, N: int):
        key = cols.astype(np.int64) * N + rows
        uniq, inv = np.unique(key, return_inverse=True)
        # int32 where it fits: these index arrays stay in the pattern caches
        # (measured at 10,000 units: ~2.6 million entries for the Finsler matrix)
        self.inv = inv.astype(np.int32) if uniq.size < 2**31 else inv
        self.N = N
        self.indices = (uniq % N).astype(np.int32)
        self.indptr = np.searchsorted(uniq // N, np.arange(N + 1)).astype(np.int32)
        self.nnz = uniq.size

    def matrix(self, values: np.ndarray) -> sp.csc_matrix:
        data = np.bincount(self.inv, weights=values, minlength=self.nnz)
        M = sp.csc_matrix((data, self.indices, self.indptr), shape=(self.N, self.N))
        # np.unique sorted the keys col * N + row: the rows of each column
        # are sorted, which spares factor_upper scipy's check (measured at
        # 10,000 units: 1 ms per matrix)
        M.has_sorted_indices = True
        return M


#: assemblies kept for reuse, most recent first: (signature arrays, assembly, extra)
_ASSEMBLIES: list[tuple[tuple, "_Assembly", object]] = []
_ASSEMBLIES_KEPT = 6


def _structure(M: sp.spmatrix) -> sp.spmatrix:
    # CSC or CSR as given (their data order is then the triplet order used
    # below); anything else converted to CSC
    return M if M.format in ("csc", "csr") else sp.csc_matrix(M)


def _triplets(M: sp.spmatrix) -> tuple[np.ndarray, np.ndarray]:
    """Row and column index of every stored entry of a CSC/CSR matrix, in ``M.data`` order."""
    major = np.repeat(np.arange(len(M.indptr) - 1), np.diff(M.indptr))
    return (M.indices, major) if M.format == "csc" else (major, M.indices)


def _cached_assembly(tag: str, mats: tuple[sp.spmatrix, ...], build) -> tuple["_Assembly", object]:
    """The assembly for the sparsity patterns of ``mats`` (built by ``build()`` on a miss)."""
    sig = (tag,) + tuple((M.format, M.shape) for M in mats)
    for k, (key, asm, extra) in enumerate(_ASSEMBLIES):
        if key[0] == sig and all(np.array_equal(a, M.indptr) and np.array_equal(b, M.indices)
                                 for (a, b), M in zip(key[1], mats)):
            if k:
                _ASSEMBLIES.insert(0, _ASSEMBLIES.pop(k))
            return asm, extra
    asm, extra = build()
    _ASSEMBLIES.insert(0, ((sig, tuple((M.indptr.copy(), M.indices.copy()) for M in mats)), asm, extra))
    del _ASSEMBLIES[_ASSEMBLIES_KEPT:]
    return asm, extra


def kkt_matrix(H: sp.spmatrix, A: sp.spmatrix, delta: float, eps: float = EPS_QD) -> sp.csc_matrix:
    """Quasi-definite KKT matrix ``[[H + delta I, A'], [A, -eps I]]``, shape (n+m, n+m).

    Assembled from triplets (``sp.bmat`` costs milliseconds per call and
    this runs several times per iteration). Zero shifts leave explicit
    zeros on the diagonal, harmless for the factorisations.
    """
    n, m = H.shape[0], A.shape[0]
    Hc, Ac = sp.coo_matrix(H), sp.coo_matrix(A)
    idx_n, idx_m = np.arange(n), np.arange(m)
    rows = np.concatenate([Hc.row, idx_n, Ac.col, n + Ac.row, n + idx_m])
    cols = np.concatenate([Hc.col, idx_n, n + Ac.row, Ac.col, n + idx_m])
    vals = np.concatenate([Hc.data, np.full(n, delta), Ac.data, Ac.data, np.full(m, -eps)])
    return sp.csc_matrix((vals, (rows, cols)), shape=(n + m, n + m))


def kkt_upper(H: sp.spmatrix, A: sp.spmatrix, delta: float, eps: float = EPS_QD) -> sp.csc_matrix:
    """Upper triangle of :func:`kkt_matrix`, assembled directly from triplets.

    ``sp.bmat`` costs milliseconds per call; the inertia test runs up to a
    few times per iteration, so the triplets are concatenated by hand.
    """
    n, m = H.shape[0], A.shape[0]
    Hc = sp.coo_matrix(H)
    keep = Hc.row <= Hc.col
    Ac = sp.coo_matrix(A)
    idx_n, idx_m = np.arange(n), np.arange(m)
    rows = np.concatenate([Hc.row[keep], idx_n, Ac.col, n + idx_m])
    cols = np.concatenate([Hc.col[keep], idx_n, n + Ac.row, n + idx_m])
    vals = np.concatenate([Hc.data[keep], np.full(n, delta), Ac.data, np.full(m, -eps)])
    return sp.csc_matrix((vals, (rows, cols)), shape=(n + m, n + m))


def masked_kkt_upper(
    H: sp.spmatrix, A: sp.spmatrix, on_r: np.ndarray, on_b: np.ndarray, delta: float, eps: float,
) -> sp.csc_matrix:
    """Upper triangle of ``[[H + delta I, A', I], [A, -D_r, 0], [I, 0, -D_b]]``, shape (2n+m, 2n+m).

    Every row of ``A`` and every bound (identity row) keeps its place: an
    active one (``on_r``/``on_b`` true) gets the pivot ``-eps``, an inactive
    one ``-KKT_INACTIVE_PIVOT``, which leaves it in the pattern without
    constraining (its multiplier is ``A_i d / 1e20``). The sparsity pattern
    is therefore the same for every active set, and ``qdldl`` refactors it
    without a new ordering and symbolic analysis (:func:`factor_upper`).
    Inactive entries add one negative pivot each: ``H + delta I`` is positive
    definite on the null space of the active rows exactly when the inertia
    is ``(n, m + n, 0)`` (up to the rounding-level ``A_i'A_i / 1e20``).
    """
    n, m = H.shape[0], A.shape[0]
    Hs, As = _structure(H), _structure(A)

    def build():
        hr, hc = _triplets(Hs)
        ar, ac = _triplets(As)
        keep = hr <= hc
        idx_n, idx_k = np.arange(n), np.arange(m + n)
        rows = np.concatenate([hr[keep], idx_n, ac, idx_n, n + idx_k])
        cols = np.concatenate([hc[keep], idx_n, n + ar, n + m + idx_n, n + idx_k])
        return _Assembly(rows, cols, 2 * n + m), keep

    asm, keep = _cached_assembly("masked_kkt", (Hs, As), build)
    piv = np.concatenate([np.where(on_r, -eps, -KKT_INACTIVE_PIVOT), np.where(on_b, -eps, -KKT_INACTIVE_PIVOT)])
    vals = np.concatenate([Hs.data[keep], np.full(n, delta), As.data, np.ones(n), piv])
    return asm.matrix(vals)


def _block_eigs(D: np.ndarray) -> np.ndarray:
    # D of Bunch-Kaufman is block diagonal with 1x1 and 2x2 blocks
    N = D.shape[0]
    ev = []
    i = 0
    while i < N:
        if i + 1 < N and D[i + 1, i] != 0.0:
            ev.extend(np.linalg.eigvalsh(D[i:i + 2, i:i + 2]))
            i += 2
        else:
            ev.append(D[i, i])
            i += 1
    return np.asarray(ev)


def inertia(K: sp.spmatrix, dense_fallback: bool = True, upper: bool = False,
            pivots: list | None = None) -> tuple[int, int, int]:
    """Counts of (positive, negative, zero) pivots of ``LDL'`` of a symmetric matrix.

    Parameters
    ----------
    K : sparse (N, N)
        Symmetric matrix (full storage; only the upper triangle is read).

    pivots : list, optional
        Receives the smallest ``|pivot|`` of the unpivoted factorisation;
        nothing is appended when it broke down.

    Returns
    -------
    (int, int, int)
        ``(n_pos, n_neg, n_zero)``; a breakdown of the factorisation (a zero
        pivot) is reported as ``(0, 0, N)``.
    """
    N = K.shape[0]
    if N == 0:
        return (0, 0, 0)
    tiny = 1e-300
    try:
        fac = factor_upper(K if upper else sp.triu(K, format="csc"))
        d = np.asarray(fac.factors()[1]).reshape(-1)
        if np.isfinite(d).all():
            if pivots is not None:
                pivots.append(float(np.min(np.abs(d))))
            return (int(np.sum(d > tiny)), int(np.sum(d < -tiny)), int(np.sum(np.abs(d) <= tiny)))
    except (ValueError, RuntimeError):
        pass
    # qdldl does not pivot, so it can break down on a matrix that is not
    # quasi-definite (indefinite H). Small matrices get the Bunch-Kaufman
    # factorisation (symmetric pivoting) instead; its block-diagonal D has
    # the inertia of K by Sylvester's law.
    if dense_fallback and N <= DENSE_INERTIA_MAX:
        Kd = K.toarray()
        if upper:  # mirror the strict upper triangle
            Kd = Kd + np.triu(Kd, 1).T
        _, D, _ = sla.ldl(Kd, lower=True)
        ev = _block_eigs(D)
        scale = max(1.0, float(np.max(np.abs(ev), initial=0.0)))
        z = 1e-14 * scale
        return (int(np.sum(ev > z)), int(np.sum(ev < -z)), int(np.sum(np.abs(ev) <= z)))
    return (0, 0, N)


def positive_definite(M: sp.spmatrix) -> bool:
    """Whether a symmetric sparse matrix (upper triangle read) is positive definite.

    All pivots of the unpivoted ``LDL'`` factorisation positive (a breakdown
    means not definite).
    """
    if M.shape[0] == 0:
        return True
    try:
        fac = factor_upper(sp.triu(M, format="csc"))
        d = np.asarray(fac.factors()[1]).reshape(-1)
    except (ValueError, RuntimeError):
        return False
    return bool(np.isfinite(d).all() and (d > 0).all())


class _Finsler:
    """The stable null-space curvature test ``H + delta I + rho A'A`` positive definite.

    ``rho`` is chosen so that ``rho * max_j ||A e_j||^2 = FINSLER_RATIO * max(1, max|H|)``
    (see :data:`plantopt.solver.options.FINSLER_RATIO`).

    Rows of ``A`` with more than :data:`~plantopt.solver.options.FINSLER_ROW_MAX`
    entries are left out of ``A'A``. The certificate stays valid for any
    subset ``A_S`` of the rows: ``null(A)`` is contained in ``null(A_S)``, so
    positive definiteness of ``H + delta I`` on ``null(A_S)`` (which
    ``H + delta I + rho A_S'A_S > 0`` certifies) implies it on ``null(A)``.
    Leaving rows out can only make the test stricter (a larger shift),
    never accept a wrong one. A row with ``r`` entries puts up to ``r^2``
    entries into ``A'A``; one blend-mixer energy row of the 1,000-unit site
    (744 entries) gave most of the ~780k nonzeros of ``A'A`` against 45k in
    ``H``.
    """

    def __init__(self, H: sp.spmatrix, A: sp.spmatrix, scale: float,
                 row_on: np.ndarray | None = None, bnd_on: np.ndarray | None = None):
        """``A`` holds the rows to certify; or, with ``row_on``/``bnd_on``, all rows of ``J = A``.

        With the masks the active rows are ``row_on`` of ``A`` plus the
        identity rows of the bounds ``bnd_on``, and the matrix keeps the
        pattern of ``H + A_S'A_S + I`` (``A_S`` all short rows) for every
        active set, so ``qdldl`` reuses its symbolic analysis across
        iterations (measured on the 1,000-unit site: 16 new analyses per
        solve from this test when the pattern followed the active set).
        """
        n = H.shape[0]
        self.n = n
        self.rho = 0.0
        idx = np.arange(n)
        eye = sp.csc_matrix((np.ones(n), (idx, idx)), shape=(n, n))
        Hc = sp.csc_matrix(H)
        if row_on is not None:
            Hs, Js = _structure(Hc), sp.csr_matrix(A)

            def build():
                # every pair (c_i <= c_j) of entries of each short row r of J
                # contributes w_r a_ri a_rj to entry (c_i, c_j) of A_S'W A_S
                cnt = np.diff(Js.indptr)
                short = np.flatnonzero((cnt <= FINSLER_ROW_MAX) & (cnt > 0))
                p_i, p_j, p_r = [], [], []
                for k in np.unique(cnt[short]):
                    rk = short[cnt[short] == k]
                    base = Js.indptr[rk][:, None] + np.arange(k)[None, :]  # (rows, k) data positions
                    ii, jj = np.triu_indices(k)
                    p_i.append(base[:, ii].ravel())
                    p_j.append(base[:, jj].ravel())
                    p_r.append(np.repeat(rk, ii.size))
                # int32: data positions and row numbers of a CSR matrix fit
                # (these arrays stay in the pattern cache)
                p_i = np.concatenate(p_i).astype(np.int32) if p_i else np.zeros(0, np.int32)
                p_j = np.concatenate(p_j).astype(np.int32) if p_j else np.zeros(0, np.int32)
                p_r = np.concatenate(p_r).astype(np.int32) if p_r else np.zeros(0, np.int32)
                ci, cj = Js.indices[p_i], Js.indices[p_j]
                lo, hi = np.minimum(ci, cj), np.maximum(ci, cj)
                hr, hc = _triplets(Hs)
                keep = hr <= hc
                idx = np.arange(n)
                rows = np.concatenate([hr[keep], lo, idx])
                cols = np.concatenate([hc[keep], hi, idx])
                # the diagonal of A_S'W A_S (for rho) from the pairs with c_i = c_j
                return _Assembly(rows, cols, n), (keep, p_i, p_j, p_r, ci == cj, ci)

            asm, (keep, p_i, p_j, p_r, on_diag, ci) = _cached_assembly("finsler", (Hs, Js), build)
            w = np.asarray(row_on, dtype=float)
            pair = w[p_r] * Js.data[p_i] * Js.data[p_j]
            bd = np.zeros(n) if bnd_on is None else np.asarray(bnd_on, dtype=float)
            diag = np.bincount(ci[on_diag], weights=pair[on_diag], minlength=n) + bd
            top = float(diag.max(initial=0.0))
            rho = FINSLER_RATIO * scale / top if top > 0 else 0.0
            self.rho = rho
            U = asm.matrix(np.concatenate([Hs.data[keep], rho * pair, rho * bd]))
        else:
            if A.shape[0]:
                Ar = sp.csr_matrix(A)
                keep = np.flatnonzero(np.diff(Ar.indptr) <= FINSLER_ROW_MAX)
                if keep.size < A.shape[0]:
                    Ar = Ar[keep]
                Ac = sp.csc_matrix(Ar)
                AtA = (Ac.T @ Ac).tocsc()
                top = float(AtA.diagonal().max(initial=0.0))
                rho = FINSLER_RATIO * scale / top if top > 0 else 0.0
                self.rho = rho
                base = Hc + rho * AtA
            else:
                base = Hc
            # upper triangle with an explicit (possibly zero) diagonal: the same
            # pattern for every shift, so the factorisation is reused
            Bc = sp.triu(base, format="coo")
            U = sp.csc_matrix((np.concatenate([Bc.data, np.zeros(n)]),
                               (np.concatenate([Bc.row, idx]), np.concatenate([Bc.col, idx]))), shape=(n, n))
            U.sort_indices()
        self.U = U
        self.data0 = U.data.copy()
        self.diag_pos = U.indptr[1:] - 1  # last entry of each column of an upper triangle: the diagonal

    def __call__(self, delta: float) -> bool:
        U = self.U
        U.data = self.data0.copy()
        U.data[self.diag_pos] += delta
        return positive_definite(U)


def regularise(H: sp.spmatrix, A: sp.spmatrix | None, delta_last: float = 0.0, floor: float = DELTA_FIRST,
               mask: tuple[sp.spmatrix, np.ndarray, np.ndarray] | None = None) -> float:
    """Smallest tried ``delta >= 0`` giving ``K`` the inertia ``(n, m, 0)``.

    A shift is accepted when the ``qdldl`` inertia of ``K`` is correct or
    when the stable Finsler test (module docstring) certifies positive
    curvature on the null space of ``A``.

    Parameters
    ----------
    H : sparse (n, n)
        Lagrangian Hessian (full symmetric storage).
    A : sparse (m, n) or None
        Rows whose null space must carry positive curvature (``None`` when
        ``mask`` gives them).
    delta_last : float
        Shift of the previous iteration; the search starts at the larger of
        ``floor`` and a third of it.
    floor : float
        Smallest first trial shift (the SQP driver adapts it).
    mask : (J, on_r, on_b), optional
        ``A`` given instead as the active rows ``on_r`` of ``J`` (m_J, n) and
        the active bounds ``on_b`` (n,): the unpivoted inertia tests then use
        :func:`masked_kkt_upper`, whose pattern does not change with the
        active set, and so does the Finsler test; ``A`` may then be
        ``None`` (the dense fallback, for small systems only, needs it).

    Returns
    -------
    float
        The shift ``delta`` (0 when no correction was needed).
    """
    if A is None and mask is None:
        raise ValueError("regularise needs A or mask")
    n = H.shape[0]
    m = A.shape[0] if A is not None else int(np.count_nonzero(mask[1]) + np.count_nonzero(mask[2]))
    want = (n, m, 0)
    scale = max(1.0, float(abs(H).max()) if H.nnz else 1.0)
    # smallest |pivot| of the last unpivoted test (empty: it broke down)
    piv: list[float] = []
    if mask is not None:
        J, on_r, on_b = mask
        want_m = (n, J.shape[0] + n, 0)

        def first_test(delta: float) -> bool:
            piv.clear()
            return inertia(masked_kkt_upper(H, J, on_r, on_b, delta, EPS_QD), dense_fallback=False,
                           upper=True, pivots=piv) == want_m
    else:
        def first_test(delta: float) -> bool:
            piv.clear()
            return inertia(kkt_upper(H, A, delta), dense_fallback=False, upper=True, pivots=piv) == want

    def clean() -> bool:
        # The unpivoted test failed with every pivot well away from zero: its
        # inertia count is then exact (Sylvester), and since its -eps block
        # makes it a Finsler test with rho = 1/eps, larger than the stable
        # test's rho, the stable test would fail too (a smaller rho is
        # stricter). Only a test with tiny pivots (rounding, breakdown) is
        # worth the second opinion.
        return bool(piv) and piv[0] > PIVOT_CLEAN * scale and finsler.rho * EPS_QD <= 1.0

    if first_test(0.0):
        return 0.0
    finsler = _Finsler(H, A, scale) if mask is None else _Finsler(H, mask[0], scale, mask[1], mask[2])
    if not clean() and finsler(0.0):
        return 0.0

    def ok(delta: float, dense: bool) -> bool:
        if first_test(delta):
            return True
        if dense and A is not None and n + m <= DENSE_INERTIA_MAX and \
                inertia(kkt_upper(H, A, delta), dense_fallback=True, upper=True) == want:
            return True
        return not clean() and finsler(delta)

    # qdldl does not pivot: zero diagonal entries of H (variables entering
    # linearly) can give a zero pivot although the curvature on the null
    # space is fine. A tiny shift separates that case from true negative
    # curvature; the (slower) pivoted factorisation decides if it does not.
    if ok(DELTA_TINY * scale, False):
        return DELTA_TINY * scale
    # Pivoted (dense) inertia of the unshifted matrix for small systems. With
    # a mask (large systems) it would be one more unpivoted factorisation of
    # a pattern that changes with the active set: a new symbolic analysis per
    # call (measured on the 1,000-unit site: 15 per solve, 50 ms each) for a
    # test first_test(0) has already made.
    if mask is None and inertia(kkt_upper(H, A, 0.0), upper=True) == want:
        return 0.0
    # Algorithm IC of Waechter & Biegler (2006) starts at a third of the last
    # shift, so the shift decays; here the first trial is also held above a
    # floor that the SQP driver adapts to how well the model predicted the
    # last step (options.FLOOR_RATIO). The plain decay, tried on the site
    # benchmark, ended at another local optimum at 100 units (profit 5.6e-4
    # below IPOPT's); a fixed floor of 1e-4 kept 40 of 56 iterations at 1e-4
    # on the 1,000-unit site.
    delta = max(floor, DELTA_DECREASE * delta_last, 1e-8 * scale)
    while delta < DELTA_MAX:
        if ok(delta, True):
            return delta
        delta *= DELTA_GROW
    return delta
