"""A text field for one value, typed in any notation of :mod:`bandsmith.common.values`, with an inline error.

The field shows the current value (formatted with its unit). When the user finishes typing (Enter
or leaving the field) the text is read by the field's parser; a value that cannot be used shows
the reason under the field, in red, and nothing is emitted — the last good value stays in force
and Escape brings its text back. A good value is emitted with ``committed(float | None)``.
"""

from __future__ import annotations

from typing import Callable

from PySide6 import QtCore, QtWidgets

from bandsmith.common.errors import InputError
from bandsmith.common.values import format_value, parse_positive, value_hint

from bandsmith.app.window.theme import error_label

__all__ = ["ValueField"]


class ValueField(QtWidgets.QWidget):
    """One value: a line edit plus an error line (hidden while there is no error).

    Parameters
    ----------
    name : str
        Field name used in messages and as the object name (``field_<name>``).
    unit : str
        Unit symbol for display ("Ω", "Hz", ...).
    parse : callable, optional
        ``parse(text) -> float | None``; raises :class:`InputError`. Default: a positive value.
    fmt : callable, optional
        ``fmt(value) -> str`` for display; default :func:`format_value` with the unit.
    tooltip : str
        What the value is, with its unit and examples of notation.
    """

    committed = QtCore.Signal(object)

    def __init__(
        self,
        name: str,
        unit: str = "",
        *,
        parse: Callable[[str], float | None] | None = None,
        fmt: Callable[[float | None], str] | None = None,
        tooltip: str = "",
        parent: QtWidgets.QWidget | None = None,
    ):
        super().__init__(parent)
        self.name = name
        self.unit = unit
        self._parse = parse or (lambda text: parse_positive(text, field=name, unit=unit))
        self._fmt = fmt or (lambda v: format_value(v, unit) if v is not None else "")
        self._value: float | None = None
        self.setObjectName(f"field_{name}")
        self.edit = QtWidgets.QLineEdit(self)
        self.edit.setObjectName(f"edit_{name}")
        self.edit.setToolTip(tooltip)
        self.edit.setMinimumWidth(70)
        self.error = error_label(self)
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setSpacing(1)
        lay.addWidget(self.edit)
        lay.addWidget(self.error)
        self.edit.editingFinished.connect(self._on_editing_finished)
        self.edit.installEventFilter(self)

    # -- state → view -------------------------------------------------------------------
    @property
    def value(self) -> float | None:
        return self._value

    def set_value(self, value: float | None) -> None:
        """Show ``value`` (from the state); clears any error. Emits nothing."""
        self._value = value
        text = self._fmt(value)
        if self.edit.text() != text:  # an unchanged field is not touched (no relayout, no repaint)
            self.edit.setText(text)
        self._show_error(None)

    @property
    def error_text(self) -> str:
        return self.error.text() if self.error.isVisibleTo(self) else ""

    # -- user input ---------------------------------------------------------------------
    def _on_editing_finished(self) -> None:
        text = self.edit.text()
        if text == self._fmt(self._value) and not self.error_text:
            return
        try:
            value = self._parse(text)
        except InputError as exc:
            reason = exc.reason
            # A parser given without the field's unit suggests resistor codes: the field knows
            # its unit, so the examples fit it (a capacitor is not told to try 4k7).
            if self.unit and self.unit != "Ω":
                reason = reason.replace(value_hint(None), value_hint(self.unit))
            self._show_error(reason)
            return
        self._show_error(None)
        if value == self._value:
            self.edit.setText(self._fmt(value))
            return
        self.committed.emit(value)

    def eventFilter(self, obj, event):  # noqa: N802 - Qt's name
        if obj is self.edit and event.type() == QtCore.QEvent.Type.KeyPress and event.key() == QtCore.Qt.Key.Key_Escape:
            self.set_value(self._value)
            return True
        return super().eventFilter(obj, event)

    def _show_error(self, reason: str | None) -> None:
        if not reason and not self.error.text() and not self.edit.property("invalid"):
            return  # no error shown, none to show: restyling would only cost a relayout
        self.error.setText(reason or "")
        self.error.setVisible(bool(reason))
        self.edit.setProperty("invalid", bool(reason))
        self.edit.style().unpolish(self.edit)
        self.edit.style().polish(self.edit)
