"""Undoable edits of the session document.

Every edit of the workbench is one :class:`SessionEdit` on the state's QUndoStack: it holds the
document before and after (both immutable :class:`bandsmith.files.session.Session` values), so undo and redo
are exact whatever the edit was, and an edit that touched several candidates undoes in one step.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from PySide6.QtGui import QUndoCommand

from bandsmith.files.session import Session

if TYPE_CHECKING:  # pragma: no cover
    from bandsmith.app.window.state import WorkbenchState

__all__ = ["SessionEdit"]


class SessionEdit(QUndoCommand):
    """Replace the state's session ``before`` → ``after`` (redo) and back (undo).

    ``text`` is what Edit ▸ Undo shows ("Undo R1 of mfb = 4.7 kΩ").
    """

    def __init__(self, state: "WorkbenchState", before: Session, after: Session, text: str):
        super().__init__(text)
        self._state = state
        self.before = before
        self.after = after

    def redo(self) -> None:
        self._state._apply(self.after)

    def undo(self) -> None:
        self._state._apply(self.before)
