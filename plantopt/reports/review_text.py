"""Plain-text summary of a change-request review, for the terminal."""

from __future__ import annotations

from plantopt.reports.text import _fmt, _table
from plantopt.studies.review import MovePlan, ReviewResult

VERDICT = {
    "clear": "CLEAR: the proposed point and every checked step stay inside every limit",
    "blocked": "BLOCKED: the change as proposed crosses a limit (see below)",
    "failed": "FAILED: a simulation did not converge; nothing can be concluded from this review",
}


def _plan_lines(plan: MovePlan) -> list[str]:
    rows = []
    for s in plan.steps:
        state = "ok" if s.safe else ("NOT CONVERGED" if s.status not in ("converged", "optimal") else
                                     "CROSSES " + ", ".join(c["limit"] for c in s.crossed))
        rows.append([str(s.index), s.label, _fmt(s.profit), _fmt(s.min_margin_fraction), s.worst_limit or "", state])
    return _table(["step", "state of the moves", "profit", "min margin", "tightest limit", "check"], rows)


def render_review(r: ReviewResult) -> str:
    """The terminal summary of a :class:`ReviewResult`."""
    L: list[str] = []
    L.append(f"Change-request review of '{r.flowsheet_name}' ({r.flowsheet})")
    L.append(f"  flowsheet sha256 {r.flowsheet_sha256}; plantopt {r.tool_version}; {r.date}")
    if r.data_notice:
        L.append(f"Note: {r.data_notice}")
    L.append(f"Current point:  {r.current_source} (simulation {r.current_status})")
    L.append(f"Proposed point: {r.proposed_source} (simulation {r.proposed_status})")
    L.append("")
    L.append(VERDICT.get(r.status, r.status))
    for b in r.blocking:
        L.append(f"  - {b}")
    for w in r.warnings:
        L.append(f"  warning: {w}")
    p = r.profit
    if p.gain is not None:
        L.append("")
        L.append(f"Profit: {p.current:,.2f} -> {p.proposed:,.2f} {p.unit} (gain {p.gain:+,.2f} {p.unit})")
    L.append("")
    L.append("Moves")
    L += _table(["decision", "current", "proposed", "change", "unit", "of range", "note"],
                [[m.name, _fmt(m.current), _fmt(m.proposed), _fmt(m.change), m.unit, f"{100 * m.fraction_of_range:+.1f} %",
                  "OUTSIDE RANGE" if m.outside_range else ""] for m in r.moves])
    L.append("")
    L.append(f"Limits (near = within {100 * r.near:g} % of the limit's scale)")
    rows = []
    for e in r.limits:
        c, q = e.current, e.proposed
        sp = f"{e.shadow_price:.4g} {e.shadow_price_unit}" if e.shadow_price is not None else ""
        rows.append([e.name, e.kind, _fmt(e.bounds[0]), _fmt(e.bounds[1]), e.unit,
                     _fmt(c.margin if c else None), c.state if c else "-",
                     _fmt(q.margin if q else None), (q.state.upper() if q and q.violated else q.state) if q else "-",
                     "loses margin" if e.loses_margin else "", sp])
    L += _table(["limit", "kind", "lower", "upper", "unit", "margin now", "now", "margin after", "after", "", "shadow price"], rows)
    if r.sensitivities:
        L.append("")
        L.append("Margin consumed by each move alone (simulated; negative = margin used up), where it is 10 % of today's margin or more")
        rows = [[s.decision, s.limit, _fmt(s.alone), _fmt(s.linear), _fmt(s.per_unit), s.unit,
                 f"{100 * s.share_of_margin:+.0f} %" if s.share_of_margin is not None else ""]
                for s in r.sensitivities if s.share_of_margin is not None and s.share_of_margin <= -0.10]
        if rows:
            L += _table(["move", "limit", "alone", "linear", "d margin/d move", "unit", "of margin now"], rows)
        else:
            L.append("  none")
    if r.ramp:
        L.append("")
        L.append(f"Move plan: {r.ramp.name}, {r.ramp.description} -> {'safe' if r.ramp.safe else 'NOT SAFE'}")
        L += _plan_lines(r.ramp)
    if r.plan_search:
        L.append(f"Plan search: {r.plan_search}")
    if r.suggested_plan:
        L.append("")
        sp = r.suggested_plan
        L.append(f"Suggested sequence ({sp.description}): " + " -> ".join(sp.order))
        L += _plan_lines(sp)
    L.append("")
    L.append(f"{r.simulations} square simulations.")
    L.append(r.notice)
    return "\n".join(L)
