"""The "Board" pane: the selected candidate built for one supply, and how to trim it.

Top: the candidate (the board's selected one) and the settings kept in the session
(``extras["board"]``, undoable): the single supply, the reference kind (a bypassed divider or a
buffered source) and the f0 measured on the built stage. Left: the bias — every node's DC voltage,
the reference (voltage, impedance at DC and at f0, bypass, settling time), the coupling capacitors
with their corners, the swing margin (from :func:`bandsmith.api.bias`). Right: the trim plan — for
f0, Q and gain the part made adjustable, how much it disturbs the other figures, the trimmer and
the fixed resistor in series, the range and the resolution (from :func:`bandsmith.api.trim`) — the
bench procedure, and, for a measured f0, the corrected value of the f0 part.

Both computations run off the GUI thread (the first bias solve takes ~0.2 s), only while the pane
is shown (:class:`RecomputeWhenShown`); the pane draws what comes back.
"""

from __future__ import annotations

import math
from dataclasses import replace
from html import escape
from typing import Callable

from PySide6 import QtCore, QtWidgets

from bandsmith.common.errors import InputError
from bandsmith.common.values import format_value, parse_positive

from bandsmith.app.document.extras_board import BOARD_KEY, BoardSettings, board_of, ohm, part_value, stored_board
from bandsmith.app.window.background import BackgroundJob
from bandsmith.app.window.panes.shown_only import RecomputeWhenShown
from bandsmith.app.window.state import WorkbenchState
from bandsmith.app.window.theme import MUTED, error_label, fit_columns, note_label, section_title
from bandsmith.app.window.widgets.candidate_picker import candidate_bar, follow_candidate

__all__ = ["BoardPane", "install"]

_RIGHT = QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter


def _table(parent, name: str, header: list[str], tips: list[str] | None = None) -> QtWidgets.QTableWidget:
    t = QtWidgets.QTableWidget(0, len(header), parent)
    t.setObjectName(name)
    t.setHorizontalHeaderLabels(header)
    for i, tip in enumerate(tips or []):
        if tip:
            t.horizontalHeaderItem(i).setToolTip(tip)
    t.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
    t.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.NoSelection)
    t.verticalHeader().hide()
    t.verticalHeader().setDefaultSectionSize(22)
    t.setSizeAdjustPolicy(QtWidgets.QAbstractScrollArea.SizeAdjustPolicy.AdjustToContents)
    return t


def _fill(table: QtWidgets.QTableWidget, rows: list[list[str]]) -> None:
    table.setRowCount(len(rows))
    for r, row in enumerate(rows):
        for c, text in enumerate(row):
            it = QtWidgets.QTableWidgetItem(text)
            if c:
                it.setTextAlignment(_RIGHT)
            table.setItem(r, c, it)
    _fit(table)


def _fit(table: QtWidgets.QTableWidget) -> None:
    """Columns to their contents (headers included), the table as wide and tall as its cells
    (sideways scrolling when the pane is narrower)."""
    fit_columns(table, stretch_last=False)
    table.resizeColumnsToContents()
    header = table.horizontalHeader()
    for i in range(table.columnCount()):
        need = header.fontMetrics().horizontalAdvance(table.horizontalHeaderItem(i).text()) + 16
        if header.sectionSize(i) < need:
            header.resizeSection(i, need)
    w = header.length() + 2 * table.frameWidth()
    table.setMaximumWidth(w)
    table.setMinimumWidth(min(w, 220))
    bar = table.horizontalScrollBar().sizeHint().height()
    h = header.height() + sum(table.rowHeight(i) for i in range(table.rowCount())) + 2 * table.frameWidth()
    table.setFixedHeight(h + bar if table.width() < w else h)


class BoardPane(RecomputeWhenShown, QtWidgets.QWidget):
    """Single-supply bias and the trim plan of the selected candidate.

    Attributes
    ----------
    biased : BiasedCircuit or None
        The last bias computed (:func:`bandsmith.api.bias`).
    plan : TrimPlan or None
        The last trim plan (:func:`bandsmith.api.trim`), with the correction for a measured f0.
    problem : str or None
        Why there is nothing to show.
    """

    computed = QtCore.Signal()

    def __init__(self, state: WorkbenchState, *, run_job: Callable | None = None, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("boardPane")
        self.state = state
        self._run_job = run_job
        self._job: BackgroundJob | None = None
        self._key = None
        self._dirty = True
        self.biased = None
        self.plan = None
        self.problem: str | None = None

        outer = QtWidgets.QVBoxLayout(self)
        outer.setContentsMargins(10, 8, 10, 8)
        outer.setSpacing(6)
        self._build_form(outer)
        self.error = error_label(self)
        outer.addWidget(self.error)
        # The window's tab already scrolls; the body is the bias (left) beside the trim plan when wide.
        self.body = QtWidgets.QBoxLayout(QtWidgets.QBoxLayout.Direction.TopToBottom)
        self.body.setSpacing(14)
        self._build_bias(self)
        self._build_trim(self)
        outer.addLayout(self.body)
        outer.addStretch(1)

        follow_candidate(state, self._on_session_changed)

    # ------------------------------------------------------------------ building
    def _build_form(self, outer: QtWidgets.QVBoxLayout) -> None:
        bar, self.picker = candidate_bar(self.state, self)
        bar.addSpacing(16)
        bar.addWidget(QtWidgets.QLabel("Supply", self))
        self.supply_edit = QtWidgets.QLineEdit(self)
        self.supply_edit.setObjectName("boardSupply")
        self.supply_edit.setToolTip("The single supply in V (the other rail is ground): 12, 5 V, 3.3.")
        self.supply_edit.setMaximumWidth(90)
        self.supply_edit.editingFinished.connect(self._on_supply)
        bar.addWidget(self.supply_edit)
        bar.addSpacing(16)
        bar.addWidget(QtWidgets.QLabel("Reference", self))
        self.reference_combo = QtWidgets.QComboBox(self)
        self.reference_combo.setObjectName("boardReference")
        self.reference_combo.addItem("divider + bypass", "divider")
        self.reference_combo.addItem("buffered", "buffered")
        self.reference_combo.setToolTip("Mid-supply reference: two equal resistors with a bypass capacitor, or a buffered source.")
        self.reference_combo.activated.connect(self._on_reference)
        bar.addWidget(self.reference_combo)
        bar.addSpacing(16)
        bar.addWidget(QtWidgets.QLabel("Measured f0", self))
        self.measured_edit = QtWidgets.QLineEdit(self)
        self.measured_edit.setObjectName("boardMeasured")
        self.measured_edit.setPlaceholderText("not measured")
        self.measured_edit.setToolTip("The f0 measured on the built stage, Hz (5.8k, 5800): gives the new value of the f0 part. Blank: none.")
        self.measured_edit.setMaximumWidth(110)
        self.measured_edit.editingFinished.connect(self._on_measured)
        bar.addWidget(self.measured_edit)
        bar.addStretch(1)
        outer.addLayout(bar)
        self.info = note_label(self, "boardInfo")
        outer.addWidget(self.info)

    def _build_bias(self, inner: QtWidgets.QWidget) -> None:
        col = QtWidgets.QVBoxLayout()
        col.setSpacing(4)
        col.addWidget(section_title(inner, "Bias on a single supply"))
        row = QtWidgets.QHBoxLayout()
        row.setSpacing(10)
        self.reference_table = _table(inner, "boardReferenceTable", ["reference", "value"])
        row.addWidget(self.reference_table, 0, QtCore.Qt.AlignmentFlag.AlignTop | QtCore.Qt.AlignmentFlag.AlignLeft)
        right = QtWidgets.QVBoxLayout()
        right.setSpacing(4)
        # One row: each node's DC voltage under its name.
        self.nodes_table = _table(inner, "boardNodes", ["node"])
        self.nodes_table.setToolTip("Every node's DC voltage to ground, V")
        right.addWidget(self.nodes_table)
        self.coupling_table = _table(inner, "boardCoupling", ["coupling", "where", "value", "into", "corner"],
                                     ["The coupling capacitor", "", "Capacitance, F", "The resistance it works into, Ω", "Its high-pass corner, Hz"])
        right.addWidget(self.coupling_table)
        self.swing = QtWidgets.QLabel(inner)
        self.swing.setObjectName("boardSwing")
        self.swing.setTextFormat(QtCore.Qt.TextFormat.RichText)
        right.addWidget(self.swing)
        right.addStretch(1)
        row.addLayout(right)
        row.addStretch(1)
        col.addLayout(row)
        self.notes = note_label(inner, "boardNotes")
        col.addWidget(self.notes)
        col.addStretch(1)
        self.body.addLayout(col, 1)

    def _build_trim(self, inner: QtWidgets.QWidget) -> None:
        col = QtWidgets.QVBoxLayout()
        col.setSpacing(4)
        col.addWidget(section_title(inner, "Trim plan"))
        self.trim_table = _table(
            inner, "boardTrim", ["figure", "part", "interaction", "fixed", "trimmer", "range", "resolution"],
            ["", "The resistor made adjustable", "Its largest effect on the other figures, relative to this one",
             "The fixed resistor in series", "The trimmer (set to mid-track)", "The figure's guaranteed adjustment each way",
             "The figure's change for one step of the trimmer"],
        )
        col.addWidget(self.trim_table)
        self.procedure = QtWidgets.QLabel(inner)
        self.procedure.setObjectName("boardProcedure")
        self.procedure.setWordWrap(True)
        self.procedure.setTextFormat(QtCore.Qt.TextFormat.RichText)
        col.addWidget(self.procedure)
        self.correction = QtWidgets.QLabel(inner)
        self.correction.setObjectName("boardCorrection")
        self.correction.setWordWrap(True)
        self.correction.setTextFormat(QtCore.Qt.TextFormat.RichText)
        col.addWidget(self.correction)
        col.addStretch(1)
        self.body.addLayout(col, 1)

    # ------------------------------------------------------------------ settings
    @property
    def settings(self) -> BoardSettings:
        """The session's board settings (the defaults when it has none)."""
        return stored_board(self.state.session)

    def _store(self, settings: BoardSettings, text: str) -> None:
        if settings.to_json() != self.state.session.extras.get(BOARD_KEY):
            self.state.set_extra(BOARD_KEY, settings.to_json(), text)

    def _say(self, text: str | None) -> None:
        self.error.setText(text or "")
        self.error.setVisible(bool(text))

    def _on_supply(self) -> None:
        try:
            v = parse_positive(self.supply_edit.text(), field="supply", unit="V")
        except InputError as exc:
            self._say(str(exc))
            return
        self._say(None)
        self._store(replace(self.settings, supply_v=v), f"board: supply {format_value(v, 'V', digits=4)}")

    def _on_reference(self, _index: int) -> None:
        kind = self.reference_combo.currentData()
        self._store(replace(self.settings, reference=kind), f"board: {kind} reference")

    def _on_measured(self) -> None:
        cid = self.picker.candidate_id
        if not cid:
            return
        text = self.measured_edit.text().strip()
        meas = dict(self.settings.measured_f0_hz)
        if text:
            try:
                v = parse_positive(text, field="measured-f0", unit="Hz")
            except InputError as exc:
                self._say(str(exc))
                return
            meas[cid] = v
            what = f"board: {cid} measured f0 {format_value(v, 'Hz', digits=5)}"
        else:
            meas.pop(cid, None)
            what = f"board: {cid} not measured"
        self._say(None)
        self._store(replace(self.settings, measured_f0_hz=meas), what)

    def _fill_form(self) -> None:
        s = self.settings
        self.supply_edit.setText(format_value(s.supply_v, "V", digits=4))
        self.reference_combo.setCurrentIndex(max(0, self.reference_combo.findData(s.reference)))
        m = s.measured_f0_hz.get(self.picker.candidate_id or "")
        self.measured_edit.setText(format_value(m, "Hz", digits=5) if m else "")

    # ------------------------------------------------------------------ computing
    def _on_session_changed(self, _session) -> None:
        self._fill_form()
        self.mark_dirty()

    def refresh(self) -> None:
        """Start the bias and trim computation for the candidate and settings shown (when changed)."""
        self._dirty = False
        cid = self.picker.candidate_id
        s = self.settings
        entry = next((c for c in self.state.session.candidates if c.id == cid), None)
        if entry is None:
            self._key = None
            self.biased = self.plan = None
            self.problem = "No active candidate."
            self._draw()
            self.computed.emit()
            return
        vin = self.state.session.target.vin_v
        meas = s.measured_f0_hz.get(cid)
        key = (cid, entry.topology_id, tuple(sorted(entry.values.items())), s.supply_v, s.reference, meas, vin)
        if key == self._key:
            return
        self._key = key
        topology, values = entry.topology_id, dict(entry.values)
        job = BackgroundJob(lambda _p, _c: board_of(topology, values, s, vin_v=vin, measured_f0_hz=meas), "Board: bias and trim", self)
        job.finished.connect(lambda result, k=key: self._on_done(k, result, None))
        job.failed.connect(lambda error, k=key: self._on_done(k, None, error))
        self._job = job
        (self._run_job or (lambda j: j.start()))(job)

    def _on_done(self, key, result, error: str | None) -> None:
        if key != self._key:
            return  # a later edit has started another computation
        if result is not None:
            self.biased, self.plan = result
            self.problem = None
        else:
            self.biased = self.plan = None
            self.problem = (error or "").strip().splitlines()[-1] if error else "Cannot compute."
            self._say(f"Cannot bias {key[0]}: {self.problem}")
        self._draw()
        self.computed.emit()

    # ------------------------------------------------------------------ drawing
    def _draw(self) -> None:
        b, plan = self.biased, self.plan
        if b is None or plan is None:
            self.info.setText(self.problem or "")
            self.nodes_table.setColumnCount(1)
            for t in (self.reference_table, self.nodes_table, self.coupling_table, self.trim_table):
                _fill(t, [])
            for lab in (self.swing, self.notes, self.procedure, self.correction):
                lab.setText("")
            return
        split, withb = b.figures_split, b.figures
        self.info.setText(
            f"{self.picker.candidate_id}: f0 {format_value(withb.f0_hz, 'Hz', digits=4)}, Q {withb.q:.4g} with the bias network "
            f"(split supply: {format_value(split.f0_hz, 'Hz', digits=4)}, Q {split.q:.4g}); "
            f"input {format_value(b.settings.vin_v, 'V', digits=3)} peak, load {ohm(b.settings.rload_ohm)}."
        )
        ref_rows = [["voltage", format_value(b.reference_v, "V", digits=4)],
                    ["impedance at DC", ohm(b.reference_impedance_ohm)],
                    ["impedance at f0", ohm(b.reference_impedance_f0_ohm)]]
        if b.bypass_f is not None:
            ref_rows += [["bypass", format_value(b.bypass_f, "F", digits=3)],
                         ["bypass corner", format_value(b.bypass_corner_hz, "Hz", digits=3)]]
        ref_rows.append(["settles (0.1 %)", format_value(b.settle_s, "s", digits=3)])
        _fill(self.reference_table, ref_rows)
        nodes = [(n, v) for n, v in b.node_dc_v.items() if n != "0"]
        self.nodes_table.setColumnCount(len(nodes) + 1)
        self.nodes_table.setHorizontalHeaderLabels(["node"] + [n for n, _ in nodes])
        _fill(self.nodes_table, [["DC"] + [format_value(v, "V", digits=4) for _, v in nodes]] if nodes else [])
        _fill(self.coupling_table, [[c.ref, c.where, format_value(c.capacitance_f, "F", digits=3), ohm(c.resistance_ohm),
                                     format_value(c.corner_hz, "Hz", digits=3)] for c in b.coupling])
        colour = "#b23a48" if b.swing_margin_v < 0 else "inherit"
        self.swing.setText(
            f"Swing margin <b style='color:{colour}'>{format_value(b.swing_margin_v, 'V', digits=3)}</b> "
            f"(output peak {format_value(b.out_peak_v, 'V', digits=3)} about {format_value(b.node_dc_v.get('out', b.reference_v), 'V', digits=3)}"
            f"{'; it clips' if b.swing_margin_v < 0 else ''})."
        )
        self.notes.setText("; ".join(n[:1].upper() + n[1:] for n in b.notes) + ("." if b.notes else ""))
        self.notes.setVisible(bool(b.notes))
        rows = []
        for name, ch in (("f0", plan.f0), ("Q", plan.q), ("gain", plan.gain)):
            rows.append([name, ch.part, f"{ch.interaction:.3g}", ohm(ch.fixed_ohm), ohm(ch.trimmer_ohm),
                         f"±{ch.range_pct:.3g} %", f"{ch.resolution_pct:.2g} %" if math.isfinite(ch.resolution_pct) else "—"])
        _fill(self.trim_table, rows)
        for r in range(self.trim_table.rowCount()):
            self.trim_table.item(r, 1).setTextAlignment(QtCore.Qt.AlignmentFlag.AlignLeft | QtCore.Qt.AlignmentFlag.AlignVCenter)
        self.procedure.setText("<b>Procedure</b><ol style='margin-left:-20px'>" + "".join(f"<li>{escape(s)}</li>" for s in plan.procedure) + "</ol>")
        c = plan.correction
        if c is None:
            self.correction.setText(f"<span style='color:{MUTED}'>Type the measured f0 above for the new value of {plan.f0.part}.</span>")
        else:
            self.correction.setText(
                f"Measured f0 {format_value(c.measured_f0_hz, 'Hz', digits=5)}, target {format_value(c.target_f0_hz, 'Hz', digits=5)}: "
                f"set <b>{c.part}</b> from {part_value(c.part, c.old_value)} to <b>{part_value(c.part, c.new_value)}</b> "
                f"(linear estimate {part_value(c.part, c.linear_value)})"
                + ("." if c.in_range else "; <b style='color:#b23a48'>outside the trimmer's range</b>: change the fixed part.")
            )

    def trim_parts(self) -> list[str]:
        """The parts in the trim table (f0, Q, gain)."""
        return [self.trim_table.item(r, 1).text() for r in range(self.trim_table.rowCount())]

    # ------------------------------------------------------------------ layout
    def resizeEvent(self, event) -> None:  # noqa: N802 - Qt's name
        super().resizeEvent(event)
        wide = event.size().width() >= 1250
        self.body.setDirection(QtWidgets.QBoxLayout.Direction.LeftToRight if wide else QtWidgets.QBoxLayout.Direction.TopToBottom)


def install(window) -> BoardPane:
    """Add the board pane to a :class:`~bandsmith.app.window.main_window.WorkbenchWindow` as a tab."""
    pane = BoardPane(window.state, run_job=window.run_job, parent=window)
    window.board_pane = pane
    window.add_pane("Board", pane)
    return pane
