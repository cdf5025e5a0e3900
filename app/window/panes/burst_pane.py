"""The "Tone burst" pane: the selected candidate's response to a burst of a sine, with its envelope.

A tone detector must answer within so many milliseconds: this pane shows how the output of the
board's selected candidate builds up during a burst of N cycles (or of a duration) at a chosen
frequency (its centre frequency by default), when it comes within P of its steady amplitude, and
how long it rings after the burst ends. Every number comes from :func:`bandsmith.api.burst` (the
exact response of the candidate's transfer function, with the session's op-amp and source
resistance); the pane only draws it with :class:`bandsmith.app.plots.burst_plot.BurstPlot`.
It recomputes only while shown.
"""

from __future__ import annotations

from PySide6 import QtWidgets

from bandsmith import api
from bandsmith.common.errors import InputError
from bandsmith.common.values import format_value

from bandsmith.app.plots.burst_plot import BurstPlot
from bandsmith.app.window.panes.shown_only import RecomputeWhenShown
from bandsmith.app.window.state import WorkbenchState
from bandsmith.app.window.theme import error_label
from bandsmith.app.window.widgets.candidate_picker import CandidatePicker

__all__ = ["BurstPane", "install"]


class BurstPane(RecomputeWhenShown, QtWidgets.QWidget):
    """Burst settings (frequency, cycles, settling band), the plot and the three times.

    Parameters
    ----------
    state : WorkbenchState
        The workbench; the pane follows its current candidate and never edits the session.
    """

    def __init__(self, state: WorkbenchState, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("burstPane")
        self.state = state
        self.result = None
        outer = QtWidgets.QVBoxLayout(self)
        bar = QtWidgets.QHBoxLayout()
        self.picker = CandidatePicker(state, self)
        bar.addWidget(QtWidgets.QLabel("Candidate"))
        bar.addWidget(self.picker)
        self.freq_edit = self._field(bar, "Frequency", "f0", "the burst's frequency; blank: the candidate's f0")
        self.cycles_edit = self._field(bar, "Cycles", "20", "the number of whole cycles in the burst")
        self.within_edit = self._field(bar, "Settled within", "1%", "how close to the steady amplitude counts as settled")
        bar.addStretch(1)
        outer.addLayout(bar)
        self.error = error_label(self)
        outer.addWidget(self.error)
        self.times = QtWidgets.QLabel(self)
        self.times.setObjectName("burstTimes")
        self.times.setWordWrap(True)
        outer.addWidget(self.times)
        self.plot = BurstPlot(self)
        self.plot.setMinimumHeight(260)
        outer.addWidget(self.plot, 1)
        for edit in (self.freq_edit, self.cycles_edit, self.within_edit):
            edit.editingFinished.connect(self.mark_dirty)
        self.picker.currentIndexChanged.connect(lambda _i: self.mark_dirty())
        state.session_changed.connect(lambda _s: self.mark_dirty())
        state.current_changed.connect(lambda _c: self.mark_dirty())

    def _field(self, bar: QtWidgets.QHBoxLayout, label: str, placeholder: str, tip: str) -> QtWidgets.QLineEdit:
        edit = QtWidgets.QLineEdit(self)
        edit.setPlaceholderText(placeholder)
        edit.setToolTip(tip)
        edit.setMaximumWidth(90)
        bar.addWidget(QtWidgets.QLabel(label))
        bar.addWidget(edit)
        return edit

    def refresh(self) -> None:
        """Compute the burst of the picked candidate and draw it (a bad field is named, nothing lost)."""
        self._dirty = False
        cid = self.picker.candidate_id
        if cid is None:
            return
        session = self.state.session
        entry = session.candidate(cid)
        conditions = session.conditions_for(entry)
        try:
            freq = self.freq_edit.text().strip() or self._f0_of(cid)
            self.result = api.burst(
                entry.topology_id,
                dict(entry.values),
                freq_hz=freq,
                cycles=self.cycles_edit.text().strip() or 20,
                within=self.within_edit.text().strip() or None,
                gbw_hz=conditions.gbw_hz,
                a0=conditions.a0,
                rsource_ohm=conditions.rsource_ohm,
            )
        except InputError as exc:
            self.error.setText(str(exc))
            self.error.show()
            return
        self.error.hide()
        r = self.result.result
        self.plot.show_burst(r)
        self.times.setText(
            f"{cid}: envelope time constant {format_value(r.envelope_tau_s, 's')}, settled within "
            f"{self.within_edit.text().strip() or '1 %'} after {format_value(r.settle_time_s, 's')}, "
            f"rings down to 1 % {format_value(r.ringdown_time_s, 's')} after the burst ends"
        )

    def _f0_of(self, cid: str) -> float:
        result = self.state.results.get(cid)
        if result is None or result.analysis is None:
            raise InputError("frequency", f"{cid} has no centre frequency to burst at; type one")
        return result.analysis.ideal.item().f0_hz


def install(window) -> BurstPane:
    """Add the burst pane to a :class:`~bandsmith.app.window.main_window.WorkbenchWindow` as a tab."""
    pane = BurstPane(window.state, parent=window)
    window.burst_pane = pane
    window.add_pane("Tone burst", pane)
    return pane
