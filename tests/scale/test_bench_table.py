"""The comparison lines of ``plantopt bench scale``: which solver found the higher profit."""

from __future__ import annotations

from plantopt.bench.scale import table


def _row(solver: str, status: str, objective: float, limits: list[str]) -> dict:
    return {"units": 996, "nx": 12379, "solver": solver, "status": status, "objective": objective,
            "iterations": 10, "n_eval": {}, "wall_s": 1.0, "active_limits": limits, "peak_mb": 100.0}


def _notes(rows: list[dict]) -> list[str]:
    return [line for line in table(rows).splitlines() if "units:" in line]


def test_two_local_optima_are_named():
    rows = [_row("sqp", "optimal", 209003.14, ["a", "b"]), _row("ipopt", "optimal", 208990.22, ["a"])]
    (line,) = _notes(rows)
    assert "profit rel. diff 6.2e-05 (SQP higher: two local optima)" in line
    assert "active limits DIFFER (2 vs 1)" in line


def test_same_optimum_is_not_annotated():
    rows = [_row("sqp", "optimal", 208990.2036, ["a"]), _row("ipopt", "optimal", 208990.2296, ["a"])]
    (line,) = _notes(rows)
    assert "profit rel. diff 1.2e-07, active limits agree (1 vs 1)" in line
    assert "higher" not in line


def test_a_failed_solve_is_no_local_optimum():
    rows = [_row("sqp", "failed", 2105282.36, ["a"]), _row("ipopt", "optimal", 2105531.98, ["a"])]
    (line,) = _notes(rows)
    assert "higher" not in line and "rel. diff 1.2e-04" in line
