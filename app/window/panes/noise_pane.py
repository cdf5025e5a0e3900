"""The "Noise" pane: the output noise of the selected candidate, source by source.

Top to bottom: the candidate (the board's selected one); the noise settings — the op-amp's
voltage noise ``en`` and current noise ``in``, the temperature of the resistors and the band the
noise is integrated over (blank: f0/10 to 10·f0), typed in any notation of :mod:`bandsmith.common.values`
("10n", "4.5 nV/√Hz", "1p", "27 °C") and kept in the session (``extras["noise"]``, undoable);
the integrated noise in large type with the density at f0, the SNR for the target's input level
and the input-referred density; the output density of every source over frequency (log-log, the
total in black, the integration band shaded) beside a table of the sources, largest first.

Every figure comes from :func:`bandsmith.analysis.noise.output_noise` (one adjoint solve per frequency): the
figures over the chosen band, the curves over a wider view (two decades each side of f0). It is
fast, so the pane recomputes on every edit, but only while its tab is visible; a hidden pane
remembers that it is out of date and catches up when it is shown.

The module is a little over 500 lines: the settings' parsers (en, in, temperature, band edges)
serve only this pane's fields, so they stay beside it.
"""

from __future__ import annotations

import math
import re
from dataclasses import replace

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtGui, QtWidgets

from bandsmith.common.errors import InputError
from bandsmith.analysis.noise import NoiseResult, NoiseSettings, output_noise
from bandsmith.common.values import format_value, parse_nonnegative, parse_positive, parse_value

from bandsmith.app.document.extras_settings import NOISE_KEY, stored_noise
from bandsmith.app.document.extras_shelf import chosen_amp
from bandsmith.app.window.widgets.plots import LogAxis
from bandsmith.app.window.panes.shown_only import RecomputeWhenShown
from bandsmith.app.window.state import WorkbenchState
from bandsmith.app.window.theme import INK, MUTED, error_label, headline, note_label, section_title, settings_group
from bandsmith.app.window.widgets.candidate_picker import candidate_bar, candidate_circuit, follow_candidate
from bandsmith.app.window.widgets.value_field import ValueField
from bandsmith.app.window.widgets.winding_line import WindingLine, winding_text

__all__ = ["NoisePane", "SOURCE_COLOURS", "install"]

#: Colours of the noise sources, in the order the core lists them (our own set; they name
#: sources, not candidates). Each kind of source also has its own line style.
SOURCE_COLOURS = ("#2f6f9f", "#c8702a", "#7b3f8c", "#3f8f5a", "#b23a48", "#8a7a2e", "#4a90c2", "#9c5a3c", "#5a5f8f", "#2a9d8f")
_KIND_STYLE = {
    "resistor": QtCore.Qt.PenStyle.SolidLine,
    "winding": QtCore.Qt.PenStyle.SolidLine,
    "en": QtCore.Qt.PenStyle.DashLine,
}
_IN_STYLE = {"in+": QtCore.Qt.PenStyle.DotLine, "in-": QtCore.Qt.PenStyle.DashDotLine}
_KIND_WORD = {"resistor": "resistor (4kTR)", "winding": "winding (4kT·RL)", "en": "op-amp en", "in": "op-amp in"}
_VIEW_DECADES = 2.0
_RTHZ = re.compile(r"\s*/\s*(√\s*\(?\s*hz\s*\)?|rt\s*hz|sqrt\s*\(?\s*hz\s*\)?)\s*$", re.IGNORECASE)


_DEFAULT_NOISE = NoiseSettings()


def noise_sources(session, candidate_id: str | None) -> tuple[NoiseSettings, str]:
    """The noise settings the pane computes with for a candidate, and where en and in come from.

    Values typed in the pane (anything but the placeholders 10 nV/√Hz, 1 pA/√Hz) are used as
    typed; otherwise the shelf model chosen for the candidate gives its datasheet en and in;
    without one the placeholders are used and said to be placeholders.
    """
    s = stored_noise(session).settings
    typed = (s.en_v_per_rthz, s.in_a_per_rthz) != (_DEFAULT_NOISE.en_v_per_rthz, _DEFAULT_NOISE.in_a_per_rthz)
    if typed:
        return s, "en, in as typed here."
    amp = chosen_amp(session, candidate_id)
    if amp is not None:
        en, i_n = amp.en_nv_rthz, amp.in_pa_rthz
        if all(isinstance(v, (int, float)) and math.isfinite(v) and v >= 0 for v in (en, i_n)):
            return replace(s, en_v_per_rthz=en * 1e-9, in_a_per_rthz=i_n * 1e-12), f"en, in from {amp.name}, the shelf model chosen for {candidate_id}."
    return s, "en, in are placeholders: choose an op-amp on the shelf, or type its datasheet's."


def _strip_rthz(text: str) -> str:
    return _RTHZ.sub("", text)


def _parse_en(text: str) -> float:
    return parse_nonnegative(_strip_rthz(text), field="en", unit="V")  # the density per √Hz, its "/√Hz" stripped


def _parse_in(text: str) -> float:
    return parse_nonnegative(_strip_rthz(text), field="in", unit="A")  # the density per √Hz, its "/√Hz" stripped


def _parse_temperature(text: str) -> float:
    """Kelvin ("300", "300 K") or degrees Celsius ("27 °C", "27C")."""
    t = text.strip()
    m = re.fullmatch(r"(.*?)\s*°?\s*[cC]", t)
    if m and m.group(1):
        k = parse_value(m.group(1), field="temp") + 273.15
    else:
        t = re.sub(r"\s*K$", "", t)  # the unit, not the kilo prefix
        k = parse_value(t, field="temp")
    if not (math.isfinite(k) and k > 0):
        raise InputError("temp", f"must be above absolute zero, got {k:g} K")
    return k


def _parse_band_edge(text: str, field: str) -> float | None:
    if text.strip().lower() in ("", "auto", "-", "—"):
        return None
    return parse_positive(text, field=field)


def _nv(x: float) -> str:
    return format_value(x, "V/√Hz", digits=4)


def _uv(x: float) -> str:
    return format_value(x, "V", digits=4) + " rms"


def _pen_for(name: str, kind: str, index: int, width: float = 1.8):
    colour = QtGui.QColor(SOURCE_COLOURS[index % len(SOURCE_COLOURS)])
    base = name.split(".")[-1]
    style = _IN_STYLE.get(base, _KIND_STYLE.get(kind, QtCore.Qt.PenStyle.SolidLine))
    return pg.mkPen(colour, width=width, style=style)


def _swatch(pen: QtGui.QPen, width: int = 30, height: int = 12) -> QtGui.QIcon:
    pm = QtGui.QPixmap(width, height)
    pm.fill(QtCore.Qt.GlobalColor.transparent)
    p = QtGui.QPainter(pm)
    p.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing)
    q = QtGui.QPen(pen)
    q.setWidthF(2.5)
    q.setCosmetic(True)
    p.setPen(q)
    p.drawLine(1, height // 2, width - 1, height // 2)
    p.end()
    return QtGui.QIcon(pm)


class NoisePane(RecomputeWhenShown, QtWidgets.QWidget):
    """Output noise of the selected candidate.

    Attributes
    ----------
    result : NoiseResult or None
        The figures over the integration band (None without a usable candidate).
    view : NoiseResult or None
        The same circuit over the plotted range (the curves).
    curves : dict
        The plotted curve of each source (by source name); ``total_curve`` is the sum.
    """

    computed = QtCore.Signal()

    def __init__(self, state: WorkbenchState, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("noisePane")
        self.state = state
        self.result: NoiseResult | None = None
        self.view: NoiseResult | None = None
        self.problem: str | None = None
        self._key = None
        self._dirty = True
        self.curves: dict[str, pg.PlotDataItem] = {}

        outer = QtWidgets.QVBoxLayout(self)
        outer.setContentsMargins(10, 8, 10, 8)
        outer.setSpacing(6)
        self._build_header(outer)
        self._build_settings(outer)
        self._build_figures(outer)
        self._build_plot(outer)
        self._build_source_table()

        follow_candidate(state, self._on_session_changed)

    def _build_header(self, outer: QtWidgets.QVBoxLayout) -> None:
        """The candidate picker with its one-line description, and the inductor winding's line."""
        bar, self.picker = candidate_bar(self.state, self)
        self.info = note_label(self, "noiseInfo")
        bar.addWidget(self.info, 1)
        outer.addLayout(bar)
        self.winding = WindingLine(self)
        outer.addWidget(self.winding)

    def _build_settings(self, outer: QtWidgets.QVBoxLayout) -> None:
        """The group of noise settings: en, in, temperature and the integration band."""
        box, grid = settings_group(self, "Noise sources and band", "noiseSettings")
        self.fields: dict[str, ValueField] = {}
        self.fields["en"] = ValueField(
            "en", "V/√Hz", parse=lambda t: self._checked(en_v_per_rthz=_parse_en(t)), fmt=lambda v: "" if v is None else _nv(v),
            tooltip="Op-amp input voltage noise density, V/√Hz, from its datasheet: 10n, 4.5 nV/√Hz, 4.5e-9 (0: noiseless).", parent=box,
        )
        self.fields["in"] = ValueField(
            "in", "A/√Hz", parse=lambda t: self._checked(in_a_per_rthz=_parse_in(t)), fmt=lambda v: "" if v is None else format_value(v, "A/√Hz", digits=4),
            tooltip="Op-amp input current noise density at each input, A/√Hz: 1p, 0.5 pA/√Hz, 1e-12 (0: none).", parent=box,
        )
        self.fields["temp"] = ValueField(
            "temp", "K", parse=lambda t: self._checked(temperature_k=_parse_temperature(t)), fmt=lambda v: "" if v is None else f"{v:.5g} K",
            tooltip="Temperature of the resistors: 300 (kelvin), 300 K, or 27 °C.", parent=box,
        )
        self.fields["f1"] = ValueField(
            "f1", "Hz", parse=lambda t: self._band_value(0, _parse_band_edge(t, "band")), fmt=self._band_text(0),
            tooltip="Lower edge of the band the noise is integrated over, Hz (500, 1k); blank: f0/10.", parent=box,
        )
        self.fields["f2"] = ValueField(
            "f2", "Hz", parse=lambda t: self._band_value(1, _parse_band_edge(t, "band")), fmt=self._band_text(1),
            tooltip="Upper edge of the band, Hz (50k); blank: 10·f0.", parent=box,
        )
        for f in self.fields.values():
            f.edit.setMaximumWidth(130)
        self.noise_source = QtWidgets.QLabel(box)
        self.noise_source.setObjectName("noiseSource")
        self.noise_source.setMinimumHeight(self.noise_source.fontMetrics().height() + 2)
        self.noise_source.setStyleSheet(f"color: {MUTED};")
        grid.addWidget(self.noise_source, 3, 0, 1, 5)
        labels = {"en": "Voltage noise en", "in": "Current noise in", "temp": "Temperature", "f1": "Band from", "f2": "to"}
        for i, key in enumerate(("en", "in", "temp")):
            grid.addWidget(QtWidgets.QLabel(labels[key], box), i, 0)
            grid.addWidget(self.fields[key], i, 1)
        grid.addWidget(QtWidgets.QLabel(labels["f1"], box), 0, 2)
        grid.addWidget(self.fields["f1"], 0, 3)
        grid.addWidget(QtWidgets.QLabel(labels["f2"], box), 1, 2)
        grid.addWidget(self.fields["f2"], 1, 3)
        self.band_auto = QtWidgets.QPushButton("f0/10 to 10·f0", box)
        self.band_auto.setObjectName("bandAuto")
        self.band_auto.setToolTip("Integrate from a tenth of f0 to ten times f0 (clears both edges).")
        self.band_auto.clicked.connect(lambda: self._store(replace(self.settings, band_hz=None), "noise: band f0/10 to 10·f0"))
        grid.addWidget(self.band_auto, 2, 3)
        grid.setColumnStretch(4, 1)
        for key, f in self.fields.items():
            f.committed.connect(lambda v, k=key: self._on_field(k, v))
        outer.addWidget(box)

    def _build_figures(self, outer: QtWidgets.QVBoxLayout) -> None:
        """The error line, the integrated noise in large type and the figures beside it."""
        self.error = error_label(self)
        outer.addWidget(self.error)

        figs = QtWidgets.QHBoxLayout()
        col, self.integrated = headline(self, "Output noise, integrated", "noiseIntegrated", 26)
        figs.addLayout(col)
        self.figures = QtWidgets.QLabel(self)
        self.figures.setObjectName("noiseFigures")
        self.figures.setTextFormat(QtCore.Qt.TextFormat.RichText)
        self.figures.setWordWrap(True)
        figs.addWidget(self.figures, 1)
        outer.addLayout(figs)

    def _build_plot(self, outer: QtWidgets.QVBoxLayout) -> None:
        """The density plot (one curve per source, the total, the band and f0) in the pane's body."""
        # Plot above the table until the pane is wide enough for both side by side (resizeEvent).
        self.body = QtWidgets.QBoxLayout(QtWidgets.QBoxLayout.Direction.TopToBottom)
        self.body.setSpacing(10)
        outer.addLayout(self.body, 1)
        self.canvas = pg.GraphicsLayoutWidget(self)
        self.canvas.setObjectName("noisePlot")
        self.canvas.setBackground("w")
        self.plot = pg.PlotItem(axisItems={"bottom": LogAxis("bottom"), "left": LogAxis("left")})
        self.plot.setTitle("Output noise density by source", color=INK, size="10pt")
        self.plot.setLogMode(x=True, y=True)
        self.plot.showGrid(x=True, y=True, alpha=0.22)
        self.plot.setMenuEnabled(False)
        self.plot.setLabel("bottom", "Frequency (Hz)", color=INK)
        self.plot.setLabel("left", "Density at the output (V/√Hz)", color=INK)
        self.legend = pg.LegendItem(colCount=4, labelTextColor=INK, labelTextSize="8pt", horSpacing=14, verSpacing=-6)
        self.canvas.addItem(self.plot, row=0, col=0)
        self.canvas.addItem(self.legend, row=1, col=0)
        self.canvas.ci.layout.setRowStretchFactor(0, 1)
        self.canvas.setMinimumSize(340, 260)
        self.band_region = pg.LinearRegionItem(values=(0, 1), movable=False, brush=pg.mkBrush(27, 94, 158, 22), pen=pg.mkPen((27, 94, 158, 90)))
        self.band_region.setZValue(-10)
        self.plot.addItem(self.band_region, ignoreBounds=True)
        self.f0_line = pg.InfiniteLine(angle=90, pen=pg.mkPen("#7d8590", width=1, style=QtCore.Qt.PenStyle.DashLine), label="f0", labelOpts={"position": 0.96, "color": MUTED})
        self.plot.addItem(self.f0_line, ignoreBounds=True)
        self.total_curve = self.plot.plot([], [], pen=pg.mkPen(INK, width=3.0), name="total", connect="finite")
        self.total_curve.setZValue(5)
        self.body.addWidget(self.canvas, 3)

    def _build_source_table(self) -> None:
        """The table of sources, largest first, and the line naming the largest (beside the plot)."""
        tcol = QtWidgets.QVBoxLayout()
        t = section_title(self, "Sources, largest first")
        tcol.addWidget(t)
        self.table = QtWidgets.QTableWidget(0, 4, self)
        self.table.setObjectName("noiseSources")
        self.table.setHorizontalHeaderLabels(["source", "at f0", "integrated", "share"])
        self.table.horizontalHeaderItem(1).setToolTip("Output density at f0 (V/√Hz)")
        self.table.horizontalHeaderItem(2).setToolTip("Output noise over the band (V rms)")
        self.table.horizontalHeaderItem(3).setToolTip("Share of the total output noise power over the band")
        self.table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.NoSelection)
        self.table.verticalHeader().hide()
        self.table.verticalHeader().setDefaultSectionSize(22)
        self.table.horizontalHeader().setStretchLastSection(True)
        self.table.setMinimumWidth(300)
        tcol.addWidget(self.table, 1)
        self.largest = QtWidgets.QLabel(self)
        self.largest.setObjectName("noiseLargest")
        self.largest.setWordWrap(True)
        self.largest.setTextFormat(QtCore.Qt.TextFormat.RichText)
        tcol.addWidget(self.largest)
        self.body.addLayout(tcol, 2)

    # ------------------------------------------------------------------ settings
    @property
    def settings(self) -> NoiseSettings:
        """The session's noise settings (the defaults when it has none)."""
        return stored_noise(self.state.session).settings

    def _checked(self, **change):
        replace(self.settings, **change)  # raises InputError with the reason
        return next(iter(change.values()))

    def _current_band(self) -> tuple[float, float] | None:
        if self.settings.band_hz is not None:
            return self.settings.band_hz
        return self.result.band_hz if self.result is not None else None

    def _band_text(self, side: int):
        def fmt(v):
            if self.settings.band_hz is None:
                return ""
            return format_value(v, "Hz", digits=4) if v is not None else ""

        return fmt

    def _band_value(self, side: int, value: float | None):
        if value is None:
            return None
        band = list(self._current_band() or (value / 10.0, value * 10.0))
        band[side] = value
        replace(self.settings, band_hz=tuple(band))  # raises InputError when f2 <= f1
        return value

    def _store(self, settings: NoiseSettings, text: str) -> None:
        self.state.set_extra(NOISE_KEY, settings.to_json(), text)

    def _on_field(self, key: str, value) -> None:
        s = self.settings
        if key == "en":
            self._store(replace(s, en_v_per_rthz=value), f"noise: en {_nv(value)}")
        elif key == "in":
            self._store(replace(s, in_a_per_rthz=value), f"noise: in {format_value(value, 'A/√Hz')}")
        elif key == "temp":
            self._store(replace(s, temperature_k=value), f"noise: {value:.5g} K")
        else:
            side = 0 if key == "f1" else 1
            if value is None:
                self._store(replace(s, band_hz=None), "noise: band f0/10 to 10·f0")
                return
            band = list(self._current_band() or (value / 10.0, value * 10.0))
            band[side] = value
            self._store(replace(s, band_hz=tuple(band)), f"noise: band {format_value(band[0], 'Hz')} to {format_value(band[1], 'Hz')}")

    def _fill_settings(self) -> None:
        st = stored_noise(self.state.session)
        s = st.settings
        self.fields["en"].set_value(s.en_v_per_rthz)
        self.fields["in"].set_value(s.in_a_per_rthz)
        self.fields["temp"].set_value(s.temperature_k)
        band = s.band_hz or (None, None)
        self.fields["f1"].set_value(band[0])
        self.fields["f2"].set_value(band[1])
        for i, k in enumerate(("f1", "f2")):
            self.fields[k].edit.setPlaceholderText(("f0/10", "10·f0")[i])
        if st.problem:
            self.error.setText(st.problem)
            self.error.show()

    # ------------------------------------------------------------------ computing
    def _on_session_changed(self, _session) -> None:
        self.error.hide()
        self._fill_settings()
        self.mark_dirty()

    def refresh(self) -> None:
        """Recompute (when anything it depends on changed) and redraw."""
        self._dirty = False
        cid = self.picker.candidate_id
        circ = candidate_circuit(self.state, cid)
        s = self.settings
        vin = self.state.session.target.vin_v
        if circ is None:
            self.winding.hide()
            self.result = self.view = None
            self.problem = f"{cid} has no usable part values." if cid else "No active candidate."
            self._key = None
            self._draw()
            self.computed.emit()
            return
        net, opamp = circ
        s, where = noise_sources(self.state.session, cid)
        self.noise_source.setText(where)
        self.fields["en"].set_value(s.en_v_per_rthz)
        self.fields["in"].set_value(s.in_a_per_rthz)
        entry = self.state.session.candidate(cid)
        key = (entry.topology_id, tuple(sorted(entry.values.items())), opamp, s, vin)
        if key != self._key:
            self._key = key
            self.winding.show_text(winding_text(net, opamp))
            try:
                self.result = output_noise(net, s, opamp=opamp, vin_v=vin)
                f0 = self.result.f0_hz
                lo = min(self.result.band_hz[0] / 1.5, f0 * 10.0**-_VIEW_DECADES)
                hi = max(self.result.band_hz[1] * 1.5, f0 * 10.0**_VIEW_DECADES)
                self.view = output_noise(net, replace(s, band_hz=(lo, hi)), opamp=opamp, vin_v=vin)
                self.problem = None
            except InputError as exc:
                self.result = self.view = None
                self.problem = str(exc)
        self._draw()
        self.computed.emit()

    # ------------------------------------------------------------------ drawing
    def _draw(self) -> None:
        r, v = self.result, self.view
        cid = self.picker.candidate_id
        for item in self.curves.values():
            self.plot.removeItem(item)
        self.curves = {}
        self.legend.clear()
        if r is None or v is None:
            self.total_curve.setData([], [])
            self.integrated.setText("—")
            self.figures.setText(self.problem or "")
            self.info.setText("")
            self.table.setRowCount(0)
            self.largest.setText("")
            self.band_region.hide()
            self.f0_line.hide()
            return
        s = r.settings
        opamp = "ideal op-amp" if r.opamp.ideal else f"op-amp GBW {format_value(r.opamp.gbw_hz, 'Hz', digits=3)}"
        self.info.setText(
            f"{cid}: {opamp}; resistors at {s.temperature_k:.5g} K; every source white and uncorrelated (added as powers)."
        )
        self.integrated.setText(_uv(r.total_v_rms))
        band = f"{format_value(r.band_hz[0], 'Hz', digits=4)} to {format_value(r.band_hz[1], 'Hz', digits=4)}"
        snr = "∞ (noiseless)" if not math.isfinite(r.snr_db) else f"{r.snr_db:.1f} dB"
        gain = abs(r.gain_center)
        lines = [
            f"over <b>{band}</b> ({'' if s.band_hz else 'f0/10 to 10·f0, '}shaded on the plot)",
            f"density at f0 ({format_value(r.f0_hz, 'Hz', digits=4)}): <b>{_nv(r.total_at_f0_v_rthz)}</b>"
            + (f", input-referred <b>{_nv(r.total_at_f0_v_rthz / gain)}</b>" if gain > 0 else ""),
            f"SNR <b>{snr}</b> for a {format_value(r.vin_v, 'V', digits=4)} peak sine at f0 "
            f"({format_value(r.signal_v_rms, 'V', digits=4)} rms out)",
        ]
        self.figures.setText("<br>".join(lines))
        for i, src in enumerate(r.sources):
            y = np.asarray(v.source_density_v_rthz[src.name])
            if not np.any(y > 0):
                continue
            pen = _pen_for(src.name, src.kind, i)
            curve = self.plot.plot(v.f_hz, np.where(y > 0, y, np.nan), pen=pen, name=src.name, connect="finite")
            curve.setObjectName(src.name)
            self.curves[src.name] = curve
            self.legend.addItem(curve, src.name)
        self.total_curve.setData(v.f_hz, np.where(v.density_v_rthz > 0, v.density_v_rthz, np.nan))
        self.legend.addItem(self.total_curve, "total")
        self.canvas.ci.layout.setRowFixedHeight(1, self.legend.preferredHeight() + 2)
        self.band_region.setRegion((math.log10(r.band_hz[0]), math.log10(r.band_hz[1])))
        self.band_region.show()
        self.f0_line.setValue(math.log10(r.f0_hz))
        self.f0_line.show()
        self.plot.enableAutoRange()
        self._fill_table(r)

    def _fill_table(self, r: NoiseResult) -> None:
        total_p = r.total_v_rms**2
        order = sorted(range(len(r.sources)), key=lambda i: -r.integrated_v_rms[r.sources[i].name])
        self.table.setRowCount(len(order))
        shares = {}
        for row, i in enumerate(order):
            src = r.sources[i]
            share = r.integrated_v_rms[src.name] ** 2 / total_p if total_p > 0 else 0.0
            shares[src.name] = share
            name = QtWidgets.QTableWidgetItem(src.name)
            name.setIcon(_swatch(_pen_for(src.name, src.kind, i)))
            name.setToolTip(_KIND_WORD.get(src.kind, src.kind) + (f", {format_value(src.density, src.unit + '/√Hz', digits=4)}" if src.density else ", zero"))
            cells = [name, QtWidgets.QTableWidgetItem(_nv(r.at_f0_v_rthz[src.name])), QtWidgets.QTableWidgetItem(_uv(r.integrated_v_rms[src.name])), QtWidgets.QTableWidgetItem(f"{100 * share:.1f} %")]
            silent = r.integrated_v_rms[src.name] == 0.0
            if silent:
                name.setToolTip(name.toolTip() + "; it does not reach the output (no curve)")
            for c, it in enumerate(cells):
                if silent:
                    it.setForeground(QtGui.QColor(MUTED))
                if c:
                    it.setTextAlignment(QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter)
                if row < 2 and share > 0:
                    f = it.font()
                    f.setBold(True)
                    it.setFont(f)
                self.table.setItem(row, c, it)
        self.table.resizeColumnsToContents()
        top = [r.sources[i].name for i in order[:2] if shares[r.sources[i].name] > 0]
        if top:
            self.largest.setText("Largest: " + ", ".join(f"<b>{n}</b> ({100 * shares[n]:.0f} % of the power)" for n in top) + ".")
        else:
            self.largest.setText("No noise: every source is zero.")

    def source_names(self) -> list[str]:
        """The sources drawn, in the core's order."""
        return list(self.curves)

    # ------------------------------------------------------------------ layout
    def resizeEvent(self, event) -> None:  # noqa: N802 - Qt's name
        super().resizeEvent(event)
        wide = event.size().width() >= 820
        self.body.setDirection(QtWidgets.QBoxLayout.Direction.LeftToRight if wide else QtWidgets.QBoxLayout.Direction.TopToBottom)


def install(window) -> NoisePane:
    """Add the noise pane to a :class:`~bandsmith.app.window.main_window.WorkbenchWindow` as a tab."""
    pane = NoisePane(window.state, parent=window)
    window.noise_pane = pane
    window.add_pane("Noise", pane)
    return pane
