"""Report sections for the tolerance spread and the output noise (registered with bandsmith.app.report.sections).

Both are computed through the core from the session's own settings when the report is made
(results are never stored in a session):

- **Tolerance spread** (only when the session keeps spread settings, ``extras["spread"]``): the
  settings, then for every candidate in the plots its yield, the statistics of f0, Q and the
  centre gain over the trials (:func:`bandsmith.spread.tolerance.run_spread`), the worst-case extremes with
  the corners that give them, and the three histograms as one image.
- **Output noise** (the session's ``extras["noise"]``, else the defaults, said so): a table of
  every candidate's density at f0, input-referred density, integrated noise, SNR and largest
  contributor (:func:`bandsmith.analysis.noise.output_noise`), each candidate's sources, and one image of the
  candidates' output densities over frequency.

Both sections go before the cautions. Images are drawn only when the report has images (Qt is
imported only then); a candidate the core cannot handle gets a line saying why, never a crash.
"""

from __future__ import annotations

import math
from html import escape
from typing import Sequence

import numpy as np

from bandsmith.design.candidate import Candidate
from bandsmith.common.errors import InputError
from bandsmith.solver.mna import IDEAL
from bandsmith.analysis.noise import NoiseResult, output_noise
from bandsmith.spread.tolerance import Spread, run_spread
from bandsmith.common.values import format_value

from bandsmith.app.document.extras_settings import spread_for_circuit, stored_noise, stored_spread
from bandsmith.app.plots.gui_thread import on_gui_thread
from bandsmith.app.plots.spread_text import count_text, figure_text
from bandsmith.app.report.cells import html_table, png_img
from bandsmith.app.report.context import ReportContext
from bandsmith.app.report.sections import register_section

__all__ = ["section_spread", "section_noise", "histograms_png", "noise_density_png"]

_STATS = (("mean", "mean"), ("std", "std. dev."), ("min", "min"), ("p1", "p1"), ("p5", "p5"), ("p50", "median"), ("p95", "p95"), ("p99", "p99"), ("max", "max"))
_FIGS = (("f0_hz", "f0"), ("q", "Q"), ("gain_center_db", "centre gain"))
_VIEW_DECADES = 2.0


def _pct(x: float) -> str:
    return f"{100.0 * x:.4g}\u00a0%"  # never broken before the sign


def _corner_text(corner) -> str:
    if not corner:
        return "—"
    parts = []
    for name, d in corner.items():
        sign = "+" if d > 0 else "−"
        parts.append(f"{'GBW' if name == 'gbw' else name}\u00a0{sign}{_pct(abs(d))}")
    return ", ".join(parts)


# --------------------------------------------------------------------------- tolerance spread


def _spread_settings_table(s) -> str:
    kinds = ", ".join(f"{k} ±{_pct(s.tolerances[k])}" for k in ("R", "C", "L"))
    own = [f"{k} ±{_pct(v)}" for k, v in s.tolerances.items() if k not in ("R", "C", "L")]
    dist = "uniform: value·(1 + U(−p, p))" if s.dist == "uniform" else "normal: value·(1 + N(0, p/3)), p = 3σ"
    rows = [
        ["tolerance by kind", escape(kinds)],
        ["own tolerances", escape(", ".join(own) if own else "none")],
        ["op-amp GBW spread", escape(f"±{_pct(s.gbw_tol)}" if s.gbw_tol > 0 else "none")],
        ["distribution", escape(dist)],
        ["trials, seed", escape(f"{count_text(s.trials)}, seed {s.seed} (the same seed gives the same trials)")],
        ["yield window", escape(f"f0 ±{_pct(s.window_f0)}, Q ±{_pct(s.window_q)}, centre gain ±{s.window_gain_db:g} dB of nominal")],
    ]
    return html_table(None, rows, cls="kv", align="Ll")


def _spread_block(ctx: ReportContext, c, s) -> str:
    net = Candidate(c.entry.topology_id, c.entry.values).netlist
    opamp = c.conditions.opamp or IDEAL  # None: ideal
    eff, notes = spread_for_circuit(s, net, opamp)
    sp = run_spread(net, eff, opamp=opamp)
    passed = int(np.count_nonzero(sp.passed))
    out = [f'<h3 id="spread-{escape(c.label)}">{escape(c.label)}: yield {100.0 * sp.yield_fraction:.1f} %</h3>']
    model = "ideal op-amp" if opamp.ideal else f"op-amp GBW {format_value(opamp.gbw_hz, 'Hz', digits=3)}"
    line = f"{count_text(passed)} of {count_text(eff.trials)} trials within the window ({model})."
    if sp.failed_trials:
        line += f' <span class="bad">{count_text(sp.failed_trials)} unstable or without a band-pass peak (counted as failing).</span>'
    out.append(f'<p class="note">{escape(line) if not sp.failed_trials else line}</p>')
    for n in notes:
        out.append(f'<p class="note">{escape(n)}.</p>')
    nom = sp.nominal.item()
    stats = {key: sp.stats(key) for key, _ in _FIGS}
    rows = [["<b>nominal</b>"] + [escape(figure_text(key, float(getattr(nom, key)))) for key, _ in _FIGS]]
    for k, label in _STATS:
        rows.append([f"<b>{escape(label)}</b>"] + [escape(figure_text(key, stats[key][k], deviation=(k == "std"))) for key, _ in _FIGS])
    out.append(html_table(["over the trials"] + [escape(label) for _, label in _FIGS], rows, cls="spread-stats", align="Lr"))
    wc = sp.worst
    wrows = []
    for key, label in _FIGS:
        lo, hi = getattr(wc, key)
        c_lo, c_hi = wc.corners.get(key, ({}, {}))
        wrows.append([f"<b>{escape(label)}</b>", escape(figure_text(key, lo)), escape(figure_text(key, hi)), escape(_corner_text(c_lo)), escape(_corner_text(c_hi))])
    how = f"{wc.method}, {wc.corner_count} evaluated" if wc.corner_count else wc.method
    out.append(f'<p class="note">Worst case over the corners of the tolerance box ({escape(how)})'
               + (f"; {wc.unstable_corners} corner(s) unstable or without a peak" if wc.unstable_corners else "") + ".</p>")
    out.append(html_table(["figure", "lowest", "highest", "corner of the lowest", "corner of the highest"], wrows, cls="spread-worst", align="Lrrl"))
    if ctx.images:
        png = histograms_png(sp, c.index, width=ctx.image_width, height=round(ctx.image_width * 0.3))
        out.append(png_img(png, ctx.image_width, f"Histograms of f0, Q and centre gain of {c.label}", f"spread-hist-{c.label}"))
        out.append('<p class="note">Shaded: the yield window. Solid line: nominal. Dotted: the worst-case extremes.</p>')
    return "\n".join(out)


def section_spread(ctx: ReportContext) -> str:
    """The tolerance spread of every candidate in the plots (when the session keeps settings)."""
    st = stored_spread(ctx.session)
    if not st.saved:
        if st.problem:
            return f'<h2 class="spread" style="page-break-before: always">Tolerance spread</h2>\n<p class="error">{escape(st.problem)}.</p>'
        return ""
    s = st.settings
    out = ['<h2 class="spread" style="page-break-before: always">Tolerance spread</h2>', _spread_settings_table(s)]
    if not ctx.active:
        out.append("<p>No candidate is in the plots, so there is nothing to spread.</p>")
    for c in ctx.active:
        try:
            out.append(_spread_block(ctx, c, s))
        except InputError as exc:
            out.append(f'<h3>{escape(c.label)}</h3>\n<p class="error">The spread cannot be run: {escape(str(exc))}.</p>')
        except Exception as exc:  # reported, never raised into the report
            out.append(f'<h3>{escape(c.label)}</h3>\n<p class="error">The spread failed ({escape(type(exc).__name__)}: {escape(str(exc))}).</p>')
    return "\n".join(out)


# --------------------------------------------------------------------------- output noise


def _noise_of(c, s, vin: float) -> tuple[NoiseResult, NoiseResult]:
    net = Candidate(c.entry.topology_id, c.entry.values).netlist
    opamp = c.conditions.opamp or IDEAL  # None: ideal
    r = output_noise(net, s, opamp=opamp, vin_v=vin)
    lo = min(r.band_hz[0] / 1.5, r.f0_hz * 10.0**-_VIEW_DECADES)
    hi = max(r.band_hz[1] * 1.5, r.f0_hz * 10.0**_VIEW_DECADES)
    from dataclasses import replace

    view = output_noise(net, replace(s, band_hz=(lo, hi)), opamp=opamp, vin_v=vin)
    return r, view


def _shares(r: NoiseResult) -> list[tuple[str, str, float]]:
    total = r.total_v_rms**2
    out = [(src.name, src.kind, (r.integrated_v_rms[src.name] ** 2 / total) if total > 0 else 0.0) for src in r.sources]
    return sorted(out, key=lambda t: -t[2])


_KIND = {"resistor": "resistor, 4kTR", "winding": "winding, 4kT·RL", "en": "op-amp voltage noise", "in": "op-amp current noise"}


def section_noise(ctx: ReportContext) -> str:
    """Output noise of every candidate in the plots (the session's settings, else the defaults)."""
    if not ctx.active:
        return ""
    st = stored_noise(ctx.session)
    s = st.settings
    vin = ctx.session.target.vin_v
    band = "f0/10 to 10·f0" if s.band_hz is None else f"{format_value(s.band_hz[0], 'Hz')} to {format_value(s.band_hz[1], 'Hz')}"
    intro = (
        f"Op-amp en {format_value(s.en_v_per_rthz, 'V/√Hz')}, in {format_value(s.in_a_per_rthz, 'A/√Hz')} at each input; "
        f"resistors at {s.temperature_k:.5g} K (4kTR, Boltzmann constant exact in the SI); integrated over {band}; "
        f"SNR for a {format_value(vin, 'V')} peak sine at f0. Every source is white and uncorrelated (added as powers)."
    )
    out = ['<h2 class="noise" style="page-break-before: always">Output noise</h2>', f'<p class="note">{escape(intro)}</p>']
    if st.problem:
        out.append(f'<p class="error">{escape(st.problem)}.</p>')
    elif not st.saved:
        out.append('<p class="note">The session keeps no noise settings: these are the defaults (placeholders for a '
                   "general-purpose op-amp); give the datasheet's en and in in the Noise pane.</p>")
    results = []
    rows = []
    for c in ctx.active:
        try:
            r, view = _noise_of(c, s, vin)
        except InputError as exc:
            rows.append([f"<b>{escape(c.label)}</b>", f'<span class="bad">{escape(str(exc))}</span>', "", "", "", ""])
            continue
        except Exception as exc:  # reported, never raised into the report
            rows.append([f"<b>{escape(c.label)}</b>", f'<span class="bad">failed ({escape(type(exc).__name__)})</span>', "", "", "", ""])
            continue
        results.append((c, r, view))
        top = [f"{n}\u00a0({100 * sh:.0f}\u00a0%)" for n, _k, sh in _shares(r)[:2] if sh > 0]
        gain = abs(r.gain_center)
        rows.append([
            f"<b>{escape(c.label)}</b>",
            escape(format_value(r.total_at_f0_v_rthz, "V/√Hz")),
            escape(format_value(r.total_at_f0_v_rthz / gain, "V/√Hz")) if gain > 0 else "—",
            escape(format_value(r.total_v_rms, "V") + " rms"),
            escape("∞" if not math.isfinite(r.snr_db) else f"{r.snr_db:.1f} dB"),
            escape(", ".join(top) if top else "none"),
        ])
    out.append(html_table(["candidate", "density at f0", "input-referred at f0", "integrated", "SNR", "largest (share of power)"], rows, cls="noise-summary", align="Lrrrrl"))
    if ctx.images and results:
        png = noise_density_png([(c.label, c.index, view) for c, _r, view in results], width=ctx.image_width, height=round(ctx.image_width * 0.38))
        out.append(png_img(png, ctx.image_width, "Output noise density of every candidate", "noise-density"))
    for c, r, _view in results:
        srows = []
        for name, kind, share in _shares(r):
            srows.append([
                f"<b>{escape(name)}</b>",
                escape(_KIND.get(kind, kind)),
                escape(format_value(r.at_f0_v_rthz[name], "V/√Hz")),
                escape(format_value(r.integrated_v_rms[name], "V") + " rms"),
                escape(f"{100 * share:.1f} %"),
            ])
        band = f"{format_value(r.band_hz[0], 'Hz')} to {format_value(r.band_hz[1], 'Hz')}"
        out.append(f'<h3 id="noise-{escape(c.label)}">{escape(c.label)}: sources, largest first</h3>')
        out.append(f'<p class="note">Integrated over {escape(band)}; share of the output noise power.</p>')
        out.append(html_table(["source", "kind", "at f0", "integrated", "share"], srows, cls="noise-sources", align="LLr"))
    return "\n".join(out)


# --------------------------------------------------------------------------- images


@on_gui_thread
def histograms_png(sp: Spread, index: int, *, width: int = 900, height: int = 270) -> bytes:
    """PNG of the three histograms (f0, Q, centre gain) of a spread, in the candidate's colour."""
    from bandsmith.app.plots.render import ensure_qt_app, render_widget_png

    ensure_qt_app()
    from PySide6 import QtWidgets

    from bandsmith.app.plots.histogram import HISTOGRAM_FIGURES, FigureHistogram, window_of
    from bandsmith.app.plots.palette import apply_plot_theme, candidate_style

    apply_plot_theme()
    box = QtWidgets.QWidget()
    box.setStyleSheet("background: white;")
    lay = QtWidgets.QHBoxLayout(box)
    lay.setContentsMargins(2, 2, 2, 2)
    lay.setSpacing(4)
    nom = sp.nominal.item()
    colour = candidate_style(index).colour
    for key, title, unit in HISTOGRAM_FIGURES:
        h = FigureHistogram(key, title, unit, box)
        n0 = float(getattr(nom, key))
        h.show_data(getattr(sp, key)[sp.measured], n0, window_of(sp.settings, key, n0), getattr(sp.worst, key), colour)
        lay.addWidget(h)
    box.resize(width, height)
    return render_widget_png(box)


@on_gui_thread
def noise_density_png(items: Sequence[tuple[str, int, NoiseResult]], *, width: int = 900, height: int = 340) -> bytes:
    """PNG of the output noise density (V/√Hz, log-log) of several candidates ``(label, index, result)``."""
    from bandsmith.app.plots.axes import FrequencyAxis, LogAxis
    from bandsmith.app.plots.render import INK, PlotImageWidget, ensure_qt_app, render_widget_png

    ensure_qt_app()
    import pyqtgraph as pg

    from bandsmith.app.plots.palette import apply_plot_theme, candidate_style

    apply_plot_theme()
    item = pg.PlotItem(axisItems={"bottom": FrequencyAxis("bottom"), "left": LogAxis("left")})
    item.setTitle("Output noise density", color=INK, size="11pt")
    item.setLogMode(x=True, y=True)
    item.showGrid(x=True, y=True, alpha=0.25)
    item.setContentsMargins(4, 4, 26, 0)
    item.setLabel("bottom", "Frequency (Hz)", color=INK)
    item.setLabel("left", "Output density (V/√Hz)", color=INK)
    legend = pg.LegendItem(colCount=max(1, min(len(items), 5)), labelTextColor=INK, labelTextSize="9pt", horSpacing=24, verSpacing=-4)
    legend.layout.setContentsMargins(40, 0, 0, 0)
    for label, index, r in items:
        st = candidate_style(index)
        y = np.where(r.density_v_rthz > 0, r.density_v_rthz, np.nan)
        curve = item.plot(r.f_hz, y, pen=pg.mkPen(st.colour, width=4.0, style=st.pen_style), connect="finite")
        legend.addItem(curve, label)
    w = PlotImageWidget(item, legend)
    w.resize(width, height)
    return render_widget_png(w)


register_section("spread", section_spread, before="cautions")
register_section("noise", section_noise, before="cautions")
