"""What the stage-chain pane shows: the plots, the stage table with a circuit chooser per stage,
the details of the selected stage, and the summary of the chain in words.

:class:`ChainView` is the right-hand side of the pane (:class:`~bandsmith.app.plots.chain_plots.ChainPlots`
over the stage table and the details); :func:`summary_html` and :func:`stage_detail_html` put a
:class:`bandsmith.chain.cascade.Cascade` and one of its stages into words. Nothing here computes:
every number comes from the cascade.
"""

from __future__ import annotations

import math
from html import escape

from PySide6 import QtCore, QtGui, QtWidgets

from bandsmith.common.units import part_unit
from bandsmith.chain.cascade import AUTO, Cascade, circuit_choices
from bandsmith.circuits import get_topology
from bandsmith.common.values import format_value

from bandsmith.app.plots.chain_plots import ChainPlots
from bandsmith.app.plots.chain_text import response_title
from bandsmith.app.window.theme import BAD, GOOD, MUTED, WARN, candidate_style, section_title

__all__ = ["ChainView", "summary_html", "stage_detail_html", "first_clause"]


def _esc(text: str) -> str:
    return escape(text)


def _signed(x, unit: str, decimals: int = 2) -> str:
    if x is None or not math.isfinite(x):
        return "—"
    if abs(x) < 0.5 * 10.0**-decimals:
        return f"{0.0:.{decimals}f} {unit}"
    return f"{x:+.{decimals}f} {unit}"


def _parts_text(topology_id: str, values) -> str:
    topo = get_topology(topology_id)
    out = []
    for c in topo.components:
        v = float(values[c.ref])
        if not c.required and v <= 0:
            continue
        out.append(f"{c.ref} {format_value(v, part_unit(c.kind), digits=3)}".replace(" ", "\u00a0"))
    return ", ".join(out)  # no-break spaces: a long list wraps between parts, never inside one


def first_clause(reason: str | None) -> str:
    """A stage's reason up to its parenthesised detail (the detail pane shows all of it)."""
    if not reason:
        return ""
    cut = reason.find(" (")
    return reason if cut < 0 else reason[:cut]


def summary_html(result: Cascade | None, cid: str | None, saved: bool, problems: list[str]) -> tuple[str, str]:
    """What the shown chain achieved (the summary) and its warnings (the messages), as rich text."""
    notes = [f"<span style='color:{WARN}'>⚠ {_esc(p)}</span>" for p in problems]
    if result is None:
        return (
            "<b>No chain shown.</b> Set the band on the left and press <b>Build chain</b>: "
            "each stage is designed from one of the circuits and the chain is kept in the session."
        ), "<br>".join(notes)
    s = result.settings
    head = f"<b>{_esc(cid or '')}</b>: {_esc(response_title(s))}, order {s.order} ({s.order} stage{'s' if s.order != 1 else ''}), {_esc(s.series)} parts"
    if not result.feasible:
        bad = [st for st in result.stages if not st.feasible]
        lines = [
            head,
            f"<span style='color:{BAD}'><b>✗ Cannot be built</b></span>: {len(bad)} of {len(result.stages)} stages cannot be built, "
            "so this chain is not kept in the session.",
        ]
        lines += [f"• stage {st.index} (f0 {_esc(format_value(st.plan.f0_hz, 'Hz'))}, Q {st.plan.q:.3g}): {_esc(first_clause(st.reason))}" for st in bad]
        lines.append(
            f"<span style='color:{MUTED}'>Select a stage below for every circuit's reason; widen the band, lower the order, "
            "choose a finer series or another circuit for that stage.</span>"
        )
        return "<br>".join(lines), "<br>".join(notes)
    o = result.overall
    gbws = [st.result.analysis.requirements.gbw_hz for st in result.stages if st.result is not None and st.result.analysis is not None]
    need = max(gbws) if gbws and all(g is not None for g in gbws) else None
    have = result.conditions.gbw_hz
    if need is None:
        verdict = f"<span style='color:{BAD}'>✗ a stage needs more gain-bandwidth than any op-amp has</span>"
    elif have is None:
        verdict = f"needs GBW {_esc(format_value(need, 'Hz', digits=3))} (the most any stage needs); the session's op-amp is ideal"
    elif have >= need:
        verdict = f"<span style='color:{GOOD}'>✓</span> needs GBW {_esc(format_value(need, 'Hz', digits=3))}; the session's {_esc(format_value(have, 'Hz', digits=3))} op-amp is enough"
    else:
        verdict = f"<span style='color:{BAD}'>✗ needs GBW {_esc(format_value(need, 'Hz', digits=3))}; the session's {_esc(format_value(have, 'Hz', digits=3))} op-amp is not enough</span>"
    edge = "ripple-band edges" if s.response == "chebyshev" else "−3 dB points"
    lines = [
        head + ("" if saved else " <i>(not kept)</i>"),
        f"Band asked: {_esc(format_value(s.f_low_hz, 'Hz'))} to {_esc(format_value(s.f_high_hz, 'Hz'))} ({edge}), centre gain {s.gain:.4g}",
        f"Built: edges {_esc(format_value(o.f_low_hz, 'Hz'))} / {_esc(format_value(o.f_high_hz, 'Hz'))}, centre gain {_esc(format_value(o.gain_center_db, 'dB', digits=3))}, "
        f"ripple {_esc(format_value(o.ripple_db, 'dB', digits=2))}, peak {_esc(format_value(o.peak_gain_db, 'dB', digits=3))}",
        f"Off the ideal {_esc(response_title(s))} response: up to <b>{_esc(format_value(result.passband_max_dev_db, 'dB', digits=3))}</b> in the band, "
        f"{_esc(format_value(result.reference_max_dev_db, 'dB', digits=3))} over the whole sweep"
        + (f"; with the op-amp {_esc(format_value(result.actual_max_dev_db, 'dB', digits=3))}" if result.actual_max_dev_db is not None else ""),
        verdict,
    ]
    summary = "<br>".join(lines)
    for w in result.warnings:
        notes.append(f"<span style='color:{WARN}'>⚠ {_esc(w)}</span>")
    flagged = [st.index for st in result.stages if st.warnings]
    if flagged:
        notes.append(
            f"<span style='color:{WARN}'>⚠ stage{'s' if len(flagged) > 1 else ''} {', '.join(map(str, flagged))} "
            "carry warnings (marked ⚠ below; select one to read them)</span>"
        )
    return summary, "<br>".join(notes)


def stage_detail_html(st) -> str:
    """A stage in words: its circuit, target, how far its parts put it off, its parts, its needs,
    its warnings and, when several were tried, every circuit's verdict."""
    p = st.plan
    out = []
    if st.feasible:
        topo = get_topology(st.circuit)
        out.append(f"<b>Stage {st.index}: {_esc(topo.title)}</b> ({_esc(st.circuit)})")
    else:
        out.append(f"<b>Stage {st.index}</b> <span style='color:{BAD}'>✗ not built</span>")
    out.append(
        f"Target: f0 {_esc(format_value(p.f0_hz, 'Hz'))}, Q {p.q:.4g}, own peak gain {p.gain:.4g}; "
        f"input reaching it {_esc(format_value(st.vin_v, 'V'))} peak at its f0."
    )
    if not st.feasible:
        out.append(f"<span style='color:{BAD}'>{_esc(st.reason or '')}</span>")
    else:
        res = st.result
        e = res.errors
        out.append(
            f"Its parts give: f0 {_esc(_signed(e['f0_pct'], '%'))}, Q {_esc(_signed(e['q_pct'], '%'))}, "
            f"gain {_esc(_signed(e['gain_db'], 'dB'))} off the target (ideal op-amp)."
        )
        rows = []
        for c in topo.components:
            v = float(st.chosen[c.ref])
            if not c.required and v <= 0:
                continue
            rows.append(f"<tr><td><b>{_esc(c.ref)}</b></td><td align='right'>{_esc(format_value(v, part_unit(c.kind), digits=4))}</td><td>{_esc(c.role)}</td></tr>")
        out.append("<table cellspacing='0' cellpadding='2'>" + "".join(rows) + "</table>")
        an = res.analysis
        if an is not None:
            r = an.requirements
            gbw = format_value(r.gbw_hz, "Hz", digits=3) if r.gbw_hz is not None else f"none ({r.gbw_reason})"
            out.append(
                f"Needs: GBW {_esc(gbw)} (f0 ±{100 * r.tolerances.f0:.3g} %, Q ±{100 * r.tolerances.q:.3g} %, "
                f"gain ±{r.tolerances.gain_db:g} dB); output {_esc(format_value(r.vout_peak_v, 'V'))} peak; slew "
                f"{r.slew_sine_v_per_us:.3g} V/µs for a sine at f0, {r.slew_step_v_per_us:.3g} V/µs for a step; "
                f"output current {_esc(format_value(r.iout_peak_ma * 1e-3, 'A', digits=3))} peak."
            )
    for w in st.warnings:
        out.append(f"<span style='color:{WARN}'>⚠ {_esc(w)}</span>")
    if len(st.attempts) > 1:
        tried = []
        for a in st.attempts:
            if a.sane:
                ok = "meets its tolerances" if a.within else "usable, outside its tolerances"
                tried.append(f"{_esc(a.topology_id)}: {ok}, needs GBW {_esc(format_value(a.gbw_hz, 'Hz', digits=3))}")
            else:
                tried.append(f"{_esc(a.topology_id)}: {_esc(a.reason or 'cannot build it')}")
        out.append("Circuits tried: " + "; ".join(tried) + ".")
    return "<p style='margin:0'>" + "</p><p style='margin:4px 0 0 0'>".join(out) + "</p>"


class ChainView(QtWidgets.QSplitter):
    """The plots over the stage table and the selected stage's details.

    Signals
    -------
    stage_circuit_chosen(int, str)
        A stage (from 1) was given another circuit (``auto`` or a circuit id) in its chooser.
    """

    stage_circuit_chosen = QtCore.Signal(int, str)

    def __init__(self, parent: QtWidgets.QWidget | None = None):
        super().__init__(QtCore.Qt.Orientation.Vertical, parent)
        self.setChildrenCollapsible(False)
        self._result: Cascade | None = None
        self.plots = ChainPlots(self)
        # Three stacked plots, each tall enough for its tick labels not to run together (the pane
        # scrolls on a short screen).
        self.plots.setMinimumHeight(3 * 120 + 30)
        self.addWidget(self.plots)
        bottom = QtWidgets.QWidget(self)
        bl = QtWidgets.QVBoxLayout(bottom)
        bl.setContentsMargins(0, 2, 0, 0)
        bl.setSpacing(2)
        t = section_title(bottom, "Stages in signal order — pick a circuit to rebuild one stage; select a row for its details")
        bl.addWidget(t)
        self.stage_table = QtWidgets.QTableWidget(0, 8, bottom)
        self.stage_table.setObjectName("chainStages")
        self.stage_table.setHorizontalHeaderLabels(["stage", "circuit", "f0", "Q", "gain", "peak so far", "needs GBW", "parts"])
        tips = {
            2: "The stage's own centre frequency (target)",
            3: "The stage's own Q (target)",
            4: "The stage's own peak gain (target, V/V)",
            5: "Peak over frequency of the response from the chain's input to this stage's output",
            6: "Gain-bandwidth this stage's op-amp needs to keep it within its tolerances",
        }
        for col, tip in tips.items():
            self.stage_table.horizontalHeaderItem(col).setToolTip(tip)
        self.stage_table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.stage_table.setSelectionBehavior(QtWidgets.QAbstractItemView.SelectionBehavior.SelectRows)
        self.stage_table.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.SingleSelection)
        self.stage_table.verticalHeader().hide()
        self.stage_table.verticalHeader().setDefaultSectionSize(26)
        self.stage_table.horizontalHeader().setStretchLastSection(True)
        self.stage_table.setWordWrap(True)
        self.stage_table.currentCellChanged.connect(lambda r, _c, _pr, _pc: self.show_stage_detail(r))
        bl.addWidget(self.stage_table, 3)
        self.detail = QtWidgets.QTextBrowser(bottom)
        self.detail.setObjectName("stageDetail")
        self.detail.setOpenLinks(False)
        self.detail.setMinimumHeight(80)
        bl.addWidget(self.detail, 2)
        self.addWidget(bottom)
        self.setStretchFactor(0, 3)
        self.setStretchFactor(1, 2)
        self.setSizes([430, 300])

    def show_cascade(self, result: Cascade | None, *, editable: bool) -> None:
        """Draw a chain (or None) and list its stages; ``editable`` enables the circuit choosers."""
        self._result = result
        # No empty plot frames (with a meaningless axis) before a chain is built.
        self.plots.setVisible(result is not None)
        self.plots.show_cascade(result)
        self._fill_stages(result, editable=editable)

    def set_editable(self, on: bool) -> None:
        """Enable the stages' circuit choosers (off while a job runs or when nothing is shown)."""
        for r in range(self.stage_table.rowCount()):
            w = self.stage_table.cellWidget(r, 1)
            if w is not None:
                w.setEnabled(on and self._result is not None)

    def show_stage_detail(self, row: int) -> None:
        result = self._result
        if result is None or not 0 <= row < len(result.stages):
            self.detail.setHtml("")
            return
        self.detail.setHtml(stage_detail_html(result.stages[row]))

    def _fill_stages(self, result: Cascade | None, *, editable: bool) -> None:
        table = self.stage_table
        table.blockSignals(True)
        try:
            table.clearContents()
            stages = result.stages if result is not None else ()
            table.setRowCount(len(stages))
            for r, st in enumerate(stages):
                style = candidate_style(r)
                mark = " ⚠" if st.warnings else ("" if st.feasible else " ✗")
                first = QtWidgets.QTableWidgetItem(f"■ {st.index}{mark}")
                first.setForeground(QtGui.QColor(style.colour if st.feasible else BAD))
                f = first.font()
                f.setBold(True)
                first.setFont(f)
                table.setItem(r, 0, first)
                combo = QtWidgets.QComboBox(table)
                combo.setObjectName(f"stageCircuit{st.index}")
                for c in circuit_choices():
                    combo.addItem(c, c)
                current = st.circuit if st.feasible and st.circuit else AUTO
                combo.setCurrentIndex(combo.findData(current))
                combo.setToolTip("Rebuild this stage on another circuit (auto: the one needing the least GBW)")
                combo.setEnabled(editable)
                combo.activated.connect(lambda _i, combo=combo, idx=st.index, cur=current: self._on_stage_combo(combo, idx, cur))
                table.setCellWidget(r, 1, combo)
                an = st.result.analysis if st.feasible and st.result is not None else None
                cells = [
                    format_value(st.plan.f0_hz, "Hz"),
                    f"{st.plan.q:.4g}",
                    f"{st.plan.gain:.4g}",
                    format_value(st.peak_internal_gain_db, "dB", digits=3) if st.feasible else "—",
                    (format_value(an.requirements.gbw_hz, "Hz", digits=3) if an.requirements.gbw_hz is not None else "none") if an is not None else "—",
                    _parts_text(st.circuit, st.chosen) if st.feasible else "not built: " + first_clause(st.reason),
                ]
                for c, text in enumerate(cells, start=2):
                    item = QtWidgets.QTableWidgetItem(text)
                    if c < 7:
                        item.setTextAlignment(QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter)
                    if not st.feasible and c == 7:
                        item.setForeground(QtGui.QColor(BAD))
                    if c == 7:
                        item.setToolTip(text if st.feasible else (st.reason or ""))
                    table.setItem(r, c, item)
            for c in range(7):
                table.resizeColumnToContents(c)
            table.setColumnWidth(1, max(table.columnWidth(1), 112))
            table.resizeRowsToContents()
        finally:
            table.blockSignals(False)
        if stages:
            table.setCurrentCell(0, 0)
            self.show_stage_detail(0)
        else:
            self.detail.setHtml("")

    def _on_stage_combo(self, combo: QtWidgets.QComboBox, index: int, current: str) -> None:
        circuit = combo.currentData()
        if circuit == current and circuit != AUTO:
            return
        self.stage_circuit_chosen.emit(index, circuit)

    def stage_combo(self, index: int) -> QtWidgets.QComboBox:
        """The circuit chooser of stage ``index`` (from 1)."""
        return self.stage_table.cellWidget(index - 1, 1)
