"""The candidates board: one column per candidate, side by side, scrolling sideways when many.

The board only keeps its columns in step with the session's candidates (adds, removes, reorders
by id); each column draws itself from the state. The last item is a button that adds a candidate
of any circuit, designed for the target.
"""

from __future__ import annotations

from PySide6 import QtCore, QtWidgets

from bandsmith.circuits import all_topologies
from bandsmith.files.session import Session

from bandsmith.app.window.widgets.candidate_column import CandidateColumn
from bandsmith.app.window.state import WorkbenchState

__all__ = ["CandidatesBoard"]


class CandidatesBoard(QtWidgets.QScrollArea):
    """The scrolling row of candidate columns."""

    def __init__(self, state: WorkbenchState, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("candidatesBoard")
        self.state = state
        self.columns: dict[str, CandidateColumn] = {}
        self.setWidgetResizable(True)
        self.setHorizontalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAsNeeded)
        self.setVerticalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAsNeeded)
        self.setFrameShape(QtWidgets.QFrame.Shape.NoFrame)
        inner = QtWidgets.QWidget()
        inner.setObjectName("board")
        self._row = QtWidgets.QHBoxLayout(inner)
        self._row.setContentsMargins(6, 6, 6, 6)
        self._row.setSpacing(6)
        self.add_button = QtWidgets.QToolButton(inner)
        self.add_button.setObjectName("addCandidate")
        self.add_button.setText("+ Add\ncandidate")
        self.add_button.setToolTip("Add a candidate of another circuit, designed for the target.")
        self.add_button.setPopupMode(QtWidgets.QToolButton.ToolButtonPopupMode.InstantPopup)
        menu = QtWidgets.QMenu(self.add_button)
        for topo in all_topologies():
            act = menu.addAction(topo.title)
            act.triggered.connect(lambda _=False, t=topo.id: self.state.add_candidate(t))
        self.add_button.setMenu(menu)
        self.add_button.setMinimumSize(90, 60)
        self._row.addWidget(self.add_button, 0, QtCore.Qt.AlignmentFlag.AlignTop)
        self._row.addStretch(1)
        self.setWidget(inner)
        state.session_changed.connect(self._on_session_changed)
        self._on_session_changed(state.session)

    def _on_session_changed(self, session: Session) -> None:
        ids = [c.id for c in session.candidates]
        for cid in list(self.columns):
            if cid not in ids:
                col = self.columns.pop(cid)
                self._row.removeWidget(col)
                col.deleteLater()
        for i, cid in enumerate(ids):
            col = self.columns.get(cid)
            if col is None:
                col = self.columns[cid] = CandidateColumn(self.state, cid, self.widget())
            if self._row.indexOf(col) != i:
                self._row.removeWidget(col)
                self._row.insertWidget(i, col)

    def preferred_width(self) -> int:
        """Width (px) that shows every column without sideways scrolling."""
        cols = sum(c.width() + self._row.spacing() for c in self.columns.values())
        return cols + self.add_button.sizeHint().width() + 30
