"""Report section "Filter banks": every bank kept in the session (``extras["banks"]``).

For each bank, each starting a page on paper: how its centres were set (the IEC 61260-1 rule or a
list) and which circuit and why; the bank as built, measured again from its saved parts under the
session's op-amp (:func:`bandsmith.bank.bank_session.banks_in`, :func:`bandsmith.bank.response.bank_response`):
distinct values (against designing each channel alone), op-amp packages, the spread of the centre
gains, the ripple of the channels' sum over the covered band; a table of the channels (label,
target and built centre, Q, centre gain, isolation to each neighbour); and the bill of materials with
quantities. A bank that cannot be read is said in words, never raised. The section goes before the
cautions (:func:`bandsmith.app.report.sections.register_section`).
"""

from __future__ import annotations

from html import escape

import numpy as np

from bandsmith.bank.bank_session import EXTRAS_KEY, SavedBank, banks_in
from bandsmith.bank.bom import bom_lines, opamp_count, pack_opamps
from bandsmith.bank.response import bank_response
from bandsmith.common.values import format_value

from bandsmith.app.report.cells import html_table
from bandsmith.app.report.context import ReportContext
from bandsmith.app.report.sections import kept_items_section, register_section

__all__ = ["section_banks"]


def _rule_text(saved: SavedBank) -> str:
    rule = saved.bank.rule
    if rule.get("kind") == "fraction":
        return f"1/{rule.get('b')}-octave bands, exact base-ten mid-band frequencies of IEC 61260-1:2014"
    return "centres as listed"


def _summary(saved: SavedBank, r) -> str:
    bank = saved.bank
    lines = bom_lines((ch.circuit, ch.chosen) for ch in bank.channels)
    pack = pack_opamps(sum(opamp_count(ch.analysis.netlist) for ch in bank.channels))
    alone = "" if saved.distinct_values_alone is None else f" ({saved.distinct_values_alone} when each channel is designed alone)"
    rows = [
        ["channels", f"{len(bank.channels)}: {escape(_rule_text(saved))}"],
        ["circuit", escape(bank.circuit_reason or bank.circuit_mode)],
        ["parts", escape("exact values" if bank.series == "exact" else f"{bank.series} series (capacitors shared per decade)")],
        ["distinct values", escape(f"{len(lines)}{alone}")],
        ["op-amps", escape(f"{pack['opamps']} in {pack['quads']} quad(s) and {pack['duals']} dual(s)")],
        ["centre gains", escape(f"within {float(np.ptp(r.centre_gain_db)):.3g} dB of each other")],
        ["sum of the channels", escape(f"ripple {r.sum_ripple_db:.3g} dB from {format_value(r.band_hz[0], 'Hz')} to {format_value(r.band_hz[1], 'Hz')}")],
    ]
    return html_table(None, rows, cls="kv", align="ll")


def _channels_table(saved: SavedBank, r) -> str:
    iso = r.isolation_db
    n = len(saved.bank.channels)
    rows = []
    for i, ch in enumerate(saved.bank.channels):
        fig = ch.analysis.actual if ch.analysis.actual is not None else ch.analysis.ideal
        one = fig.item(0)
        rows.append([
            f"<b>{i + 1}</b>",
            escape(format_value(ch.label_hz, "Hz")) if ch.label_hz is not None else "",
            escape(format_value(ch.target_f0_hz, "Hz", digits=5)),
            escape(format_value(one.f0_hz, "Hz", digits=5)),
            escape(f"{one.q:.4g}"),
            escape(f"{round(one.gain_center_db, 2) + 0.0:.2f}"),
            escape(f"{iso[i, i - 1]:.2f}") if i > 0 else "—",
            escape(f"{iso[i, i + 1]:.2f}") if i < n - 1 else "—",
            escape(ch.circuit),
        ])
    header = ["ch", "label", "target f0", "f0", "Q", "gain dB", "iso below dB", "iso above dB", "circuit"]
    return html_table(header, rows, cls="stages", align="Lr")


def _bom_table(saved: SavedBank) -> str:
    rows = [[escape(ln.text), str(ln.quantity)] for ln in bom_lines((ch.circuit, ch.chosen) for ch in saved.bank.channels)]
    return html_table(["value", "quantity"], rows, cls="parts", align="rr")


def _one_bank(saved: SavedBank, ctx: ReportContext) -> str:
    out = [f'<h2 class="bank" id="bank-{escape(saved.id)}" style="page-break-before: always">'
           f"Filter bank {escape(saved.id)}: {len(saved.bank.channels)} channels</h2>"]
    try:
        r = bank_response(saved.bank)
    except Exception as exc:  # a bank the core cannot handle is said, never raised
        out.append(f'<p class="error">This bank cannot be measured ({escape(type(exc).__name__)}: {escape(str(exc))}).</p>')
        return "\n".join(out)
    out.append("<h3>The bank</h3>\n" + _summary(saved, r))
    out.append(
        "<h3>Channels</h3>\n" + _channels_table(saved, r)
        + '\n<p class="note">Measured from the parts kept in the session, with its op-amp. Isolation: how far each channel '
        "is below its own centre gain at its neighbour's target centre.</p>"
    )
    out.append("<h3>Bill of materials</h3>\n" + _bom_table(saved))
    return "\n".join(out)


def section_banks(ctx: ReportContext) -> str:
    """Every bank kept in the session ("" when there is none)."""
    return kept_items_section(ctx, EXTRAS_KEY, banks_in, _one_bank)


register_section("banks", section_banks, before="cautions")
