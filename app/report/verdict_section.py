"""The report's verdict section: which candidate to build, on the first page.

Right after the target (so that it is on the first page; on paper the plots start a page of their
own): the recommended candidate and why (or why none is buildable), then one row per
candidate, best first, with its verdict, rank, yield, required GBW, spreads, parts count, inductor
and every reason with its number. The verdicts come from :mod:`bandsmith.verdict` through the same
document function the window uses (:func:`bandsmith.app.document.comparison.judge_session`), from the
analyses the report already made, against the session's verdict limits
(``extras["verdict_limits"]``; the limits that differ from the defaults are listed).
"""

from __future__ import annotations

from html import escape

from bandsmith.common.values import format_value
from bandsmith.verdict import VerdictLimits

from bandsmith.app.document.comparison import SessionComparison, judge_session
from bandsmith.app.report.context import ReportContext
from bandsmith.app.report.sections import register_section
from bandsmith.app.plots.status import VERDICT_MARKS

__all__ = ["section_verdicts", "report_comparison", "VERDICT_MARKS"]


def report_comparison(ctx: ReportContext) -> SessionComparison:
    """The session's candidates judged from the report's own analyses."""
    by_id = {c.entry.id: c for c in ctx.candidates}

    def analysis_of(entry):
        c = by_id.get(entry.id)
        return (None, "not analysed") if c is None else (c.analysis, c.error)

    return judge_session(ctx.session, analysis_of)


def _ratio(x: float | None) -> str:
    if x is None:
        return "—"
    return (f"{x:,.0f}".replace(",", " ") if x >= 100 else f"{x:.3g}") + " : 1"


def _changed_limits(limits: VerdictLimits) -> str:
    default = VerdictLimits().to_json()
    now = limits.to_json()
    diff = [f"{k.replace('_', ' ')} {now[k]!r}" if not isinstance(now[k], dict) else
            f"{k} " + ", ".join(f"{kk} {100 * vv:g} %" for kk, vv in now[k].items())
            for k in now if now[k] != default[k]]
    return "; ".join(diff)


def section_verdicts(ctx: ReportContext) -> str:
    """The recommendation and every candidate's verdict with its reasons."""
    if not ctx.candidates:
        return ""
    comp = report_comparison(ctx)
    out = ['<h2 class="verdicts">Which to build</h2>']
    if comp.recommended is not None:
        out.append(f'<p><b>Recommended: {escape(comp.recommended)}</b>, {escape(comp.reason.split(": ", 1)[-1])}.</p>')
    else:
        out.append(f'<p><span class="bad">Nothing to recommend:</span> {escape(comp.reason)}.</p>')
    with_what = "an ideal op-amp" if comp.figures_with is None else f"the session's {format_value(comp.figures_with, 'Hz')} op-amp"
    changed = _changed_limits(comp.limits)
    limits = f"the session's verdict limits (changed: {escape(changed)})" if changed else "the default verdict limits"
    out.append(f'<p class="note">Judged with {escape(with_what)} against the design tolerances and {limits}. '
               "Yield: share of builds inside the yield window with ordinary part tolerances; L: needs an inductor.</p>")
    if comp.problem:
        out.append(f'<p class="error">{escape(comp.problem)}</p>')
    rows, why = [], []
    for row in comp.judged:
        v = row.verdict
        sym, colour = VERDICT_MARKS[v.verdict]
        name = f"<b>{escape(row.id)}</b>" + (" ★" if row.recommended else "")
        rows.append([
            str(row.rank),
            name,
            f'<span style="color:{colour}; font-weight:600">{sym}&nbsp;{escape(v.verdict).replace(" ", "&nbsp;")}</span>',
            "—" if v.yield_fraction is None else f"{100 * v.yield_fraction:.1f}&nbsp;%",
            escape(format_value(v.required_gbw_hz, "Hz", digits=3)).replace(" ", "&nbsp;") if v.required_gbw_hz is not None else "none",
            escape(_ratio(row.r_spread)).replace(" ", "&nbsp;"),
            escape(_ratio(row.c_spread)).replace(" ", "&nbsp;"),
            str(row.part_count),
            "yes" if row.needs_inductor else "no",
        ])
        items = "<br/>".join(f"&nbsp;&nbsp;{VERDICT_MARKS[r.weight][0]} {escape(r.text)}" for r in v.reasons) or "&nbsp;&nbsp;no limit crossed"
        why.append(f'<p class="verdict-why"><b>{escape(row.id)}</b> ({escape(v.verdict)}):<br/>{items}</p>')
    off = [r.id for r in comp.rows if r.verdict is None]
    head = ["#", "candidate", "verdict", "yield", "GBW need", "R spread", "C spread", "parts", "L"]
    body = "\n".join(
        "<tr>" + "".join(f'<td align="{"right" if j in (0, 3, 4, 5, 6, 7) else "left"}">{c}</td>' for j, c in enumerate(r)) + "</tr>"
        for r in rows
    )
    out.append('<table class="verdicts" width="100%" border="1" cellspacing="0" cellpadding="3">\n<thead><tr>'
               + "".join(f"<th>{h}</th>" for h in head) + "</tr></thead>\n" + body + "\n</table>")
    if off:
        out.append(f'<p class="note">Switched off, not judged: {escape(", ".join(off))}.</p>')
    out.append('<div class="verdict-why" style="font-size: 8.5pt">' + "\n".join(why) + "</div>")
    return "\n".join(out)


# Right after the target, so that the answer is on the first page (the plots start a page of their own).
register_section("verdicts", section_verdicts, before="notes")
