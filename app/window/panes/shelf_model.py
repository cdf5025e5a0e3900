"""The user's op-amp shelf as the window edits it: the models, their file, unsaved edits, editor columns.

:class:`ShelfModel` holds the shelf the shelf pane (:mod:`bandsmith.app.window.panes.shelf_pane`) shows
and edits; :data:`EDITOR_COLUMNS` says which field of :class:`bandsmith.bench.shelf.OpAmp` each editor
column shows and how its text is read (:func:`cell_text`, :func:`read_cell`).
"""

from __future__ import annotations

from dataclasses import replace

from PySide6 import QtCore

from bandsmith.bench.shelf import ARCHETYPES, OpAmp, ShelfError, ShelfState, save_shelf
from bandsmith.common.errors import InputError
from bandsmith.common.values import format_value, parse_value

__all__ = ["ShelfModel", "EDITOR_COLUMNS", "EDITOR_TIPS", "cell_text", "read_cell"]

# Editor columns: (field, header, unit for display, how it is read).
EDITOR_COLUMNS = (
    ("name", "name", "", "text"),
    ("gbw_hz", "GBW", "Hz", "si"),
    ("a0", "A0 (V/V)", "", "si"),
    ("f_p2_hz", "2nd pole", "Hz", "si-optional"),
    ("slew_v_per_us", "slew (V/µs)", "", "plain"),
    ("iout_max_ma", "Iout max (mA)", "", "plain"),
    ("supply_min_v", "supply min (V total)", "", "plain"),
    ("supply_max_v", "supply max (V total)", "", "plain"),
    ("swing_neg_v", "swing to V− (V)", "", "plain"),
    ("swing_pos_v", "swing to V+ (V)", "", "plain"),
    ("cm_neg_v", "CM to V− (V)", "", "plain"),
    ("cm_pos_v", "CM to V+ (V)", "", "plain"),
    ("en_nv_rthz", "en (nV/√Hz)", "", "plain"),
    ("in_pa_rthz", "in (pA/√Hz)", "", "plain"),
    ("notes", "notes", "", "text"),
)
EDITOR_TIPS = {
    "gbw_hz": "Gain-bandwidth product, Hz (10M, 10 MHz, 1e7).",
    "a0": "Open-loop DC gain, V/V (200k, 2e5).",
    "f_p2_hz": "Second open-loop pole, Hz; leave empty for a single-pole model.",
    "swing_neg_v": "How close the output gets to the negative rail, V (0 = rail to rail).",
    "swing_pos_v": "How close the output gets to the positive rail, V (0 = rail to rail).",
    "cm_neg_v": "Input common-mode range: how far inside the negative rail it ends, V (negative = beyond the rail).",
    "cm_pos_v": "Input common-mode range: how far inside the positive rail it ends, V (negative = beyond the rail).",
}


def cell_text(amp: OpAmp, key: str, unit: str, how: str) -> str:
    """The editor's text of one field of ``amp`` (``how`` and ``unit`` from :data:`EDITOR_COLUMNS`)."""
    v = getattr(amp, key)
    if how == "text":
        return v
    if v is None:
        return ""
    if how.startswith("si"):
        return format_value(v, unit, digits=4) if unit else f"{v:g}"
    return f"{v:g}"


def read_cell(text: str, key: str, how: str):
    """The value of an editor cell's text; bad input raises :class:`InputError` naming ``key``."""
    text = text.strip()
    if how == "text":
        return text
    if how == "si-optional" and text in ("", "—", "none", "-"):
        return None
    return parse_value(text, field=key)


class ShelfModel(QtCore.QObject):
    """The user's shelf in the window: the models, their file, and whether edits are unsaved.

    Signals
    -------
    changed()
        The models changed (edit, add, remove, restore, revert).
    modified_changed(bool)
        True while there are edits not saved to the file.
    """

    changed = QtCore.Signal()
    modified_changed = QtCore.Signal(bool)

    def __init__(self, state: ShelfState, parent: QtCore.QObject | None = None):
        super().__init__(parent)
        self._amps = tuple(state.amps)
        self.path = state.path
        self.warning = state.warning
        self.from_file = state.from_file
        self._modified = False

    @property
    def amps(self) -> tuple[OpAmp, ...]:
        return self._amps

    @property
    def modified(self) -> bool:
        return self._modified

    def _set(self, amps, *, modified: bool = True) -> None:
        self._amps = tuple(amps)
        self.changed.emit()
        if modified != self._modified:
            self._modified = modified
            self.modified_changed.emit(modified)

    def replace_amp(self, index: int, amp: OpAmp) -> None:
        """Put ``amp`` at ``index``; a name another model has is bad input."""
        others = [a for i, a in enumerate(self._amps) if i != index]
        if any(a.name.casefold() == amp.name.casefold() for a in others):
            raise InputError("name", f"another op-amp on the shelf is already named {amp.name!r}")
        amps = list(self._amps)
        amps[index] = amp
        self._set(amps)

    def _free_name(self, base: str) -> str:
        names = {a.name.casefold() for a in self._amps}
        if base.casefold() not in names:
            return base
        k = 2
        while f"{base} {k}".casefold() in names:
            k += 1
        return f"{base} {k}"

    def add(self) -> int:
        """A new model (the first archetype's figures, a name of its own); returns its row."""
        amps = list(self._amps) + [replace(ARCHETYPES[0], name=self._free_name("my op-amp"), notes="")]
        self._set(amps)
        return len(amps) - 1

    def duplicate(self, index: int) -> int:
        src = self._amps[index]
        amps = list(self._amps)
        amps.insert(index + 1, replace(src, name=self._free_name(f"{src.name} copy")))
        self._set(amps)
        return index + 1

    def remove(self, index: int) -> None:
        amps = list(self._amps)
        del amps[index]
        self._set(amps)

    def restore_archetypes(self) -> None:
        """Add back every archetype that is not on the shelf (by name)."""
        names = {a.name.casefold() for a in self._amps}
        self._set(list(self._amps) + [a for a in ARCHETYPES if a.name.casefold() not in names])

    def save(self) -> None:
        """Write the shelf file (atomic). Raises :class:`ShelfError` when it cannot be written."""
        if self.path is None:
            raise ShelfError("write-failed", "no shelf file location is known")
        save_shelf(self._amps, self.path)
        self.warning = None
        self.from_file = True
        if self._modified:
            self._modified = False
            self.modified_changed.emit(False)
