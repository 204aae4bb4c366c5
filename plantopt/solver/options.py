"""Options, defaults and the algorithmic constants of the solvers, with sources.

Filter SQP constants
--------------------
The SQP method follows

* [FL2002] R. Fletcher, S. Leyffer, "Nonlinear programming without a penalty
  function", Math. Programming 91 (2002) 239-269.
* [FLT2002] R. Fletcher, S. Leyffer, Ph. L. Toint, "On the global convergence
  of a filter-SQP algorithm", SIAM J. Optim. 13 (2002) 44-59.

A trial point with violation ``h`` and objective ``f`` is acceptable to the
filter when, for every entry ``(h_j, f_j)``,

    h <= BETA * h_j        or        f <= f_j - GAMMA * h           [FL2002, (2.3)]

(envelope with ``BETA`` close to 1 and ``GAMMA`` small; FL2002 uses
beta = 0.99, gamma = 1e-5 -- values recalled from memory of the paper).
A step with predicted reduction ``dq = -(g'd + 1/2 d'Hd) > 0`` and

    dq >= KAPPA * h**2                                              [FLT2002, (2.8)]

is an "f-type" step; it must in addition satisfy the sufficient reduction
test ``ared / dq >= SIGMA`` [FLT2002, (2.9)] and does not enter the filter.
Other accepted steps are "h-type" and add ``(h, f)`` to the filter.

Trust-region radius rule (conventional, cf. Conn, Gould & Toint, "Trust-Region
Methods", SIAM 2000, ch. 6): ``rho < 0.25 -> radius / 4``; ``rho > 0.75`` with
the step on the trust-region boundary -> ``2 radius``.

Scaling
-------
Constraint rows are scaled by ``s_i = min(1, GRAD_SCALE_MAX / ||grad g_i(x0)||_inf)``,
clipped to ``[SCALE_MIN, 1]``: the same rule as IPOPT's gradient-based
scaling with ``nlp_scaling_max_gradient = 100`` (A. Waechter, L. T. Biegler,
Math. Programming 106 (2006) 25-57, section 3.8).
"""

from __future__ import annotations

from typing import Any

from plantopt.errors import SolverError

# --- filter [FL2002] -------------------------------------------------------
#: Envelope factor on the violation, h <= BETA h_j.  [FL2002, beta = 0.99]
FILTER_BETA = 0.99
#: Envelope slope on the objective, f <= f_j - GAMMA h.  [FL2002, gamma = 1e-5]
FILTER_GAMMA = 1e-5
#: f-type switching constant, dq >= KAPPA h^2.  [FLT2002, (2.8)]
FILTER_KAPPA = 1e-4
#: Sufficient reduction ratio for f-type steps, ared >= SIGMA dq.  [FLT2002, sigma = 0.1]
FILTER_SIGMA = 0.1

#: filter upper bound h_max = max(H_MAX_MIN, H_MAX_FACTOR * h0) (scaled l1 violation)
#: [FL2002 sec. 3, entry (u, -inf)]. The values are our choice, tuned on the catalogue:
#: a factor 2 (vs. 10 or 100) stopped f-type steps that multiplied the violation
#: (HS 39: 82 -> 22 iterations); the floor 10 lets a feasible start leave the
#: feasible set for a while (flowsheet demo: 16 -> 8 iterations with floor 10 vs 2).
H_MAX_FACTOR = 2.0
H_MAX_MIN = 10.0

#: relative rounding level of objective values: predicted decreases below
#: F_NOISE max(1, |F|) cannot be checked by comparing F values (about 100 machine epsilons)
F_NOISE = 100 * 2.220446049250313e-16

# --- trust region ----------------------------------------------------------
#: ratio below which the radius is divided by RADIUS_SHRINK
RATIO_SHRINK = 0.25
#: ratio above which (with the step on the boundary) the radius is doubled
RATIO_EXPAND = 0.75
RADIUS_SHRINK = 4.0
RADIUS_EXPAND = 2.0
#: initial l-inf radius in scaled variables (x / x_nominal)
RADIUS_INIT = 10.0
RADIUS_MAX = 1e6
#: proximity weight zeta of the first restoration stage, objective e'(p + n) + zeta/2 ||z - z_r||^2
#: in scaled variables [Waechter & Biegler 2006, eq. (30), where zeta = sqrt(mu); 1e-2 is their
#: value at mu = 1e-4]. Certification re-solves with zeta = 0 (restoration.ElasticNLP).
RESTORATION_PROX = 1e-2
#: restoration (the filter SQP on the elastic l1 problem) hands the point back to the main filter
#: only when its largest elastic variable is at most RESTORATION_CONSISTENT * max(1, h): the previous
#: linearisation was consistent up to the QP's accuracy (piqp tolerance 1e-10 on the elastic
#: bounds; our choice, a margin above it), so the main QP at the point is expected consistent.
RESTORATION_CONSISTENT = 1e-7
#: below this scaled radius the method declares stagnation
RADIUS_MIN = 1e-12

# --- scaling [Waechter & Biegler 2006, sec. 3.8] ---------------------------
GRAD_SCALE_MAX = 100.0
SCALE_MIN = 1e-8

# --- inertia correction (cf. Waechter & Biegler 2006, sec. 3.1) -----------
#: first trial shift (delta_w^0 of W&B 2006, IC-3); also the starting and reset value of the adapted floor
#: of the first trial (FLOOR_* below, inertia.regularise)
DELTA_FIRST = 1e-4
#: factor applied to the last positive shift for the first trial (kappa_w^-, IC-3)
DELTA_DECREASE = 1.0 / 3.0
#: shift (relative to max |H_ij|) that only resolves zero pivots of a singular PSD H
DELTA_TINY = 1e-10
#: Floor of the first trial shift, adapted to the model's agreement (our rule): an accepted
#: interior step with actual/predicted reduction above FLOOR_RATIO lowers the floor by
#: FLOOR_DECREASE (the shift, not the region, limited the step: the quadratic model
#: overestimated the curvature); a ratio below RATIO_SHRINK or a rejected step resets it to
#: DELTA_FIRST.
FLOOR_RATIO = 1.5
FLOOR_DECREASE = 0.1
FLOOR_MIN = 1e-10
#: an extension of the QP step (qp.extended_qp) is used only when it adds at
#: least this fraction of |d|_inf; below it the shift did not limit the step materially
EXTEND_MIN = 0.1
#: an accepted f-type step whose violation exceeds this multiple of max(h, tol) at its start
#: gets a second-order correction (option soc_accepted; our rule, the correction itself is
#: that of FL2002 sec. 4). On the site benchmark the objective steps raised the violation
#: 5 to 15 times, and the next iteration was then a feasibility step.
SOC_ACCEPTED_GROWTH = 4.0
#: growth factor of the trial shift (kappa_w^+, IC-5)
DELTA_GROW = 8.0
DELTA_MAX = 1e20
#: largest KKT size for the dense Bunch-Kaufman inertia fallback when qdldl breaks down
DENSE_INERTIA_MAX = 500
#: quasi-definite lower-right block -EPS_QD I of the KKT matrix
EPS_QD = 1e-10
#: stable null-space curvature test H + delta I + rho A'A > 0 (Finsler's lemma; Nocedal & Wright,
#: Numerical Optimization, 2nd ed. 2006, Thm. 17.5 / sec. 17.3): rho max_j ||A e_j||^2 equals
#: FINSLER_RATIO max(1, max|H|). Our choice, measured on the methanol loop flowsheet at its start
#: point: ratios 6e6 and 6e8 found the smallest correct shift (1.7e-9), 6e4 over-shifted (1e-6),
#: 6e10 lost accuracy to rounding and misjudged PD. A too small ratio only over-shifts (safe).
FINSLER_RATIO = 1e7
#: rows of A with more entries than this are left out of A'A in the Finsler test (still a valid,
#: only stricter, certificate: null(A) lies in the null space of any subset of its rows). A row
#: with r entries fills up to r^2 entries of A'A. Our choice, measured on the 1,000-unit site
#: benchmark: a blend-mixer energy row with 744 entries gave most of the ~780k nonzeros of A'A
#: (45k in H) and 70-90 ms per Finsler factorisation.
FINSLER_ROW_MAX = 64
#: the unpivoted KKT inertia test is trusted without the Finsler test when it fails with every
#: pivot above PIVOT_CLEAN max(1, max|H|) in magnitude (and the Finsler rho is at most 1/EPS_QD, so
#: that test would be the stricter one). Our choice: pivots of that size carry an exact inertia
#: count; measured on the 3,000-unit site the Finsler test then never certified a shift the
#: unpivoted test had refused.
PIVOT_CLEAN = 1e-8

# --- QP subproblem (plantopt.solver.qp) -----------------------------------
#: iteration limit of piqp's first run; a run that hits it unconverged is repeated with the full
#: limit (100). Our choice, measured on the 100-unit site benchmark: piqp's residuals reach 1e-10
#: and mu 1e-16 in 13-19 iterations, then the duality gap stalls at 1e-8..1e-7 (round-off) and
#: every QP ran to the limit of 100; after 20 iterations the step equals the 100-iteration one to
#: 1e-10 (only non-unique multipliers drift, which the polish / least squares replace).
PIQP_FIRST_ITER = 30
#: a multiplier of an active inequality counts as wrongly signed in the QP polish when it is on
#: the wrong side by more than this times max(1, max |multiplier|). Our choice, below the default
#: KKT tolerance 1e-8 at multipliers up to ~1e3: with 1e-9 (-> 2.1e-7 at max |y| = 210) the
#: 1,000-unit site kept a constraint active whose multiplier was 2e-8 on the wrong side; the
#: QP step was 1e-8 long, the iterate 1.7e-9 (relative) short of the optimum and only a
#: restoration phase got it out.
POLISH_SIGN_TOL = 1e-11
#: largest KKT system handed to SuperLU when the qdldl path of the QP polish fails. Our choice:
#: on the 300-unit site benchmark SuperLU (scipy 1.17.1) crashed the process with a segmentation
#: fault inside dcolumn_bmod on polish systems of 8,620 and 10,922 rows (not reproducible on the
#: saved matrices alone); above this size the polish is skipped instead (the interior-point
#: solution and least-squares multipliers are kept).
SPLU_MAX = 3000
#: pivot -KKT_INACTIVE_PIVOT that keeps an inactive row or bound in the fixed-pattern KKT matrix
#: of the QP polish without constraining (plantopt.solver.qp._masked_kkt_solve); its multiplier
#: is A_i d / 1e20 and it adds A_i'A_i / 1e20 to H, far below the eps regularisation
#: (KKT_POLISH_EPS) that the refinement removes anyway. Our choice.
KKT_INACTIVE_PIVOT = 1e20
#: regularisation eps = KKT_POLISH_EPS max(1, max|H|, max|A|) of the fixed-pattern polish KKT
#: matrix [[H + eps I, A'], [A, -eps I]], removed by iterative refinement. Our choice, measured on
#: saved QPs of the 1,000-unit site (n = 12,379): with 1e-9 the refinement contracted by only
#: ~0.8 per step (residual 1e-8..1e-7 relative after 25 steps, so the direct QP was refused in
#: about half the iterations); with 1e-11 it reached 1e-14 in 5-6 steps, with the same inertia.
KKT_POLISH_EPS = 1e-11
#: largest sign-constrained multiplier QP (plantopt.solver.kkt.sign_multipliers, n + k variables)
#: handed to piqp. Our choice: piqp 0.7.0 crashed the process (segmentation fault in solve) on this
#: QP at n + k of about 8e5 (restoration of the 10,000-unit site); it ran at the 1,000-unit site
#: (about 2.5e4). Above the limit the search is skipped and the caller keeps its multipliers.
SIGN_QP_MAX = 100_000

DEFAULTS: dict[str, Any] = {
    "solver": "sqp",
    "tol": 1e-8,
    "max_iter": 200,
    "max_time": float("inf"),
    "verbose": 0,
    "x_nominal": None,
    "g_nominal": None,
    # SQP: try each QP first from the previous QP's active set
    # (plantopt.solver.qp.solve_qp_active_set) before the interior-point
    # solve, with the unshifted H and then with the shifted one. Measured on
    # the site benchmark (same optima): 1,000 units 16.9 s -> 11.9 s (28 of
    # 62 QPs through piqp), 300 units 1.8 s -> 0.9 s.
    "qp_active_set": True,
    # SQP: after an interior shifted step with actual/predicted reduction
    # above FLOOR_RATIO, try first the step extended along the active set's
    # null space (plantopt.solver.qp.extended_qp), the plain step if it is
    # refused. Measured on the site benchmark with start-point scaling
    # (2026-12-02, soc_accepted on, iterations and solve s, off -> on):
    # 1,000 units 27 -> 21 (4.3 -> 3.2 s), 3,000 units 45 -> 37,
    # 10,000 units 260 -> 122 (229 -> 169 s); catalogue 38/38. With the
    # class-wide model nominals of earlier releases it did not pay.
    "extend_steps": True,
    # SQP: second-order correction of accepted objective steps that raised
    # the violation (options.SOC_ACCEPTED_GROWTH). Measured as above
    # (extend_steps on, off -> on): 1,000 units 23 -> 21, 3,000 units 36 -> 37,
    # 10,000 units 118 -> 122 (166.5 -> 169.2 s): mixed, kept for the
    # smaller sites.
    "soc_accepted": True,
}

EQUATION_DEFAULTS: dict[str, Any] = dict(DEFAULTS, solver="newton", tol=1e-9, max_iter=100)

SOLVERS = ("sqp", "ipopt")


def resolve_options(options: dict[str, Any] | None, defaults: dict[str, Any]) -> dict[str, Any]:
    """Merge user options into defaults, rejecting unknown keys.

    Parameters
    ----------
    options : dict or None
        User options.
    defaults : dict
        Default values; its keys are the only accepted ones.

    Returns
    -------
    dict
        A new dictionary with every key of ``defaults``.

    Raises
    ------
    SolverError
        On an unknown key or an invalid value.
    """
    out = dict(defaults)
    for key, val in (options or {}).items():
        if key not in defaults:
            raise SolverError(f"unknown solver option {key!r}; known: {sorted(defaults)}")
        out[key] = val
    if not (float(out["tol"]) > 0):
        raise SolverError(f"option 'tol' must be positive, got {out['tol']!r}")
    if int(out["max_iter"]) < 0:
        raise SolverError(f"option 'max_iter' must be >= 0, got {out['max_iter']!r}")
    return out
