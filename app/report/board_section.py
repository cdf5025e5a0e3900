"""Report section "On the board": single-supply bias and the trim procedure of each active candidate.

Written only when the session keeps board settings (``extras["board"]``, set in the window's Board
pane): the supply, the reference kind (divider or buffered) and, per candidate, a measured f0. For
each active candidate: the bias summary (reference voltage and impedance, bypass, settling, the
coupling corners, the swing margin) from :func:`bandsmith.api.bias`, and the trim procedure from
:func:`bandsmith.api.trim` — which part to make adjustable for f0, then Q, then gain, as a fixed
resistor in series with a trimmer — and, with a measured f0, the corrected value of the f0 part.

The settings and the computation are in :mod:`bandsmith.app.document.extras_board`, shared with
the window's Board pane.
"""

from __future__ import annotations

import math
from html import escape

from bandsmith.common.values import format_value

from bandsmith.app.document.extras_board import BOARD_KEY, BoardSettings, board_of, ohm, part_value, stored_board
from bandsmith.app.report.cells import html_table
from bandsmith.app.report.context import ReportContext
from bandsmith.app.report.sections import register_section

__all__ = ["section_board"]

def _bias_table(b) -> str:
    ref = "buffered (a source)" if b.settings.reference == "buffered" else f"divider, 2 × {ohm(b.settings.divider_ohm)}"
    rows = [
        ["supply", escape(format_value(b.settings.supply_v, "V", digits=4))],
        ["reference", escape(f"{format_value(b.reference_v, 'V', digits=4)}, {ref}")],
        ["reference impedance", escape(f"{ohm(b.reference_impedance_ohm)} at DC, {ohm(b.reference_impedance_f0_ohm)} at f0")],
    ]
    if b.bypass_f is not None:
        rows.append(["bypass", escape(f"{format_value(b.bypass_f, 'F', digits=3)} (corner {format_value(b.bypass_corner_hz, 'Hz', digits=3)}), settles in {format_value(b.settle_s, 's', digits=3)}")])
    for c in b.coupling:
        rows.append([f"coupling, {escape(c.where)}", escape(f"{c.ref} {format_value(c.capacitance_f, 'F', digits=3)} into {ohm(c.resistance_ohm)}, corner {format_value(c.corner_hz, 'Hz', digits=3)}")])
    rows.append(["swing margin", escape(f"{format_value(b.swing_margin_v, 'V', digits=3)} (output peak {format_value(b.out_peak_v, 'V', digits=3)})")])
    return html_table(None, rows, cls="kv", align="ll")


def _trim_table(plan) -> str:
    rows = []
    for name, ch in (("f0", plan.f0), ("Q", plan.q), ("gain", plan.gain)):
        rows.append([
            f"<b>{name}</b>", escape(ch.part), escape(ohm(ch.fixed_ohm)), escape(ohm(ch.trimmer_ohm)),
            escape(f"±{ch.range_pct:.3g} %"),
            escape(f"{ch.resolution_pct:.2g} %" if math.isfinite(ch.resolution_pct) else "—"),
            escape(f"{ch.interaction:.3g}"),
        ])
    return html_table(["trim", "part", "fixed", "trimmer", "range", "resolution", "interaction"], rows, cls="parts", align="Lr")


def _one(cr, ctx: ReportContext, settings: BoardSettings) -> str:
    e = cr.entry
    out = [f'<h3 id="board-{escape(e.id)}">{escape(e.id)}</h3>']
    try:
        b, plan = board_of(e.topology_id, e.values, settings, vin_v=ctx.session.target.vin_v,
                           measured_f0_hz=settings.measured_f0_hz.get(e.id))
    except Exception as exc:  # a candidate the core cannot bias is said, never raised
        out.append(f'<p class="error">Not biased ({escape(type(exc).__name__)}: {escape(str(exc))}).</p>')
        return "\n".join(out)
    out.append(_bias_table(b))
    out.append("<p>Trim procedure:</p>\n" + _trim_table(plan))
    out.append("<ol>" + "".join(f"<li>{escape(s)}</li>" for s in plan.procedure) + "</ol>")
    c = plan.correction
    if c is not None:
        out.append(
            f"<p>Measured f0 {escape(format_value(c.measured_f0_hz, 'Hz', digits=5))} against "
            f"{escape(format_value(c.target_f0_hz, 'Hz', digits=5))}: set {escape(c.part)} from "
            f"{escape(part_value(c.part, c.old_value))} to <b>{escape(part_value(c.part, c.new_value))}</b>"
            f"{'' if c.in_range else ' (outside the trimmer’s range: change the fixed part)'}.</p>"
        )
    if b.notes:
        out.append('<p class="note">' + escape("; ".join(b.notes)) + ".</p>")
    return "\n".join(out)


def section_board(ctx: ReportContext) -> str:
    """Bias and trim procedure of every active candidate ("" without board settings in the session)."""
    if BOARD_KEY not in ctx.session.extras:
        return ""
    settings = stored_board(ctx.session)
    parts = [cr for cr in ctx.candidates if cr.entry.enabled]
    if not parts:
        return ""
    ref = "a buffered reference" if settings.reference == "buffered" else "a bypassed divider as the reference"
    out = [
        "<h2>On the board</h2>",
        f"<p>Each candidate built for a single {escape(format_value(settings.supply_v, 'V', digits=4))} supply "
        f"with {ref}, input and output coupled through capacitors; then trimmed: f0 first, Q next (re-check f0), gain last.</p>",
    ]
    out.extend(_one(cr, ctx, settings) for cr in parts)
    return "\n".join(out)


register_section("board", section_board, before="cautions")
