"""Report section "Op-amps from the shelf": the models kept in the session against every active candidate.

Only when the session carries op-amp models (``extras["shelf"]["amps"]``, copied there from the
shelf pane). Computed when the report is made, through :func:`bandsmith.bench.fitcheck.fit_check` at the
session's input level, load, tolerances and supply (``extras["shelf"]["supply_v"]``, ±15 V when
it has none):

- the verdict table: one row per model (with its GBW, slew rate and output current), one column
  per active candidate, each cell the verdict's symbol and word ("✓ fits", "◐ marginal",
  "✗ does not fit"; it reads without colour); "chosen" marks the model the session keeps for a
  candidate (``extras["shelf"]["chosen"]``);
- per candidate, every model's reasons, and the headroom of its chosen model (every node's peak,
  what it may reach, the node that limits first and the largest input), or, with none chosen, the
  circuit's own headroom on the rails.
"""

from __future__ import annotations

import math
from html import escape

from bandsmith.design.candidate import Candidate
from bandsmith.bench.shelf import amps_from_json
from bandsmith.common.errors import InputError
from bandsmith.bench.fitcheck import fit_check
from bandsmith.common.values import format_value

from bandsmith.app.report.context import ReportContext
from bandsmith.app.report.sections import register_section
from bandsmith.app.plots.status import FIT_MARKS
from bandsmith.app.document.extras_shelf import SESSION_KEY, session_amps, session_chosen, session_supply_v

__all__ = ["section_shelf"]



def _v(x: float, unit: str, digits: int = 3) -> str:
    return "—" if x is None or not math.isfinite(x) else format_value(float(x), unit, digits=digits)


def _cell(verdict: str, chosen: bool) -> str:
    symbol, colour = FIT_MARKS[verdict]
    mark = "<br/><i>chosen</i>" if chosen else ""
    # A no-break space keeps the symbol with the word when a narrow column wraps the cell.
    return f'<span style="color: {colour}; font-weight: 600">{symbol}&nbsp;{escape(verdict)}</span>{mark}'


def _headroom_table(room) -> str:
    rows = []
    for node, peak in room.node_peak_v.items():
        lim = room.limits[node]
        spare = room.spare_v(node)
        first = node == room.limiting_node
        name = f"<b>{escape(node)}</b> (limits first)" if first else escape(node)
        rows.append(
            f'<tr><td align="left">{name}</td><td align="right" style="white-space: nowrap">{escape(_v(peak, "V", 4))}</td>'
            f'<td align="right" style="white-space: nowrap">±{escape(_v(lim.amplitude_v, "V", 4))}</td>'
            f'<td align="right" style="white-space: nowrap">{escape(_v(spare, "V", 3))}{" ✗" if spare < 0 else ""}</td>'
            f'<td align="left">{escape(lim.what)}</td></tr>'
        )
    head = "<thead><tr><th>node</th><th>peak</th><th>may reach</th><th>to spare</th><th>set by</th></tr></thead>"
    return f'<table class="headroom" border="1" cellspacing="0" cellpadding="3">\n{head}\n' + "\n".join(rows) + "\n</table>"


def _largest_input(room) -> str:
    if room.limiting_node is None:
        return "No node limits the input."
    fits = room.max_vin_v >= room.vin_v
    mark = "✓" if fits else '<span class="bad">✗</span>'
    return (
        f"{mark} Largest input before node <b>{escape(room.limiting_node)}</b> reaches its limit: "
        f"<b>{escape(_v(room.max_vin_v, 'V', 4))}</b> peak (the session's input is {escape(_v(room.vin_v, 'V', 4))}, "
        f"supply ±{room.supply_v:g} V)."
    )


def _damaged(session) -> str | None:
    """Why the session's shelf section cannot be read, or None (absent or fine)."""
    if SESSION_KEY not in session.extras:
        return None
    sec = session.extras[SESSION_KEY]
    if not isinstance(sec, dict):
        return f"the section is {type(sec).__name__}, not an object"
    try:
        amps_from_json(sec.get("amps", []))
    except InputError as exc:
        return str(exc)
    return None


def _intro(s, supply: float) -> list[str]:
    return [
        '<h2 class="shelf" style="page-break-before: always">Op-amps from the shelf</h2>',
        f'<p class="note">The op-amp models kept in the session, each checked against every active candidate at '
        f"{escape(_v(s.target.vin_v, 'V', 4))} peak input on ±{supply:g} V"
        + (f", load {escape(_v(s.rload_ohm, 'Ω', 4))}" if s.rload_ohm else "")
        + f"; GBW, slew rate, output current, output swing and input common-mode range against what each needs, and "
        f"the response with the model within f0 ±{100 * s.tolerances.f0:g} %, Q ±{100 * s.tolerances.q:g} %, "
        f"gain ±{s.tolerances.gain_db:g} dB. Supply limits, common-mode range and swing remain yours to check "
        "against the datasheet.</p>",
    ]


def _verdict_table(amps, checked, reports, chosen: dict[str, str]) -> str:
    """Models as rows, candidates as columns, the verdict in each cell (the chosen one marked)."""
    header = "<thead><tr><th>model (GBW, slew rate, output current)</th>" + "".join(
        f"<th>{escape(c.label)}</th>" for c in checked
    ) + "</tr></thead>"
    # The name never wraps; the verdict words only when more than three candidates share the width.
    keep = ' style="white-space: nowrap"' if len(checked) <= 3 else ""
    rows = []
    for a in amps:
        figures = f"{_v(a.gbw_hz, 'Hz')}, {a.slew_v_per_us:g} V/µs, {a.iout_max_ma:g} mA"
        cells = [
            f'<td align="left" style="white-space: nowrap"><b>{escape(a.name)}</b><br/>'
            f'<span style="color: #555a60; font-size: 8.5pt">{escape(figures)}</span></td>'
        ]
        for c in checked:
            v = reports[c.label].verdict(a.name)
            is_chosen = chosen.get(c.label, "").casefold() == a.name.casefold()
            cells.append(f'<td align="left"{keep}>{_cell(v.verdict, is_chosen)}</td>')
        rows.append("<tr>" + "".join(cells) + "</tr>")
    return f'<table class="shelf" border="1" cellspacing="0" cellpadding="3">\n{header}\n' + "\n".join(rows) + "\n</table>"


def _candidate_block(label: str, rep, chosen_name: str | None) -> list[str]:
    """One candidate: every model's verdict and reasons, then the headroom (with the chosen model)."""
    out = [f"<h3>{escape(label)}</h3>"]
    items = []
    for v in rep.verdicts:
        symbol, _colour = FIT_MARKS[v.verdict]
        fig = v.actual.item()
        with_it = ""
        if math.isfinite(fig.f0_hz):
            with_it = f" With it: f0 {_v(fig.f0_hz, 'Hz', 4)}, Q {fig.q:.3g}, centre gain {fig.gain_center_db:+.2f} dB."
        items.append(
            f"<li><b>{escape(v.amp.name)}</b>: {symbol} {escape(v.verdict)} — {escape('; '.join(v.reasons))}.{escape(with_it)}</li>"
        )
    out.append('<ul class="verdicts">' + "\n".join(items) + "</ul>")
    pick = None
    if chosen_name is not None:
        try:
            pick = rep.verdict(chosen_name)
        except KeyError:
            pick = None
    if pick is not None:
        out.append(f"<p><b>Headroom with the chosen {escape(pick.amp.name)}</b></p>")
        room = pick.headroom
    else:
        out.append('<p><b>Headroom</b> <span style="color: #555a60; font-size: 9pt">(no model chosen for this candidate: an ideal op-amp, '
                   "every node limited by the supply rails only)</span></p>")
        room = rep.headroom
    out.append(_headroom_table(room))
    out.append(f"<p>{_largest_input(room)}</p>")
    return out


def section_shelf(ctx: ReportContext) -> str:
    """The session's shelf models against every active candidate ("" when it keeps none)."""
    s = ctx.session
    problem = _damaged(s)
    if problem:  # as the other sections say a damaged section: in words, never dropped silently
        return f'<h2 class="shelf">Op-amps from the shelf</h2>\n<p class="error">The session\'s op-amp models cannot be used: {escape(problem)}.</p>'
    amps = session_amps(s)
    if not amps:
        return ""
    supply = session_supply_v(s)
    chosen = session_chosen(s)
    cands = [c for c in ctx.candidates if c.entry.enabled and c.analysis is not None]
    out = _intro(s, supply)
    if not cands:
        out.append("<p>No active candidate to check.</p>")
        return "\n".join(out)
    reports, problems = {}, {}
    for c in cands:
        try:
            net = Candidate(c.entry.topology_id, c.entry.values).netlist
            reports[c.label] = fit_check(net, amps, supply_v=supply, vin_v=s.target.vin_v, rload_ohm=s.rload_ohm, tolerances=s.tolerances)
        except Exception as exc:  # a candidate the core cannot check: said, never raised
            problems[c.label] = f"{type(exc).__name__}: {exc}"
    checked = [c for c in cands if c.label in reports]
    out.append(_verdict_table(amps, checked, reports, chosen))
    for label, why in problems.items():
        out.append(f'<p class="error">{escape(label)} cannot be checked ({escape(why)}).</p>')
    for c in checked:
        out.extend(_candidate_block(c.label, reports[c.label], chosen.get(c.label)))
    return "\n".join(out)


register_section("shelf", section_shelf, before="cautions")
