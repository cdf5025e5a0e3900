"""Report section "Stage chains": every chain kept in the session (``extras["chains"]``).

For each chain, in the order kept, each starting a page on paper:

- the request (family, order, band edges and what they mean, centre and bandwidth, centre gain,
  ripple, circuit, series);
- the chain as built, measured from its saved parts under the session's conditions
  (:func:`bandsmith.chain.cascade.chain_cascade`): band edges, −3 dB points, centre gain, ripple and peak,
  with an ideal op-amp and with the session's, the deviation from the ideal response of its family
  (scipy.signal's band-pass, :mod:`bandsmith.chain.cascade`), the GBW the most demanding stage needs and the
  chain's warnings;
- when the report has images, the plots of the stage-chain pane
  (:class:`~bandsmith.app.window.widgets.chain_plots.ChainPlots`, drawn offscreen): the whole chain against the
  ideal response, the deviation, and each stage beneath;
- the stages: circuit, target f0, Q and gain, how far the parts put them off, the peak so far, the
  level reaching the stage and its amplifier needs;
- the parts of every stage, with their RKM codes (IEC 60062) and roles.

A chain that cannot be read or measured is said in words, never raised. The section goes before
the cautions (:func:`bandsmith.app.report.sections.register_section`).
"""

from __future__ import annotations

import math
from html import escape

from bandsmith.common.units import PART_UNITS
from bandsmith.chain.cascade import Cascade, Chain, chain_cascade
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.common.values import format_rkm, format_value

from bandsmith.app.document.extras_chains import EXTRAS_KEY, chain_conditions, saved_chains
from bandsmith.app.plots.chain_text import response_title
from bandsmith.app.plots.gui_thread import on_gui_thread
from bandsmith.app.report.cells import gbw_cell, html_table, png_img, signed, slew_text
from bandsmith.app.report.context import ReportContext
from bandsmith.app.report.sections import kept_items_section, register_section

__all__ = ["section_chains", "chain_plot_png", "PLOT_ASPECT"]

PLOT_ASPECT = 0.78  # height / width of the chain's plot image


@on_gui_thread
def chain_plot_png(result: Cascade, *, width: int = 900, height: int | None = None, scale: float = 2.0) -> bytes:
    """PNG bytes of a chain's plots (as the pane draws them), ``width`` × ``height`` CSS pixels."""
    from bandsmith.app.plots.chain_plots import ChainPlots  # Qt: only when a plot is drawn
    from bandsmith.app.plots.render import ensure_qt_app, render_widget_png

    ensure_qt_app()
    w = ChainPlots(line_scale=scale)
    w.resize(width, height if height is not None else round(width * PLOT_ASPECT))
    w.show_cascade(result)
    return render_widget_png(w, scale=scale)


def _request_table(chain: Chain) -> str:
    s = chain.settings
    band = s.band
    edges = "ripple-band edges" if s.response == "chebyshev" else "−3 dB points"
    rows = [
        ["response", escape(response_title(s))],
        ["order", f"{s.order} (a band-pass of order {2 * s.order}, {s.order} stage{'s' if s.order != 1 else ''})"],
        ["band edges", escape(f"{format_value(s.f_low_hz, 'Hz')} to {format_value(s.f_high_hz, 'Hz')} ({edges})")],
        ["centre √(f_low·f_high), bandwidth", escape(f"{format_value(band.f0_hz, 'Hz')}, {format_value(band.bw_hz, 'Hz')} (Q {band.q_bp:.4g})")],
        ["centre gain", escape(f"{s.gain:.4g} ({format_value(20 * math.log10(s.gain), 'dB')})")],
        ["circuit", "auto: per stage the one needing the least GBW with sane parts" if s.circuit == "auto" else escape(s.circuit)],
        ["parts", escape("exact values" if s.series == "exact" else f"{s.series} series")],
    ]
    return html_table(None, rows, cls="kv", align="ll")


def _built_table(result: Cascade, ctx: ReportContext) -> str:
    o, a = result.overall, result.overall_actual
    header = ["figure", "ideal op-amp"] + ([escape(f"GBW {format_value(result.conditions.gbw_hz, 'Hz')}")] if a is not None else [])

    def row(name, fn):
        return [escape(name), escape(fn(o))] + ([escape(fn(a))] if a is not None else [])

    rows = [
        row("band edges", lambda x: f"{format_value(x.f_low_hz, 'Hz')} / {format_value(x.f_high_hz, 'Hz')} (at {x.edge_level_db:.3g} dB)"),
        row("−3 dB points", lambda x: f"{format_value(x.f_low_3db_hz, 'Hz')} / {format_value(x.f_high_3db_hz, 'Hz')}"),
        row("centre", lambda x: format_value(x.f0_hz, "Hz")),
        row("centre gain", lambda x: format_value(x.gain_center_db, "dB")),
        row("ripple", lambda x: format_value(x.ripple_db, "dB", digits=3)),
        row("peak gain", lambda x: f"{format_value(x.peak_gain_db, 'dB')} at {format_value(x.f_peak_hz, 'Hz')}"),
    ]
    dev = [escape("off the ideal response"), escape(f"{format_value(result.passband_max_dev_db, 'dB', digits=3)} in the band, {format_value(result.reference_max_dev_db, 'dB', digits=3)} over the sweep")]
    if a is not None:
        dev.append(escape(f"{format_value(result.actual_max_dev_db, 'dB', digits=3)} over the sweep"))
    rows.append(dev)
    return html_table(header, rows, cls="figures", align="lr")


def _needs_line(result: Cascade) -> str:
    gbws = [st.result.analysis.requirements.gbw_hz for st in result.stages if st.result is not None and st.result.analysis is not None]
    need = max(gbws) if gbws and all(g is not None for g in gbws) else None
    have = result.conditions.gbw_hz
    text = f"<b>GBW the most demanding stage needs:</b> {gbw_cell(need, have)}"
    if need is not None and have is not None:
        text += escape(f" — the session's op-amp ({format_value(have, 'Hz')}) is {'enough' if have >= need else 'not enough'}")
    return f"<p>{text}</p>"


def _stages_table(result: Cascade) -> str:
    """Each stage's target and how far its parts put it off (two tables keep an A4 column readable)."""
    rows = []
    for st in result.stages:
        p, e = st.plan, st.result.errors
        rows.append([
            f"<b>{st.index}</b>",
            escape(st.circuit),
            escape(format_value(p.f0_hz, "Hz")),
            escape(f"{p.q:.4g}"),
            escape(f"{p.gain:.4g}"),
            escape(signed(e["f0_pct"], "%", 2)),
            escape(signed(e["q_pct"], "%", 2)),
            escape(signed(e["gain_db"], "dB", 2)),
            escape(format_value(st.peak_internal_gain_db, "dB")),
        ])
    header = ["stage", "circuit", "f0", "Q", "gain", "f0 off", "Q off", "gain off", "peak so far"]
    return html_table(header, rows, cls="stages", align="LLr")


def _stage_needs_table(result: Cascade) -> str:
    have = result.conditions.gbw_hz
    rows = []
    for st in result.stages:
        r = st.result.analysis.requirements
        rows.append([
            f"<b>{st.index}</b>",
            escape(format_value(st.vin_v, "V")),
            gbw_cell(r.gbw_hz, have),
            escape(slew_text(r.slew_sine_v_per_us, unit=False)),
            escape(slew_text(r.slew_step_v_per_us, unit=False)),
            escape(format_value(r.vout_peak_v, "V")),
            escape(format_value(r.iout_peak_ma * 1e-3, "A", digits=3)),
        ])
    header = ["stage", "input", "GBW needed", "slew, sine", "slew, step", "output", "I out"]
    return html_table(header, rows, cls="needs", align="Lr")


def _parts_table(chain: Chain) -> str:
    rows = []
    for st in chain.stages:
        topo = get_topology(st.topology_id)
        for c in topo.components:
            v = float(st.values[c.ref])
            if not c.required and v <= 0:
                continue
            rows.append([
                str(st.index),
                f"<b>{escape(c.ref)}</b>",
                escape(format_value(v, PART_UNITS[c.kind], digits=4)),
                escape(format_rkm(v, c.kind)),
                escape(c.role),
            ])
    return html_table(["stage", "part", "value", "code", "role"], rows, cls="parts", align="rLrrl")


def _stage_warnings(result: Cascade) -> list[str]:
    out = []
    for st in result.stages:
        for w in st.warnings:
            out.append(f"stage {st.index}: {w}")
    return out


def _one_chain(chain: Chain, ctx: ReportContext) -> str:
    s = chain.settings
    out = [
        f'<h2 class="chain" id="chain-{escape(chain.id)}" style="page-break-before: always">'
        f"Chain {escape(chain.id)}: {escape(response_title(s))}, {s.order} stage{'s' if s.order != 1 else ''}</h2>"
    ]
    circuits = ", ".join(st.topology_id for st in chain.stages)
    out.append(f'<p class="meta">Stages in signal order: {escape(circuits)}. Measured from the parts kept in the session, with the '
               f"session's op-amp, input level and tolerances.</p>")
    if chain.notes:
        out.append(f'<p class="cand-notes">{escape(chain.notes)}</p>')
    out.append("<h3>Request</h3>\n" + _request_table(chain))
    try:
        result = chain_cascade(chain, conditions=chain_conditions(ctx.session))
    except InputError as exc:
        out.append(f'<p class="error">This chain cannot be measured: {escape(str(exc))}.</p>')
        return "\n".join(out)
    except Exception as exc:  # a chain the core cannot handle is said, never raised
        out.append(f'<p class="error">This chain cannot be measured ({escape(type(exc).__name__)}: {escape(str(exc))}).</p>')
        return "\n".join(out)
    out.append("<h3>As built</h3>\n" + _built_table(result, ctx))
    out.append(_needs_line(result))
    for w in list(result.warnings) + _stage_warnings(result):
        out.append(f'<p class="error">Warning: {escape(w)}.</p>')
    if ctx.images:
        width = ctx.image_width
        try:
            png = chain_plot_png(result, width=width)
        except Exception as exc:  # drawing must not cost the report its text
            out.append(f'<p class="error">The plots could not be drawn ({escape(type(exc).__name__)}: {escape(str(exc))}).</p>')
        else:
            out.append(png_img(png, width, f"Chain {chain.id}: the whole chain, its deviation from the ideal response and each stage", f"plot-chain-{chain.id}"))
            amp = "" if result.conditions.gbw_hz is None else f", dashed amber with the {format_value(result.conditions.gbw_hz, 'Hz', digits=3)} op-amp"
            out.append(
                f'<p class="note">Top: the chain built with an ideal op-amp (black){escape(amp)} and the ideal '
                f"{escape(response_title(s))} response (grey dashed); dotted lines mark the band edges and their level. "
                "Middle: built minus ideal, in dB. Bottom: each stage on its own, in its colour and line style.</p>"
            )
    out.append(
        "<h3>Stages</h3>\n" + _stages_table(result)
        + '\n<p class="note">Targets are each stage\'s own; "off" is how far its parts put them, with an ideal op-amp; the peak '
        "so far is the peak over frequency of the response from the chain's input to the stage's output.</p>"
    )
    out.append(
        "<h3>Amplifier needs per stage</h3>\n" + _stage_needs_table(result)
        + '\n<p class="note">Peaks, for the input that reaches each stage at its own f0 when the chain\'s input is a sine of '
        f"{escape(format_value(result.conditions.vin_v, 'V'))} peak; slew rates in V/µs, for that sine and for an input step."
        + (" ▲ marks a GBW above the session's op-amp." if result.conditions.gbw_hz is not None else "")
        + "</p>"
    )
    out.append("<h3>Parts</h3>\n" + _parts_table(chain))
    return "\n".join(out)


def section_chains(ctx: ReportContext) -> str:
    """Every chain kept in the session ("" when there is none)."""
    return kept_items_section(ctx, EXTRAS_KEY, saved_chains, _one_chain)


register_section("chains", section_chains, before="cautions")
