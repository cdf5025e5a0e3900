"""The workbench's state for the window: a thin QObject over the plain-Python document model.

The document, its undo history and the analyses live in :class:`bandsmith.app.document.model.Document`
(no Qt). :class:`WorkbenchState` re-emits the document's notifications as Qt signals, hands out its
history as :attr:`WorkbenchState.undo_stack` (undo/redo and the Edit menu's actions, see
:class:`~bandsmith.app.window.commands.UndoStack`) and adds what only the window needs: each
candidate's drawing style. Reading and editing are passed through unchanged.

Views subscribe to the signals and write to the state only on user input.
"""

from __future__ import annotations

from typing import Mapping

from PySide6 import QtCore

from bandsmith.files.session import Session

from bandsmith.app.document.model import Document
from bandsmith.app.document.results import CandidateResult
from bandsmith.app.window.commands import UndoStack
from bandsmith.app.window.theme import CandidateStyle, candidate_style

__all__ = ["WorkbenchState"]


class WorkbenchState(QtCore.QObject):
    """The document and everything derived from it, with Qt signals.

    Its signals are the notifications of :class:`bandsmith.app.document.model.Document`, with the
    same names and arguments (described there), re-emitted on the GUI thread.
    """

    session_changed = QtCore.Signal(object)
    analyses_changed = QtCore.Signal()
    path_changed = QtCore.Signal(str)
    clean_changed = QtCore.Signal(bool)
    current_changed = QtCore.Signal(str)
    notice = QtCore.Signal(str)

    def __init__(self, session: Session, path: str | None = None, parent: QtCore.QObject | None = None):
        super().__init__(parent)
        self.document = Document(session, path)
        self.undo_stack = UndoStack(self.document.history, self)
        for name in ("session_changed", "analyses_changed", "path_changed", "clean_changed", "current_changed", "notice"):
            getattr(self.document, name).connect(getattr(self, name).emit)

    # ------------------------------------------------------------------ reading
    @property
    def session(self) -> Session:
        return self.document.session

    @property
    def path(self) -> str:
        return self.document.path

    @property
    def results(self) -> Mapping[str, CandidateResult]:
        """Results of the enabled candidates, by candidate id, in session order."""
        return self.document.results

    @property
    def current_id(self) -> str:
        return self.document.current_id

    @property
    def is_clean(self) -> bool:
        return self.document.is_clean

    def style(self, candidate_id: str) -> CandidateStyle:
        """The colour, line style and symbol of a candidate (stable while it exists)."""
        return candidate_style(self.document.style_index(candidate_id))

    def result(self, candidate_id: str) -> CandidateResult | None:
        return self.document.result(candidate_id)

    # ------------------------------------------------------------------ whole documents
    def replace_document(self, session: Session, path: str | None, *, clean: bool = True) -> None:
        """Start over with another document (New, Open, a restored recovery copy): history cleared."""
        self.document.replace_document(session, path, clean=clean)

    def mark_saved(self, path: str) -> None:
        """The document was written to ``path``: it is now clean."""
        self.document.mark_saved(path)

    # ------------------------------------------------------------------ edits (undoable; see Document)
    def edit(self, after: Session, text: str) -> None:
        self.document.edit(after, text)

    def set_extra(self, key: str, value, text: str) -> None:
        self.document.set_extra(key, value, text)

    def set_part(self, candidate_id: str, ref: str, value: float) -> None:
        self.document.set_part(candidate_id, ref, value)

    def set_fixed(self, candidate_id: str, ref: str, fixed: bool) -> None:
        self.document.set_fixed(candidate_id, ref, fixed)

    def set_enabled(self, candidate_id: str, enabled: bool) -> None:
        self.document.set_enabled(candidate_id, enabled)

    def set_pinned(self, candidate_id: str, pinned: bool) -> None:
        self.document.set_pinned(candidate_id, pinned)

    def set_snap(self, candidate_id: str, series: str | None) -> None:
        self.document.set_snap(candidate_id, series)

    def duplicate(self, candidate_id: str) -> str | None:
        return self.document.duplicate(candidate_id)

    def remove(self, candidate_id: str) -> None:
        self.document.remove(candidate_id)

    def add_candidate(self, topology_id: str) -> str | None:
        return self.document.add_candidate(topology_id)

    def set_target(self, **changes) -> None:
        self.document.set_target(**changes)

    def set_opamp(self, **changes) -> None:
        self.document.set_opamp(**changes)

    def redesign(self, candidate_id: str) -> None:
        self.document.redesign(candidate_id)

    def set_current(self, candidate_id: str) -> None:
        self.document.set_current(candidate_id)
