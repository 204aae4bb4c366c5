"""Benchmark: our filter SQP against IPOPT on the problem catalogue.

Run ``python -m plantopt.bench.solvers [--problems NAME ...] [--tol T]``.
Prints one row per problem and a summary per solver: solved count (status
as expected: optimal with ``f`` matching the reference, or infeasible for
infeasible problems), median iterations over problems solved by both,
total function evaluations and total wall time.

Counting: an SQP iteration is one QP solve, including the last one that
verifies optimality without stepping (so a problem solved by one step
counts 2); IPOPT's count is its ``iter_count``. Evaluations are all calls
of f, grad f, g, jac g and the Lagrangian Hessian (IPOPT: its n_call_*).
"""

from __future__ import annotations

import argparse
import statistics
import time
from typing import Sequence

import numpy as np

from plantopt.bench.catalogue import CATALOGUE, Problem, build
from plantopt.solver import NLPResult, Status, compile_nlp, solve_nlp

SOLVERS = ("sqp", "ipopt")
#: order in which the solvers run (IPOPT first: it is the reference where no f* is published)
_RUN_ORDER = ("ipopt", "sqp")


def solved(pr: Problem, r: NLPResult, f_rtol: float = 1e-6) -> bool:
    """Whether ``r`` is the expected outcome for ``pr``.

    Infeasible problems must end ``infeasible``; the others ``optimal`` with
    ``f`` within ``f_rtol`` (relative, absolute near zero) of the reference.
    """
    if pr.kind == "infeasible":
        return r.status == Status.INFEASIBLE
    if r.status != Status.OPTIMAL:
        return False
    if pr.f_star is None:  # IPOPT-only reference: judged in the table by agreement
        return True
    rt = max(f_rtol, pr.f_rtol)
    return abs(r.f - pr.f_star) <= rt * max(1.0, abs(pr.f_star))


def run(problems: Sequence[Problem], tol: float = 1e-8) -> list[dict]:
    """Solve each problem with each solver; one record per (problem, solver)."""
    rows = []
    for pr in problems:
        nlp, x0, lbx, ubx, lbg, ubg = build(pr)
        cnlp = compile_nlp(nlp)
        for s in _RUN_ORDER:
            t = time.perf_counter()
            r = solve_nlp(cnlp, x0, lbx, ubx, lbg, ubg, options={"solver": s, "tol": tol})
            ok = solved(pr, r)
            if ok and pr.f_star is None and pr.kind != "infeasible" and s != "ipopt":
                # reference is IPOPT's own optimum on the same problem
                ref = next(x for x in rows if x["problem"] == pr.name and x["solver"] == "ipopt")
                ok = ref["status"] == "optimal" and abs(r.f - ref["f"]) <= 1e-6 * max(1.0, abs(ref["f"]))
            rows.append({"problem": pr.name, "solver": s, "status": r.status.value,
                         "solved": ok, "iterations": r.iterations, "f": r.f,
                         "n_eval": int(sum(r.n_eval.values())), "time": time.perf_counter() - t,
                         "f_star": pr.f_star})
    return rows


def table(rows: list[dict]) -> str:
    """Per-problem rows and a per-solver summary as plain text."""
    names = list(dict.fromkeys(r["problem"] for r in rows))
    by = {(r["problem"], r["solver"]): r for r in rows}
    out = [f"{'problem':<27}" + "".join(
        f"| {s:<6}{'status':>15} {'iter':>5} {'evals':>6} {'ms':>8} " for s in SOLVERS)]
    for nm in names:
        line = f"{nm:<27}"
        for s in SOLVERS:
            r = by[(nm, s)]
            mark = "" if r["solved"] else "*"
            line += (f"| {'':<6}{r['status'] + mark:>15} {r['iterations']:5d} {r['n_eval']:6d} "
                     f"{1e3 * r['time']:8.1f} ")
        out.append(line)
    out.append("")
    both = [nm for nm in names if all(by[(nm, s)]["solved"] for s in SOLVERS)]
    out.append(f"{'solver':<8}{'solved':>10}{'median iter':>13}{'total evals':>13}{'wall s':>9}"
               f"   (median over the {len(both)} problems both solve; * = not solved;"
               f" SQP iterations include the final verifying QP)")
    for s in SOLVERS:
        mine = [r for r in rows if r["solver"] == s]
        med = statistics.median(by[(nm, s)]["iterations"] for nm in both) if both else float("nan")
        out.append(f"{s:<8}{sum(r['solved'] for r in mine):>5}/{len(mine):<4}{med:>13.1f}"
                   f"{sum(r['n_eval'] for r in mine):>13d}{sum(r['time'] for r in mine):>9.2f}")
    return "\n".join(out)


def main(argv: Sequence[str] | None = None) -> int:
    """Command-line entry point; returns the process exit code."""
    ap = argparse.ArgumentParser(prog="python -m plantopt.bench.solvers", description=__doc__)
    ap.add_argument("--problems", nargs="*", help="catalogue names (default: all)")
    ap.add_argument("--tol", type=float, default=1e-8)
    args = ap.parse_args(argv)
    probs = [p for p in CATALOGUE if not args.problems or p.name in args.problems]
    if not probs:
        ap.error("no catalogue problem matches")
    print(table(run(probs, args.tol)))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
