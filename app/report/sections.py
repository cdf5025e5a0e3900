"""The sections every report has, and the list later sections register into.

A section is a function ``(ReportContext) -> str`` returning an HTML fragment ("" leaves it out).
:data:`SECTIONS` lists them in order: title, target, notes, candidates at a glance, plots, one
section per candidate, cautions. A later feature adds its own with :func:`register_section`, by
default just before the cautions, which always close the report: the tolerance spread, noise or
a cascade chain read their results from ``context.session.extras`` or compute them through the
core, without touching the others. Such sections live in modules ``app/report/*_section.py``,
which this module imports (in name order) once the list exists; each registers its sections when
imported, so adding a section touches no other file.

Every number comes from the core (:mod:`bandsmith.app.report.context`); the sections only format
(:func:`bandsmith.common.values.format_value`, :func:`bandsmith.common.values.format_rkm`).
"""

from __future__ import annotations

import math
from html import escape
from pathlib import Path

from bandsmith.common.units import part_unit
from bandsmith.circuits import get_topology
from bandsmith.common.cautions import cautions_html
from bandsmith.common.values import format_rkm, format_value
from bandsmith.analysis.figures import Figures
from bandsmith.design.standard import errors_of
from bandsmith.files.session import Session

from bandsmith.app.report.cells import gbw_cell, html_table, paragraphs, png_img, sensitivity_text, signed, slew_text, smallest_series
from bandsmith.app.report.context import CandidateReport, ReportContext, SectionBuilder

__all__ = [
    "SECTIONS",
    "register_section",
    "section_title",
    "section_target",
    "section_notes",
    "section_summary",
    "section_plots",
    "section_candidates",
    "section_cautions",
    "kept_items_section",
]

_PLOT_CAPTIONS = {
    "magnitude": "Magnitude response, every active candidate overlaid.",
    "phase": "Phase response (unwrapped along the sweep).",
    "group_delay": "Group delay.",
    "step": "Response to a unit input step.",
}


def _target_errors(fig: Figures, session: Session) -> dict[str, float]:
    """Deviation from the target (bandsmith.design.standard.errors_of): f0 and Q in %, gain in dB."""
    return errors_of(fig, session.target.spec)


def _opamp_text(session: Session) -> str:
    o = session.opamp
    if o.gbw_hz is None:
        return f"ideal (A0 {o.a0:g} for the required-GBW search)"
    return f"GBW {format_value(o.gbw_hz, 'Hz')}, A0 {o.a0:g}"


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
        ["bandwidth (f0 / Q)", format_value(t.spec.bw_hz, "Hz")],
        ["centre gain (magnitude)", f"{format_value(t.gain)} ({format_value(20 * math.log10(t.gain), 'dB')})"],
        ["input level (peak)", format_value(t.vin_v, "V")],
        ["standard series", escape(t.series)],
        ["op-amp", escape(_opamp_text(s))],
        ["load on the output", format_value(s.rload_ohm, "Ω") if s.rload_ohm is not None else "none"],
        ["source resistance", format_value(s.rsource_ohm, "Ω") + " in series with the input (in every figure)" if s.rsource_ohm else "none (an ideal source)"],
        ["required-GBW tolerances", f"f0 ±{100 * tol.f0:g} %, Q ±{100 * tol.q:g} %, gain ±{tol.gain_db:g} dB"],
    ]
    return "<h2>Target</h2>\n" + html_table(None, [[escape(a), escape(b)] for a, b in rows], cls="kv", align="ll")


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
            gbw_cell(r.gbw_hz, ctx.session.opamp.gbw_hz),
            escape(slew_text(r.slew_sine_v_per_us, unit=False)),
            escape(slew_text(r.slew_step_v_per_us, unit=False)),
            escape(format_value(r.iout_peak_ma * 1e-3, "A", digits=3)),
        ])
    note = "with the session's op-amp" if ctx.session.opamp.gbw_hz is not None else "with an ideal op-amp"
    header = ["candidate", "f0", "Q", "gain", "GBW needed", "slew, sine (V/µs)", "slew, step (V/µs)", "I out (peak)"]
    return (
        "<h2>Candidates at a glance</h2>\n"
        + html_table(header, rows, cls="summary", align="Lr")
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
        out.append(png_img(png, ctx.image_width, _PLOT_CAPTIONS.get(key, ""), f"plot-{key}"))
    return "\n".join(out)


def _parts_table(c: CandidateReport) -> str:
    topo = get_topology(c.entry.topology_id)
    rows = []
    for comp in topo.components:
        v = float(c.entry.values[comp.ref])
        unit = part_unit(comp.kind)
        absent = v == 0 and not comp.required
        rows.append([
            f"<b>{escape(comp.ref)}</b>",
            escape(comp.role),
            escape(format_value(v, unit, digits=4)),
            "—" if absent else escape(format_rkm(v, comp.kind)),
            "—" if absent else escape(smallest_series(v)),
        ])
    return html_table(["part", "role", "value", "code", "series"], rows, cls="parts", align="Llrrr")


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
        r.append(escape(signed(e_ideal[err_key], err_unit)) if err_key else "")
        if actual is not None:
            r.append(escape(format_value(getattr(actual, key), unit, digits=digits)))
            r.append(escape(signed(e_act[err_key], err_unit)) if err_key else "")
        return r

    rows = [
        row("f0", format_value(t.f0_hz, "Hz"), "f0_hz", "Hz", "f0_pct", "%"),
        row("Q", format_value(t.q), "q", "", "q_pct", "%"),
        row("bandwidth", format_value(t.spec.bw_hz, "Hz"), "bw_hz", "Hz"),
        row("f_low", "", "f_low_hz", "Hz"),
        row("f_high", "", "f_high_hz", "Hz"),
        row("centre gain (V/V)", format_value(t.gain), "gain_center", ""),
        row("centre gain (dB)", format_value(20 * math.log10(t.gain), "dB"), "gain_center_db", "dB", "gain_db", "dB"),
        row("centre phase", "", "phase_center_deg", "°"),
    ]
    return html_table(header, rows, cls="figures")


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
        ["slew rate, sine at f0", escape(slew_text(r.slew_sine_v_per_us))],
        ["slew rate, input step", escape(slew_text(r.slew_step_v_per_us))],
        ["output current", escape(format_value(r.iout_peak_ma * 1e-3, "A") + " peak at f0" + (f", load {format_value(session.rload_ohm, 'Ω')}" if session.rload_ohm else ""))],
    ]
    return html_table(None, rows, cls="needs kv", align="ll")


def _sensitivity_table(c: CandidateReport) -> str:
    """Parts as columns, S(f0), S(Q), S(gain) as rows: compact for circuits with many parts."""
    s = c.analysis.sensitivity
    refs = list(s.get("f0", {}))
    rows = [[f"<b>{label}</b>"] + [sensitivity_text(float(s[k][ref])) for ref in refs] for k, label in (("f0", "S(f0)"), ("q", "S(Q)"), ("gain", "S(gain)"))]
    return html_table(["figure"] + [escape(r) for r in refs], rows, cls="sens", align="Lr")


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
            out.append(f'<p class="cand-notes">{paragraphs(e.notes)}</p>')
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


def section_notes(ctx: ReportContext) -> str:
    """The session's notes, when it has any."""
    if not ctx.session.notes.strip():
        return ""
    return "<h2>Notes</h2>\n<p>" + paragraphs(ctx.session.notes) + "</p>"


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


def kept_items_section(ctx: ReportContext, key: str, read, one) -> str:
    """A section of the things a session keeps under ``extras[key]`` (chains, banks …); "" when it keeps none.

    ``read(session)`` gives ``(items, problems)``: each problem becomes an error paragraph, then
    ``one(item, ctx)`` gives each item's HTML.
    """
    if key not in ctx.session.extras:
        return ""
    items, problems = read(ctx.session)
    out = [f'<p class="error">{escape(p[:1].upper() + p[1:])}.</p>' for p in problems]
    for item in items:
        out.append(one(item, ctx))
    return "\n".join(out)


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
