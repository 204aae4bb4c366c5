"""Terminal summaries of sweep tables (the tables themselves are written by
:func:`plantopt.studies.sweep.write_rows`)."""

from __future__ import annotations

from collections import Counter
from typing import Any

from plantopt.results import SAFETY_NOTICE


def render_sweep_summary(result: Any, *, out: str | None = None, plot: str | None = None) -> str:
    """Plain-text summary of a :class:`plantopt.studies.sweep.SweepResult`."""
    from plantopt.studies.sweep import breakpoints_path

    L = []
    n = len(result.rows)
    L.append(f"Sweep of {', '.join(result.varied)}: {n} points, {result.n_optimal} optimal"
             + (f", {result.skipped} already in the output" if result.skipped else "")
             + f"; {result.total_iterations} solver iterations; {result.wall_time_s:.1f} s")
    bad = Counter(r.get("status") for r in result.rows if r.get("status") != "optimal")
    if bad:
        L.append("  ** not optimal (do not act on these rows): " + ", ".join(f"{k} x{v}" for k, v in sorted(bad.items(), key=str)))
    sets = Counter(r.get("active_set") or "(none)" for r in result.rows if r.get("status") == "optimal")
    if sets:
        L.append("")
        L.append("Active sets (points); letters as in the plot (order of first appearance)")
        for i, (s, c) in enumerate(sets.items(), start=1):
            L.append(f"  {chr(64 + i) if i <= 26 else i}  {c:>5d}  {s.replace(';', ', ')}")
    if result.breakpoints:
        L.append("")
        L.append("Active-set breakpoints")
        for b in sorted(result.breakpoints, key=lambda b: (b.path, sorted(b.fixed.items()), b.value)):
            fixed = "" if not b.fixed else " at " + ", ".join(f"{k} = {v:.6g}" for k, v in b.fixed.items())
            where = f"{b.path} = {b.value:.6g} {b.unit}".rstrip() + f" (+/- {abs(b.upper - b.lower) / 2:.2g})"
            L.append(f"  {where}{fixed} [{b.status}]")
            gained = sorted(set(b.after.split(";")) - set(b.before.split(";")) - {""})
            lost = sorted(set(b.before.split(";")) - set(b.after.split(";")) - {""})
            if gained:
                L.append(f"      becomes active: {', '.join(gained)}")
            if lost:
                L.append(f"      released:       {', '.join(lost)}")
    L.append("")
    if out:
        L.append(f"Table: {out}" + (f"; breakpoints: {breakpoints_path(out)}" if result.bisected else ""))
    if plot:
        L.append(f"Plot: {plot}")
    L.append(SAFETY_NOTICE)
    return "\n".join(L)
