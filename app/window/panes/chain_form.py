"""The request form of the stage-chain pane: response family, order, ripple, the band (as centre
and bandwidth or as its edges), centre gain, circuit and series, with the Build button.

:meth:`ChainForm.request` reads the form into a :class:`bandsmith.chain.cascade.ChainSettings`
(an InputError names the field as its label does); :meth:`ChainForm.set_settings` shows a chain's
request. The form holds the band as its two edges, so switching between centre/bandwidth and
edges loses nothing.
"""

from __future__ import annotations

import math

from PySide6 import QtCore, QtWidgets

from bandsmith.chain.bandpass import band_from
from bandsmith.chain.cascade import AUTO, ChainSettings, circuit_choices
from bandsmith.chain.prototypes import DEFAULT_RIPPLE_DB
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.common.eseries import SERIES_NAMES
from bandsmith.common.values import parse_positive
from bandsmith.files.session import Session

from bandsmith.app.window.theme import MUTED, error_label
from bandsmith.app.window.widgets.value_field import ValueField

__all__ = ["ChainForm"]


class ChainForm(QtWidgets.QGroupBox):
    """The "New chain" box: every field of a chain's request and the Build button (``btn_build``)."""

    def __init__(self, parent: QtWidgets.QWidget | None = None):
        super().__init__("New chain", parent)
        self.setObjectName("chainRequest")
        self._band = (1.0, 2.0)
        self._form = QtWidgets.QFormLayout(self)
        self._form.setFieldGrowthPolicy(QtWidgets.QFormLayout.FieldGrowthPolicy.AllNonFixedFieldsGrow)
        self._form.setLabelAlignment(QtCore.Qt.AlignmentFlag.AlignRight)
        self._form.setVerticalSpacing(5)
        self._build_response_and_band()
        self._build_gain_circuit_series()

    def _build_response_and_band(self) -> None:
        self.response_combo = QtWidgets.QComboBox(self)
        self.response_combo.setObjectName("chainResponse")
        for key, text in (("butterworth", "Butterworth (maximally flat)"), ("chebyshev", "Chebyshev (equal ripple)"), ("bessel", "Bessel (smooth step)")):
            self.response_combo.addItem(text, key)
        self.response_combo.setToolTip("The family of the ideal response the chain is built to")
        self.response_combo.currentIndexChanged.connect(self._on_response_changed)
        self._form.addRow("Response", self.response_combo)

        self.order_spin = QtWidgets.QSpinBox(self)
        self.order_spin.setObjectName("chainOrder")
        self.order_spin.setRange(1, 8)
        self.order_spin.setValue(4)
        self.order_spin.setSuffix(" stages")
        self.order_spin.setToolTip("Prototype order N, 1 to 8: the band-pass has N second-order stages (order 2N)")
        self._form.addRow("Order", self.order_spin)

        self.ripple_field = ValueField(
            "ripple", "dB", parse=lambda t: parse_positive(t, field="ripple"), fmt=lambda v: "" if v is None else f"{v:g} dB",
            tooltip="Chebyshev passband ripple in dB (0.1 to 6; 0.5 dB is usual)", parent=self,
        )
        self.ripple_label = QtWidgets.QLabel("Ripple", self)
        self._form.addRow(self.ripple_label, self.ripple_field)

        self.band_mode = QtWidgets.QComboBox(self)
        self.band_mode.setObjectName("chainBandMode")
        self.band_mode.addItem("centre and bandwidth", "centre")
        self.band_mode.addItem("band edges", "edges")
        self.band_mode.setToolTip("Give the band by its geometric centre and width, or by its two edges")
        self.band_mode.currentIndexChanged.connect(self._on_band_mode_changed)
        self._form.addRow("Band given by", self.band_mode)
        self.band_a_label = QtWidgets.QLabel("Centre f0", self)
        self.band_a = ValueField("band_a", "Hz", tooltip="Hz, in any notation: 10k, 10 kHz, 1e4", parent=self)
        self._form.addRow(self.band_a_label, self.band_a)
        self.band_b_label = QtWidgets.QLabel("Bandwidth", self)
        self.band_b = ValueField("band_b", "Hz", tooltip="Hz, in any notation: 2k, 2 kHz, 2e3", parent=self)
        self._form.addRow(self.band_b_label, self.band_b)
        self.edge_note = QtWidgets.QLabel(self)
        self.edge_note.setObjectName("edgeNote")
        self.edge_note.setWordWrap(True)
        self.edge_note.setStyleSheet(f"color: {MUTED}; font-size: 11px;")
        self._form.addRow("", self.edge_note)

    def _build_gain_circuit_series(self) -> None:
        self.gain_field = ValueField(
            "chain_gain", "", parse=lambda t: parse_positive(t, field="gain"), fmt=lambda v: "" if v is None else f"{v:g}",
            tooltip="Gain magnitude (V/V) at the band's geometric centre √(f_low·f_high)", parent=self,
        )
        self._form.addRow("Centre gain (V/V)", self.gain_field)
        for fld in (self.ripple_field, self.band_a, self.band_b, self.gain_field):
            # The form's own values: a good entry is kept and shown in its usual notation.
            fld.committed.connect(lambda v, fld=fld: fld.set_value(v))

        self.circuit_combo = QtWidgets.QComboBox(self)
        self.circuit_combo.setObjectName("chainCircuit")
        self.circuit_combo.addItem("auto: least GBW, per stage", AUTO)
        for cid in circuit_choices()[1:]:
            self.circuit_combo.addItem(cid, cid)
            self.circuit_combo.setItemData(self.circuit_combo.count() - 1, get_topology(cid).title, QtCore.Qt.ItemDataRole.ToolTipRole)
        self.circuit_combo.setToolTip("The circuit every stage is built from, or auto: for each stage the one needing the least GBW with sane parts")
        self._form.addRow("Circuit", self.circuit_combo)

        self.series_combo = QtWidgets.QComboBox(self)
        self.series_combo.setObjectName("chainSeries")
        for name in SERIES_NAMES + ("exact",):
            self.series_combo.addItem(name, name)
        self.series_combo.setToolTip("The standard series the parts come from (IEC 60063), or exact values")
        self._form.addRow("Parts from", self.series_combo)

        self.reject_field = QtWidgets.QLineEdit(self)
        self.reject_field.setObjectName("chainReject")
        self.reject_field.setPlaceholderText("e.g. 1k2=30, 800=40")
        self.reject_field.setToolTip("Rejection points F=DB: at least DB dB below the centre gain at frequency F; drawn on the chain's plot")
        self._form.addRow("Reject", self.reject_field)
        self.order_auto = QtWidgets.QCheckBox("least order meeting the rejection", self)
        self.order_auto.setObjectName("chainOrderAuto")
        self.order_auto.setToolTip("Choose the order: the least one whose ideal response meets every rejection point")
        self._form.addRow("", self.order_auto)

        self.btn_build = QtWidgets.QPushButton("Build chain", self)
        self.btn_build.setObjectName("buildChain")
        self.btn_build.setToolTip("Design every stage and keep the chain in the session (undo takes it away)")
        self._form.addRow("", self.btn_build)
        self.form_error = error_label(self)
        self._form.addRow(self.form_error)

    def load_defaults(self, session: Session) -> None:
        """Butterworth, four stages, on the band of the session's target."""
        t = session.target
        self.set_settings(ChainSettings.from_request("butterworth", 4, f0_hz=t.f0_hz, bw_hz=t.f0_hz / t.q, gain=t.gain, series=t.series))

    def follow_target(self, session: Session) -> None:
        """Put the target's band, gain and series in the form (the response, the number of
        stages and the circuit stay as they are)."""
        t = session.target
        from bandsmith.chain.bandpass import band_from

        band = band_from(f0_hz=t.f0_hz, bw_hz=t.f0_hz / t.q)  # as load_defaults (ChainSettings.from_request)
        self._band = (band.f_low_hz, band.f_high_hz)
        self._show_band()
        self.gain_field.set_value(t.gain)
        index = self.series_combo.findData(t.series)
        if index >= 0:
            self.series_combo.setCurrentIndex(index)

    def set_settings(self, s: ChainSettings) -> None:
        """Show a chain's request in the form."""
        self.response_combo.setCurrentIndex(self.response_combo.findData(s.response))
        self.order_spin.setValue(s.order)
        self.ripple_field.set_value(s.ripple_db if s.ripple_db is not None else DEFAULT_RIPPLE_DB)
        self._band = (s.f_low_hz, s.f_high_hz)
        self._show_band()
        self.gain_field.set_value(s.gain)
        self.circuit_combo.setCurrentIndex(self.circuit_combo.findData(s.circuit))
        self.series_combo.setCurrentIndex(self.series_combo.findData(s.series))
        self._on_response_changed()

    def _show_band(self) -> None:
        lo, hi = self._band
        if self.band_mode.currentData() == "edges":
            self.band_a_label.setText("Lower edge")
            self.band_b_label.setText("Upper edge")
            self.band_a.set_value(lo)
            self.band_b.set_value(hi)
        else:
            self.band_a_label.setText("Centre f0")
            self.band_b_label.setText("Bandwidth")
            self.band_a.set_value(math.sqrt(lo * hi))
            self.band_b.set_value(hi - lo)

    def _on_band_mode_changed(self) -> None:
        try:
            self._band = self._band_from_fields(previous_mode=True)
        except InputError:
            pass
        self._show_band()

    def _band_from_fields(self, *, previous_mode: bool = False) -> tuple[float, float]:
        mode = self.band_mode.currentData()
        if previous_mode:  # the fields still hold the other mode's values
            mode = "centre" if mode == "edges" else "edges"
        a, b = self._field_value(self.band_a), self._field_value(self.band_b)
        try:
            band = band_from(f_low_hz=a, f_high_hz=b) if mode == "edges" else band_from(f0_hz=a, bw_hz=b)
        except InputError as exc:
            names = {"f-low": "lower edge", "f-high": "upper edge", "f0": "centre f0", "bw": "bandwidth"}
            reason = exc.reason.replace("f-low", "the lower edge")
            raise InputError(names.get(exc.field, exc.field), reason) from None
        return band.f_low_hz, band.f_high_hz

    def _field_value(self, field: ValueField) -> float:
        """A field's value, reading what is typed even before Enter (a Build click reads it too);
        an InputError names the field as its label does."""
        label = {
            self.band_a: self.band_a_label.text(),
            self.band_b: self.band_b_label.text(),
            self.gain_field: "centre gain",
            self.ripple_field: "ripple",
        }.get(field, field.name)
        text = field.edit.text().strip()
        if text == field._fmt(field.value) and field.value is not None:
            return float(field.value)
        if not text:
            raise InputError(label.lower(), "missing")
        try:
            return parse_positive(text, field=label.lower())
        except InputError as exc:
            raise InputError(label.lower(), exc.reason) from None

    def _on_response_changed(self) -> None:
        cheb = self.response_combo.currentData() == "chebyshev"
        self.ripple_field.setEnabled(cheb)
        self.ripple_label.setEnabled(cheb)
        self.edge_note.setText(
            "Edges: where the passband ripple band ends (−ripple dB)." if cheb else "Edges: the −3 dB points."
        )

    def mask_request(self) -> tuple[list[str], bool]:
        """The rejection points as typed (``"F=DB"`` each, checked) and whether the order is chosen
        from them; an InputError (field ``reject``) for a bad point or auto without points."""
        from bandsmith.chain.mask import parse_reject

        points = [t.strip() for t in self.reject_field.text().replace(";", ",").split(",") if t.strip()]
        for t in points:
            parse_reject(t)
        auto = self.order_auto.isChecked()
        if auto and not points:
            raise InputError("reject", "the least order needs at least one rejection point F=DB")
        return points, auto

    def request(self) -> ChainSettings:
        """The settings the form asks for (InputError naming the field when something is off)."""
        lo, hi = self._band_from_fields()
        response = self.response_combo.currentData()
        return ChainSettings(
            response=response,
            order=self.order_spin.value(),
            f_low_hz=lo,
            f_high_hz=hi,
            gain=self._field_value(self.gain_field),
            ripple_db=self._field_value(self.ripple_field) if response == "chebyshev" else None,
            circuit=self.circuit_combo.currentData(),
            series=self.series_combo.currentData(),
        )
