"""The candidates board: one column per candidate, side by side, scrolling sideways when many.

The board only keeps its columns in step with the session's candidates (adds, removes, reorders
by id); each column draws itself from the state. A strip above the scrolling columns (outside
the scrolled area, so it is always in view) holds the button that adds a candidate of any
circuit, designed for the target.
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
        # The strip sits in the scroll area's top margin: it never scrolls away.
        self.top_strip = QtWidgets.QWidget(self)
        self.top_strip.setObjectName("boardStrip")
        strip = QtWidgets.QHBoxLayout(self.top_strip)
        strip.setContentsMargins(6, 3, 6, 1)
        strip.setSpacing(8)
        self.add_button = QtWidgets.QToolButton(self.top_strip)
        self.add_button.setObjectName("addCandidate")
        self.add_button.setText("+ Add candidate")
        self.add_button.setToolTip("Add a candidate of another circuit, designed for the target.")
        self.add_button.setPopupMode(QtWidgets.QToolButton.ToolButtonPopupMode.InstantPopup)
        menu = QtWidgets.QMenu(self.add_button)
        for topo in all_topologies():
            act = menu.addAction(topo.title)
            act.triggered.connect(lambda _=False, t=topo.id: self.state.add_candidate(t))
        self.add_button.setMenu(menu)
        self.count_label = QtWidgets.QLabel(self.top_strip)
        self.count_label.setObjectName("boardCount")
        self.count_label.setStyleSheet("color: #5f6368;")
        # The count may be cut short in a narrow board; it must not widen the board.
        self.count_label.setSizePolicy(QtWidgets.QSizePolicy.Policy.Ignored, QtWidgets.QSizePolicy.Policy.Preferred)
        strip.addWidget(self.add_button)
        strip.addWidget(self.count_label, 1)
        self.setViewportMargins(0, self.top_strip.sizeHint().height(), 0, 0)
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
                # Top-aligned at its own height: a column that grows (an edit) leaves the others'
                # geometry, layout and paint alone.
                self._row.insertWidget(i, col, 0, QtCore.Qt.AlignmentFlag.AlignTop)
        n = len(ids)
        self.count_label.setText(f"{n} candidate{'s' if n != 1 else ''}" + (" · scroll sideways for more" if self._hidden_columns() else ""))

    def _hidden_columns(self) -> bool:
        bar = self.horizontalScrollBar()
        return bar.maximum() > 0

    def resizeEvent(self, event) -> None:  # noqa: N802 - Qt's name
        super().resizeEvent(event)
        self.top_strip.setGeometry(0, 0, self.width(), self.top_strip.sizeHint().height())
        n = len(self.columns)
        if n:
            self.count_label.setText(f"{n} candidate{'s' if n != 1 else ''}" + (" · scroll sideways for more" if self._hidden_columns() else ""))

    def width_for(self, room: int) -> int:
        """Width (px) of the board showing as many whole columns as fit in ``room`` px (at least
        one, at most all), with its margins and vertical scroll bar."""
        m = self._row.contentsMargins()
        extra = m.left() + m.right() + self.verticalScrollBar().sizeHint().width() + 2
        cols = [c.width() for c in self.columns.values()]
        if not cols:
            return max(self.top_strip.sizeHint().width(), 120)
        step = max(cols) + self._row.spacing()
        k = max(1, min(len(cols), (room - extra + self._row.spacing()) // step))
        return max(k * step - self._row.spacing() + extra, self.top_strip.minimumSizeHint().width())
