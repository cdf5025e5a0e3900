"""The "Tolerance spread" pane: Monte Carlo trials of one candidate, its yield and worst case.

Top to bottom (the pane scrolls when the window is small):

- the candidate (the one selected on the board; choosing here selects it there) and **Run**;
- the settings: tolerance per kind (R, C, L), the op-amp GBW spread, the distribution, trials,
  seed and the yield window, beside a table of per-part tolerances (blank: the kind's). Every
  field takes any notation of :mod:`bandsmith.common.values` ("1%", "0.01", "10k" trials). The settings are
  the session's (``extras["spread"]``), changed through undoable edits;
- the yield in large type, what it counts, and a stale warning when the candidate or the settings
  changed after the run;
- histograms of f0, Q and the centre gain, the yield window shaded, nominal and worst-case lines;
- the statistics and the worst-case extremes with the corner of the tolerance box giving each.

A run goes off the GUI thread (:class:`~bandsmith.app.window.background.BackgroundJob`, the window's progress
bar and Cancel). It also computes the p5–p95 magnitude envelope of the first trials, shaded on the
Responses tab's magnitude plot for the candidate while the result is fresh. Results are not saved:
a run takes well under a second for ten thousand trials.

The module is longer than most because it also holds the candidate chooser and the circuit reading
the noise pane shares (:class:`CandidatePicker`, :func:`candidate_circuit`, :func:`winding_text`);
the histograms are :mod:`bandsmith.app.plots.histogram`'s, and every function stays short.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, replace
from typing import Callable

import numpy as np
from PySide6 import QtCore, QtGui, QtWidgets

from bandsmith.design.candidate import Candidate
from bandsmith.common.errors import InputError
from bandsmith.solver.mna import IDEAL, OpAmpModel
from bandsmith.solver.netlist import Netlist
from bandsmith.spread.tolerance import (
    DISTRIBUTIONS,
    MAX_TRIALS,
    Envelope,
    Spread,
    SpreadCancelled,
    SpreadSettings,
    magnitude_envelope,
    part_tolerances,
    run_spread,
)
from bandsmith.common.values import format_value, parse_fraction, parse_value

from bandsmith.app.window.background import BackgroundJob, Cancelled
from bandsmith.app.document.extras_settings import SPREAD_KEY, circuit_refs, spread_for_circuit, stored_spread
from bandsmith.app.document.results import frequency_grid
from bandsmith.app.plots.histogram import HISTOGRAM_FIGURES, FigureHistogram, window_of
from bandsmith.app.window.state import WorkbenchState, part_unit
from bandsmith.app.window.theme import BAD, MUTED, WARN, error_label, headline
from bandsmith.app.window.widgets.value_field import ValueField

__all__ = ["SpreadPane", "SpreadRun", "CandidatePicker", "FigureHistogram", "window_of", "candidate_circuit", "winding_text", "ENVELOPE_KEY", "ENVELOPE_TRIALS", "install"]

#: Name of the band the pane shades on the magnitude plot.
ENVELOPE_KEY = "spread"
#: Trials the magnitude envelope is taken over (the first ones of the run).
ENVELOPE_TRIALS = 2000
_DIST_TEXT = {"uniform": "uniform, ±p", "normal": "normal, p = 3σ"}


# ---------------------------------------------------------------------------------------------
# A candidate chooser shared with the noise pane
# ---------------------------------------------------------------------------------------------
class CandidatePicker(QtWidgets.QComboBox):
    """The active candidates; shows the board's selected one, and choosing here selects it there."""

    def __init__(self, state: WorkbenchState, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.state = state
        self.setObjectName("candidatePicker")
        self.setToolTip("The candidate to analyse (the one selected on the board).")
        self.setSizeAdjustPolicy(QtWidgets.QComboBox.SizeAdjustPolicy.AdjustToContents)
        self.activated.connect(self._on_activated)
        state.session_changed.connect(lambda _s: self._fill())
        state.current_changed.connect(lambda _c: self._fill())
        self._fill()

    @property
    def candidate_id(self) -> str | None:
        text = self.currentText()
        return text or None

    def _fill(self) -> None:
        ids = [c.id for c in self.state.session.candidates if c.enabled]
        want = self.state.current_id if self.state.current_id in ids else (ids[0] if ids else "")
        self.blockSignals(True)
        try:
            if [self.itemText(i) for i in range(self.count())] != ids:
                self.clear()
                self.addItems(ids)
            self.setCurrentIndex(ids.index(want) if want in ids else -1)
        finally:
            self.blockSignals(False)

    def _on_activated(self, index: int) -> None:
        self.state.set_current(self.itemText(index))


def candidate_circuit(state: WorkbenchState, cid: str | None) -> tuple[Netlist, OpAmpModel] | None:
    """The netlist and op-amp of an active candidate, or None (no candidate, or unusable values)."""
    if not cid:
        return None
    s = state.session
    try:
        entry = s.candidate(cid)
        return Candidate(entry.topology_id, entry.values).netlist, s.conditions_for(entry).opamp or IDEAL
    except InputError:
        return None


def winding_text(netlist: Netlist, opamp: OpAmpModel) -> str:
    """One line per inductor: its Q at f0 (ωL/RL) and how much its winding lowers the circuit's Q
    (:func:`bandsmith.analysis.inductor.winding_effect`); "" for a circuit without an inductor."""
    from bandsmith.analysis.inductor import winding_effect

    try:
        effects = winding_effect(netlist, opamp=opamp)
    except InputError:
        return ""
    lines = []
    for w in effects:
        if w.rl_ohm <= 0:
            lines.append(f"Inductor {w.ref}: lossless ({w.series_ref} = 0); give its winding resistance to see what it costs.")
        elif math.isfinite(w.inductor_q) and math.isfinite(w.q_lossless):
            lines.append(
                f"Inductor {w.ref}: Q at f0 = {w.inductor_q:.3g} (ωL/{w.series_ref}, {w.series_ref} = {format_value(w.rl_ohm, 'Ω', digits=3)}); "
                f"its winding lowers the circuit's Q from {w.q_lossless:.4g} to {w.q:.4g} ({-100.0 * w.q_drop:+.2f} %)."
            )
    return " ".join(lines)


# ---------------------------------------------------------------------------------------------
# A run and its result
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True, eq=False)  # compared by identity: it holds arrays
class SpreadRun:
    """A finished run: for which candidate and inputs (``key``), the spread, the envelope, notes."""

    candidate_id: str
    key: tuple
    spread: Spread
    envelope: Envelope
    notes: tuple[str, ...]
    seconds: float


def _count(n: int) -> str:
    """A count with its thousands apart: 10 000."""
    return f"{int(n):,}".replace(",", " ")


def _percent(x: float) -> str:
    return f"{100.0 * x:.4g} %"


def _whole_number(text: str, field: str, *, low: int, high: int) -> int:
    v = parse_value(text, field=field)
    if not (math.isfinite(v) and float(v).is_integer()):
        raise InputError(field, f"must be a whole number, got {text.strip()!r}")
    if not low <= v <= high:
        raise InputError(field, f"must be from {low} to {_count(high)}")
    return int(v)


def _table(rows: int, cols: int, parent, name: str) -> QtWidgets.QTableWidget:
    t = QtWidgets.QTableWidget(rows, cols, parent)
    t.setObjectName(name)
    t.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
    t.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.NoSelection)
    t.verticalHeader().setDefaultSectionSize(22)
    t.setHorizontalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAsNeeded)
    t.setVerticalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
    return t


def _fit_height(t: QtWidgets.QTableWidget) -> None:
    """Make a table exactly as tall as its rows (no vertical scrolling)."""
    h = t.horizontalHeader().height() if t.horizontalHeader().isVisible() else 0
    h += sum(t.rowHeight(r) for r in range(t.rowCount())) + 2 * t.frameWidth()
    if t.horizontalScrollBar().isVisible():
        h += t.horizontalScrollBar().height()
    t.setFixedHeight(h + 2)


def _item(text: str, *, bold: bool = False, colour: str | None = None, tip: str = "", align_right: bool = True) -> QtWidgets.QTableWidgetItem:
    it = QtWidgets.QTableWidgetItem(text)
    if align_right:
        it.setTextAlignment(QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter)
    if bold:
        f = it.font()
        f.setBold(True)
        it.setFont(f)
    if colour:
        it.setForeground(QtGui.QColor(colour))
    if tip:
        it.setToolTip(tip)
    return it


def _fmt_figure(key: str, x: float) -> str:
    if not math.isfinite(x):
        return "—"
    if key == "f0_hz":
        return format_value(x, "Hz", digits=5)
    if key == "q":
        return f"{x:.4g}"
    return f"{x:+.3f} dB"


def _fmt_spread(key: str, x: float) -> str:
    """A standard deviation: f0 in Hz, Q plain, gain in dB (no sign)."""
    if not math.isfinite(x):
        return "—"
    if key == "f0_hz":
        return format_value(x, "Hz", digits=3)
    if key == "q":
        return f"{x:.3g}"
    return f"{x:.3f} dB"


class SpreadPane(QtWidgets.QScrollArea):
    """The tolerance spread of the selected candidate.

    Parameters
    ----------
    state : WorkbenchState
        The session (settings in ``extras["spread"]``) and the selected candidate.
    magnitude_plot : MagnitudePlot, optional
        Where the envelope is shaded (the window's Responses tab).
    run_job : callable, optional
        ``run_job(job)`` starts a :class:`BackgroundJob` (the window's :meth:`run_job`, which shows
        its progress and Cancel); by default the job simply starts.

    Signals
    -------
    run_finished(object)
        A run ended with a :class:`SpreadRun`.
    run_ended(str)
        A run ended: ``"finished"``, ``"cancelled"`` or ``"failed"``.
    """

    run_finished = QtCore.Signal(object)
    run_ended = QtCore.Signal(str)

    def __init__(
        self,
        state: WorkbenchState,
        *,
        magnitude_plot=None,
        run_job: Callable[[BackgroundJob], object] | None = None,
        parent: QtWidgets.QWidget | None = None,
    ):
        super().__init__(parent)
        self.setObjectName("spreadPane")
        self.state = state
        self.magnitude_plot = magnitude_plot
        self._run_job = run_job or (lambda job: job.start())
        self.job: BackgroundJob | None = None
        self.runs: dict[str, SpreadRun] = {}
        self._envelope_of = None
        self._filling = False
        self.setWidgetResizable(True)
        self.setFrameShape(QtWidgets.QFrame.Shape.NoFrame)
        body = QtWidgets.QWidget(self)
        body.setObjectName("spreadBody")
        self.setWidget(body)
        outer = QtWidgets.QVBoxLayout(body)
        outer.setContentsMargins(10, 8, 10, 10)
        outer.setSpacing(6)

        self._build_run_bar(body, outer)
        self.settings_row = QtWidgets.QBoxLayout(QtWidgets.QBoxLayout.Direction.LeftToRight)
        self.settings_row.setSpacing(12)
        outer.addLayout(self.settings_row)
        self.settings_row.addWidget(self._build_settings_box(body), 0)
        self.settings_row.addWidget(self._build_parts_box(body), 1)
        self._build_yield(body, outer)
        self._build_histograms(body, outer)
        self._build_tables(body, outer)
        outer.addStretch(1)
        for tbl in (self.stats, self.corners):
            _fit_height(tbl)

        state.session_changed.connect(self._on_session_changed)
        state.current_changed.connect(lambda _c: self._on_session_changed(state.session))
        self._on_session_changed(state.session)

    # ------------------------------------------------------------------ building
    def _build_run_bar(self, body: QtWidgets.QWidget, outer: QtWidgets.QVBoxLayout) -> None:
        """The candidate, Run and what the last run was; the inductor's winding line."""
        bar = QtWidgets.QHBoxLayout()
        bar.addWidget(QtWidgets.QLabel("Candidate", body))
        self.picker = CandidatePicker(self.state, body)
        bar.addWidget(self.picker)
        self.run_button = QtWidgets.QPushButton("Run", body)
        self.run_button.setObjectName("runSpread")
        self.run_button.setToolTip("Draw the trials and find the worst case (off the window's thread; Cancel in the status bar).")
        f = self.run_button.font()
        f.setBold(True)
        self.run_button.setFont(f)
        self.run_button.setMinimumWidth(90)
        self.run_button.clicked.connect(self.run)
        bar.addWidget(self.run_button)
        self.run_info = QtWidgets.QLabel(body)
        self.run_info.setObjectName("spreadRunInfo")
        self.run_info.setStyleSheet(f"color: {MUTED};")
        self.run_info.setWordWrap(True)
        bar.addWidget(self.run_info, 1)
        outer.addLayout(bar)
        self.winding = QtWidgets.QLabel(body)
        self.winding.setObjectName("windingLine")
        self.winding.setWordWrap(True)
        self.winding.setToolTip("The inductor's own quality factor at f0 and what its winding resistance does to the circuit's Q (the spread varies the winding resistance as a resistor).")
        self.winding.hide()
        outer.addWidget(self.winding)

    def _frac_field(self, box: QtWidgets.QWidget, name: str, tip: str, check: Callable[[float], SpreadSettings]) -> ValueField:
        """A fraction field ("1%", "0.01") whose entry is checked by building the settings it makes."""
        return ValueField(name, "%", parse=lambda t: self._checked(check, parse_fraction(t, field=name)), fmt=lambda v: "" if v is None else _percent(v), tooltip=tip, parent=box)

    def _build_settings_box(self, body: QtWidgets.QWidget) -> QtWidgets.QGroupBox:
        """Tolerances per kind, the GBW spread, the distribution, trials, seed and the yield window."""
        box = QtWidgets.QGroupBox("Tolerances and trials", body)
        box.setObjectName("spreadSettings")
        grid = QtWidgets.QGridLayout(box)
        grid.setHorizontalSpacing(6)
        grid.setVerticalSpacing(3)
        self.fields: dict[str, ValueField] = {}

        specs = [
            ("R", "Resistors ±", self._frac_field(box, "tol_R", "Tolerance of every resistor (and a winding resistance): 1%, 0.5 %, 0.01.", lambda v: self._with_kind("R", v))),
            ("C", "Capacitors ±", self._frac_field(box, "tol_C", "Tolerance of every capacitor: 5%, 2 %, 0.05.", lambda v: self._with_kind("C", v))),
            ("L", "Inductors ±", self._frac_field(box, "tol_L", "Tolerance of every inductor: 10%, 0.1.", lambda v: self._with_kind("L", v))),
            ("gbw_tol", "Op-amp GBW ±", self._frac_field(box, "gbw_tol", "Spread of the op-amp's gain-bandwidth: 20%, 0.2 (needs a finite op-amp).", lambda v: replace(self.settings, gbw_tol=v))),
        ]
        for i, (key, label, fld) in enumerate(specs):
            grid.addWidget(QtWidgets.QLabel(label, box), i, 0)
            grid.addWidget(fld, i, 1)
            self.fields[key] = fld
        self.dist = QtWidgets.QComboBox(box)
        self.dist.setObjectName("spreadDist")
        for d in DISTRIBUTIONS:
            self.dist.addItem(_DIST_TEXT[d], d)
        self.dist.setToolTip("uniform: each part anywhere within ±p; normal: p is three standard deviations.")
        self.dist.activated.connect(self._on_dist)
        grid.addWidget(QtWidgets.QLabel("Distribution", box), 0, 2)
        grid.addWidget(self.dist, 0, 3)
        self.fields["trials"] = ValueField(
            "trials", "", parse=lambda t: self._checked(lambda v: replace(self.settings, trials=v), _whole_number(t, "trials", low=1, high=MAX_TRIALS)),
            fmt=lambda v: "" if v is None else str(int(v)), tooltip=f"Number of trials, 1 to {_count(MAX_TRIALS)}: 10000, 10k, 1e5.", parent=box,
        )
        self.fields["seed"] = ValueField(
            "seed", "", parse=lambda t: self._checked(lambda v: replace(self.settings, seed=v), _whole_number(t, "seed", low=0, high=2**63 - 1)),
            fmt=lambda v: "" if v is None else str(int(v)), tooltip="Seed of the random draw (a whole number); the same seed gives the same trials.", parent=box,
        )
        grid.addWidget(QtWidgets.QLabel("Trials", box), 1, 2)
        grid.addWidget(self.fields["trials"], 1, 3)
        grid.addWidget(QtWidgets.QLabel("Seed", box), 2, 2)
        grid.addWidget(self.fields["seed"], 2, 3)
        self._build_window_rows(box, grid)
        for fld in self.fields.values():
            fld.edit.setMaximumWidth(110)
        for key, fld in self.fields.items():
            fld.committed.connect(lambda v, k=key: self._on_field(k, v))
        grid.setColumnStretch(4, 1)
        return box

    def _build_window_rows(self, box: QtWidgets.QGroupBox, grid: QtWidgets.QGridLayout) -> None:
        """The yield window: f0 and Q within ± a fraction, the centre gain within ± some dB."""
        win = QtWidgets.QLabel("Yield window around nominal", box)
        win.setObjectName("sectionTitle")
        grid.addWidget(win, 4, 0, 1, 4)
        self.fields["window_f0"] = self._frac_field(box, "window_f0", "A trial passes when its f0 is within ± this of nominal: 5%, 0.05.", lambda v: replace(self.settings, window_f0=v))
        self.fields["window_q"] = self._frac_field(box, "window_q", "… its Q within ± this of nominal: 10%, 0.1.", lambda v: replace(self.settings, window_q=v))
        self.fields["window_gain_db"] = ValueField(
            "window_gain_db", "dB", parse=lambda t: self._checked(lambda v: replace(self.settings, window_gain_db=v), parse_value(t.replace("dB", ""), field="window_gain_db")),
            fmt=lambda v: "" if v is None else f"{v:g} dB", tooltip="… and its centre gain within ± this many dB of nominal: 1, 0.5 dB.", parent=box,
        )
        grid.addWidget(QtWidgets.QLabel("f0 ±", box), 5, 0)
        grid.addWidget(self.fields["window_f0"], 5, 1)
        grid.addWidget(QtWidgets.QLabel("Q ±", box), 5, 2)
        grid.addWidget(self.fields["window_q"], 5, 3)
        grid.addWidget(QtWidgets.QLabel("Gain ±", box), 6, 0)
        grid.addWidget(self.fields["window_gain_db"], 6, 1)

    def _build_parts_box(self, body: QtWidgets.QWidget) -> QtWidgets.QGroupBox:
        """The table of per-part tolerances."""
        parts_box = QtWidgets.QGroupBox("Per-part tolerance (blank: its kind's)", body)
        pl = QtWidgets.QVBoxLayout(parts_box)
        self.parts = QtWidgets.QTableWidget(0, 3, parts_box)
        self.parts.setObjectName("partTolerances")
        self.parts.setHorizontalHeaderLabels(["part", "value", "tolerance ±"])
        self.parts.verticalHeader().hide()
        self.parts.verticalHeader().setDefaultSectionSize(22)
        self.parts.horizontalHeader().setStretchLastSection(True)
        self.parts.setToolTip("Type a part's own tolerance (2%, 0.5 %); clear it to use its kind's. Overrides apply to every candidate with a part of that name.")
        self.parts.itemChanged.connect(self._on_part_item)
        pl.addWidget(self.parts)
        self.parts_error = error_label(parts_box)
        pl.addWidget(self.parts_error)
        return parts_box

    def _build_yield(self, body: QtWidgets.QWidget, outer: QtWidgets.QVBoxLayout) -> None:
        """The stale warning, the error line and the yield in large type."""
        self.stale = QtWidgets.QLabel(body)
        self.stale.setObjectName("spreadStale")
        self.stale.setWordWrap(True)
        self.stale.setStyleSheet(f"color: {WARN}; background: #fdf5e6; border: 1px solid {WARN}; padding: 4px; font-weight: 600;")
        self.stale.hide()
        outer.addWidget(self.stale)
        self.error = error_label(body)
        outer.addWidget(self.error)
        yrow = QtWidgets.QHBoxLayout()
        ycol, self.yield_label = headline(body, "Yield", "yieldLabel", 30)
        yrow.addLayout(ycol)
        self.yield_text = QtWidgets.QLabel(body)
        self.yield_text.setObjectName("yieldText")
        self.yield_text.setWordWrap(True)
        self.yield_text.setTextFormat(QtCore.Qt.TextFormat.RichText)
        yrow.addWidget(self.yield_text, 1)
        outer.addLayout(yrow)

    def _build_histograms(self, body: QtWidgets.QWidget, outer: QtWidgets.QVBoxLayout) -> None:
        """The three histograms, their key and the envelope switch."""
        self.hist_grid = QtWidgets.QGridLayout()
        self.hist_grid.setSpacing(6)
        outer.addLayout(self.hist_grid)
        self.histograms = {key: FigureHistogram(key, title, unit, body) for key, title, unit in HISTOGRAM_FIGURES}
        self._hist_columns = 0
        self._reflow_histograms(3)
        key_line = QtWidgets.QLabel(
            "Shaded green: the yield window. Solid line: nominal. Red dotted: the worst-case corners.", body
        )
        key_line.setObjectName("histogramKey")
        key_line.setStyleSheet(f"color: {MUTED};")
        key_line.setWordWrap(True)
        outer.addWidget(key_line)
        env_row = QtWidgets.QHBoxLayout()
        self.show_envelope = QtWidgets.QCheckBox("Shade the p5–p95 band on the Magnitude plot", body)
        self.show_envelope.setObjectName("showEnvelope")
        self.show_envelope.setChecked(True)
        self.show_envelope.setToolTip(f"The 5th to 95th percentile of the magnitude over the first {ENVELOPE_TRIALS} trials, on the Responses tab.")
        self.show_envelope.toggled.connect(lambda _on: self._update_envelope())
        env_row.addWidget(self.show_envelope)
        env_row.addStretch(1)
        outer.addLayout(env_row)

    def _build_tables(self, body: QtWidgets.QWidget, outer: QtWidgets.QVBoxLayout) -> None:
        """The statistics of the trials and the worst-case corners."""
        self.tables_row = QtWidgets.QBoxLayout(QtWidgets.QBoxLayout.Direction.LeftToRight)
        self.tables_row.setSpacing(12)
        outer.addLayout(self.tables_row)
        scol = QtWidgets.QVBoxLayout()
        t = QtWidgets.QLabel("Statistics of the trials", body)
        t.setObjectName("sectionTitle")
        scol.addWidget(t)
        self._stat_rows = ("nominal", "mean", "std", "min", "p5", "p50", "p95", "max", "worst low", "worst high")
        self.stats = _table(len(self._stat_rows), 3, body, "spreadStats")
        self.stats.setHorizontalHeaderLabels([title for _k, title, _u in HISTOGRAM_FIGURES])
        self.stats.setVerticalHeaderLabels(["nominal", "mean", "std. dev.", "min", "p5", "median", "p95", "max", "worst case low", "worst case high"])
        self.stats.horizontalHeader().setSectionResizeMode(QtWidgets.QHeaderView.ResizeMode.Stretch)
        scol.addWidget(self.stats)
        scol.addStretch(1)
        self.tables_row.addLayout(scol, 1)
        wcol = QtWidgets.QVBoxLayout()
        self.worst_title = QtWidgets.QLabel("Worst case: the corners of the tolerance box", body)
        self.worst_title.setObjectName("sectionTitle")
        self.worst_title.setWordWrap(True)
        wcol.addWidget(self.worst_title)
        self.corners = _table(0, 6, body, "worstCorners")
        self.corners.setHorizontalHeaderLabels(["f0 low", "f0 high", "Q low", "Q high", "gain low", "gain high"])
        self.corners.horizontalHeader().setSectionResizeMode(QtWidgets.QHeaderView.ResizeMode.Stretch)
        self.corners.setToolTip("Each column is one corner: the deviation of every part (and the GBW) that gives that extreme.")
        wcol.addWidget(self.corners)
        self.worst_note = QtWidgets.QLabel(body)
        self.worst_note.setObjectName("worstNote")
        self.worst_note.setWordWrap(True)
        self.worst_note.setStyleSheet(f"color: {MUTED};")
        wcol.addWidget(self.worst_note)
        wcol.addStretch(1)
        self.tables_row.addLayout(wcol, 1)

    # ------------------------------------------------------------------ settings
    @property
    def settings(self) -> SpreadSettings:
        """The session's spread settings (the defaults when it has none)."""
        return stored_spread(self.state.session).settings

    def _checked(self, make: Callable[[float], SpreadSettings], value):
        make(value)  # raises InputError with the reason, shown under the field
        return value

    def _with_kind(self, kind: str, value: float) -> SpreadSettings:
        tol = dict(self.settings.tolerances)
        tol[kind] = value
        return replace(self.settings, tolerances=tol)

    def _store(self, settings: SpreadSettings, text: str) -> None:
        self.state.set_extra(SPREAD_KEY, settings.to_json(), text)

    def _on_field(self, key: str, value) -> None:
        s = self.settings
        if key in ("R", "C", "L"):
            self._store(self._with_kind(key, value), f"spread: {key} tolerance ±{_percent(value)}")
        elif key in ("window_f0", "window_q", "gbw_tol"):
            self._store(replace(s, **{key: value}), f"spread: {key.replace('_', ' ')} ±{_percent(value)}")
        elif key == "window_gain_db":
            self._store(replace(s, window_gain_db=value), f"spread: gain window ±{value:g} dB")
        else:
            self._store(replace(s, **{key: int(value)}), f"spread: {key} {int(value)}")

    def _on_dist(self, index: int) -> None:
        d = self.dist.itemData(index)
        if d != self.settings.dist:
            self._store(replace(self.settings, dist=d), f"spread: {d} distribution")

    def set_part_tolerance(self, ref: str, value: float | None) -> None:
        """Give one part its own tolerance (a fraction), or None to use its kind's again."""
        tol = dict(self.settings.tolerances)
        if value is None:
            tol.pop(ref, None)
            text = f"spread: {ref} takes its kind's tolerance"
        else:
            tol[ref] = value
            text = f"spread: {ref} ±{_percent(value)}"
        self._store(replace(self.settings, tolerances=tol), text)

    def _on_part_item(self, item: QtWidgets.QTableWidgetItem) -> None:
        if self._filling or item.column() != 2:
            return
        ref = self.parts.item(item.row(), 0).text()
        text = item.text().strip()
        try:
            if text in ("", "-", "—") or text.startswith("("):
                value = None
            else:
                value = parse_fraction(text, field=f"tolerance of {ref}")
                tol = dict(self.settings.tolerances)
                tol[ref] = value
                replace(self.settings, tolerances=tol)
        except InputError as exc:
            self.parts_error.setText(str(exc))
            self.parts_error.show()
            self._fill_parts()
            return
        self.parts_error.hide()
        if value is None and ref not in self.settings.tolerances:
            self._fill_parts()
            return
        self.set_part_tolerance(ref, value)

    def _fill_settings(self) -> None:
        st = stored_spread(self.state.session)
        s = st.settings
        for kind in ("R", "C", "L"):
            self.fields[kind].set_value(s.tolerances[kind])
        for key in ("gbw_tol", "trials", "seed", "window_f0", "window_q", "window_gain_db"):
            self.fields[key].set_value(getattr(s, key))
        self.dist.setCurrentIndex(self.dist.findData(s.dist))
        circ = candidate_circuit(self.state, self.picker.candidate_id)
        ideal = circ is None or circ[1].ideal
        text = winding_text(*circ) if circ is not None else ""
        self.winding.setText(text)
        self.winding.setVisible(bool(text))
        gbw = self.fields["gbw_tol"]
        gbw.edit.setEnabled(not ideal)
        gbw.edit.setToolTip(
            "The op-amp is ideal: it has no GBW to spread (give the session's op-amp a GBW)." if ideal
            else "Spread of the op-amp's gain-bandwidth: 20%, 0.2."
        )
        if st.problem:
            self.error.setText(st.problem)
            self.error.show()
        self._fill_parts()

    def _fill_parts(self) -> None:
        self._filling = True
        try:
            circ = candidate_circuit(self.state, self.picker.candidate_id)
            s = self.settings
            if circ is None:
                self.parts.setRowCount(0)
                return
            net = circ[0]
            kinds = {}
            values = {}
            for e in net.passives:
                kinds[e.ref], values[e.ref] = e.kind, e.value
                if e.kind == "L" and e.series_resistance > 0:
                    ref = e.series_ref or e.ref + ".rs"
                    kinds[ref], values[ref] = "R", e.series_resistance
            refs = circuit_refs(net)
            self.parts.setRowCount(len(refs))
            for r, ref in enumerate(refs):
                kind = kinds[ref]
                name = QtWidgets.QTableWidgetItem(ref)
                name.setFlags(name.flags() & ~QtCore.Qt.ItemFlag.ItemIsEditable)
                val = QtWidgets.QTableWidgetItem(format_value(values[ref], part_unit(kind), digits=4))
                val.setFlags(val.flags() & ~QtCore.Qt.ItemFlag.ItemIsEditable)
                own = ref in s.tolerances and ref not in ("R", "C", "L")
                tol = _item(_percent(s.tolerances[ref]) if own else f"({_percent(s.tolerances[kind])}, {kind})", bold=own, colour=None if own else MUTED, align_right=False)
                tol.setToolTip("this part's own tolerance; clear it to use its kind's" if own else f"the tolerance of every {kind}; type one for {ref} alone")
                self.parts.setItem(r, 0, name)
                self.parts.setItem(r, 1, val)
                self.parts.setItem(r, 2, tol)
            head = self.parts.horizontalHeader()
            head.setSectionResizeMode(0, QtWidgets.QHeaderView.ResizeMode.ResizeToContents)
            head.setSectionResizeMode(1, QtWidgets.QHeaderView.ResizeMode.ResizeToContents)
            head.setSectionResizeMode(2, QtWidgets.QHeaderView.ResizeMode.Stretch)
            h = self.parts.horizontalHeader().height() + 22 * len(refs) + 2 * self.parts.frameWidth() + 2
            self.parts.setFixedHeight(min(max(h, 80), 230))
        finally:
            self._filling = False

    # ------------------------------------------------------------------ running
    def _inputs(self, cid: str):
        """(netlist, op-amp, settings for the circuit, notes, key) of a candidate; raises InputError."""
        circ = candidate_circuit(self.state, cid)
        if circ is None:
            raise InputError("candidate", f"{cid} has no usable part values")
        net, opamp = circ
        settings, notes = spread_for_circuit(self.settings, net, opamp)
        entry = self.state.session.candidate(cid)
        key = (entry.topology_id, tuple(sorted(entry.values.items())), opamp, settings, float(self.state.session.target.f0_hz))
        return net, opamp, settings, notes, key

    def run(self) -> BackgroundJob | None:
        """Run the spread of the shown candidate (a running one is cancelled first)."""
        cid = self.picker.candidate_id
        if not cid:
            return None
        try:
            net, opamp, settings, notes, key = self._inputs(cid)
            part_tolerances(net, settings)  # bad settings fail here, on the window's thread
        except InputError as exc:
            self._show_error(str(exc))
            return None
        if self.job is not None and self.job.running:
            self.job.cancel()
        f_hz = frequency_grid(self.state.session.target.f0_hz)

        def work(progress, cancelled):
            t0 = time.perf_counter()

            def step(done, total):
                progress(0.9 * done / total)

            try:
                spread = run_spread(net, settings, opamp=opamp, progress=step, cancel=cancelled)
            except SpreadCancelled:
                raise Cancelled() from None
            if cancelled():
                raise Cancelled()
            env = magnitude_envelope(net, settings, f_hz, opamp=opamp, trials=min(ENVELOPE_TRIALS, settings.trials), percentiles=(5.0, 50.0, 95.0))
            progress(1.0)
            return SpreadRun(cid, key, spread, env, notes, time.perf_counter() - t0)

        n = _count(settings.trials)
        job = BackgroundJob(work, title=f"Tolerance spread of {cid}, {n} trials", parent=self)
        job.finished.connect(lambda result, j=job: self._on_job_finished(j, result))
        job.failed.connect(lambda text, j=job: self._on_job_failed(j, text))
        job.cancelled.connect(lambda j=job: self._on_job_cancelled(j))
        self.job = job
        self.run_button.setEnabled(False)
        self.run_button.setText("Running…")
        self.error.hide()
        self._run_job(job)
        return job

    def _job_done(self, job) -> bool:
        """True when ``job`` is the pane's latest (an older, replaced one is ignored)."""
        if job is not self.job:
            return False
        self.run_button.setEnabled(True)
        self.run_button.setText("Run")
        return True

    def _on_job_finished(self, job, run: SpreadRun) -> None:
        if not self._job_done(job):
            return
        self.runs[run.candidate_id] = run
        self._show_result()
        self.run_finished.emit(run)
        self.run_ended.emit("finished")

    def _on_job_failed(self, job, text: str) -> None:
        if not self._job_done(job):
            return
        self._show_error("The spread could not be run: " + text.split(": ", 1)[-1])
        self.run_ended.emit("failed")

    def _on_job_cancelled(self, job) -> None:
        if not self._job_done(job):
            return
        self.run_info.setText("Cancelled; " + ("the earlier result is kept." if self.current_run() else "nothing was kept."))
        self.run_ended.emit("cancelled")

    def _show_error(self, text: str) -> None:
        self.error.setText(text)
        self.error.show()

    # ------------------------------------------------------------------ showing
    def current_run(self) -> SpreadRun | None:
        cid = self.picker.candidate_id
        return self.runs.get(cid) if cid else None

    def is_stale(self) -> bool:
        """True when the shown result no longer matches its candidate and the settings."""
        run = self.current_run()
        if run is None:
            return False
        try:
            return self._inputs(run.candidate_id)[4] != run.key
        except InputError:
            return True

    def _on_session_changed(self, _session) -> None:
        ids = {c.id for c in self.state.session.candidates}
        for cid in list(self.runs):
            if cid not in ids:
                del self.runs[cid]
        self.error.hide()
        self._fill_settings()
        self._show_result()

    def _show_result(self) -> None:
        run = self.current_run()
        cid = self.picker.candidate_id
        self.run_button.setEnabled(bool(cid) and not (self.job is not None and self.job.running))
        if run is None:
            self.stale.hide()
            self.yield_label.setText("—")
            n = _count(self.settings.trials)
            self.yield_text.setText(f"Press <b>Run</b> to draw {n} trials of <b>{cid}</b>." if cid else "No active candidate.")
            self.run_info.setText("Not run yet." if cid else "")
            for h in self.histograms.values():
                h.clear_data()
            self.stats.clearContents()
            self.corners.setRowCount(0)
            _fit_height(self.corners)
            self.worst_note.setText("")
            self._update_envelope()
            return
        sp = run.spread
        s = sp.settings
        stale = self.is_stale()
        self.stale.setVisible(stale)
        self.stale.setText(
            f"⚠ Stale: {run.candidate_id} or the spread settings changed after this run; the figures below are from "
            "before the change (and the band is off the Magnitude plot). Press Run to bring them up to date."
        )
        self.yield_label.setText(f"{100.0 * sp.yield_fraction:.1f} %")
        passed = int(np.count_nonzero(sp.passed))
        failed = sp.failed_trials
        lines = [
            f"<b>{_count(passed)}</b> of {_count(s.trials)} trials within the window: f0 ±{_percent(s.window_f0)}, "
            f"Q ±{_percent(s.window_q)}, gain ±{s.window_gain_db:g} dB of nominal."
        ]
        if failed:
            lines.append(f"<span style='color:{BAD}'>{_count(failed)} trials unstable or without a band-pass peak (counted as failing).</span>")
        lines += [f"<span style='color:{MUTED}'>{n}.</span>" for n in run.notes]
        self.yield_text.setText("<br>".join(lines))
        tol = ", ".join(f"{k} ±{_percent(v)}" for k, v in sp.tolerances.items())
        gbw = f", GBW ±{_percent(s.gbw_tol)}" if s.gbw_tol > 0 else ""
        self.run_info.setText(
            f"{run.candidate_id}: {_count(s.trials)} trials, {_DIST_TEXT[s.dist]}, seed {s.seed} ({tol}{gbw}); {run.seconds:.2f} s."
        )
        nom = sp.nominal.item()
        colour = self.state.style(run.candidate_id).colour
        for key, _title, _unit in HISTOGRAM_FIGURES:
            x = getattr(sp, key)[sp.measured]
            n0 = float(getattr(nom, key))
            self.histograms[key].show_data(x, n0, window_of(s, key, n0), getattr(sp.worst, key), colour)
        self._fill_stats(sp)
        self._fill_corners(sp)
        self._update_envelope()

    def _fill_stats(self, sp: Spread) -> None:
        nom = sp.nominal.item()
        for j, (key, _title, _unit) in enumerate(HISTOGRAM_FIGURES):
            st = sp.stats(key)
            lo, hi = getattr(sp.worst, key)
            vals = [float(getattr(nom, key)), st["mean"], st["std"], st["min"], st["p5"], st["p50"], st["p95"], st["max"], lo, hi]
            for i, v in enumerate(vals):
                text = _fmt_spread(key, v) if self._stat_rows[i] == "std" else _fmt_figure(key, v)
                self.stats.setItem(i, j, _item(text, bold=self._stat_rows[i].startswith("worst"), colour=BAD if self._stat_rows[i].startswith("worst") else None))

    def _fill_corners(self, sp: Spread) -> None:
        wc = sp.worst
        self.worst_title.setText(
            f"Worst case: {wc.method}" + (f" ({wc.corner_count})" if wc.corner_count else "") + " of the tolerance box"
        )
        names = []
        for key in ("f0_hz", "q", "gain_center_db"):
            for corner in wc.corners.get(key, ({}, {})):
                for n in corner:
                    if n not in names:
                        names.append(n)
        self.corners.setRowCount(len(names))
        self.corners.setVerticalHeaderLabels(["GBW" if n == "gbw" else n for n in names])
        col = 0
        for key in ("f0_hz", "q", "gain_center_db"):
            lo_hi = wc.corners.get(key, ({}, {}))
            ext = getattr(wc, key)
            for side in (0, 1):
                corner = lo_hi[side]
                head = self.corners.horizontalHeaderItem(col)
                head.setToolTip(f"{'lowest' if side == 0 else 'highest'} {key.split('_')[0]}: {_fmt_figure(key, ext[side])}")
                for r, n in enumerate(names):
                    d = corner.get(n)
                    text = "" if d is None else (f"+{_percent(d)}" if d > 0 else f"−{_percent(-d)}")
                    self.corners.setItem(r, col, _item(text, colour=BAD if d is not None and d < 0 else None))
                col += 1
        note = "Each column is one corner: the deviation of every part that gives that extreme (the extremes are the statistics' worst-case rows)."
        if wc.unstable_corners:
            note += f" {wc.unstable_corners} corner{'s are' if wc.unstable_corners > 1 else ' is'} unstable or without a peak."
        self.worst_note.setText(note)
        _fit_height(self.corners)

    def _update_envelope(self) -> None:
        plot = self.magnitude_plot
        if plot is None:
            return
        run = self.current_run()
        if run is None or not self.show_envelope.isChecked() or self.is_stale():
            plot.clear_envelope(ENVELOPE_KEY)
            self._envelope_of = None
            return
        colour = self.state.style(run.candidate_id).colour
        drawn = self._envelope_of
        if drawn is not None and drawn[0] is run and drawn[1] == colour and ENVELOPE_KEY in plot.envelopes:
            return  # already drawn
        env = run.envelope
        plot.set_envelope(ENVELOPE_KEY, env.f_hz, env.magnitude_db[0], env.magnitude_db[-1], colour=colour)
        self._envelope_of = (run, colour)

    # ------------------------------------------------------------------ layout
    def _reflow_histograms(self, columns: int) -> None:
        if columns == self._hist_columns:
            return
        self._hist_columns = columns
        for h in self.histograms.values():
            self.hist_grid.removeWidget(h)
        for i, h in enumerate(self.histograms.values()):
            self.hist_grid.addWidget(h, i // columns, i % columns)
        for c in range(3):
            self.hist_grid.setColumnStretch(c, 1 if c < columns else 0)

    def resizeEvent(self, event) -> None:  # noqa: N802 - Qt's name
        super().resizeEvent(event)
        w = event.size().width()
        self._reflow_histograms(3 if w >= 760 else 2)
        direction = QtWidgets.QBoxLayout.Direction.LeftToRight if w >= 860 else QtWidgets.QBoxLayout.Direction.TopToBottom
        self.settings_row.setDirection(direction)
        self.tables_row.setDirection(direction)
        QtCore.QTimer.singleShot(0, lambda: [_fit_height(t) for t in (self.stats, self.corners)])


def install(window) -> SpreadPane:
    """Add the spread pane to a :class:`~bandsmith.app.window.main_window.WorkbenchWindow` as a tab."""
    pane = SpreadPane(window.state, magnitude_plot=window.plot_grid.plots.get("magnitude"), run_job=window.run_job, parent=window)
    window.spread_pane = pane
    window.add_pane("Tolerance spread", pane)
    return pane
