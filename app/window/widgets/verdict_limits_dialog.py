"""The dialog that shows and changes the verdict limits kept in the session.

The limits are :class:`bandsmith.verdict.VerdictLimits` (each documented there with its source);
the session keeps them under ``extras["verdict_limits"]``
(:func:`bandsmith.app.document.comparison.stored_limits`). OK writes them through the state as one
undoable edit (Undo brings the old limits back); limits equal to the defaults remove the section.
A value that cannot be used keeps the dialog open with the reason beside the field; nothing is
written then.
"""

from __future__ import annotations

from dataclasses import dataclass

from PySide6 import QtCore, QtWidgets

from bandsmith.common.errors import InputError
from bandsmith.common.values import format_value, parse_value
from bandsmith.verdict import LIMIT_SOURCES, VerdictLimits

from bandsmith.app.document.comparison import LIMITS_KEY, limits_section, stored_limits
from bandsmith.app.window.state import WorkbenchState
from bandsmith.app.window.theme import MUTED, error_label

__all__ = ["LimitField", "LIMIT_FIELDS", "VerdictLimitsDialog"]


@dataclass(frozen=True, slots=True)
class LimitField:
    """One field of the dialog: the limit's key (``tol_R`` … for a part tolerance), its group and
    label, the unit shown beside it, and the factor from the shown number to the stored one
    (``0.01`` for per cent; ``None`` for an SI value typed with a prefix, e.g. ``47p``)."""

    key: str
    group: str
    label: str
    unit: str
    scale: float | None = 1.0


LIMIT_FIELDS: tuple[LimitField, ...] = (
    LimitField("r_spread_marginal", "Spread (largest : smallest)", "resistors: marginal above", ": 1"),
    LimitField("r_spread_max", "Spread (largest : smallest)", "resistors: not buildable above", ": 1"),
    LimitField("c_spread_marginal", "Spread (largest : smallest)", "capacitors: marginal above", ": 1"),
    LimitField("c_spread_max", "Spread (largest : smallest)", "capacitors: not buildable above", ": 1"),
    LimitField("r_min_ohm", "Practical parts (marginal outside)", "smallest resistor", "Ω", None),
    LimitField("r_max_ohm", "Practical parts (marginal outside)", "largest resistor", "Ω", None),
    LimitField("c_min_f", "Practical parts (marginal outside)", "smallest capacitor", "F", None),
    LimitField("c_max_f", "Practical parts (marginal outside)", "largest capacitor", "F", None),
    LimitField("l_min_h", "Practical parts (marginal outside)", "smallest inductor", "H", None),
    LimitField("l_max_h", "Practical parts (marginal outside)", "largest inductor", "H", None),
    LimitField("gbw_ordinary_hz", "Op-amp", "GBW of ordinary op-amps (marginal above)", "Hz", None),
    LimitField("gbw_max_hz", "Op-amp", "GBW ceiling (not buildable above)", "Hz", None),
    LimitField("slew_ordinary_v_per_us", "Op-amp", "slew rate of ordinary op-amps", "V/µs"),
    LimitField("iout_ordinary_ma", "Op-amp", "output current of ordinary op-amps", "mA"),
    LimitField("yield_marginal", "Yield", "marginal below", "%", 0.01),
    LimitField("yield_min", "Yield", "not buildable below", "%", 0.01),
    LimitField("tol_R", "Yield", "resistor tolerance ±", "%", 0.01),
    LimitField("tol_C", "Yield", "capacitor tolerance ±", "%", 0.01),
    LimitField("tol_L", "Yield", "inductor tolerance ±", "%", 0.01),
    LimitField("window_f0", "Yield", "window: f0 within ±", "%", 0.01),
    LimitField("window_q", "Yield", "window: Q within ±", "%", 0.01),
    LimitField("window_gain_db", "Yield", "window: gain within ±", "dB"),
    LimitField("inductor_q_ordinary", "Inductor", "winding Q of ordinary parts (marginal above)", ""),
    LimitField("inductor_q_max", "Inductor", "winding Q ceiling (not buildable above)", ""),
)


def _get(limits: VerdictLimits, key: str) -> float:
    if key.startswith("tol_"):
        return float(limits.tolerances.get(key[4:], 0.0))
    return float(getattr(limits, key))


def _shown(f: LimitField, value: float) -> str:
    if f.scale is None:
        return format_value(value, f.unit)
    return f"{value / f.scale:.6g}"


def _read(f: LimitField, text: str) -> float:
    t = text.strip()
    for tail in (f.unit, ":1", ": 1", "%"):
        if tail and t.endswith(tail):
            t = t[: -len(tail)].strip()
    if f.scale is None:
        return parse_value(text.strip(), field=f.key.replace("_", "-"))
    return parse_value(t, field=f.key.replace("_", "-")) * f.scale


class VerdictLimitsDialog(QtWidgets.QDialog):
    """The session's verdict limits, one field each, grouped; OK writes them undoably."""

    def __init__(self, state: WorkbenchState, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("verdictLimitsDialog")
        self.setWindowTitle("Verdict limits")
        self.state = state
        stored = stored_limits(state.session)
        self.limits = stored.settings
        lay = QtWidgets.QVBoxLayout(self)
        tol = state.session.tolerances
        intro = QtWidgets.QLabel(
            "What makes a candidate marginal or not buildable. Figure errors are judged against the session's "
            f"design tolerances (f0 ±{100 * tol.f0:g} %, Q ±{100 * tol.q:g} %, gain ±{tol.gain_db:g} dB): "
            "beyond them a candidate is never buildable. Kept in the session; Undo restores the old limits.",
            self,
        )
        intro.setWordWrap(True)
        intro.setStyleSheet(f"color: {MUTED};")
        lay.addWidget(intro)
        if stored.problem:
            note = QtWidgets.QLabel(stored.problem, self)
            note.setObjectName("limitsProblem")
            note.setWordWrap(True)
            lay.addWidget(note)
        self.fields: dict[str, QtWidgets.QLineEdit] = {}
        grid_host = QtWidgets.QHBoxLayout()
        left, right = QtWidgets.QVBoxLayout(), QtWidgets.QVBoxLayout()
        groups: dict[str, QtWidgets.QFormLayout] = {}
        for f in LIMIT_FIELDS:
            form = groups.get(f.group)
            if form is None:
                box = QtWidgets.QGroupBox(f.group, self)
                form = groups[f.group] = QtWidgets.QFormLayout(box)
                form.setLabelAlignment(QtCore.Qt.AlignmentFlag.AlignRight)
                (left if len(groups) <= 3 else right).addWidget(box)
            edit = QtWidgets.QLineEdit(self)
            edit.setObjectName(f"limit_{f.key}")
            edit.setMinimumWidth(80)
            src = LIMIT_SOURCES.get("tolerances" if f.key.startswith("tol_") else f.key, "")
            edit.setToolTip(f"{f.label} ({f.unit or 'number'}); source: {src}" if src else f.label)
            row = QtWidgets.QHBoxLayout()
            row.addWidget(edit, 1)
            unit = QtWidgets.QLabel(f.unit if f.scale is not None else "", self)  # SI values carry their unit
            unit.setMinimumWidth(unit.fontMetrics().horizontalAdvance("V/µs") + 4)
            row.addWidget(unit)
            form.addRow(f.label, row)
            self.fields[f.key] = edit
        left.addStretch(1)
        right.addStretch(1)
        grid_host.addLayout(left)
        grid_host.addLayout(right)
        lay.addLayout(grid_host)
        self.error = error_label(self)
        lay.addWidget(self.error)
        buttons = QtWidgets.QDialogButtonBox(
            QtWidgets.QDialogButtonBox.StandardButton.Ok
            | QtWidgets.QDialogButtonBox.StandardButton.Cancel
            | QtWidgets.QDialogButtonBox.StandardButton.RestoreDefaults,
            self,
        )
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        buttons.button(QtWidgets.QDialogButtonBox.StandardButton.RestoreDefaults).clicked.connect(lambda: self.show_limits(VerdictLimits()))
        lay.addWidget(buttons)
        self.show_limits(self.limits)

    def show_limits(self, limits: VerdictLimits) -> None:
        """Fill the fields from ``limits`` (nothing is written until OK)."""
        for f in LIMIT_FIELDS:
            self.fields[f.key].setText(_shown(f, _get(limits, f.key)))
        self.error.hide()

    def read_limits(self) -> VerdictLimits:
        """The limits the fields hold; InputError naming the field when one cannot be used."""
        obj = self.limits.to_json()
        tol = dict(obj["tolerances"])
        for f in LIMIT_FIELDS:
            v = _read(f, self.fields[f.key].text())
            if f.key.startswith("tol_"):
                tol[f.key[4:]] = v
            else:
                obj[f.key] = v
        obj["tolerances"] = tol
        return VerdictLimits.from_json(obj)

    def accept(self) -> None:  # noqa: D102 - Qt's name
        try:
            limits = self.read_limits()
        except InputError as exc:
            self.error.setText(f"Not written: {exc}")
            self.error.show()
            return
        if limits != self.limits:
            self.state.set_extra(LIMITS_KEY, limits_section(limits), "verdict limits")
        super().accept()
