"""Undo and redo history of a document whose values are immutable (plain Python, no Qt).

Each step is an :class:`Edit` that holds the whole document before and after it, so undo and redo
are exact whatever the edit was, and an edit that touched several candidates undoes in one step.
Consecutive edits are not merged: every call of :meth:`History.push` is one undo step.

The bookkeeping follows the usual undo-stack rules (common practice, no source; the same as Qt's
``QUndoStack`` without macros or merging, so the window behaves as it did when it used one):

- ``index`` counts the edits that are applied; undo moves it down, redo up;
- pushing a new edit drops the edits above ``index`` (they can no longer be redone);
- ``clean_index`` is the ``index`` at which the document matched its file; it becomes
  unreachable (-1) when the edits it stands on are dropped.

Listeners are plain callables (:class:`Callbacks`); they are told *after* the document was changed.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Generic, TypeVar

__all__ = ["Callbacks", "Edit", "History"]

T = TypeVar("T")


class Callbacks:
    """A list of listeners called in the order they were connected (a plain-Python signal)."""

    __slots__ = ("_slots",)

    def __init__(self) -> None:
        self._slots: list[Callable] = []

    def connect(self, slot: Callable) -> None:
        self._slots.append(slot)

    def disconnect(self, slot: Callable) -> None:
        self._slots.remove(slot)

    def emit(self, *args) -> None:
        for slot in list(self._slots):
            slot(*args)


@dataclass(frozen=True, slots=True)
class Edit(Generic[T]):
    """One undo step: the document ``before`` and ``after`` it; ``text`` names it ("R1 of mfb = 4.7 kΩ")."""

    before: T
    after: T
    text: str


class History(Generic[T]):
    """The edits of a document, with an undo/redo position and the position of the saved state.

    ``apply`` is called with the document to show: the edit's ``after`` on push and redo, its
    ``before`` on undo. It runs before the position changes (listeners then see a settled history).

    Notifications
    -------------
    changed()
        The position or the edits changed (can undo/redo and their texts may differ).
    clean_changed(bool)
        :attr:`is_clean` changed.
    """

    def __init__(self, apply: Callable[[T], None]):
        self._apply = apply
        self._edits: list[Edit[T]] = []
        self._index = 0
        self._clean_index = 0
        self.changed = Callbacks()
        self.clean_changed = Callbacks()

    # ------------------------------------------------------------------ reading
    @property
    def index(self) -> int:
        return self._index

    @property
    def count(self) -> int:
        return len(self._edits)

    @property
    def is_clean(self) -> bool:
        return self._index == self._clean_index

    @property
    def can_undo(self) -> bool:
        return self._index > 0

    @property
    def can_redo(self) -> bool:
        return self._index < len(self._edits)

    @property
    def undo_text(self) -> str:
        return self._edits[self._index - 1].text if self.can_undo else ""

    @property
    def redo_text(self) -> str:
        return self._edits[self._index].text if self.can_redo else ""

    # ------------------------------------------------------------------ changing
    def push(self, edit: Edit[T]) -> None:
        """Apply ``edit`` and make it the newest undo step (the redo steps above are dropped)."""
        self._apply(edit.after)
        del self._edits[self._index :]
        if self._clean_index > self._index:
            self._clean_index = -1  # the saved state was among the dropped edits
        self._edits.append(edit)
        self._move(self._index + 1)

    def undo(self) -> None:
        if self.can_undo:
            self._apply(self._edits[self._index - 1].before)
            self._move(self._index - 1)

    def redo(self) -> None:
        if self.can_redo:
            self._apply(self._edits[self._index].after)
            self._move(self._index + 1)

    def set_clean(self) -> None:
        """The document at the present position is the saved one."""
        was_clean = self.is_clean
        self._clean_index = self._index
        if not was_clean:
            self.clean_changed.emit(True)

    def clear(self) -> None:
        """Forget every edit (a new document); the empty history is clean."""
        if not self._edits:
            return
        was_clean = self.is_clean
        self._edits.clear()
        self._index = 0
        self._clean_index = 0
        self.changed.emit()
        if not was_clean:
            self.clean_changed.emit(True)

    def _move(self, index: int) -> None:
        was_clean = self.is_clean
        if index != self._index:
            self._index = index
            self.changed.emit()
        if self.is_clean != was_clean:
            self.clean_changed.emit(self.is_clean)
