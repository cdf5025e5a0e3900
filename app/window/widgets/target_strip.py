"""The target strip: what the design aims at and the op-amp it is built with.

f0, Q or bandwidth (a switch chooses which one is typed; the other is shown), centre gain, input
level, the standard series parts are chosen from, and the op-amp's GBW (empty = ideal) and A0.
A changed target redesigns every unpinned candidate (see :meth:`WorkbenchState.set_target`).
The design tolerances (how far f0, Q and the centre gain may stray: the verdicts use them) and the
load resistance are shown and typed here too.
"""

from __future__ import annotations

from dataclasses import replace

from PySide6 import QtWidgets

from bandsmith.files.session import SERIES_CHOICES, Session
from bandsmith.common.values import format_value, parse_fraction, parse_positive

from bandsmith.app.window.state import WorkbenchState
from bandsmith.app.window.widgets.value_field import ValueField

__all__ = ["TargetStrip"]

_NOTATION = "Any notation: 2k, 2000, 2e3, 2kHz."


def _parse_gbw(text: str) -> float | None:
    if not text.strip() or text.strip().lower() in ("ideal", "none", "∞"):
        return None
    return parse_positive(text, field="GBW", unit="Hz")


def _parse_load(text: str) -> float | None:
    if not text.strip() or text.strip().lower() in ("none", "open", "∞"):
        return None
    return parse_positive(text, field="load", unit="Ω")


def _fmt_pct(v: float | None) -> str:
    return "" if v is None else f"{100 * v:g} %"


def _fmt_plain(v: float | None) -> str:
    return "" if v is None else format_value(v, "", digits=4)


def _fmt_a0(v: float | None) -> str:
    return "" if v is None else f"{v:.4g}"


class TargetStrip(QtWidgets.QFrame):
    """The row of target and op-amp fields at the top of the window."""

    def __init__(self, state: WorkbenchState, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("targetStrip")
        self.state = state
        self._make_fields()
        self._lay_out()
        self._connect_fields()
        state.session_changed.connect(self._on_session_changed)
        self._on_session_changed(state.session)
        self._on_q_mode_changed(0)

    def _make_fields(self) -> None:
        """The value fields of the target and the op-amp, the Q/bandwidth switch and the series box."""
        self.f0 = ValueField("f0", "Hz", tooltip=f"Target centre frequency f0, in Hz. {_NOTATION}")
        self.q = ValueField("Q", "", fmt=_fmt_plain, tooltip="Target quality factor Q = f0 / bandwidth (dimensionless), e.g. 5 or 7.5.")
        self.bw = ValueField("bandwidth", "Hz", tooltip=f"Target −3 dB bandwidth, in Hz (Q = f0 / bandwidth). {_NOTATION}")
        self.gain = ValueField("gain", "V/V", fmt=_fmt_plain, tooltip="Magnitude of the centre gain |H(f0)|, in V/V (4 = +12 dB); the sign follows the circuit.")
        self.vin = ValueField("vin", "V", tooltip="Peak input amplitude, in volts: sets the slew-rate and output-current needs. E.g. 0.5, 500m.")
        self.gbw = ValueField(
            "gbw",
            "Hz",
            parse=_parse_gbw,
            fmt=lambda v: "ideal" if v is None else format_value(v, "Hz"),
            tooltip="Gain-bandwidth product of the op-amp, in Hz (e.g. 1M, 10meg, 3e6). Leave empty or type 'ideal' for an ideal op-amp.",
        )
        self.a0 = ValueField("a0", "V/V", fmt=_fmt_a0, tooltip="Open-loop DC gain A0 of the op-amp, in V/V (1e5 = 100 dB).")
        self.tol_f0 = ValueField("tol_f0", "", parse=lambda t: parse_fraction(t, field="f0 tolerance"), fmt=_fmt_pct,
                                 tooltip="Design tolerance of f0: how far the achieved f0 may stray from the target (1%, 0.01). The verdicts use it.")
        self.tol_q = ValueField("tol_q", "", parse=lambda t: parse_fraction(t, field="Q tolerance"), fmt=_fmt_pct,
                                tooltip="Design tolerance of Q (5%, 0.05). The verdicts use it.")
        self.tol_gain = ValueField("tol_gain", "dB", parse=lambda t: parse_positive(t.replace("dB", ""), field="gain tolerance", unit="dB"),
                                   fmt=lambda v: "" if v is None else f"{v:g} dB", tooltip="Design tolerance of the centre gain, in dB (0.5). The verdicts use it.")
        self.load = ValueField("load", "Ω", parse=_parse_load, fmt=lambda v: "none" if v is None else format_value(v, "Ω"),
                               tooltip="Load resistance from the output to ground, in Ω (2k, 10k); empty or 'none' for no load.")
        self.q_mode = QtWidgets.QComboBox(self)
        self.q_mode.setObjectName("qMode")
        self.q_mode.addItems(["Q", "Bandwidth"])
        self.q_mode.setToolTip("Type the target as Q or as a −3 dB bandwidth in Hz; the other is derived.")
        self.derived = QtWidgets.QLabel(self)
        self.derived.setObjectName("derivedQ")
        self.series = QtWidgets.QComboBox(self)
        self.series.setObjectName("series")
        self.series.addItems(list(SERIES_CHOICES))
        self.series.setToolTip("Standard series (IEC 60063) new designs take their parts from, or 'exact' for unrounded values.")

    def _lay_out(self) -> None:
        """The fields in titled groups along one row: Target, Drive, Parts, Op-amp."""
        lay = QtWidgets.QHBoxLayout(self)
        lay.setContentsMargins(8, 4, 8, 4)
        lay.setSpacing(6)

        def group(title: str, *widgets):
            box = QtWidgets.QVBoxLayout()
            box.setSpacing(1)
            lab = QtWidgets.QLabel(title)
            lab.setObjectName("sectionTitle")
            box.addWidget(lab)
            row = QtWidgets.QHBoxLayout()
            row.setSpacing(4)
            for w in widgets:
                if isinstance(w, str):
                    row.addWidget(QtWidgets.QLabel(w))
                else:
                    row.addWidget(w)
            box.addLayout(row)
            lay.addLayout(box)

        group("Target", "f0", self.f0, self.q_mode, self.q, self.bw, self.derived, "centre gain", self.gain)
        lay.addSpacing(10)
        group("Drive", "vin (peak)", self.vin)
        group("Tolerances, load", self._tolerance_button())
        group("Parts", self.series)
        lay.addSpacing(10)
        group("Op-amp", "GBW", self.gbw, "A0", self.a0)
        lay.addStretch(1)
        for f in (self.f0, self.q, self.bw, self.gain, self.vin, self.gbw, self.a0):
            f.edit.setFixedWidth(96)
            f.setSizePolicy(QtWidgets.QSizePolicy.Policy.Fixed, QtWidgets.QSizePolicy.Policy.Preferred)
        for f in (self.tol_f0, self.tol_q, self.tol_gain, self.load):
            f.edit.setFixedWidth(96)
        for c in (self.q_mode, self.series):
            c.setSizePolicy(QtWidgets.QSizePolicy.Policy.Fixed, QtWidgets.QSizePolicy.Policy.Fixed)
        self.derived.setMinimumWidth(80)

    def _tolerance_button(self) -> QtWidgets.QToolButton:
        """A button that shows the design tolerances and the load and opens their fields.

        The strip stays narrow enough for a 1366-pixel screen; the button's text always shows
        the values in force.
        """
        btn = QtWidgets.QToolButton(self)
        btn.setObjectName("toleranceButton")
        btn.setPopupMode(QtWidgets.QToolButton.ToolButtonPopupMode.InstantPopup)
        btn.setToolTip("Design tolerances (how far f0, Q and the centre gain may stray from the target; the verdicts use them) and the load. Click to edit.")
        menu = QtWidgets.QMenu(btn)
        box = QtWidgets.QWidget(menu)
        form = QtWidgets.QFormLayout(box)
        form.setContentsMargins(8, 6, 8, 6)
        form.addRow(QtWidgets.QLabel("Design tolerances (±), used by the verdicts"))
        form.addRow("f0 ±", self.tol_f0)
        form.addRow("Q ±", self.tol_q)
        form.addRow("centre gain ±", self.tol_gain)
        form.addRow("load to ground", self.load)
        action = QtWidgets.QWidgetAction(menu)
        action.setDefaultWidget(box)
        menu.addAction(action)
        btn.setMenu(menu)
        self.tolerance_button = btn
        self.tolerance_menu = menu
        return btn

    def _connect_fields(self) -> None:
        """Committed values go to the state as target or op-amp edits."""
        self.f0.committed.connect(lambda v: self.state.set_target(f0_hz=v))
        self.q.committed.connect(lambda v: self.state.set_target(q=v))
        self.bw.committed.connect(self._on_bw_committed)
        self.gain.committed.connect(lambda v: self.state.set_target(gain=v))
        self.vin.committed.connect(lambda v: self.state.set_target(vin_v=v))
        self.gbw.committed.connect(lambda v: self.state.set_opamp(gbw_hz=v))
        self.a0.committed.connect(lambda v: self.state.set_opamp(a0=v))
        self.series.activated.connect(self._on_series_activated)
        self.tol_f0.committed.connect(lambda v: self._set_tolerance(f0=v))
        self.tol_q.committed.connect(lambda v: self._set_tolerance(q=v))
        self.tol_gain.committed.connect(lambda v: self._set_tolerance(gain_db=v))
        self.load.committed.connect(self._set_load)
        self.q_mode.currentIndexChanged.connect(self._on_q_mode_changed)

    # -- user input ---------------------------------------------------------------------
    def _on_bw_committed(self, bw_hz: float) -> None:
        self.state.set_target(q=self.state.session.target.f0_hz / bw_hz)

    def _set_tolerance(self, **change) -> None:
        s = self.state.session
        what = ", ".join(f"{k} ±{_fmt_pct(v) if k != 'gain_db' else f'{v:g} dB'}" for k, v in change.items())
        self.state.edit(replace(s, tolerances=replace(s.tolerances, **change)), f"design tolerance {what}")

    def _set_load(self, ohm: float | None) -> None:
        s = self.state.session
        self.state.edit(replace(s, rload_ohm=ohm), f"load {'none' if ohm is None else format_value(ohm, 'Ω')}")

    def _on_series_activated(self, index: int) -> None:
        self.state.set_target(series=self.series.itemText(index))

    def _on_q_mode_changed(self, index: int) -> None:
        self.q.setVisible(index == 0)
        self.bw.setVisible(index == 1)
        self._on_session_changed(self.state.session)

    # -- state → view -------------------------------------------------------------------
    def _on_session_changed(self, session: Session) -> None:
        t = session.target
        # A part edit leaves the target and the op-amp as they were: nothing to refill.
        key = (t, session.opamp, session.tolerances, session.rload_ohm, self.q_mode.currentIndex())
        if key == getattr(self, "_shown", None):
            return
        self._shown = key
        self.f0.set_value(t.f0_hz)
        self.q.set_value(t.q)
        self.bw.set_value(t.f0_hz / t.q)
        self.gain.set_value(t.gain)
        self.vin.set_value(t.vin_v)
        self.gbw.set_value(session.opamp.gbw_hz)
        self.a0.set_value(session.opamp.a0)
        self.tol_f0.set_value(session.tolerances.f0)
        self.tol_q.set_value(session.tolerances.q)
        self.tol_gain.set_value(session.tolerances.gain_db)
        self.load.set_value(session.rload_ohm)
        tol = session.tolerances
        load = "no load" if session.rload_ohm is None else f"{format_value(session.rload_ohm, 'Ω')} load"
        self.tolerance_button.setText(f"f0 ±{100 * tol.f0:g}%, Q ±{100 * tol.q:g}%, ±{tol.gain_db:g} dB\n{load}")
        self.series.setCurrentText(t.series)
        if self.q_mode.currentIndex() == 0:
            self.derived.setText(f"BW {format_value(t.f0_hz / t.q, 'Hz', digits=3)}")
        else:
            self.derived.setText(f"Q {t.q:.3g}")
