"""The Qt face of the document's undo history: signals and the Edit ▸ Undo / Redo actions.

The history itself is plain Python (:class:`bandsmith.app.document.history.History`); every edit of
the workbench is one step on it. :class:`UndoStack` re-emits its changes as Qt signals and makes the
menu actions, which it keeps enabled and named after the step they would undo or redo ("&Undo R1 of
mfb = 4.7 kΩ"). Its method names follow ``QUndoStack`` so that code written against one keeps working.
"""

from __future__ import annotations

from PySide6 import QtCore
from PySide6.QtGui import QAction

from bandsmith.app.document.history import History

__all__ = ["UndoStack"]


class UndoStack(QtCore.QObject):
    """Undo, redo and their actions over a plain :class:`History`.

    Signals
    -------
    changed()
        The position or the steps of the history changed.
    cleanChanged(bool)
        The history reached or left its saved position.
    """

    changed = QtCore.Signal()
    cleanChanged = QtCore.Signal(bool)

    def __init__(self, history: History, parent: QtCore.QObject | None = None):
        super().__init__(parent)
        self.history = history
        history.changed.connect(self.changed.emit)
        history.clean_changed.connect(self.cleanChanged.emit)

    # ------------------------------------------------------------------ QUndoStack-style reading
    def canUndo(self) -> bool:
        return self.history.can_undo

    def canRedo(self) -> bool:
        return self.history.can_redo

    def undoText(self) -> str:
        return self.history.undo_text

    def redoText(self) -> str:
        return self.history.redo_text

    def isClean(self) -> bool:
        return self.history.is_clean

    def count(self) -> int:
        return self.history.count

    def index(self) -> int:
        return self.history.index

    # ------------------------------------------------------------------ acting
    @QtCore.Slot()
    def undo(self) -> None:
        self.history.undo()

    @QtCore.Slot()
    def redo(self) -> None:
        self.history.redo()

    def createUndoAction(self, parent: QtCore.QObject, prefix: str = "") -> QAction:
        """An action that undoes the newest step; enabled and named after it ("&Undo" + its text)."""
        return self._action(parent, prefix or "Undo", self.undo, self.canUndo, self.undoText)

    def createRedoAction(self, parent: QtCore.QObject, prefix: str = "") -> QAction:
        """An action that redoes the next step; enabled and named after it ("&Redo" + its text)."""
        return self._action(parent, prefix or "Redo", self.redo, self.canRedo, self.redoText)

    def _action(self, parent, prefix: str, run, can, text) -> QAction:
        action = QAction(parent)
        sync = _ActionSync(action, prefix, can, text)
        self.changed.connect(sync.refresh)  # dropped by Qt when the action (and so ``sync``) goes
        action.triggered.connect(run)
        return action


class _ActionSync(QtCore.QObject):
    """Keeps one action's enabled state and text in step with the history (a child of the action)."""

    def __init__(self, action: QAction, prefix: str, can, text):
        super().__init__(action)
        self._action = action
        self._prefix = prefix
        self._can = can
        self._text = text
        self.refresh()

    @QtCore.Slot()
    def refresh(self) -> None:
        text = self._text()
        self._action.setEnabled(self._can())
        self._action.setText(f"{self._prefix} {text}" if text else self._prefix)
