"""The "Measured" pane: import a bench sweep, overlay it on the plots, find which parts are off.

- Import reads a file with :func:`bandsmith.bench.measured.read_measurement`; when the file does not say
  which column is what (:class:`~bandsmith.bench.measured.MappingNeeded`), a column-mapping step
  (:class:`ColumnMappingDialog`) asks, with a preview of the first rows.
- The measurement goes into the session (``extras["measurements"]``, with its file name and hash)
  as an undoable edit, so it is saved with the design and undo takes it away again.
- The measured points are drawn on the magnitude and phase plots (grey dots), with the fitted
  model as a dashed line; the pane shows f0, Q and centre gain read off the data beside the
  design's, the one-part ranking and the diagnosis in words (:func:`bandsmith.bench.diagnose.diagnose`).

The pane is added to the window by :func:`install` (one call in the main window).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtWidgets

from bandsmith.common.units import part_unit
from bandsmith.analysis.analyzer import transfer_function
from bandsmith.design.candidate import Candidate
from bandsmith.common.errors import InputError
from bandsmith.bench.measured import (
    EXTRAS_KEY,
    FREQ_UNITS,
    ColumnMapping,
    MappingNeeded,
    Measurement,
    TableScan,
    read_measurement,
    session_measurements,
    with_measurement,
)
from bandsmith.common.values import format_value

from bandsmith.app.window.widgets.plots import LogAxis
from bandsmith.app.window.theme import fit_columns, selectable_label

if TYPE_CHECKING:
    from bandsmith.bench.diagnose import Diagnosis

__all__ = ["MeasurementPane", "ColumnMappingDialog", "install", "MEASURED_FILTER"]

MEASURED_FILTER = "Measured response (*.csv *.txt *.tsv *.dat *.prn);;All files (*)"
_POINT_BRUSH = pg.mkBrush(32, 33, 36, 120)
_FIT_PEN = pg.mkPen("#3c4043", width=1.4, style=QtCore.Qt.PenStyle.DashLine)


class ColumnMappingDialog(QtWidgets.QDialog):
    """Say which column of a measurement file is the frequency, the magnitude and the phase."""

    def __init__(self, scan: TableScan, guess: ColumnMapping | None, reason: str, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("columnMapping")
        self.setWindowTitle(f"Columns of {scan.source}")
        self.scan = scan
        names = [f"{i + 1}: {n}" if n else f"column {i + 1}" for i, n in enumerate(scan.names)]
        lay = QtWidgets.QVBoxLayout(self)
        why = QtWidgets.QLabel(reason[:1].upper() + reason[1:] + ".", self)
        why.setWordWrap(True)
        lay.addWidget(why)
        form = QtWidgets.QFormLayout()
        self.freq = QtWidgets.QComboBox(self)
        self.freq.addItems(names)
        self.freq_unit = QtWidgets.QComboBox(self)
        self.freq_unit.addItems(list(FREQ_UNITS))
        self.mag = QtWidgets.QComboBox(self)
        self.mag.addItems(names)
        self.mag_unit = QtWidgets.QComboBox(self)
        self.mag_unit.addItems(["dB", "linear"])
        self.phase = QtWidgets.QComboBox(self)
        self.phase.addItems(["none"] + names)
        self.phase_unit = QtWidgets.QComboBox(self)
        self.phase_unit.addItems(["deg", "rad"])
        for label, a, b in (("Frequency", self.freq, self.freq_unit), ("Magnitude", self.mag, self.mag_unit), ("Phase", self.phase, self.phase_unit)):
            row = QtWidgets.QHBoxLayout()
            row.addWidget(a, 1)
            row.addWidget(b)
            form.addRow(label, row)
        lay.addLayout(form)
        g = guess or ColumnMapping(0, min(1, scan.columns - 1))
        self.freq.setCurrentIndex(g.freq)
        self.mag.setCurrentIndex(g.mag)
        self.phase.setCurrentIndex(0 if g.phase is None else g.phase + 1)
        if g.freq_unit:
            self.freq_unit.setCurrentText(g.freq_unit)
        if g.mag_unit:
            self.mag_unit.setCurrentText(g.mag_unit)
        if g.phase_unit:
            self.phase_unit.setCurrentText(g.phase_unit)
        rows = min(8, scan.values.shape[0])
        self.preview = QtWidgets.QTableWidget(rows, scan.columns, self)
        self.preview.setObjectName("mappingPreview")
        self.preview.setHorizontalHeaderLabels(names)
        self.preview.setVerticalHeaderLabels([str(int(n)) for n in scan.lines[:rows]])
        for r in range(rows):
            for c in range(scan.columns):
                self.preview.setItem(r, c, QtWidgets.QTableWidgetItem(f"{scan.values[r, c]:g}"))
        self.preview.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        lay.addWidget(self.preview)
        self.problem = QtWidgets.QLabel("", self)
        self.problem.setObjectName("mappingProblem")
        self.problem.setStyleSheet("color: #b0191e")
        lay.addWidget(self.problem)
        buttons = QtWidgets.QDialogButtonBox(QtWidgets.QDialogButtonBox.StandardButton.Ok | QtWidgets.QDialogButtonBox.StandardButton.Cancel, self)
        buttons.accepted.connect(self._accept)
        buttons.rejected.connect(self.reject)
        lay.addWidget(buttons)

    def mapping(self) -> ColumnMapping:
        """The mapping as set (InputError when two roles share a column)."""
        phase = self.phase.currentIndex() - 1
        return ColumnMapping(
            freq=self.freq.currentIndex(), mag=self.mag.currentIndex(), phase=None if phase < 0 else phase,
            freq_unit=self.freq_unit.currentText(), mag_unit=self.mag_unit.currentText(),
            phase_unit=self.phase_unit.currentText() if phase >= 0 else None,
        )

    def _accept(self) -> None:
        try:
            self.mapping()
        except InputError as exc:
            self.problem.setText(exc.reason)
            return
        self.accept()


class MeasurementPane(QtWidgets.QWidget):
    """Import, read-off and diagnosis of a measured response of one candidate.

    ``ask_path()`` and ``ask_mapping(scan, guess, reason)`` are the two questions it asks; tests
    replace them. ``diagnosis`` is the latest :class:`~bandsmith.bench.diagnose.Diagnosis` (or None).
    """

    diagnosed = QtCore.Signal(object)

    def __init__(self, state, plot_grid, *, prompter=None, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("measurementPane")
        self.state = state
        self.plot_grid = plot_grid
        self.prompter = prompter
        self.measurement: Measurement | None = None
        self.measurement_candidate: str | None = None
        self.diagnosis: "Diagnosis | None" = None
        self._fitted_for: tuple | None = None

        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(10, 8, 10, 8)
        self._build_bar(lay)
        body = QtWidgets.QHBoxLayout()
        lay.addLayout(body, 1)
        left = QtWidgets.QVBoxLayout()
        body.addLayout(left, 3)
        self._build_tables(left)
        self._build_deviation_plot(body)
        self._add_plot_overlays(plot_grid)

        self._refit_timer = QtCore.QTimer(self)
        self._refit_timer.setSingleShot(True)
        self._refit_timer.setInterval(300)
        self._refit_timer.timeout.connect(self.run_diagnosis)
        state.session_changed.connect(self._on_session_changed)
        state.analyses_changed.connect(self._redraw)
        self._on_session_changed(state.session)

    def _build_bar(self, lay: QtWidgets.QVBoxLayout) -> None:
        """Import, the candidate the board was built from, Remove, and the line naming the measurement."""
        bar = QtWidgets.QHBoxLayout()
        self.import_button = QtWidgets.QPushButton("Import measurement…", self)
        self.import_button.setObjectName("importMeasurement")
        self.import_button.clicked.connect(self._on_import)
        self.candidate_box = QtWidgets.QComboBox(self)
        self.candidate_box.setObjectName("measuredCandidate")
        self.candidate_box.setToolTip("The candidate the board was built from")
        self.candidate_box.currentTextChanged.connect(self._on_candidate_chosen)
        self.clear_button = QtWidgets.QPushButton("Remove", self)
        self.clear_button.setObjectName("removeMeasurement")
        self.clear_button.clicked.connect(self.remove)
        bar.addWidget(self.import_button)
        bar.addWidget(QtWidgets.QLabel("built from", self))
        bar.addWidget(self.candidate_box)
        bar.addStretch(1)
        bar.addWidget(self.clear_button)
        lay.addLayout(bar)
        self.source_label = QtWidgets.QLabel("No measurement. Import a bench sweep (frequency, magnitude, optionally phase).", self)
        self.source_label.setObjectName("measuredSource")
        self.source_label.setWordWrap(True)
        lay.addWidget(self.source_label)

    def _build_tables(self, left: QtWidgets.QVBoxLayout) -> None:
        """The figures (measured, design, fitted), the diagnosis in words, and the part tables."""
        self.figures = QtWidgets.QTableWidget(3, 3, self)
        self.figures.setObjectName("measuredFigures")
        self.figures.setHorizontalHeaderLabels(["measured", "design", "fitted"])
        self.figures.setVerticalHeaderLabels(["f0", "Q", "centre gain"])
        self.figures.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        fit_columns(self.figures)
        self.figures.setMaximumHeight(120)
        left.addWidget(self.figures)
        self.summary = selectable_label(self, "diagnosisSummary")
        left.addWidget(self.summary)
        # One above the other: side by side, at a laptop's width, their headers were cut.
        tables = QtWidgets.QVBoxLayout()
        left.addLayout(tables, 1)
        self.ranking = QtWidgets.QTableWidget(0, 4, self)
        self.ranking.setObjectName("partRanking")
        self.ranking.setHorizontalHeaderLabels(["part alone", "change", "residual", "explains"])
        self.fitted = QtWidgets.QTableWidget(0, 4, self)
        self.fitted.setObjectName("fittedParts")
        self.fitted.setHorizontalHeaderLabels(["all parts", "design", "fitted", "range"])
        for t in (self.ranking, self.fitted):
            t.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
            fit_columns(t)
            t.verticalHeader().setVisible(False)
            t.setMinimumHeight(110)
            tables.addWidget(t, 1)

    def _build_deviation_plot(self, body: QtWidgets.QHBoxLayout) -> None:
        """The plot of measured minus model, against the design and against the fit (dB)."""
        self.deviation = pg.PlotWidget(self, axisItems={"bottom": LogAxis("bottom")})
        self.deviation.setObjectName("deviationPlot")
        dv = self.deviation.getPlotItem()
        dv.setTitle("Measured minus model", color="#202124", size="10pt")
        dv.setLogMode(x=True, y=False)
        dv.showGrid(x=True, y=True, alpha=0.22)
        dv.setMenuEnabled(False)
        dv.setLabel("bottom", "Frequency (Hz)", color="#202124")
        dv.getAxis("left").enableAutoSIPrefix(False)
        dv.setLabel("left", "Deviation (dB)", color="#202124")
        leg = dv.addLegend(offset=(8, 8), labelTextSize="8pt")
        leg.setBrush(pg.mkBrush(255, 255, 255, 215))
        self.dev_design = dv.plot([], [], pen=None, symbol="o", symbolSize=4, symbolPen=None, symbolBrush=pg.mkBrush("#b3471d"), name="against the design")
        self.dev_fitted = dv.plot([], [], pen=None, symbol="o", symbolSize=4, symbolPen=None, symbolBrush=_POINT_BRUSH, name="against the fit")
        dv.addItem(pg.InfiniteLine(pos=0.0, angle=0, pen=pg.mkPen("#7d8590", width=1)), ignoreBounds=True)
        self.deviation.setMinimumSize(300, 220)
        body.addWidget(self.deviation, 2)

    def _add_plot_overlays(self, plot_grid) -> None:
        """The measured points and the fitted curve on the Responses' magnitude and phase plots."""
        self._points = {}
        self._fit_curves = {}
        for key in ("magnitude", "phase"):
            plot = plot_grid.plots.get(key)
            if plot is None:
                continue
            item = plot.getPlotItem()
            pts = item.plot([], [], pen=None, symbol="o", symbolSize=3.5, symbolPen=None, symbolBrush=_POINT_BRUSH, name="measured")
            pts.setObjectName("measured")
            pts.setZValue(-5)
            fit = item.plot([], [], pen=_FIT_PEN, name="fitted")
            fit.setObjectName("fitted")
            self._points[key], self._fit_curves[key] = pts, fit

    # ------------------------------------------------------------------ questions
    def ask_path(self) -> str | None:
        path, _ = QtWidgets.QFileDialog.getOpenFileName(self, "Import measurement", "", MEASURED_FILTER)
        return path or None

    def ask_mapping(self, scan: TableScan, guess: ColumnMapping | None, reason: str) -> ColumnMapping | None:
        dlg = ColumnMappingDialog(scan, guess, reason, self)
        return dlg.mapping() if dlg.exec() == QtWidgets.QDialog.DialogCode.Accepted else None

    def _error(self, text: str) -> None:
        if self.prompter is not None:
            self.prompter.error(self, "Measurement", text)
        else:
            QtWidgets.QMessageBox.warning(self, "Measurement", text)

    # ------------------------------------------------------------------ actions
    def _on_import(self) -> None:
        path = self.ask_path()
        if path:
            self.import_file(path)

    def import_file(self, path: str) -> bool:
        """Read ``path`` (asking for the columns when needed) and keep it in the session."""
        try:
            try:
                m = read_measurement(path)
            except MappingNeeded as need:
                mapping = self.ask_mapping(need.scan, need.guess, need.reason)
                if mapping is None:
                    return False
                m = read_measurement(path, mapping=mapping)
        except InputError as exc:
            self._error(str(exc.reason))
            return False
        cid = self.candidate_box.currentText() or self.state.current_id
        self.state.edit(with_measurement(self.state.session, m, candidate=cid or None), f"import measurement {m.source}")
        return True

    def remove(self) -> None:
        """Take the measurement out of the session (undoable)."""
        if EXTRAS_KEY in self.state.session.extras:
            self.state.set_extra(EXTRAS_KEY, None, "remove measurement")

    def _on_candidate_chosen(self, cid: str) -> None:
        if cid and self.measurement is not None:
            self.run_diagnosis()

    # ------------------------------------------------------------------ views
    def _on_session_changed(self, session) -> None:
        ids = [c.id for c in session.candidates]
        keep = self.candidate_box.currentText()
        self.candidate_box.blockSignals(True)
        self.candidate_box.clear()
        self.candidate_box.addItems(ids)
        try:
            stored = session_measurements(session)
        except InputError as exc:
            stored = ()
            self.source_label.setText(f"The session's measurement cannot be used: {exc.reason}")
        m, cand = stored[-1] if stored else (None, None)
        pick = cand if cand in ids else keep if keep in ids else self.state.current_id
        if pick in ids:
            self.candidate_box.setCurrentText(pick)
        self.candidate_box.blockSignals(False)
        same = m is not None and self.measurement is not None and m.sha256 == self.measurement.sha256
        self.measurement, self.measurement_candidate = m, cand
        self.clear_button.setEnabled(m is not None)
        if m is None:
            self.diagnosis = None
            self._fitted_for = None
            if not stored:
                self.source_label.setText("No measurement. Import a bench sweep (frequency, magnitude, optionally phase).")
            self._show_diagnosis()
            self._redraw()
            return
        if same:  # only the design changed: refit once the edits pause, so each edit re-plots at once
            self._refit_timer.start()
        else:
            self.run_diagnosis()

    def run_diagnosis(self) -> "Diagnosis | None":
        """Fit the chosen candidate to the measurement and show the result."""
        m = self.measurement
        cid = self.candidate_box.currentText()
        if m is None or not cid:
            return None
        entry = self.state.session.candidate(cid)
        key = (m.sha256, cid, tuple(sorted(entry.values.items())), self.state.session.opamp)
        if key != self._fitted_for:
            from bandsmith.bench.diagnose import diagnose  # scipy.optimize: loaded on the first fit, not at start-up

            try:
                res = self.state.result(cid)
                opamp = res.conditions.opamp if res is not None else None
                self.diagnosis = diagnose(Candidate(entry.topology_id, entry.values), m, opamp=opamp)
            except InputError as exc:
                self.diagnosis = None
                self.summary.setText(f"No diagnosis: {exc.reason}")
            self._fitted_for = key
        phase = "magnitude and phase" if m.has_phase else "magnitude only"
        self.source_label.setText(f"{m.source}: {m.points} points, {format_value(m.f_hz[0], 'Hz', digits=3)} to {format_value(m.f_hz[-1], 'Hz', digits=3)}, {phase}"
                                  + ("".join(f"; {n}" for n in m.notes)))
        self._show_diagnosis()
        self._redraw()
        self.diagnosed.emit(self.diagnosis)
        return self.diagnosis

    def _show_diagnosis(self) -> None:
        d = self.diagnosis
        for r in range(3):
            for c in range(3):
                self.figures.setItem(r, c, QtWidgets.QTableWidgetItem(""))
        self.ranking.setRowCount(0)
        self.fitted.setRowCount(0)
        if d is None:
            if self.measurement is None:
                self.summary.setText("")
            return
        cols = (d.measured.to_json(), d.design_figures, d.fitted_figures)
        for c, fig in enumerate(cols):
            self.figures.setItem(0, c, QtWidgets.QTableWidgetItem(format_value(fig.get("f0_hz"), "Hz", digits=5)))
            self.figures.setItem(1, c, QtWidgets.QTableWidgetItem(format_value(fig.get("q"))))
            self.figures.setItem(2, c, QtWidgets.QTableWidgetItem(format_value(fig.get("gain_center_db"), "dB")))
        self.summary.setText(d.summary)
        self.ranking.setRowCount(len(d.alone))
        for r, a in enumerate(d.alone):
            for c, text in enumerate((a.part, f"{a.change_pct:+.2f} %", f"{a.residual_db_rms:.3g} dB", f"{100 * a.explained:.1f} %")):
                self.ranking.setItem(r, c, QtWidgets.QTableWidgetItem(text))
        topo = Candidate(d.topology_id, d.nominal).topology
        self.fitted.setRowCount(len(d.parts))
        for r, ref in enumerate(d.parts):
            unit = part_unit(topo.component(ref).kind)
            edge = " (edge)" if ref in d.at_bound else ""
            cells = (ref, format_value(d.nominal[ref], unit), f"{format_value(d.fitted[ref], unit)} ({d.change_pct[ref]:+.2f} %)", f"±{100 * d.ranges[ref]:g} %{edge}")
            for c, text in enumerate(cells):
                self.fitted.setItem(r, c, QtWidgets.QTableWidgetItem(text))

    def _redraw(self) -> None:
        """Measured points and the fitted curve on the magnitude and phase plots."""
        m = self.measurement
        # No empty frame (with a meaningless axis) before a measurement is imported.
        self.deviation.setVisible(m is not None)
        if m is None:
            for item in list(self._points.values()) + list(self._fit_curves.values()) + [self.dev_design, self.dev_fitted]:
                item.setData([], [])
            return
        cid = self.candidate_box.currentText()
        phase = m.phase_unwrapped_deg
        fine = np.geomspace(m.f_hz[0], m.f_hz[-1], 400)
        fit_h = None
        if self.diagnosis is not None and cid:
            entry = self.state.session.candidate(cid)
            res = self.state.result(cid)
            opamp = res.conditions.opamp if res is not None else None
            cand = Candidate(entry.topology_id, self.diagnosis.fitted_values)
            kw = {"opamp": opamp} if opamp is not None else {}
            fitted = transfer_function(cand.netlist, **kw)  # solved once, read at both grids
            fit_h = fitted.at_f(fine)[0]
            at_m = fitted.at_f(m.f_hz)[0]
            if res is not None and res.ok:  # the design as the document analysed it (its source resistance too)
                an = res.analysis
                at_d = (an.h_actual if an.h_actual is not None else an.h_ideal).at_f(m.f_hz)[0]
            else:
                at_d = transfer_function(Candidate(entry.topology_id, entry.values).netlist, **kw).at_f(m.f_hz)[0]
            self.dev_design.setData(m.f_hz, m.mag_db - 20 * np.log10(np.abs(at_d)))
            self.dev_fitted.setData(m.f_hz, m.mag_db - 20 * np.log10(np.abs(at_m)))
        else:
            self.dev_design.setData([], [])
            self.dev_fitted.setData([], [])
        res = self.state.result(cid) if cid else None
        ref_phase = None
        if res is not None and res.ok and res.response is not None:
            ref_phase = np.interp(np.log(m.f_hz), np.log(res.response.f_hz), res.response.phase_deg)
        if "magnitude" in self._points:
            self._points["magnitude"].setData(m.f_hz, m.mag_db)
            if fit_h is not None:
                self._fit_curves["magnitude"].setData(fine, 20 * np.log10(np.abs(fit_h)))
            else:
                self._fit_curves["magnitude"].setData([], [])
        if "phase" in self._points:
            if phase is None:
                self._points["phase"].setData([], [])
                self._fit_curves["phase"].setData([], [])
                return
            if ref_phase is not None:  # on the same branch as the candidate's own curve
                phase = phase - 360.0 * np.round(np.median(phase - ref_phase) / 360.0)
            self._points["phase"].setData(m.f_hz, phase)
            if fit_h is not None:
                fp = np.degrees(np.unwrap(np.angle(fit_h)))
                fp = fp - 360.0 * np.round((fp[0] - np.interp(np.log(fine[0]), np.log(m.f_hz), phase)) / 360.0)
                self._fit_curves["phase"].setData(fine, fp)
            else:
                self._fit_curves["phase"].setData([], [])


def install(window) -> MeasurementPane:
    """Add the Measured pane to a :class:`~bandsmith.app.window.main_window.WorkbenchWindow`."""
    pane = MeasurementPane(window.state, window.plot_grid, prompter=getattr(window, "prompter", None), parent=window)
    window.add_pane("Measured", pane)
    window.measurement_pane = pane
    return pane
