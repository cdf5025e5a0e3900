"""The design report of a session: HTML with the plots embedded, or PDF through Qt.

The report is made of sections, each built by a function ``(ReportContext) -> str`` that returns
an HTML fragment ("" leaves the section out). :data:`SECTIONS` lists them in order: title,
target, notes, candidates at a glance, plots, one section per candidate, cautions. A later
feature adds its own with :func:`register_section`, by default just before the cautions, which
always close the report: the tolerance spread, noise or a cascade chain would read their results
from ``context.session.extras`` or compute them through the core, without touching the others.
Such sections live in modules ``app/report/*_section.py``, which this module imports (in name
order) once it is defined; each registers its sections when imported.

The same HTML goes to the screen (a self-contained page, plots as PNG ``data:`` URIs) and to
paper (:func:`pdf_bytes` lays it out on A4 with Qt's ``QTextDocument`` and ``QPdfWriter``, the
plots on one page, each candidate starting a page, a footer with page numbers).

Every number comes from the core: :meth:`bandsmith.design.candidate.Candidate.analyze` under the session's
conditions for figures, needs and sensitivities, :mod:`bandsmith.app.plots.curves` (core sweeps and step
responses) for the plots. The report only formats (:func:`bandsmith.common.values.format_value`,
:func:`bandsmith.common.values.format_rkm`).
"""

from __future__ import annotations

import base64
import math
import os
from dataclasses import dataclass, field
from datetime import datetime
from html import escape
from pathlib import Path
from typing import Callable, Mapping, Sequence

from bandsmith.analysis.analyzer import Analysis
from bandsmith.design.candidate import Candidate, Conditions
from bandsmith.common.cautions import cautions_html
from bandsmith.circuits import get_topology
from bandsmith.design.designer import Spec, errors_of
from bandsmith.common.errors import InputError
from bandsmith.common.eseries import SERIES_NAMES, in_series
from bandsmith.analysis.figures import Figures
from bandsmith.files.session import CandidateEntry, Session, load_session
from bandsmith.common.values import format_rkm, format_value

from bandsmith.app.window.exporting import write_atomic

__all__ = [
    "CandidateReport",
    "ReportContext",
    "SectionBuilder",
    "SECTIONS",
    "register_section",
    "make_context",
    "build_report_html",
    "render_html",
    "pdf_bytes",
    "write_report",
    "write_report_html",
    "write_report_pdf",
    "report_file",
    "REPORT_SUFFIXES",
]

REPORT_SUFFIXES = (".html", ".htm", ".pdf")
_PART_UNITS = {"R": "Ω", "L": "H", "C": "F"}
_PLOT_CAPTIONS = {
    "magnitude": "Magnitude response, every active candidate overlaid.",
    "phase": "Phase response (unwrapped along the sweep).",
    "group_delay": "Group delay.",
    "step": "Response to a unit input step.",
}


# --------------------------------------------------------------------------- what a report holds


@dataclass(frozen=True, slots=True)
class CandidateReport:
    """One candidate of the session as the report shows it.

    ``index`` is its position in the session (it picks the candidate's colour, as in the window);
    ``analysis`` is None and ``error`` says why when the core could not analyse it.
    """

    entry: CandidateEntry
    index: int
    conditions: Conditions
    analysis: Analysis | None
    error: str | None = None

    @property
    def label(self) -> str:
        return self.entry.id

    @property
    def stable(self) -> bool:
        """Whether the response drawn (with the session's op-amp, else ideal) is stable."""
        a = self.analysis
        if a is None:
            return False
        flag = a.stable_actual if a.h_actual is not None else a.stable_ideal
        return flag is not False

    @property
    def plotted(self) -> bool:
        """Switched on, analysed and stable: drawn in the plots (an unstable response grows
        without bound and would flatten every other curve)."""
        return self.entry.enabled and self.analysis is not None and self.stable


@dataclass(frozen=True, slots=True)
class ReportContext:
    """Everything the section builders read.

    Parameters
    ----------
    session : Session
        The design.
    candidates : tuple of CandidateReport
        Every candidate, in session order.
    created : datetime
        When the report was made (shown on it).
    images : mapping
        PNG bytes of the plots by plot key (empty for a report without images).
    image_width : int
        Width (CSS pixels) the plots are shown at.
    source : str, optional
        The session file's name, shown on the report.
    """

    session: Session
    candidates: tuple[CandidateReport, ...]
    created: datetime
    images: Mapping[str, bytes] = field(default_factory=dict)
    image_width: int = 900
    source: str | None = None

    @property
    def active(self) -> tuple[CandidateReport, ...]:
        """The candidates drawn in the plots (see :attr:`CandidateReport.plotted`)."""
        return tuple(c for c in self.candidates if c.plotted)


SectionBuilder = Callable[[ReportContext], str]


def _analyse(session: Session) -> tuple[CandidateReport, ...]:
    out = []
    for i, entry in enumerate(session.candidates):
        cond = session.conditions_for(entry)
        try:
            analysis = Candidate(entry.topology_id, entry.values).analyze(cond)
            out.append(CandidateReport(entry, i, cond, analysis))
        except InputError as exc:
            out.append(CandidateReport(entry, i, cond, None, f"cannot be analysed: {exc}"))
        except Exception as exc:  # a design the core cannot handle: said in the report, never a crash
            out.append(CandidateReport(entry, i, cond, None, f"cannot be analysed ({type(exc).__name__}: {exc})"))
    return tuple(out)


def _plot_images(session: Session, candidates: Sequence[CandidateReport], *, width: int, height: int) -> dict[str, bytes]:
    from bandsmith.app.plots.curves import plot_inputs, response_plots
    from bandsmith.app.plots.render import ensure_qt_app, render_plots_png

    active = [c for c in candidates if c.plotted]
    if not active:
        return {}
    ensure_qt_app()
    inputs = plot_inputs([(c.label, c.index, c.analysis) for c in active])
    t = session.target
    plots = response_plots(inputs, target_f0_hz=t.f0_hz, target_gain_db=20.0 * math.log10(t.gain))
    return render_plots_png(plots, width=width, height=height)


def make_context(
    session: Session,
    *,
    images: bool = True,
    created: datetime | None = None,
    source: str | None = None,
    image_width: int = 900,
    image_aspect: float = 0.42,
) -> ReportContext:
    """Analyse every candidate (and render the plots when ``images``) for the section builders.

    The plots are ``image_width`` CSS pixels wide and ``image_aspect`` times that high.
    """
    cands = _analyse(session)
    imgs = _plot_images(session, cands, width=image_width, height=round(image_width * image_aspect)) if images else {}
    return ReportContext(
        session=session,
        candidates=cands,
        created=created if created is not None else datetime.now().astimezone(),
        images=imgs,
        image_width=image_width,
        source=source,
    )


# --------------------------------------------------------------------------- formatting


# Units that never take an SI prefix (no "mdB", no "m°").


def _slew(x: float | None, *, unit: bool = True) -> str:
    """A slew rate in V/µs, the unit op-amp datasheets use (never mV/µs)."""
    if x is None or not math.isfinite(x):
        return "—"
    return f"{x:.3g} V/µs" if unit else f"{x:.3g}"


def _gbw_cell(need_hz: float | None, have_hz: float | None) -> str:
    """The required GBW; marked when the session's op-amp falls short of it."""
    if need_hz is None:
        return '<span class="bad">none</span>'
    text = escape(format_value(need_hz, "Hz", digits=3))
    if have_hz is not None and have_hz < need_hz:
        return f'<span class="bad">{text} ▲</span>'
    return text


def _sens(x: float) -> str:
    """A sensitivity with three decimals and its sign; a rounded zero has no sign."""
    return "0.000" if abs(x) < 5e-4 else f"{x:+.3f}"


def _signed(x: float | None, unit: str, decimals: int = 3) -> str:
    """A deviation with its sign and fixed decimals ("+0.507 %", "-0.191 dB"); a rounded zero is "0.000"."""
    if x is None or not math.isfinite(x):
        return "—"
    if abs(x) < 0.5 * 10.0**-decimals:
        return f"{0.0:.{decimals}f} {unit}".strip()
    return f"{x:+.{decimals}f} {unit}".strip()


def _table(header: Sequence[str] | None, rows: Sequence[Sequence[str]], *, cls: str = "", align: str = "lr") -> str:
    """An HTML table; cells are HTML already (escape text before).

    ``align`` has one letter per column: ``l`` left, ``L`` left and never wrapped, ``r`` right and
    never wrapped (numbers); the last letter repeats.
    """
    head = "<thead><tr>" + "".join(f"<th>{h}</th>" for h in header) + "</tr></thead>\n" if header else ""
    body = []
    for r in rows:
        cells = []
        for j, c in enumerate(r):
            a = align[min(j, len(align) - 1)]
            side = "right" if a == "r" else "left"
            keep = ' style="white-space: nowrap"' if a in "rL" else ""
            cells.append(f'<td align="{side}"{keep}>{c}</td>')
        body.append("<tr>" + "".join(cells) + "</tr>")
    c = f' class="{cls}"' if cls else ""
    return f'<table{c} border="1" cellspacing="0" cellpadding="3">\n{head}' + "\n".join(body) + "\n</table>"


def _smallest_series(x: float) -> str:
    for name in SERIES_NAMES:
        if in_series(x, name):
            return name
    return "exact"


def _target_errors(fig: Figures, session: Session) -> dict[str, float]:
    """Deviation from the target (bandsmith.design.designer.errors_of): f0 and Q in %, gain in dB."""
    t = session.target
    return errors_of(fig, Spec(t.f0_hz, t.q, t.gain))


def _opamp_text(session: Session) -> str:
    o = session.opamp
    if o.gbw_hz is None:
        return f"ideal (A0 {o.a0:g} for the required-GBW search)"
    return f"GBW {format_value(o.gbw_hz, 'Hz')}, A0 {o.a0:g}"


# --------------------------------------------------------------------------- sections


def section_title(ctx: ReportContext) -> str:
    """Title, date and where the session came from."""
    when = ctx.created.strftime("%Y-%m-%d %H:%M")
    src = f" from <code>{escape(ctx.source)}</code>" if ctx.source else ""
    t = ctx.session.target
    return (
        f"<h1>Band-pass design report</h1>\n"
        f'<p class="meta">Made by Bandsmith on {escape(when)}{src}. Target: f0 {escape(format_value(t.f0_hz, "Hz"))}, '
        f"Q {escape(format_value(t.q))}, centre gain {escape(format_value(t.gain))}; {len(ctx.candidates)} candidate"
        f"{'s' if len(ctx.candidates) != 1 else ''}.</p>"
    )


def section_target(ctx: ReportContext) -> str:
    """The target and the conditions every candidate is analysed under."""
    s = ctx.session
    t, tol = s.target, s.tolerances
    rows = [
        ["centre frequency f0", format_value(t.f0_hz, "Hz")],
        ["Q", format_value(t.q)],
        ["bandwidth (f0 / Q)", format_value(Spec(t.f0_hz, t.q, t.gain).bw_hz, "Hz")],
        ["centre gain (magnitude)", f"{format_value(t.gain)} ({format_value(20 * math.log10(t.gain), 'dB')})"],
        ["input level (peak)", format_value(t.vin_v, "V")],
        ["standard series", escape(t.series)],
        ["op-amp", escape(_opamp_text(s))],
        ["load on the output", format_value(s.rload_ohm, "Ω") if s.rload_ohm is not None else "none"],
        ["required-GBW tolerances", f"f0 ±{100 * tol.f0:g} %, Q ±{100 * tol.q:g} %, gain ±{tol.gain_db:g} dB"],
    ]
    return "<h2>Target</h2>\n" + _table(None, [[escape(a), escape(b)] for a, b in rows], cls="kv", align="ll")


def section_summary(ctx: ReportContext) -> str:
    """All candidates side by side: achieved figures and the main amplifier needs."""
    if not ctx.candidates:
        return "<h2>Candidates</h2>\n<p>This session has no candidates.</p>"
    rows = []
    for c in ctx.candidates:
        name = f"<b>{escape(c.label)}</b>"
        if c.label != c.entry.topology_id:
            name += f" ({escape(c.entry.topology_id)})"
        if not c.entry.enabled:
            name += " <i>off</i>"
        if c.analysis is None:
            rows.append([name, escape(c.error or "")] + [""] * 6)
            continue
        a = c.analysis
        fig = (a.actual if a.actual is not None else a.ideal).item()
        r = a.requirements
        rows.append([
            name,
            escape(format_value(fig.f0_hz, "Hz")),
            escape(format_value(fig.q)),
            escape(format_value(fig.gain_center_db, "dB")),
            _gbw_cell(r.gbw_hz, ctx.session.opamp.gbw_hz),
            escape(_slew(r.slew_sine_v_per_us, unit=False)),
            escape(_slew(r.slew_step_v_per_us, unit=False)),
            escape(format_value(r.iout_peak_ma * 1e-3, "A", digits=3)),
        ])
    note = "with the session's op-amp" if ctx.session.opamp.gbw_hz is not None else "with an ideal op-amp"
    header = ["candidate", "f0", "Q", "gain", "GBW needed", "slew, sine (V/µs)", "slew, step (V/µs)", "I out (peak)"]
    return (
        "<h2>Candidates at a glance</h2>\n"
        + _table(header, rows, cls="summary", align="Lr")
        + f'\n<p class="note">Figures measured on the computed response {note}; needs for an input of '
        f'{escape(format_value(ctx.session.target.vin_v, "V"))} peak (slew for a sine at f0 and for an input step).'
        + (" ▲ marks a GBW above the session's op-amp." if ctx.session.opamp.gbw_hz is not None else "")
        + "</p>"
    )


def section_plots(ctx: ReportContext) -> str:
    """The response plots of the active candidates, as embedded PNG images."""
    if not ctx.images:
        return ""
    note = ("with the session's op-amp (" + escape(_opamp_text(ctx.session)) + ")") if ctx.session.opamp.gbw_hz is not None else "with an ideal op-amp"
    left_out = [c for c in ctx.candidates if c.entry.enabled and not c.plotted]
    why = ""
    if left_out:
        names = ", ".join(f"{c.label} ({'unstable' if c.analysis is not None else 'not analysed'})" for c in left_out)
        why = f" Left out: {escape(names)}."
    out = ['<h2 class="plots">Responses</h2>', f'<p class="note">Every active candidate in its own colour and line style, {note}.{why}</p>']
    from bandsmith.app.plots.curves import PLOT_KEYS

    for key in PLOT_KEYS:
        png = ctx.images.get(key)
        if not png:
            continue
        uri = "data:image/png;base64," + base64.b64encode(png).decode("ascii")
        cap = _PLOT_CAPTIONS.get(key, "")
        out.append(
            f'<p class="plot"><img src="{uri}" width="{ctx.image_width}" alt="{escape(cap)}" class="plot" id="plot-{key}"/></p>'
        )
    return "\n".join(out)


def _parts_table(c: CandidateReport) -> str:
    topo = get_topology(c.entry.topology_id)
    rows = []
    for comp in topo.components:
        v = float(c.entry.values[comp.ref])
        unit = _PART_UNITS.get(comp.kind, "")
        absent = v == 0 and not comp.required
        rows.append([
            f"<b>{escape(comp.ref)}</b>",
            escape(comp.role),
            escape(format_value(v, unit, digits=4)),
            "—" if absent else escape(format_rkm(v, comp.kind)),
            "—" if absent else escape(_smallest_series(v)),
        ])
    return _table(["part", "role", "value", "code", "series"], rows, cls="parts", align="Llrrr")


def _figures_table(c: CandidateReport, session: Session) -> str:
    a = c.analysis
    t = session.target
    ideal = a.ideal.item()
    actual = a.actual.item() if a.actual is not None else None
    e_ideal = _target_errors(a.ideal, session)
    e_act = _target_errors(a.actual, session) if a.actual is not None else None
    header = ["figure", "target", "ideal op-amp", "error"]
    if actual is not None:
        header += [escape(f"GBW {format_value(session.opamp.gbw_hz, 'Hz')}"), "error"]

    def row(name, target, key, unit, err_key=None, err_unit="", digits=4):
        r = [escape(name), escape(target), escape(format_value(getattr(ideal, key), unit, digits=digits))]
        r.append(escape(_signed(e_ideal[err_key], err_unit)) if err_key else "")
        if actual is not None:
            r.append(escape(format_value(getattr(actual, key), unit, digits=digits)))
            r.append(escape(_signed(e_act[err_key], err_unit)) if err_key else "")
        return r

    rows = [
        row("f0", format_value(t.f0_hz, "Hz"), "f0_hz", "Hz", "f0_pct", "%"),
        row("Q", format_value(t.q), "q", "", "q_pct", "%"),
        row("bandwidth", format_value(Spec(t.f0_hz, t.q, t.gain).bw_hz, "Hz"), "bw_hz", "Hz"),
        row("f_low", "", "f_low_hz", "Hz"),
        row("f_high", "", "f_high_hz", "Hz"),
        row("centre gain (V/V)", format_value(t.gain), "gain_center", ""),
        row("centre gain (dB)", format_value(20 * math.log10(t.gain), "dB"), "gain_center_db", "dB", "gain_db", "dB"),
        row("centre phase", "", "phase_center_deg", "°"),
    ]
    return _table(header, rows, cls="figures")


def _needs_table(c: CandidateReport, session: Session) -> str:
    r = c.analysis.requirements
    gbw = format_value(r.gbw_hz, "Hz", digits=4) if r.gbw_hz is not None else f"none: {r.gbw_reason}"
    have = session.opamp.gbw_hz
    verdict = ""
    if have is not None and r.gbw_hz is not None:
        if have >= r.gbw_hz:
            verdict = escape(f" — the session's op-amp ({format_value(have, 'Hz')}) is enough")
        else:
            verdict = f' — <span class="bad">the session\'s op-amp ({escape(format_value(have, "Hz"))}) is not enough</span>'
    rows = [
        ["required GBW", escape(gbw) + verdict],
        ["tolerances it holds", escape(f"f0 ±{100 * r.tolerances.f0:g} %, Q ±{100 * r.tolerances.q:g} %, gain ±{r.tolerances.gain_db:g} dB of the ideal figures, A0 {r.a0:g}")],
        ["rule of thumb", escape(format_value(r.gbw_rule_of_thumb_hz, "Hz", digits=3) + " (open-loop gain at f0 40 dB above the centre gain)")],
        ["output peak", escape(f"{format_value(r.vout_peak_v, 'V')} for {format_value(r.vin_v, 'V')} in")],
        ["slew rate, sine at f0", escape(_slew(r.slew_sine_v_per_us))],
        ["slew rate, input step", escape(_slew(r.slew_step_v_per_us))],
        ["output current", escape(format_value(r.iout_peak_ma * 1e-3, "A") + " peak at f0" + (f", load {format_value(session.rload_ohm, 'Ω')}" if session.rload_ohm else ""))],
    ]
    return _table(None, rows, cls="needs kv", align="ll")


def _sensitivity_table(c: CandidateReport) -> str:
    """Parts as columns, S(f0), S(Q), S(gain) as rows: compact for circuits with many parts."""
    s = c.analysis.sensitivity
    refs = list(s.get("f0", {}))
    rows = [[f"<b>{label}</b>"] + [_sens(float(s[k][ref])) for ref in refs] for k, label in (("f0", "S(f0)"), ("q", "S(Q)"), ("gain", "S(gain)"))]
    return _table(["figure"] + [escape(r) for r in refs], rows, cls="sens", align="Lr")


def section_candidates(ctx: ReportContext) -> str:
    """Each candidate: its parts, achieved figures and errors, amplifier needs and sensitivities."""
    out = []
    for c in ctx.candidates:
        topo = get_topology(c.entry.topology_id)
        e = c.entry
        flags = ["switched on" if e.enabled else "switched off (not in the plots)"]
        if e.pinned:
            flags.append("pinned")
        flags.append(f"parts snapped to {e.snap}" if e.snap else "exact part values")
        if e.fixed:
            flags.append("fixed: " + ", ".join(e.fixed))
        out.append(f'<h2 class="candidate" id="cand-{escape(e.id)}">{escape(e.id)}: {escape(topo.title)}</h2>')
        out.append(f'<p class="meta">{escape("; ".join(flags))}.</p>')
        if e.notes:
            out.append(f'<p class="cand-notes">{_paragraphs(e.notes)}</p>')
        out.append("<h3>Parts</h3>\n" + _parts_table(c))
        if c.analysis is None:
            out.append(f'<p class="error">This candidate {escape(c.error or "cannot be analysed")}.</p>')
            continue
        for w in getattr(c.analysis, "warnings", ()):
            out.append(f'<p class="error">Warning: {escape(w)}.</p>')
        out.append("<h3>Achieved figures</h3>\n" + _figures_table(c, ctx.session))
        out.append("<h3>Amplifier needs</h3>\n" + _needs_table(c, ctx.session))
        out.append(
            "<h3>Sensitivities</h3>\n"
            '<p class="note">S = ∂ln(figure)/∂ln(part): +1 means a 1 % rise of the part raises the figure by 1 %.</p>\n'
            + _sensitivity_table(c)
        )
    return "\n".join(out)


def _paragraphs(text: str) -> str:
    return "<br/>".join(escape(line) for line in text.splitlines())


def section_notes(ctx: ReportContext) -> str:
    """The session's notes, when it has any."""
    if not ctx.session.notes.strip():
        return ""
    return "<h2>Notes</h2>\n<p>" + _paragraphs(ctx.session.notes) + "</p>"


def section_cautions(ctx: ReportContext) -> str:
    """The cautions every report carries."""
    return cautions_html(heading_level=2)


SECTIONS: list[tuple[str, SectionBuilder]] = [
    ("title", section_title),
    ("target", section_target),
    ("notes", section_notes),
    ("summary", section_summary),
    ("plots", section_plots),
    ("candidates", section_candidates),
    # Extension point: later features register theirs here ("spread", "noise", "chains").
    ("cautions", section_cautions),
]


def register_section(name: str, builder: SectionBuilder, *, before: str = "cautions") -> None:
    """Add (or replace) a report section; new ones go before ``before`` (default: the cautions)."""
    for i, (n, _) in enumerate(SECTIONS):
        if n == name:
            SECTIONS[i] = (name, builder)
            return
    names = [n for n, _ in SECTIONS]
    at = names.index(before) if before in names else len(SECTIONS)
    SECTIONS.insert(at, (name, builder))


# --------------------------------------------------------------------------- the page

_CSS = """
body { font-family: 'DejaVu Sans', 'Segoe UI', Helvetica, Arial, sans-serif; color: #202124; }
h1 { font-size: 20pt; margin-bottom: 0.2em; }
h2 { font-size: 14pt; margin-top: 1.4em; border-bottom: 1px solid #c9ccd2; }
h2.candidate { color: #1b5e9e; }
h3 { font-size: 11pt; margin-top: 1em; margin-bottom: 0.3em; }
table { border-collapse: collapse; border-color: #c9ccd2; margin: 0.3em 0; }
th { background: #ebeef2; text-align: left; font-weight: 600; }
td, th { padding: 3px 8px; border: 1px solid #c9ccd2; }
p.meta, p.note { color: #555a60; font-size: 9pt; }
p.cand-notes { font-style: italic; font-size: 8.5pt; }
p.error, span.bad { color: #b0191e; font-weight: 600; }
img.plot { max-width: 100%; height: auto; }
ul.cautions li { margin-bottom: 0.4em; }
code { font-family: 'DejaVu Sans Mono', monospace; }
"""


# On screen the page is a centred column; on paper (QTextDocument) the page margins do that.
_SCREEN_CSS = "body { max-width: 960px; margin: 1.5em auto; padding: 0 1em; }\n"
# On paper the plots, each candidate and the cautions start a page of their own.
_PRINT_CSS = (
    "h2.plots, h2.candidate, h2.cautions-title { page-break-before: always; }\n"
    "h3 { margin-top: 0.7em; margin-bottom: 0.2em; }\np.note, p.meta { margin-top: 0.2em; margin-bottom: 0.3em; }\n"
    "p.plot { margin-top: 0; margin-bottom: 4px; }\n"
)


def render_html(ctx: ReportContext, *, for_print: bool = False) -> str:
    """The report page from a prepared context (every section of :data:`SECTIONS`).

    ``for_print`` leaves out the screen layout (a centred column with padding), which would
    narrow the text on a PDF page.
    """
    body = "\n\n".join(part for part in (builder(ctx) for _, builder in SECTIONS) if part)
    title = f"Bandsmith report: f0 {format_value(ctx.session.target.f0_hz, 'Hz')}, Q {format_value(ctx.session.target.q)}"
    css = _CSS + (_PRINT_CSS if for_print else _SCREEN_CSS)
    return (
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n"
        f"<title>{escape(title)}</title>\n<style>{css}</style>\n</head>\n<body>\n{body}\n</body>\n</html>\n"
    )


def build_report_html(
    session: Session,
    *,
    images: bool = True,
    created: datetime | None = None,
    source: str | None = None,
    image_width: int = 900,
) -> str:
    """The report of a session as one self-contained HTML page.

    Parameters
    ----------
    session : Session
        The design.
    images : bool
        Embed the plots as PNG ``data:`` URIs (needs Qt; a ``QApplication`` is made offscreen
        when none runs). False leaves the plots out.
    created : datetime, optional
        The date shown; now by default.
    source : str, optional
        The session file name shown on the report.
    image_width : int
        Width of the plots in CSS pixels.
    """
    return render_html(make_context(session, images=images, created=created, source=source, image_width=image_width))


# --------------------------------------------------------------------------- files


def report_file(path: str | os.PathLike) -> tuple[Path, str]:
    """Check an output path for a report; returns it and its kind (``html`` or ``pdf``).

    Raises InputError on the field ``output`` for an unknown suffix or a missing folder.
    """
    p = Path(path)
    suffix = p.suffix.lower()
    if suffix not in REPORT_SUFFIXES:
        raise InputError("output", f"{p.name!r} must end in .html or .pdf (got {suffix or 'no suffix'})")
    folder = p.parent if str(p.parent) else Path(".")
    try:
        if not folder.is_dir():
            raise InputError("output", f"the folder {folder} does not exist")
        if p.is_dir():
            raise InputError("output", f"{p} is a folder")
    except OSError as exc:  # a name too long for the file system, say
        raise InputError("output", f"cannot write there: {exc.strerror or exc}") from None
    return p, ("pdf" if suffix == ".pdf" else "html")


def write_report_html(session: Session, path: str | os.PathLike, **kw) -> Path:
    """Write the HTML report atomically; returns the path."""
    p = Path(path)
    write_atomic(p, build_report_html(session, **kw))
    return p


# A4 with 15 mm margins; the page is laid out at 96 CSS pixels per inch.
_PDF_MARGIN_MM = 15.0
_CSS_DPI = 96.0
_PDF_IMAGE_WIDTH = 660  # CSS pixels; the text column of A4 less 15 mm margins is 680
_PDF_DPI = 300


def pdf_bytes(html: str, *, title: str = "Bandsmith report") -> bytes:
    """Lay out report HTML on A4 pages with Qt (QTextDocument) and return the PDF file's bytes.

    Every page carries a footer with the page number. Needs a ``QGuiApplication`` (made
    offscreen when none runs).
    """
    from PySide6 import QtCore, QtGui

    from bandsmith.app.plots.render import ensure_qt_app

    ensure_qt_app()
    buf = QtCore.QBuffer()
    buf.open(QtCore.QIODevice.OpenModeFlag.WriteOnly)
    writer = QtGui.QPdfWriter(buf)
    writer.setTitle(title)
    writer.setCreator("Bandsmith")
    writer.setResolution(_PDF_DPI)
    writer.setPageLayout(
        QtGui.QPageLayout(
            QtGui.QPageSize(QtGui.QPageSize.PageSizeId.A4),
            QtGui.QPageLayout.Orientation.Portrait,
            QtCore.QMarginsF(_PDF_MARGIN_MM, _PDF_MARGIN_MM, _PDF_MARGIN_MM, _PDF_MARGIN_MM),
            QtGui.QPageLayout.Unit.Millimeter,
        )
    )
    paint_rect = writer.pageLayout().paintRectPixels(_PDF_DPI)
    scale = _PDF_DPI / _CSS_DPI
    page_w = paint_rect.width() / scale
    footer_h = 24.0
    page_h = paint_rect.height() / scale - footer_h

    doc = QtGui.QTextDocument()
    doc.setDocumentMargin(0)
    font = QtGui.QFont("DejaVu Sans")
    font.setPointSizeF(9.5)
    doc.setDefaultFont(font)
    doc.setHtml(html)
    doc.setPageSize(QtCore.QSizeF(page_w, page_h))
    pages = doc.pageCount()

    painter = QtGui.QPainter(writer)
    try:
        for i in range(pages):
            if i:
                writer.newPage()
            painter.save()
            painter.scale(scale, scale)
            painter.translate(0, -i * page_h)
            doc.drawContents(painter, QtCore.QRectF(0, i * page_h, page_w, page_h))
            painter.restore()
            painter.save()
            painter.scale(scale, scale)
            f = QtGui.QFont("DejaVu Sans")
            f.setPixelSize(10)  # CSS pixels: the painter is scaled to them
            painter.setFont(f)
            painter.setPen(QtGui.QColor("#555a60"))
            painter.drawText(
                QtCore.QRectF(0, page_h + 6, page_w, footer_h - 6),
                int(QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter),
                f"{title} — page {i + 1} of {pages}",
            )
            painter.restore()
    finally:
        painter.end()
    del writer
    data = bytes(buf.data())
    buf.close()
    return data


def write_report_pdf(session: Session, path: str | os.PathLike, *, created: datetime | None = None, source: str | None = None) -> Path:
    """Write the PDF report atomically; returns the path."""
    p = Path(path)
    # Four plots and their heading fill one A4 page.
    ctx = make_context(session, images=True, created=created, source=source, image_width=_PDF_IMAGE_WIDTH, image_aspect=0.32)
    html = render_html(ctx, for_print=True)
    write_atomic(p, pdf_bytes(html))
    return p


def write_report(
    session: Session | str | os.PathLike,
    path: str | os.PathLike,
    *,
    created: datetime | None = None,
    source: str | None = None,
) -> Path:
    """Write the report of a session (or of a session file) to ``path``: HTML or PDF by its suffix.

    ``source`` is the session's file name shown on the report (that of the file when a path is
    given).

    Raises
    ------
    InputError
        An unknown suffix or missing folder (field ``output``); a missing or damaged session file
        (:class:`bandsmith.files.session.SessionError`, field ``session``).
    """
    out, kind = report_file(path)
    if not isinstance(session, Session):
        source = source or Path(session).name
        session = load_session(session)
    if kind == "pdf":
        return write_report_pdf(session, out, created=created, source=source)
    return write_report_html(session, out, created=created, source=source)


# --------------------------------------------------------------------------- sections of later features


def _load_section_modules() -> None:
    """Import every ``app/report/*_section.py`` (in name order): each registers its own sections
    with :func:`register_section` when imported, so adding a section touches no other file."""
    import importlib
    import pkgutil

    for info in pkgutil.iter_modules([str(Path(__file__).parent)]):
        if info.name.endswith("_section"):
            importlib.import_module(f"{__package__}.{info.name}")


_load_section_modules()
