"""Panes that recompute only while they are shown."""

from __future__ import annotations

from PySide6 import QtCore

__all__ = ["RecomputeWhenShown"]


class RecomputeWhenShown:
    """Mixin for a QWidget pane: :meth:`mark_dirty` after any change it depends on; the pane's
    ``refresh()`` (which clears ``_dirty``) then runs at once if the pane is visible, else when
    it is next shown. Hidden tabs cost an edit nothing."""

    _dirty = True

    def mark_dirty(self, *, now: bool = False) -> None:
        """Something the pane shows changed. A visible pane refreshes on the next turn of the event
        loop (several changes in one turn cost one refresh), or at once with ``now`` (a change the
        user expects to see in the same step, as an undo); a hidden one when it is next shown."""
        self._dirty = True
        if self.isVisible():
            if now:
                self.refresh()
            else:
                QtCore.QTimer.singleShot(0, self._refresh_if_dirty)

    def _refresh_if_dirty(self) -> None:
        if self._dirty and self.isVisible():
            self.refresh()

    def showEvent(self, event) -> None:  # noqa: N802 - Qt's name
        super().showEvent(event)
        if self._dirty:
            self.refresh()
