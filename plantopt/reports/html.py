"""A self-contained HTML report of a change-request review.

One file, inline CSS and inline SVG, no scripts, fonts or images fetched
from anywhere, so that it can be attached to a change request, opened
offline and printed. The look is plantopt's own: a paper-coloured page with
a ledger rule down the left, teal for margin kept, ochre for near-active
and brick red for a crossed limit (shapes and words repeat every colour, so
the print in grey stays readable).
"""

from __future__ import annotations

from html import escape
from typing import Iterable, Optional

from plantopt.studies.review import MovePlan, ReviewResult

INK, TEAL, OCHRE, BRICK, FAINT = "#1f2b33", "#16716b", "#b7791f", "#a33a2b", "#d9d4c7"

CSS = """
@page { size: A4; margin: 14mm 12mm; }
:root { --ink: #1f2b33; --paper: #fbf8f1; --teal: #16716b; --ochre: #b7791f; --brick: #a33a2b; --rule: #d9d4c7; }
* { box-sizing: border-box; }
body { margin: 0; background: var(--paper); color: var(--ink);
       font: 14px/1.45 "Segoe UI", "Helvetica Neue", Arial, sans-serif; }
main { max-width: 1080px; margin: 0 auto; padding: 28px 32px 40px 48px; border-left: 6px double var(--rule); }
h1 { font: 600 24px/1.2 Georgia, "Times New Roman", serif; margin: 0 0 4px; letter-spacing: .2px; }
h2 { font: 600 17px/1.3 Georgia, "Times New Roman", serif; margin: 28px 0 8px; padding-bottom: 3px;
     border-bottom: 1px solid var(--rule); }
h2 .no { display: inline-block; min-width: 1.8em; color: var(--teal); }
.sub { color: #5b6770; margin: 0 0 14px; }
.caution { border: 2px solid var(--ink); background: #fff; padding: 10px 14px; margin: 14px 0; }
.caution b { letter-spacing: .6px; }
.verdict { display: inline-block; padding: 6px 14px; font-weight: 700; letter-spacing: .8px; border: 2px solid; margin: 6px 0; }
.v-clear { color: var(--teal); } .v-blocked { color: var(--brick); } .v-failed { color: var(--brick); border-style: dashed; }
.facts { display: grid; grid-template-columns: repeat(auto-fit, minmax(180px, 1fr)); gap: 8px; margin: 10px 0; }
.fact { background: #fff; border: 1px solid var(--rule); padding: 8px 10px; }
.fact .k { font-size: 11px; text-transform: uppercase; letter-spacing: .7px; color: #5b6770; }
.fact .v { font-size: 18px; font-weight: 600; }
ul.flags { margin: 6px 0; padding-left: 20px; } ul.flags li.block { color: var(--brick); font-weight: 600; }
table { border-collapse: collapse; width: 100%; margin: 6px 0 10px; background: #fff; font-size: 12.5px; }
th, td { padding: 4px 7px; border-bottom: 1px solid #ebe6da; text-align: right; vertical-align: top; }
th { font-weight: 600; background: #f1ece0; border-bottom: 1px solid var(--rule); }
td:first-child, th:first-child, td.l, th.l { text-align: left; }
.tag { display: inline-block; padding: 0 6px; border: 1px solid; font-size: 11px; font-weight: 600; letter-spacing: .4px; }
.s-clear { color: var(--teal); } .s-near { color: var(--ochre); } .s-active { color: var(--ink); background: #f1ece0; }
.s-violated { color: #fff; background: var(--brick); border-color: var(--brick); }
.mono { font-family: "DejaVu Sans Mono", Consolas, monospace; font-size: 12px; word-break: break-all; }
.note { color: #5b6770; font-size: 12.5px; }
svg { display: block; max-width: 100%; height: auto; background: #fff; border: 1px solid var(--rule); margin: 6px 0; }
svg text { font: 11px "Segoe UI", Arial, sans-serif; fill: var(--ink); }
footer { margin-top: 30px; padding-top: 8px; border-top: 1px solid var(--rule); font-size: 12px; color: #5b6770; }
@media print {
  body { background: #fff; font-size: 11px; }
  main { border-left: none; padding: 0; max-width: none; }
  section, table, svg, .caution { break-inside: avoid; }
  h2 { break-after: avoid; }
}
"""


def _e(x: object) -> str:
    return escape(str(x), quote=True)


def _n(v: Optional[float], digits: int = 4) -> str:
    if v is None:
        return "&ndash;"
    a = abs(v)
    if a != 0 and (a >= 1e6 or a < 1e-3):
        return f"{v:.{digits - 1}e}"
    return f"{v:,.0f}" if a >= 1e4 else f"{v:.{digits}g}"


def _tag(state: str) -> str:
    word = {"violated": "CROSSED", "active": "active", "near": "near", "clear": "clear"}.get(state, state)
    return f'<span class="tag s-{_e(state)}">{_e(word)}</span>'


def _table(headers: Iterable[str], rows: Iterable[Iterable[str]], left: int = 1) -> str:
    h = "".join(f'<th class="{"l" if i < left else ""}">{x}</th>' for i, x in enumerate(headers))
    body = "".join("<tr>" + "".join(f'<td class="{"l" if i < left else ""}">{c}</td>' for i, c in enumerate(r)) + "</tr>"
                   for r in rows)
    return f"<table><thead><tr>{h}</tr></thead><tbody>{body}</tbody></table>"


# ---------------------------------------------------------------------------- charts
def margin_chart(r: ReviewResult) -> str:
    """Horizontal bars: each limit's margin as a fraction of its scale, now
    (outlined) and after (filled); the near band is hatched, zero is the limit."""
    rows = [e for e in r.limits if e.current or e.proposed]
    if not rows:
        return ""
    lo_x, hi_x = -0.25, 1.0  # a margin beyond the scale is drawn at the edge with an arrow
    W, left, right, rh = 760, 170, 24, 30
    H = 36 + rh * len(rows) + 20
    sx = lambda f: left + (min(max(f, lo_x), hi_x) - lo_x) / (hi_x - lo_x) * (W - left - right)
    out = [f'<svg viewBox="0 0 {W} {H}" width="{W}" height="{H}" role="img" aria-label="margins to limits">',
           '<defs><pattern id="hatch" width="6" height="6" patternUnits="userSpaceOnUse" patternTransform="rotate(45)">'
           f'<line x1="0" y1="0" x2="0" y2="6" stroke="{OCHRE}" stroke-width="2" opacity=".45"/></pattern></defs>']
    x0 = sx(0.0)
    xn = sx(r.near)
    out.append(f'<rect x="{x0:.1f}" y="24" width="{xn - x0:.1f}" height="{rh * len(rows):.1f}" fill="url(#hatch)"/>')
    for f in (-0.25, 0, 0.25, 0.5, 0.75, 1.0):
        x = sx(f)
        out.append(f'<line x1="{x:.1f}" y1="22" x2="{x:.1f}" y2="{24 + rh * len(rows)}" stroke="{FAINT}" stroke-width="1"/>')
        out.append(f'<text x="{x:.1f}" y="16" text-anchor="middle">{f * 100:+.0f} %</text>')
    out.append(f'<line x1="{x0:.1f}" y1="20" x2="{x0:.1f}" y2="{26 + rh * len(rows)}" stroke="{INK}" stroke-width="2"/>')
    for k, e in enumerate(rows):
        y = 24 + rh * k
        out.append(f'<text x="{left - 8}" y="{y + 19}" text-anchor="end">{_e(e.name)}</text>')
        for pt, dy, filled in ((e.current, 5, False), (e.proposed, 16, True)):
            if pt is None:
                continue
            f = pt.margin_fraction
            col = BRICK if pt.violated else OCHRE if (pt.near or pt.active) else TEAL
            xa, xb = sorted((x0, sx(f)))
            w = max(xb - xa, 1.5)
            style = f'fill="{col}"' if filled else f'fill="#fff" stroke="{col}" stroke-width="1.5"'
            out.append(f'<rect x="{xa:.1f}" y="{y + dy}" width="{w:.1f}" height="9" {style}/>')
            if f > hi_x:
                out.append(f'<text x="{sx(hi_x) + 3:.1f}" y="{y + dy + 8}">&#9656;</text>')
    ly = 30 + rh * len(rows)
    out.append(f'<rect x="{left}" y="{ly}" width="12" height="8" fill="#fff" stroke="{TEAL}"/>'
               f'<text x="{left + 16}" y="{ly + 8}">now</text>'
               f'<rect x="{left + 60}" y="{ly}" width="12" height="8" fill="{TEAL}"/><text x="{left + 76}" y="{ly + 8}">after the change</text>'
               f'<rect x="{left + 200}" y="{ly}" width="12" height="8" fill="url(#hatch)"/>'
               f'<text x="{left + 216}" y="{ly + 8}">near band ({r.near * 100:g} % of scale); left of the black line = limit crossed</text>')
    out.append("</svg>")
    return "".join(out)


def plan_chart(plans: list[MovePlan], near: float) -> str:
    """Smallest margin fraction at each checked step of each plan."""
    plans = [p for p in plans if p and p.steps]
    if not plans:
        return ""
    vals = [s.min_margin_fraction for p in plans for s in p.steps if s.min_margin_fraction is not None]
    if not vals:
        return ""
    lo, hi = min(min(vals), -0.02), max(max(vals), near * 2, 0.05)
    W, H, l, rgt, t, b = 760, 230, 60, 20, 16, 36
    n = max(len(p.steps) for p in plans)
    sx = lambda i, m: l + (i / max(m - 1, 1)) * (W - l - rgt)
    sy = lambda v: t + (hi - v) / (hi - lo) * (H - t - b)
    out = [f'<svg viewBox="0 0 {W} {H}" width="{W}" height="{H}" role="img" aria-label="smallest margin along the move plan">']
    out.append(f'<rect x="{l}" y="{sy(near):.1f}" width="{W - l - rgt}" height="{sy(0) - sy(near):.1f}" fill="{OCHRE}" opacity=".15"/>')
    out.append(f'<rect x="{l}" y="{sy(0):.1f}" width="{W - l - rgt}" height="{sy(lo) - sy(0):.1f}" fill="{BRICK}" opacity=".10"/>')
    out.append(f'<line x1="{l}" y1="{sy(0):.1f}" x2="{W - rgt}" y2="{sy(0):.1f}" stroke="{INK}" stroke-width="1.5"/>')
    for v in (lo, 0.0, near, hi):
        out.append(f'<text x="{l - 6}" y="{sy(v) + 4:.1f}" text-anchor="end">{v * 100:.0f} %</text>')
    out.append(f'<text x="{l}" y="{H - 8}">current</text><text x="{W - rgt}" y="{H - 8}" text-anchor="end">proposed</text>')
    for p, col, dash in zip(plans, (INK, TEAL), ("5 4", "")):
        m = len(p.steps)
        pts = [(sx(i, m), sy(s.min_margin_fraction)) for i, s in enumerate(p.steps) if s.min_margin_fraction is not None]
        out.append(f'<polyline fill="none" stroke="{col}" stroke-width="2" stroke-dasharray="{dash}" points="'
                   + " ".join(f"{x:.1f},{y:.1f}" for x, y in pts) + '"/>')
        for (x, y), s in zip(pts, [s for s in p.steps if s.min_margin_fraction is not None]):
            if s.safe:
                out.append(f'<circle cx="{x:.1f}" cy="{y:.1f}" r="3.5" fill="{col}"/>')
            else:  # a cross marks a step that crosses a limit
                out.append(f'<path d="M{x - 5:.1f},{y - 5:.1f}L{x + 5:.1f},{y + 5:.1f}M{x - 5:.1f},{y + 5:.1f}L{x + 5:.1f},{y - 5:.1f}" '
                           f'stroke="{BRICK}" stroke-width="2.5"/>')
    names = " / ".join(f"{'dashed' if i == 0 else 'solid'}: {p.name}" for i, p in enumerate(plans))
    out.append(f'<text x="{W / 2:.0f}" y="{H - 8}" text-anchor="middle">{_e(names)}; &#215; = step crosses a limit</text>')
    out.append("</svg>")
    return "".join(out)


def profit_chart(r: ReviewResult) -> str:
    p = r.profit
    if p.current is None or p.proposed is None:
        return ""
    W, H, l = 760, 90, 110
    top = max(abs(p.current), abs(p.proposed), 1e-12)
    sx = lambda v: (abs(v) / top) * (W - l - 120)
    out = [f'<svg viewBox="0 0 {W} {H}" width="{W}" height="{H}" role="img" aria-label="profit now and after">']
    for k, (name, v, fill) in enumerate((("now", p.current, "#fff"), ("after", p.proposed, TEAL))):
        y = 14 + 34 * k
        col = BRICK if v < 0 else TEAL
        out.append(f'<text x="{l - 8}" y="{y + 15}" text-anchor="end">{name}</text>')
        out.append(f'<rect x="{l}" y="{y}" width="{max(sx(v), 1.5):.1f}" height="20" fill="{fill if v >= 0 else BRICK}" stroke="{col}" stroke-width="1.5"/>')
        out.append(f'<text x="{l + max(sx(v), 1.5) + 6:.1f}" y="{y + 15}">{v:,.2f} {_e(p.unit)}{" (loss)" if v < 0 else ""}</text>')
    out.append("</svg>")
    return "".join(out)


# ---------------------------------------------------------------------------- sections
def _plan_table(p: MovePlan, r: ReviewResult) -> str:
    names = [m.name for m in r.moves if m.change != 0]
    units = {m.name: m.unit for m in r.moves}
    rows = []
    for s in p.steps:
        if s.status not in ("converged", "optimal"):
            check = '<span class="tag s-violated">NOT CONVERGED</span>'
        elif s.crossed:
            check = "".join(f'<span class="tag s-violated">CROSSES {_e(c["limit"])}</span> '
                            f'{_n(c["value"])} {_e(c["unit"])} (margin {_n(c["margin"])})<br>' for c in s.crossed)
        else:
            check = '<span class="tag s-clear">inside</span>'
        rows.append([str(s.index), _e(s.label)] + [_n(s.values.get(n)) for n in names]
                    + [_n(s.profit), _n(None if s.min_margin_fraction is None else 100 * s.min_margin_fraction, 3) + " %",
                       _e(s.worst_limit or ""), check])
    heads = ["step", "moves done"] + [f"{_e(n)} [{_e(units[n])}]" if units[n] else _e(n) for n in names] + [
        f"profit [{_e(r.profit.unit)}]", "smallest margin", "tightest limit", "check"]
    return _table(heads, rows, left=2)


def render_html(r: ReviewResult) -> str:
    """The review as one self-contained HTML document (text)."""
    verdict = {"clear": "CLEAR TO PROCEED TO CHANGE REVIEW", "blocked": "BLOCKED", "failed": "REVIEW FAILED"}[r.status]
    S: list[str] = []
    S.append(f'<!DOCTYPE html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">'
             f"<title>Change review: {_e(r.flowsheet_name)}</title><style>{CSS}</style></head><body><main>")
    S.append(f"<h1>Operating-point change review</h1><p class=\"sub\">{_e(r.flowsheet_name)} &middot; {_e(r.flowsheet)}</p>")
    S.append(f'<div class="caution"><b>CAUTION &mdash; ADVISORY ONLY.</b> {_e(r.notice)} This review checks a steady-state model '
             f"of the plant, not the plant itself; transients between steady states are not modelled."
             + (f"<br><b>Data:</b> {_e(r.data_notice)}" if r.data_notice else "") + "</div>")
    S.append('<section><table><tbody>'
             f'<tr><td class="l">flowsheet sha256</td><td class="l mono">{_e(r.flowsheet_sha256)}</td></tr>'
             f'<tr><td class="l">tool</td><td class="l">plantopt {_e(r.tool_version)}</td></tr>'
             f'<tr><td class="l">date</td><td class="l">{_e(r.date)}</td></tr>'
             f'<tr><td class="l">current point</td><td class="l">{_e(r.current_source)} (simulation {_e(r.current_status)})</td></tr>'
             f'<tr><td class="l">proposed point</td><td class="l">{_e(r.proposed_source)} (simulation {_e(r.proposed_status)})</td></tr>'
             "</tbody></table></section>")

    # 1 summary
    p = r.profit
    act = [e.name for e in r.limits if e.proposed and (e.proposed.active or e.proposed.near)]
    S.append(f'<section><h2><span class="no">1</span>Summary</h2><div class="verdict v-{_e(r.status)}">{verdict}</div>')
    S.append('<div class="facts">'
             f'<div class="fact"><div class="k">profit now</div><div class="v">{_n(p.current, 6)} {_e(p.unit)}</div></div>'
             f'<div class="fact"><div class="k">profit after</div><div class="v">{_n(p.proposed, 6)} {_e(p.unit)}</div></div>'
             f'<div class="fact"><div class="k">gain</div><div class="v">{"&ndash;" if p.gain is None else f"{p.gain:+,.2f}"} {_e(p.unit)}</div></div>'
             f'<div class="fact"><div class="k">limits active or near after</div><div class="v">{len(act)} of {len(r.limits)}</div></div>'
             "</div>")
    if r.blocking or r.warnings:
        S.append('<ul class="flags">' + "".join(f'<li class="block">{_e(b)}</li>' for b in r.blocking)
                 + "".join(f"<li>warning: {_e(w)}</li>" for w in r.warnings) + "</ul>")
    S.append(f'<p class="note">Plan: {_e(r.plan_search)}. {r.simulations} square simulations.</p></section>')

    # 2 moves
    rows = [[_e(m.name), f'<span class="mono">{_e(m.path)}</span>', _n(m.current, 6), _n(m.proposed, 6), _n(m.change, 4), _e(m.unit),
             "&ndash;" if m.relative is None else f"{100 * m.relative:+.1f} %", f"{100 * m.fraction_of_range:+.1f} %",
             f"[{_n(m.lower)}, {_n(m.upper)}]" + (' <span class="tag s-violated">OUTSIDE</span>' if m.outside_range else "")]
            for m in r.moves]
    S.append('<section><h2><span class="no">2</span>Moves</h2>'
             + _table(["decision", "address", "current", "proposed", "change", "unit", "relative", "of range", "range"], rows, left=2)
             + '<p class="note">Relative = change / |current| on the absolute scale (kelvin, pascal); of range = change / width of the decision range.</p></section>')

    # 3 limits
    rows = []
    for e in r.limits:
        c, q = e.current, e.proposed
        sp = f"{_n(e.shadow_price)} {_e(e.shadow_price_unit or '')}" if e.shadow_price is not None else "&ndash;"
        rows.append([_e(e.name) + f'<br><span class="note">{_e(e.description)}</span>', _e(e.kind), _n(e.bounds[0]), _n(e.bounds[1]), _e(e.unit),
                     _n(c.value) if c else "&ndash;", (f"{_n(c.margin)} " + _tag(c.state)) if c else "&ndash;",
                     _n(q.value) if q else "&ndash;", (f"{_n(q.margin)} " + _tag(q.state)) if q else "&ndash;",
                     ("&minus; " if e.loses_margin else "") + _n(e.margin_change), sp])
    S.append('<section><h2><span class="no">3</span>Limits and margins</h2>'
             + _table(["limit", "kind", "lower", "upper", "unit", "value now", "margin now", "value after", "margin after",
                       "margin change", "shadow price after"], rows)
             + margin_chart(r)
             + f'<p class="note">Margin fraction = margin / scale: the range of a two-sided limit, otherwise the bound on the absolute scale. '
               f"Near = within {r.near * 100:g} % of the scale. Shadow prices are those of the optimize result (change of optimal profit per unit "
               f"increase of the bound) and exist only for limits active there.</p></section>")

    # 4 margins consumed by moves
    if r.sensitivities:
        decs = list(dict.fromkeys(s.decision for s in r.sensitivities))
        lims = [e.name for e in r.limits]
        cell = {(s.decision, s.limit): s for s in r.sensitivities}
        rows = []
        for dname in decs:
            row = [_e(dname)]
            for ln in lims:
                s = cell.get((dname, ln))
                if s is None or s.share_of_margin is None:
                    row.append("&ndash;")
                    continue
                sh = s.share_of_margin
                a = min(abs(sh), 1.0) * 0.85
                bg = f"rgba(163,58,43,{a:.2f})" if sh < 0 else f"rgba(22,113,107,{a * 0.6:.2f})"
                fg = "#fff" if sh < -0.55 else INK
                row.append(f'<span style="display:block;background:{bg};color:{fg};padding:1px 3px">{100 * sh:+.0f} %</span>'
                           f'<span class="note">{_n(s.per_unit, 3)}/{_e(s.unit.split(" per ")[-1])}</span>')
            rows.append(row)
        S.append('<section><h2><span class="no">4</span>Which moves use which margins</h2>'
                 + _table(["move"] + [_e(n) for n in lims], rows)
                 + '<p class="note">Each cell: the change of the limit\'s margin when that move alone is made from the current point '
                   "(simulated), as a share of today's margin (red = margin used up, &minus;100 % = the move alone reaches the limit); below it "
                   "d(margin)/d(move) at the current point by central finite differences of simulations. Moves interact: the shares do not add up "
                   "to the combined change.</p></section>")

    # 5 move plan
    S.append('<section><h2><span class="no">5</span>Move plan</h2>')
    if r.ramp:
        S.append(f"<p><b>{_e(r.ramp.name)}</b>: {_e(r.ramp.description)} &mdash; "
                 + ("<span class=\"tag s-clear\">every step inside the limits</span>" if r.ramp.safe else
                    "<span class=\"tag s-violated\">NOT SAFE</span>") + "</p>")
        S.append(_plan_table(r.ramp, r))
    S.append(f'<p>{_e(r.plan_search)}.</p><p class="note">Only the listed steady states are checked; the model says nothing about '
             "the plant between them or about the transient while it settles, so keep each step small and let the plant settle "
             "before the next.</p>")
    if r.suggested_plan:
        sp = r.suggested_plan
        S.append(f"<p><b>Suggested sequence</b> ({_e(sp.description)}): " + " &rarr; ".join(_e(o) for o in sp.order) + "</p>")
        S.append(_plan_table(sp, r))
    S.append(plan_chart([r.ramp, r.suggested_plan], r.near) + "</section>")

    # 6 profit
    rows = [[_e(k), _n(v.get("current"), 6), _n(v.get("proposed"), 6), _n(v.get("change"), 5)] for k, v in p.breakdown.items()]
    if p.gain is not None:
        rows.append(["<b>total</b>", f"<b>{_n(p.current, 6)}</b>", f"<b>{_n(p.proposed, 6)}</b>", f"<b>{_n(p.gain, 5)}</b>"])
    S.append(f'<section><h2><span class="no">6</span>Profit [{_e(p.unit)}]</h2>' + profit_chart(r)
             + _table(["term", "now", "after", "change"], rows) + "</section>")

    S.append(f"<footer>{_e(r.notice)} Generated by plantopt {_e(r.tool_version)} on {_e(r.date)} for flowsheet sha256 "
             f'<span class="mono">{_e(r.flowsheet_sha256)}</span>.</footer></main></body></html>')
    return "".join(S)


def write_html(path: str, r: ReviewResult) -> None:
    """Write the report atomically (temporary file, then rename)."""
    from plantopt.reports.io import atomic_write_text

    atomic_write_text(path, render_html(r))
