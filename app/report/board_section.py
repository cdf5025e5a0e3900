"""Report section "On the board": single-supply bias and the trim procedure of each active candidate.

Written only when the session keeps board settings (``extras["board"]``, set in the window's Board
pane): the supply, the reference kind (divider or buffered) and, per candidate, a measured f0. For
each active candidate: the bias summary (reference voltage and impedance, bypass, settling, the
coupling corners, the swing margin) from :func:`bandsmith.api.bias`, and the trim procedure from
:func:`bandsmith.api.trim` — which part to make adjustable for f0, then Q, then gain, as a fixed
resistor in series with a trimmer — and, with a measured f0, the corrected value of the f0 part.

:func:`stored_board` reads the settings (the pane uses it too); :func:`board_of` computes one
candidate's bias and plan. Both are plain Python: the window calls them off the GUI thread.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from html import escape

from bandsmith import api
from bandsmith.common.values import format_value

from bandsmith.app.report.cells import html_table
from bandsmith.app.report.context import ReportContext
from bandsmith.app.report.sections import register_section

__all__ = ["BOARD_KEY", "BoardSettings", "stored_board", "board_of", "section_board"]

#: The session's extras key for the board settings.
BOARD_KEY = "board"
_REFERENCES = ("divider", "buffered")


@dataclass(frozen=True)
class BoardSettings:
    """What the Board pane keeps: the supply (V), the reference kind and measured f0 by candidate (Hz)."""

    supply_v: float = 12.0
    reference: str = "divider"
    measured_f0_hz: dict = field(default_factory=dict)

    def to_json(self) -> dict:
        return {"supply_v": self.supply_v, "reference": self.reference, "measured_f0_hz": dict(self.measured_f0_hz)}


def stored_board(session) -> BoardSettings:
    """The board settings kept in the session (the defaults for what is missing or unusable)."""
    raw = session.extras.get(BOARD_KEY)
    if not isinstance(raw, dict):
        return BoardSettings()
    supply = raw.get("supply_v")
    supply = float(supply) if isinstance(supply, (int, float)) and math.isfinite(supply) and supply > 0 else 12.0
    ref = raw.get("reference") if raw.get("reference") in _REFERENCES else "divider"
    meas = raw.get("measured_f0_hz") if isinstance(raw.get("measured_f0_hz"), dict) else {}
    meas = {str(k): float(v) for k, v in meas.items() if isinstance(v, (int, float)) and math.isfinite(v) and v > 0}
    return BoardSettings(supply, ref, meas)


def board_of(topology_id: str, values, settings: BoardSettings, *, vin_v: float = 1.0, measured_f0_hz: float | None = None):
    """The candidate's :class:`~bandsmith.board.bias.BiasedCircuit` and :class:`~bandsmith.board.trim.TrimPlan`.

    Raises :class:`~bandsmith.common.errors.InputError` (naming the field) for settings the core refuses.
    """
    biased = api.bias(topology_id, dict(values), supply_v=settings.supply_v, reference=settings.reference, vin_v=vin_v)
    plan = api.trim(topology_id, dict(values), measured_f0_hz=measured_f0_hz)
    return biased, plan


def ohm(x: float) -> str:
    """A resistance for display ("—" when the part is not a resistor)."""
    return format_value(x, "Ω", digits=3) if isinstance(x, (int, float)) and math.isfinite(x) else "—"


def part_value(ref: str, x: float) -> str:
    """A part's value with the unit its reference letter implies."""
    unit = {"C": "F", "L": "H"}.get(ref[:1].upper(), "Ω")
    return format_value(x, unit, digits=4)


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
