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

The results (yield, histograms, statistics, worst case) are drawn by
:class:`~bandsmith.app.window.panes.spread_view.SpreadResults`; this module holds the settings, the
runs; the candidate chooser is :mod:`bandsmith.app.window.widgets.candidate_picker`'s and the
winding line :mod:`bandsmith.app.window.widgets.winding_line`'s (the noise pane shares them).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, replace
from typing import Callable

from PySide6 import QtCore, QtWidgets

from bandsmith.common.units import part_unit
from bandsmith.common.errors import InputError
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
from bandsmith.app.window.panes.spread_view import (
    DIST_TEXT,
    ENVELOPE_TRIALS,
    SpreadResults,
    count_text,
    percent_text,
    table_item,
)
from bandsmith.app.window.state import WorkbenchState
from bandsmith.app.window.theme import MUTED, WARN, error_label, note_label, section_title, settings_group
from bandsmith.app.window.widgets.candidate_picker import candidate_bar, candidate_circuit, follow_candidate
from bandsmith.app.window.widgets.value_field import ValueField
from bandsmith.app.window.widgets.winding_line import WindingLine, winding_text

__all__ = ["SpreadPane", "SpreadRun", "ENVELOPE_KEY", "ENVELOPE_TRIALS", "install"]

#: Name of the band the pane shades on the magnitude plot.
ENVELOPE_KEY = "spread"
_RESULT_WIDGETS = (
    "yield_label", "yield_text", "hist_grid", "histograms", "show_envelope", "tables_row", "stats",
    "corners", "worst_title", "worst_note",
)


def window_note(settings, tolerances) -> str:
    """A line on how the yield window relates to the design tolerances (the target strip's)."""
    win = f"±{100 * settings.window_f0:g} % f0, ±{100 * settings.window_q:g} % Q, ±{settings.window_gain_db:g} dB"
    des = f"±{100 * tolerances.f0:g} %, ±{100 * tolerances.q:g} %, ±{tolerances.gain_db:g} dB"
    same = (settings.window_f0, settings.window_q, settings.window_gain_db) == (tolerances.f0, tolerances.q, tolerances.gain_db)
    if same:
        return f"Yield window {win}: the same as the design tolerances (top strip)."
    return (
        f"Yield window {win}, around the design's nominal: how far built copies may spread from it. "
        f"The design tolerances in the top strip ({des}) judge the design against the target; they differ."
    )


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


def _whole_number(text: str, field: str, *, low: int, high: int) -> int:
    v = parse_value(text, field=field)
    if not (math.isfinite(v) and float(v).is_integer()):
        raise InputError(field, f"must be a whole number, got {text.strip()!r}")
    if not low <= v <= high:
        raise InputError(field, f"must be from {low} to {count_text(high)}")
    return int(v)


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
        outer.addStretch(1)

        follow_candidate(state, self._on_session_changed)

    # ------------------------------------------------------------------ building
    def _build_run_bar(self, body: QtWidgets.QWidget, outer: QtWidgets.QVBoxLayout) -> None:
        """The candidate, Run and what the last run was; the inductor's winding line."""
        bar, self.picker = candidate_bar(self.state, body)
        self.run_button = QtWidgets.QPushButton("Run", body)
        self.run_button.setObjectName("runSpread")
        self.run_button.setToolTip("Draw the trials and find the worst case (off the window's thread; Cancel in the status bar).")
        f = self.run_button.font()
        f.setBold(True)
        self.run_button.setFont(f)
        self.run_button.setMinimumWidth(90)
        self.run_button.clicked.connect(self.run)
        bar.addWidget(self.run_button)
        self.run_info = note_label(body, "spreadRunInfo")
        bar.addWidget(self.run_info, 1)
        outer.addLayout(bar)
        self.winding = WindingLine(body)
        self.winding.setToolTip("The inductor's own quality factor at f0 and what its winding resistance does to the circuit's Q (the spread varies the winding resistance as a resistor).")
        outer.addWidget(self.winding)

    def _frac_field(self, box: QtWidgets.QWidget, name: str, tip: str, check: Callable[[float], SpreadSettings]) -> ValueField:
        """A fraction field ("1%", "0.01") whose entry is checked by building the settings it makes."""
        return ValueField(name, "%", parse=lambda t: self._checked(check, parse_fraction(t, field=name)), fmt=lambda v: "" if v is None else percent_text(v), tooltip=tip, parent=box)

    def _build_settings_box(self, body: QtWidgets.QWidget) -> QtWidgets.QGroupBox:
        """Tolerances per kind, the GBW spread, the distribution, trials, seed and the yield window."""
        box, grid = settings_group(body, "Tolerances and trials", "spreadSettings")
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
            self.dist.addItem(DIST_TEXT[d], d)
        self.dist.setToolTip("uniform: each part anywhere within ±p; normal: p is three standard deviations.")
        self.dist.activated.connect(self._on_dist)
        grid.addWidget(QtWidgets.QLabel("Distribution", box), 0, 2)
        grid.addWidget(self.dist, 0, 3)
        self.fields["trials"] = ValueField(
            "trials", "", parse=lambda t: self._checked(lambda v: replace(self.settings, trials=v), _whole_number(t, "trials", low=1, high=MAX_TRIALS)),
            fmt=lambda v: "" if v is None else str(int(v)), tooltip=f"Number of trials, 1 to {count_text(MAX_TRIALS)}: 10000, 10k, 1e5.", parent=box,
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
        win = section_title(box, "Yield window around nominal")
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
        # The yield window is a production window on the spread of built copies; the design
        # tolerances (target strip) judge one design against the target: say how they differ.
        self.window_note = note_label(box, "yieldWindowNote")
        grid.addWidget(self.window_note, 7, 0, 1, 4)

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
        """The stale warning, the error line, then the results (yield, histograms, tables)."""
        self.stale = QtWidgets.QLabel(body)
        self.stale.setObjectName("spreadStale")
        self.stale.setWordWrap(True)
        self.stale.setStyleSheet(f"color: {WARN}; background: #fdf5e6; border: 1px solid {WARN}; padding: 4px; font-weight: 600;")
        self.stale.hide()
        outer.addWidget(self.stale)
        self.error = error_label(body)
        outer.addWidget(self.error)
        self.results = SpreadResults(body)
        self.results.show_envelope.toggled.connect(lambda _on: self._update_envelope())
        outer.addWidget(self.results)
        for name in _RESULT_WIDGETS:  # the results' widgets, reachable from the pane as before
            setattr(self, name, getattr(self.results, name))

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
            self._store(self._with_kind(key, value), f"spread: {key} tolerance ±{percent_text(value)}")
        elif key in ("window_f0", "window_q", "gbw_tol"):
            self._store(replace(s, **{key: value}), f"spread: {key.replace('_', ' ')} ±{percent_text(value)}")
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
            text = f"spread: {ref} ±{percent_text(value)}"
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
        self.window_note.setText(window_note(s, self.state.session.tolerances))
        circ = candidate_circuit(self.state, self.picker.candidate_id)
        ideal = circ is None or circ[1].ideal
        self.winding.show_text(winding_text(*circ) if circ is not None else "")
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
                tol = table_item(percent_text(s.tolerances[ref]) if own else f"({percent_text(s.tolerances[kind])}, {kind})", bold=own, colour=None if own else MUTED, align_right=False)
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

        n = count_text(settings.trials)
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
        if not self.isVisible():
            # Hidden (another tab is shown): refill the settings and results when next shown;
            # only the envelope on the magnitude plot must follow now (off once it is stale).
            self._refill_when_shown = True
            if self._envelope_of is not None:
                self._update_envelope()
            return
        self._refill_when_shown = False
        self.error.hide()
        self._fill_settings()
        self._show_result()

    def showEvent(self, event) -> None:  # noqa: N802 - Qt's name
        super().showEvent(event)
        if getattr(self, "_refill_when_shown", False):
            self._on_session_changed(self.state.session)

    def _show_result(self) -> None:
        run = self.current_run()
        cid = self.picker.candidate_id
        self.run_button.setEnabled(bool(cid) and not (self.job is not None and self.job.running))
        if run is None:
            self.stale.hide()
            self.results.clear(cid, self.settings.trials)
            self.run_info.setText("Not run yet." if cid else "")
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
        tol = ", ".join(f"{k} ±{percent_text(v)}" for k, v in sp.tolerances.items())
        gbw = f", GBW ±{percent_text(s.gbw_tol)}" if s.gbw_tol > 0 else ""
        self.run_info.setText(
            f"{run.candidate_id}: {count_text(s.trials)} trials, {DIST_TEXT[s.dist]}, seed {s.seed} ({tol}{gbw}); {run.seconds:.2f} s."
        )
        self.results.show_run(run, self.state.style(run.candidate_id).colour)
        self._update_envelope()

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
        # A new envelope moves the view to the pass band, where the band is wide enough to see.
        plot.set_envelope(ENVELOPE_KEY, env.f_hz, env.magnitude_db[0], env.magnitude_db[-1], colour=colour, zoom=drawn is None or drawn[0] is not run)
        self._envelope_of = (run, colour)

    # ------------------------------------------------------------------ layout
    def resizeEvent(self, event) -> None:  # noqa: N802 - Qt's name
        super().resizeEvent(event)
        w = event.size().width()
        self.results.reflow(w)
        direction = QtWidgets.QBoxLayout.Direction.LeftToRight if w >= 860 else QtWidgets.QBoxLayout.Direction.TopToBottom
        self.settings_row.setDirection(direction)


def install(window) -> SpreadPane:
    """Add the spread pane to a :class:`~bandsmith.app.window.main_window.WorkbenchWindow` as a tab."""
    pane = SpreadPane(window.state, magnitude_plot=window.plot_grid.plots.get("magnitude"), run_job=window.run_job, parent=window)
    window.spread_pane = pane
    window.add_pane("Tolerance spread", pane)
    return pane
