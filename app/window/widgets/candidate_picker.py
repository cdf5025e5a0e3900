"""The candidate chooser a candidate pane starts with, and what it reads of the chosen candidate.

:class:`CandidatePicker` lists the session's active candidates and follows the board's selected
one (choosing here selects it there); :func:`candidate_bar` is the row that holds it,
:func:`follow_candidate` calls a pane back when the session or the selection changes, and
:func:`candidate_circuit` gives the chosen candidate's netlist and op-amp. The spread, noise, board
and burst panes share them.
"""

from __future__ import annotations

from typing import Callable

from PySide6 import QtWidgets

from bandsmith.common.errors import InputError
from bandsmith.design.candidate import Candidate
from bandsmith.solver.mna import IDEAL, OpAmpModel
from bandsmith.solver.netlist import Netlist

from bandsmith.app.window.state import WorkbenchState

__all__ = ["CandidatePicker", "candidate_bar", "follow_candidate", "candidate_circuit"]


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


def candidate_bar(state: WorkbenchState, parent: QtWidgets.QWidget) -> tuple[QtWidgets.QHBoxLayout, CandidatePicker]:
    """The row a candidate pane starts with: "Candidate" and its :class:`CandidatePicker` (more may follow)."""
    bar = QtWidgets.QHBoxLayout()
    bar.addWidget(QtWidgets.QLabel("Candidate", parent))
    picker = CandidatePicker(state, parent)
    bar.addWidget(picker)
    return bar, picker


def follow_candidate(state: WorkbenchState, on_change: Callable) -> None:
    """Call ``on_change(session)`` now and whenever the session or the board's current candidate changes."""
    state.session_changed.connect(on_change)
    state.current_changed.connect(lambda _c: on_change(state.session))
    on_change(state.session)


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
