"""The "Filter bank" pane: many band-pass channels designed together, kept in the session.

Layout: on the left, the request — centres on the IEC 61260-1 rule (1/b-octave bands from F1 to
F2) or a typed list, Q (empty: from the band's width), centre gain, circuit and series — with the
Design button and a line for bad input; under it what the bank achieved (distinct values against
designing each channel alone, op-amp packages, spread of the centre gains, ripple of the sum). On
the right, every channel's response and their sum on one log-frequency plot, then the channels
(label, target and built centre, Q, centre gain, isolation to each neighbour).

Designing runs off the GUI thread (:class:`~bandsmith.app.window.background.BackgroundJob`); the
bank is kept in the session under ``extras["banks"]`` through the state's undoable
:meth:`~bandsmith.app.window.state.WorkbenchState.set_extra`, and a session that keeps one shows it
(measured again from its saved parts, :func:`bandsmith.bank.bank_session.banks_in`). The pane only
calls the core and draws.
"""

from __future__ import annotations

from typing import Callable

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtWidgets

from bandsmith import api
from bandsmith.bank.bank_json import bank_json
from bandsmith.bank.bank_session import EXTRAS_KEY, SavedBank, bank_record, banks_in
from bandsmith.bank.build import AUTO, PER_CHANNEL
from bandsmith.bank.response import bank_response
from bandsmith.circuits import all_topologies
from bandsmith.common.eseries import SERIES_NAMES
from bandsmith.common.values import format_value

from bandsmith.app.window.background import BackgroundJob
from bandsmith.app.window.panes.shown_only import RecomputeWhenShown
from bandsmith.app.window.theme import BAD

__all__ = ["BankPane", "install"]

_RULE, _LIST = "rule", "list"
_HEADER = ["ch", "label", "target f0", "f0", "Q", "gain dB", "iso below dB", "iso above dB", "circuit"]


class BankPane(RecomputeWhenShown, QtWidgets.QWidget):
    """The filter-bank pane over a workbench state.

    Parameters
    ----------
    state : WorkbenchState
    run_job : callable, optional
        Starts a :class:`BackgroundJob` (the window's, with progress in the status bar); by default
        the job is started directly.
    """

    def __init__(self, state, *, run_job: Callable | None = None, parent=None):
        super().__init__(parent)
        self.state = state
        self._run_job = run_job
        self._job: BackgroundJob | None = None
        self._shown_extra = object()
        self.shown: dict | None = None  # the bank --json object on show
        self._build()
        state.session_changed.connect(lambda _s: self.mark_dirty(now=True))  # shown when the tab is (a kept bank is re-measured)

    # ------------------------------------------------------------------ layout
    def _build(self) -> None:
        self.mode_combo = QtWidgets.QComboBox()
        self.mode_combo.addItem("1/b-octave bands (IEC 61260-1)", _RULE)
        self.mode_combo.addItem("centres as listed", _LIST)
        self.fraction_spin = QtWidgets.QSpinBox()
        self.fraction_spin.setRange(1, 48)
        self.fraction_spin.setValue(3)
        self.from_edit = QtWidgets.QLineEdit("20")
        self.to_edit = QtWidgets.QLineEdit("20k")
        self.centres_edit = QtWidgets.QLineEdit("697, 770, 852, 941")
        self.q_edit = QtWidgets.QLineEdit()
        self.q_edit.setPlaceholderText("from the band width")
        self.gain_edit = QtWidgets.QLineEdit("1")
        self.circuit_combo = QtWidgets.QComboBox()
        self.circuit_combo.addItem("auto (verdicts, hardest channel)", AUTO)
        self.circuit_combo.addItem("per channel (verdicts)", PER_CHANNEL)
        for t in all_topologies():
            if t.synthesize is not None:
                self.circuit_combo.addItem(t.title, t.id)
        self.series_combo = QtWidgets.QComboBox()
        for s in SERIES_NAMES + ("exact",):
            self.series_combo.addItem(s, s)
        self.series_combo.setCurrentIndex(self.series_combo.findData("E96"))
        self.btn_design = QtWidgets.QPushButton("Design bank")
        self.btn_design.clicked.connect(self.design)
        self.form_error = QtWidgets.QLabel()
        self.form_error.setWordWrap(True)
        self.form_error.setStyleSheet(f"color: {BAD};")
        self.summary = QtWidgets.QLabel()
        self.summary.setWordWrap(True)
        self.summary.setTextFormat(QtCore.Qt.TextFormat.RichText)

        form = QtWidgets.QFormLayout()
        form.addRow("Centres", self.mode_combo)
        form.addRow("1/b octave, b", self.fraction_spin)
        form.addRow("From (Hz)", self.from_edit)
        form.addRow("To (Hz)", self.to_edit)
        form.addRow("List (Hz)", self.centres_edit)
        form.addRow("Q", self.q_edit)
        form.addRow("Centre gain", self.gain_edit)
        form.addRow("Circuit", self.circuit_combo)
        form.addRow("Series", self.series_combo)
        left = QtWidgets.QVBoxLayout()
        left.addLayout(form)
        left.addWidget(self.btn_design)
        left.addWidget(self.form_error)
        left.addWidget(self.summary)
        left.addStretch(1)
        self.mode_combo.currentIndexChanged.connect(self._on_mode)
        self._on_mode()

        self.plot = pg.PlotWidget()
        self.plot.setLogMode(x=True, y=False)
        self.plot.showGrid(x=True, y=True, alpha=0.25)
        self.plot.setLabel("bottom", "frequency", units="Hz")
        self.plot.setLabel("left", "gain (dB)")
        self.plot.setMinimumHeight(260)
        self.table = QtWidgets.QTableWidget(0, len(_HEADER))
        self.table.setHorizontalHeaderLabels(_HEADER)
        self.table.verticalHeader().setVisible(False)
        self.table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        right = QtWidgets.QVBoxLayout()
        right.addWidget(self.plot, 3)
        right.addWidget(self.table, 2)

        lay = QtWidgets.QHBoxLayout(self)
        box = QtWidgets.QWidget()
        box.setLayout(left)
        box.setMaximumWidth(340)
        lay.addWidget(box)
        lay.addLayout(right, 1)

    def _on_mode(self, *_):
        rule = self.mode_combo.currentData() == _RULE
        for w in (self.fraction_spin, self.from_edit, self.to_edit):
            w.setEnabled(rule)
        self.centres_edit.setEnabled(not rule)

    # ------------------------------------------------------------------ designing
    @property
    def busy(self) -> bool:
        return self._job is not None and self._job.running

    def request(self) -> dict:
        """The form as keyword arguments of :func:`bandsmith.api.filter_bank`."""
        kw = {
            "q": self.q_edit.text().strip() or None,
            "gain": self.gain_edit.text().strip() or "1",
            "circuit": self.circuit_combo.currentData(),
            "series": self.series_combo.currentData(),
            "gbw_hz": self.state.session.opamp.gbw_hz,
        }
        if self.mode_combo.currentData() == _RULE:
            kw.update(octave_fraction=self.fraction_spin.value(), from_hz=self.from_edit.text().strip(), to_hz=self.to_edit.text().strip())
        else:
            kw.update(centres_hz=self.centres_edit.text())
        return kw

    def design(self) -> None:
        """Design the bank from the form off the GUI thread; keep it in the session when done."""
        if self.busy:
            return
        kw = self.request()
        self.form_error.setText("")
        self.btn_design.setEnabled(False)
        job = BackgroundJob(lambda _p, _c: api.filter_bank(**kw), "Filter bank", self)
        self._job = job
        job.finished.connect(self._on_designed)
        job.failed.connect(self._on_failed)
        job.cancelled.connect(lambda: self.btn_design.setEnabled(True))
        (self._run_job or (lambda j: j.start()))(job)

    def _on_failed(self, message: str) -> None:
        self.btn_design.setEnabled(True)
        self.form_error.setText(message)

    def _on_designed(self, report) -> None:
        self.btn_design.setEnabled(True)
        record = bank_record(report.result, "bank-1")
        self._show(bank_json(report.result, report.response))
        self._shown_extra = [record]
        self.state.set_extra(EXTRAS_KEY, [record], f"Design a filter bank of {len(report.result.channels)} channels")

    # ------------------------------------------------------------------ showing
    def refresh(self) -> None:
        """Show the session's bank (the first kept), if it changed."""
        self._dirty = False
        session = self.state.session
        raw = session.extras.get(EXTRAS_KEY)
        if raw == self._shown_extra:
            return
        self._shown_extra = raw
        banks, problems = banks_in(session)
        if problems:
            self.form_error.setText("; ".join(problems))
        if not banks:
            self._clear()
            return
        self._show_saved(banks[0])

    def _show_saved(self, saved: SavedBank) -> None:
        out = bank_json(saved.bank, bank_response(saved.bank))
        out["distinct_values_alone"] = saved.distinct_values_alone
        self._show(out)

    def _clear(self) -> None:
        self.shown = None
        self.plot.clear()
        self.table.setRowCount(0)
        self.summary.setText("No filter bank in this session yet.")

    def _show(self, out: dict) -> None:
        self.shown = out
        self.plot.clear()
        resp = out["response"]
        f = np.asarray(resp["f_hz"], dtype=float)
        for row in resp["channels_db"]:
            self.plot.plot(f, np.asarray(row, dtype=float), pen=pg.mkPen((150, 150, 150), width=1))
        self.plot.plot(f, np.asarray(resp["sum_db"], dtype=float), pen=pg.mkPen((20, 90, 170), width=2.5))
        self.plot.setYRange(-40, max(6.0, float(np.nanmax(resp["sum_db"])) + 3.0))
        ch = out["channels"]
        self.table.setRowCount(len(ch))
        for i, (c, iso) in enumerate(zip(ch, out["isolation_neighbours_db"])):
            fig = c["figures"]
            cells = [
                str(c["index"]),
                format_value(c["label_hz"], "Hz") if c["label_hz"] is not None else "",
                format_value(c["target_f0_hz"], "Hz", digits=5),
                format_value(c["f0_hz"], "Hz", digits=5),
                "—" if fig["q"] is None else f"{fig['q']:.4g}",
                "—" if fig["gain_center_db"] is None else f"{round(fig['gain_center_db'], 2) + 0.0:.2f}",
                "—" if iso["below"] is None else f"{iso['below']:.2f}",
                "—" if iso["above"] is None else f"{iso['above']:.2f}",
                c["circuit"],
            ]
            for j, text in enumerate(cells):
                self.table.setItem(i, j, QtWidgets.QTableWidgetItem(text))
        self.table.resizeColumnsToContents()
        op = out["opamps"]
        alone = out.get("distinct_values_alone")
        lo, hi = out["covered_band_hz"]
        self.summary.setText(
            f"<b>{len(ch)} channels</b><br>distinct values: {out['distinct_values']}"
            + ("" if alone is None else f" (each channel alone: {alone})")
            + f"<br>op-amps: {op['opamps']} in {op['quads']} quad(s), {op['duals']} dual(s)"
            + f"<br>centre gains within {out['centre_gain_spread_db']:.3g} dB"
            + f"<br>sum ripple {out['sum_ripple_db']:.3g} dB, {format_value(lo, 'Hz')} to {format_value(hi, 'Hz')}"
        )


def install(window) -> BankPane:
    """Add the filter-bank pane to a :class:`~bandsmith.app.window.main_window.WorkbenchWindow` as a tab."""
    pane = BankPane(window.state, run_job=window.run_job, parent=window)
    window.bank_pane = pane
    window.add_pane("Filter bank", pane)
    return pane
