"""Report section "Measured against the design": every bench measurement kept in the session.

For each measurement of ``extras["measurements"]`` (:func:`bandsmith.bench.measured.session_measurements`),
in the order kept:

- where it came from: file name, the first characters of its SHA-256, points, range, phase or not,
  the candidate it was built from, and what was guessed while reading it;
- when the report has images, the measured points over the candidate's predicted magnitude (and
  phase, where measured) with the session's op-amp, and the fitted model dashed
  (:mod:`bandsmith.app.plots.render` helpers, drawn offscreen);
- f0, Q, bandwidth and centre gain: measured (:mod:`bandsmith.bench.readoff`), design and fitted;
- the diagnosis in words and the residuals (:func:`bandsmith.bench.diagnose.diagnose`, default ranges, the
  session's op-amp, as the Measured pane does);
- the one-part ranking table, and every part fitted together.

A measurement whose candidate is not in the session (or cannot be analysed) keeps its read-off
figures and says why there is no diagnosis; a damaged measurements section is said, never raised.
The section goes before the cautions (:func:`bandsmith.app.report.sections.register_section`).
"""

from __future__ import annotations

import math
from html import escape
from typing import Sequence

import numpy as np

from bandsmith.common.units import PART_UNITS
from bandsmith.analysis.analyzer import sweep, transfer_function
from bandsmith.design.candidate import Candidate
from bandsmith.common.errors import InputError
from bandsmith.bench.measured import Measurement, session_measurements
from bandsmith.bench.readoff import read_off_measurement
from bandsmith.common.values import format_value

from bandsmith.app.plots.gui_thread import on_gui_thread
from bandsmith.app.report.cells import png_img
from bandsmith.app.report.context import CandidateReport, ReportContext
from bandsmith.app.report.sections import register_section
from bandsmith.app.plots.status import INK, MUTED

__all__ = ["section_measured", "measured_plot_pngs", "MEASURED_KEYS"]

MEASURED_KEYS = ("magnitude", "phase")
_POINTS_COLOUR = MUTED
_FIT_COLOUR = INK
_ASPECT = 0.28
_LEGEND_ROW_PX = 28
_FINE_POINTS = 600


def _num(x, unit: str = "", digits: int = 4) -> str:
    if x is None or not math.isfinite(x):
        return "—"
    if unit == "dB":
        return f"{x:+.{max(digits - 2, 1)}f} dB"
    return format_value(float(x), unit, digits=digits)


def _table(header: Sequence[str], rows: Sequence[Sequence[str]], *, cls: str, left: int = 1) -> str:
    """Cells are HTML already; the first ``left`` columns are text (left), the rest numbers (right).
    The cells are short and never wrap."""
    nowrap = ' style="white-space: nowrap; padding: 2px 5px"'
    head = "<thead><tr>" + "".join(f"<th{nowrap}>{h}</th>" for h in header) + "</tr></thead>\n"
    body = []
    for r in rows:
        cells = [f'<td align="{"left" if j < left else "right"}"{nowrap}>{c}</td>' for j, c in enumerate(r)]
        body.append("<tr>" + "".join(cells) + "</tr>")
    return f'<table class="{cls}" border="1" cellspacing="0" cellpadding="3">\n{head}' + "\n".join(body) + "\n</table>"


# --------------------------------------------------------------------------- curves


def _opamp_kw(c: CandidateReport) -> dict:
    op = c.conditions.opamp
    return {"opamp": op} if op is not None else {}


def _curves(m: Measurement, c: CandidateReport, fitted_values) -> dict:
    """Fine grid, predicted and fitted magnitude/phase, the measured phase on the predicted branch."""
    lo, hi = float(m.f_hz[0]), float(m.f_hz[-1])
    f = np.geomspace(lo / 1.15, hi * 1.15, _FINE_POINTS)
    a = c.analysis
    h = a.h_actual if a.h_actual is not None else a.h_ideal
    pred = sweep(h, f)
    out = {"f": f, "pred_db": pred.magnitude_db, "pred_deg": pred.phase_deg, "fit_db": None, "fit_deg": None}
    if fitted_values is not None:
        fit = sweep(transfer_function(Candidate(c.entry.topology_id, fitted_values).netlist, **_opamp_kw(c)), f)
        out["fit_db"] = fit.magnitude_db
        # On the predicted curve's branch (both start far below the band, where they agree).
        out["fit_deg"] = fit.phase_deg - 360.0 * np.round((fit.phase_deg[0] - pred.phase_deg[0]) / 360.0)
    ph = m.phase_unwrapped_deg
    if ph is not None:
        ref = np.interp(np.log(m.f_hz), np.log(f), pred.phase_deg)
        ph = ph - 360.0 * np.round(np.median(ph - ref) / 360.0)
    out["meas_deg"] = ph
    return out


@on_gui_thread
def measured_plot_pngs(m: Measurement, c: CandidateReport, fitted_values=None, *, width: int = 900, height: int = 320) -> dict[str, bytes]:
    """PNG images of the measured points over the candidate's predicted response.

    ``magnitude`` always, ``phase`` when the measurement has phase; the fitted model (part values
    ``fitted_values``) dashed when given. Drawn with :func:`bandsmith.app.plots.render.build_plot_widget`.
    """
    from PySide6 import QtCore, QtGui

    import pyqtgraph as pg

    from bandsmith.app.plots.curves import Curve, PlotData
    from bandsmith.app.plots.palette import candidate_style
    from bandsmith.app.plots.render import build_plot_widget, ensure_qt_app, render_widget_png

    ensure_qt_app()
    cur = _curves(m, c, fitted_values)
    f = cur["f"]
    label = f"{c.label} predicted"
    out = {}
    keys = [k for k in MEASURED_KEYS if k == "magnitude" or cur["meas_deg"] is not None]
    for key in keys:
        mag = key == "magnitude"
        curves = [Curve(label, c.index, f, cur["pred_db"] if mag else cur["pred_deg"])]
        fit = cur["fit_db"] if mag else cur["fit_deg"]
        if fit is not None:
            curves.append(Curve(f"{c.label} fitted", c.index, f, fit))
        curves.append(Curve(f"measured ({m.points} points)", c.index, m.f_hz, m.mag_db if mag else cur["meas_deg"]))
        plot = PlotData(
            key,
            f"Measured {'magnitude' if mag else 'phase'}: {m.source}",
            "Frequency", "Hz", "Gain" if mag else "Phase", "dB" if mag else "°", True, tuple(curves),
        )
        scale = 2.0
        # An image without its legend row is that much lower, so the plots keep one size.
        h = height if key == keys[-1] else max(120, height - _LEGEND_ROW_PX)
        w = build_plot_widget(plot, width=width, height=h, line_width=2.0 * scale)
        items = w.getPlotItem().listDataItems()
        # The prediction solid in the candidate's colour (its line style may be dashed, like the fit).
        items[0].setPen(pg.mkPen(QtGui.QColor(candidate_style(c.index).colour), width=2.0 * scale))
        if fit is not None:
            items[1].setPen(pg.mkPen(_FIT_COLOUR, width=1.6 * scale, style=QtCore.Qt.PenStyle.DashLine))
            items[1].setZValue(2)
        # The points behind the lines, pale enough for the lines to show through a dense sweep.
        points = items[-1]
        colour = QtGui.QColor(_POINTS_COLOUR)
        colour.setAlpha(110)
        points.setPen(None)
        points.setSymbol("o")
        points.setSymbolSize(2.6 * scale)
        points.setSymbolPen(None)
        points.setSymbolBrush(pg.mkBrush(colour))
        points.setZValue(-1)
        w.getPlotItem().setXRange(math.log10(f[0]), math.log10(f[-1]), padding=0.0)
        # The images stand one above the other under a heading naming the file: no titles,
        # and one legend, under the last.
        w.getPlotItem().setTitle(None)
        if key != keys[-1]:
            w.legend.hide()
            w.ci.layout.setRowFixedHeight(1, 0)
        out[key] = render_widget_png(w, scale=scale)
    return out


# --------------------------------------------------------------------------- one measurement


def _source_line(m: Measurement, cid: str | None) -> str:
    phase = "magnitude and phase" if m.has_phase else "magnitude only"
    built = f"built from candidate <b>{escape(cid)}</b>" if cid else "no candidate named"
    return (
        f'<p class="meta">File <code>{escape(m.source)}</code> (SHA-256 {escape(m.sha256[:12])}…): {m.points} points, '
        f"{escape(_num(float(m.f_hz[0]), 'Hz', 3))} to {escape(_num(float(m.f_hz[-1]), 'Hz', 3))}, {phase}; {built}.</p>"
    )


def _figures_table(measured: dict, design: dict | None, fitted: dict | None) -> str:
    cols = [("measured", measured)] + ([("design", design)] if design is not None else []) + ([("fitted", fitted)] if fitted is not None else [])
    rows = []
    for name, key, unit, digits in (
        ("f0", "f0_hz", "Hz", 5),
        ("Q", "q", "", 4),
        ("bandwidth", "bw_hz", "Hz", 4),
        ("centre gain", "gain_center_db", "dB", 4),
    ):
        rows.append([escape(name)] + [escape(_num(fig.get(key), unit, digits)) for _, fig in cols])
    return _table(["figure"] + [n for n, _ in cols], rows, cls="measured-figures")


def _ranking_table(d) -> str:
    rows = []
    for a in d.alone:
        se = f" ± {a.change_se_pct:.2g}" if math.isfinite(a.change_se_pct) else ""
        rows.append([
            f"<b>{escape(a.part)}</b>",
            escape(f"{a.change_pct:+.2f}{se} %"),
            escape(f"{a.residual_db_rms:.3g} dB"),
            escape(f"{100 * a.explained:.0f} %"),
            "at the edge" if a.at_bound else "",
        ])
    return ('<p><b>Each part alone</b> <span style="color: #555a60; font-size: 9pt">(the others at their design values): the change it needs, what '
            "it leaves unexplained, and its share of what every part together explains</span></p>\n") + _table(["part", "change", "leaves (rms)", "explains", "range"], rows, cls="ranking")


def _fitted_table(d) -> str:
    topo = Candidate(d.topology_id, d.nominal).topology
    rows = []
    for ref in d.parts:
        unit = PART_UNITS.get(topo.component(ref).kind, "")
        rows.append([
            f"<b>{escape(ref)}</b>",
            escape(_num(d.nominal[ref], unit)),
            escape(_num(d.fitted[ref], unit)),
            escape(f"{d.change_pct[ref]:+.2f} %"),
            escape(f"±{100 * d.ranges[ref]:g} %") + (" (edge)" if ref in d.at_bound else ""),
        ])
    return _table(["part", "design", "fitted", "change", "range"], rows, cls="fitted")


def _residuals(d) -> str:
    def both(db, deg):
        text = f"{db:.3g} dB"
        if math.isfinite(deg):
            text += f" and {deg:.3g}°"
        return text

    how = "magnitude and phase" if d.mode == "complex" else "magnitude"
    return (
        f'<p class="note">Fitted on the {how} (SciPy least squares, each part within its range). The design misses the '
        f"points by {escape(both(d.nominal_residual_db_rms, d.nominal_residual_phase_deg_rms))} rms; the fit by "
        f"{escape(both(d.residual_db_rms, d.residual_phase_deg_rms))} rms.</p>"
    )


def _one(ctx: ReportContext, k: int, m: Measurement, cid: str | None) -> str:
    # On paper each measurement after the first starts a page (QTextDocument reads page-break-before).
    brk = ' style="page-break-before: always"' if k else ""
    out = [f'<h3 id="measured-{k + 1}"{brk}>{k + 1}. {escape(m.source)}</h3>', _source_line(m, cid)]
    cand = next((c for c in ctx.candidates if c.entry.id == cid), None) if cid else None
    read = read_off_measurement(m).to_json()
    why = None
    if cand is None:
        why = "its candidate is not in this session" if cid else "it names no candidate of this session"
    elif cand.analysis is None:
        why = f"its candidate {cand.error or 'cannot be analysed'}"
    if why is not None:
        out.append(_figures_table(read, None, None))
        out.append(f'<p class="note">No diagnosis: {escape(why)}.</p>')
        return "\n".join(out)

    from bandsmith.bench.diagnose import diagnose  # scipy.optimize: only for reports that need it

    try:
        d = diagnose(Candidate(cand.entry.topology_id, cand.entry.values), m, opamp=cand.conditions.opamp)
    except InputError as exc:
        d = None
        problem = exc.reason
    if ctx.images:
        width = ctx.image_width
        try:
            pngs = measured_plot_pngs(m, cand, d.fitted_values if d is not None else None, width=width, height=round(width * _ASPECT))
        except Exception as exc:  # drawing must not cost the report its text
            pngs = {}
            out.append(f'<p class="error">The plots could not be drawn ({escape(type(exc).__name__)}: {escape(str(exc))}).</p>')
        for key in MEASURED_KEYS:
            if key in pngs:
                alt = f"Measured {key} of {m.source} over the predicted response of {cand.label}"
                out.append(png_img(pngs[key], width, alt, f"measured-{k + 1}-{key}", cls="measured"))
        if pngs:
            op = cand.conditions.opamp
            with_op = f"with the session's op-amp (GBW {_num(op.gbw_hz, 'Hz', 3)})" if op is not None else "with an ideal op-amp"
            out.append(
                f'<p class="note">Dots: the measured points. Solid line: {escape(cand.label)} as designed, {escape(with_op)}; '
                "dashed grey line: the same circuit with the fitted part values.</p>"
            )
    if d is None:
        out.append(_figures_table(read, cand.analysis.ideal.to_json() if cand.analysis.actual is None else cand.analysis.actual.to_json(), None))
        out.append(f'<p class="note">No diagnosis: {escape(problem)}.</p>')
        return "\n".join(out)
    out.append(f'<p class="diagnosis"><b>Diagnosis:</b> {escape(d.summary)}</p>')
    out.append(_residuals(d))
    # The figures and the all-parts fit side by side (one page per measurement on paper).
    cell = 'valign="top" style="border: none; padding: 0 18px 0 0"'
    out.append(
        '<table class="layout" border="0" cellspacing="0" cellpadding="0">'
        f'<tr><td {cell}><b>Figures</b> (bandwidth at −3 dB)</td><td {cell}><b>Every part fitted together</b></td></tr>'
        f"<tr><td {cell}>{_figures_table(d.measured.to_json(), d.design_figures, d.fitted_figures)}</td>"
        f"<td {cell}>{_fitted_table(d)}</td></tr>"
        "</table>"
    )
    out.append(_ranking_table(d))
    notes = list(m.notes) + list(d.notes)
    if notes:
        out.append('<p class="note">' + "<br/>".join(escape(n[:1].upper() + n[1:]) for n in notes) + "</p>")
    return "\n".join(out)


def section_measured(ctx: ReportContext) -> str:
    """Every measurement kept in the session with its overlay, figures and diagnosis ("" if none)."""
    try:
        stored = session_measurements(ctx.session)
    except InputError as exc:
        return f'<h2 class="measured">Measured against the design</h2>\n<p class="error">The session\'s measurements cannot be used: {escape(exc.reason)}.</p>'
    if not stored:
        return ""
    out = [
        '<h2 class="measured" style="page-break-before: always">Measured against the design</h2>',
        '<p class="note">Bench measurements kept in the session, each against the candidate it was built from; '
        "f0, Q and the centre gain are read off the points (interpolated between them).</p>",
    ]
    for k, (m, cid) in enumerate(stored):
        try:
            out.append(_one(ctx, k, m, cid))
        except Exception as exc:  # one measurement the core cannot handle: said, the others still shown
            out.append(f'<h3>{k + 1}. {escape(m.source)}</h3>\n<p class="error">Cannot be shown ({escape(type(exc).__name__)}: {escape(str(exc))}).</p>')
    return "\n".join(out)


register_section("measured", section_measured, before="cautions")
