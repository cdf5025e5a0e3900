"""The plots of a chain of stages: the whole chain against the ideal response of its family,
the deviation between them, and each stage's own response beneath, on one frequency axis.

:class:`ChainPlots` draws a :class:`bandsmith.chain.cascade.Cascade` (built or not) in the light theme; the
stage-chain pane shows it and the report paints it into an image. Every curve comes from the core
(:meth:`~bandsmith.chain.cascade.Cascade.stage_responses`, :meth:`~bandsmith.chain.cascade.Cascade.response`,
:meth:`~bandsmith.chain.cascade.Cascade.reference_response`); this module only picks the frequencies and
draws. Legends have rows of their own (above the whole chain, under the stages), so they never
hide a curve; the band edges are dotted lines on every plot and the edge level one on the top plot.
"""

from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtGui, QtWidgets

from bandsmith.chain.cascade import Cascade
from bandsmith.common.values import format_value

from bandsmith.app.plots.axes import LogAxis
from bandsmith.app.plots.chain_text import plot_frequencies, response_title
from bandsmith.app.plots.palette import INK, apply_plot_theme, candidate_style

__all__ = ["ChainPlots", "plot_frequencies", "response_title"]

_REFERENCE_PEN = pg.mkPen("#6b7079", width=1.6, style=QtCore.Qt.PenStyle.DashLine)
_EDGE_PEN = pg.mkPen("#9aa0a6", width=1, style=QtCore.Qt.PenStyle.DotLine)
_PLANNED_PEN = pg.mkPen("#9aa0a6", width=1.4, style=QtCore.Qt.PenStyle.DashLine)


def _round_down(x: float) -> float:
    """``x`` rounded down to one significant digit (4.4 → 4, 0.37 → 0.3)."""
    e = 10.0 ** math.floor(math.log10(x))
    return math.floor(x / e + 1e-9) * e


def _db(h: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore"):
        return 20.0 * np.log10(np.abs(h))


class ChainPlots(pg.GraphicsLayoutWidget):
    """The whole chain against the ideal response, the deviation, and each stage beneath.

    Attributes
    ----------
    overall, deviation, stages : pg.PlotItem
        The three plots (one frequency axis, linked).
    built_curve, actual_curve, reference_curve : pg.PlotDataItem
        The chain with an ideal op-amp, with the session's op-amp, and the ideal response.
    deviation_curve, deviation_actual_curve : pg.PlotDataItem
        Built minus ideal (dB), with an ideal and with the session's op-amp.
    stage_curves : list of pg.PlotDataItem
        One per stage, in signal order.
    """

    def __init__(self, parent: QtWidgets.QWidget | None = None, *, line_scale: float = 1.0):
        apply_plot_theme()
        super().__init__(parent)
        self._k = float(line_scale)  # line widths × this (an image painted at 2× wants 2)
        self.setObjectName("chainPlots")
        self.setBackground("w")
        self.ci.layout.setContentsMargins(2, 2, 8, 2)
        self.ci.layout.setVerticalSpacing(2)
        # Rows: the whole chain's legend, the whole chain, the deviation, each stage, its legend.
        # Legends have rows of their own, so they never hide a curve.
        self.overall = self._plot(1, "Whole chain", "Gain", "dB")
        self.deviation = self._plot(2, "Built chain − ideal response (lines as above)", "Off by", "dB")
        self.stages = self._plot(3, "Each stage on its own", "Gain", "dB")
        lay = self.ci.layout
        for row, stretch in ((0, 0), (1, 5), (2, 3), (3, 5), (4, 0)):
            lay.setRowStretchFactor(row, stretch)
        for p in (self.deviation, self.stages):
            p.setXLink(self.overall)
        for p in (self.overall, self.deviation):
            p.getAxis("bottom").setLabel("")
            p.getAxis("bottom").setStyle(showValues=False)
            p.getAxis("bottom").setHeight(6)
        self.overall_legend = self._legend(0, columns=3)
        self.stage_legend = self._legend(4, columns=4)
        self.reference_curve = self.overall.plot([], [], pen=self._pen(_REFERENCE_PEN), name="ideal response")
        self.built_curve = self.overall.plot([], [], pen=pg.mkPen(INK, width=2.4 * self._k), name="built (ideal op-amp)")
        self.actual_curve = self.overall.plot([], [], pen=candidate_style(1).pen(2.0 * self._k), name="with the op-amp")
        for c in (self.reference_curve, self.built_curve, self.actual_curve):
            self.overall_legend.addItem(c, c.opts["name"])
        self._fit_legend(self.overall_legend)
        self.deviation_curve = self.deviation.plot([], [], pen=pg.mkPen(INK, width=1.8 * self._k))
        self.deviation_actual_curve = self.deviation.plot([], [], pen=candidate_style(1).pen(1.8 * self._k))
        self.zero_line = pg.InfiniteLine(pos=0.0, angle=0, pen=self._pen(_EDGE_PEN))
        self.deviation.addItem(self.zero_line, ignoreBounds=True)
        self.stage_curves: list[pg.PlotDataItem] = []
        self.edge_lines: list[pg.InfiniteLine] = []
        for p in (self.overall, self.deviation, self.stages):
            for _ in range(2):
                line = pg.InfiniteLine(angle=90, pen=self._pen(_EDGE_PEN))
                p.addItem(line, ignoreBounds=True)
                self.edge_lines.append(line)
        self.level_line = pg.InfiniteLine(angle=0, pen=self._pen(_EDGE_PEN))
        self.overall.addItem(self.level_line, ignoreBounds=True)
        # A mask's rejection points: the level each must stay under, met (ink) or missed (red)
        self.mask_points = pg.ScatterPlotItem(size=11 * self._k, symbol="t", pen=pg.mkPen(INK, width=1.2 * self._k))
        self.overall.addItem(self.mask_points, ignoreBounds=True)
        self.setMinimumHeight(300)

    def _pen(self, pen: QtGui.QPen) -> QtGui.QPen:
        out = QtGui.QPen(pen)
        out.setWidthF(pen.widthF() * self._k)
        return out

    def _plot(self, row: int, title: str, y_label: str, unit: str) -> pg.PlotItem:
        p = self.addPlot(row=row, col=0, axisItems={"bottom": LogAxis("bottom")})
        p.setTitle(title, color=INK, size="9pt")
        p.setLogMode(x=True, y=False)
        p.showGrid(x=True, y=True, alpha=0.22)
        p.setMenuEnabled(False)
        p.getAxis("left").enableAutoSIPrefix(False)
        p.setLabel("left", f"{y_label} ({unit})", color=INK)
        p.setLabel("bottom", "Frequency (Hz)", color=INK)
        p.getAxis("left").setWidth(58)
        for side in ("left", "bottom"):
            ax = p.getAxis(side)
            ax.setPen(pg.mkPen(INK))
            ax.setTextPen(pg.mkPen(INK))
        return p

    def _legend(self, row: int, *, columns: int) -> pg.LegendItem:
        legend = pg.LegendItem(colCount=columns, labelTextColor=INK, labelTextSize="8pt", horSpacing=18, verSpacing=-8)
        legend.setSizePolicy(QtWidgets.QSizePolicy.Policy.Preferred, QtWidgets.QSizePolicy.Policy.Fixed)
        legend.layout.setContentsMargins(58, 0, 0, 0)  # in line with the plots, past the axis
        self.addItem(legend, row=row, col=0)
        self._fit_legend(legend)
        return legend

    def _fit_legend(self, legend: pg.LegendItem) -> None:
        rows = max(1, math.ceil(len(legend.items) / max(1, legend.columnCount)))
        height = 4 + rows * 18 if legend.items else 4
        legend.setMinimumHeight(height)
        legend.setMaximumHeight(height)

    def _stage_curve(self, k: int) -> pg.PlotDataItem:
        while len(self.stage_curves) <= k:
            i = len(self.stage_curves)
            curve = self.stages.plot([], [], pen=candidate_style(i).pen(2.0 * self._k), name=f"stage {i + 1}")
            self.stage_curves.append(curve)
            self.stage_legend.addItem(curve, curve.opts["name"])
            self._fit_legend(self.stage_legend)
        return self.stage_curves[k]

    def clear_chain(self) -> None:
        for c in (self.reference_curve, self.built_curve, self.actual_curve, self.deviation_curve, self.deviation_actual_curve):
            c.setData([], [])
        for c in self.stage_curves:
            self.stages.removeItem(c)
            self.stage_legend.removeItem(c)
        self.stage_curves = []
        self._fit_legend(self.stage_legend)
        for line in self.edge_lines + [self.level_line]:
            line.hide()
        self.mask_points.setData([])

    def show_cascade(self, result: Cascade | None) -> None:
        """Draw a chain (built or not); None empties the plots."""
        self.clear_chain()
        if result is None:
            return
        s = result.settings
        built = result.feasible
        self.overall.setTitle("Whole chain" if built else "Whole chain: not built, the ideal response only", color=INK, size="9pt")
        self.deviation.setTitle(
            "Built chain − ideal response (lines as above)" if built else "Built chain − ideal response: nothing built", color=INK, size="9pt"
        )
        f = plot_frequencies(s, max(p.q for p in result.plan.sections))
        ref_db = _db(result.reference_response(f))
        title = response_title(s)
        self.reference_curve.setData(f, ref_db)
        self._legend_label(self.overall_legend, self.reference_curve, f"ideal {title}")
        stage_h = result.stage_responses(f)
        has_amp = result.conditions.gbw_hz is not None
        self._entries(built=result.feasible, with_amp=has_amp)
        built_db = act_db = None  # the built chain's curves, worked out once for the lines and the ranges
        if result.feasible:
            built_db = _db(np.prod(stage_h, axis=0))
            self.built_curve.setData(f, built_db)
            self.deviation_curve.setData(f, built_db - ref_db)
            peak = float(np.max(built_db))
            if has_amp:
                act_db = _db(result.response(f, actual=True))
                self.actual_curve.setData(f, act_db)
                self.deviation_actual_curve.setData(f, act_db - ref_db)
                gbw = format_value(result.conditions.gbw_hz, "Hz", digits=3)
                self._legend_label(self.overall_legend, self.actual_curve, f"with the {gbw} op-amp")
        else:
            peak = float(np.max(ref_db))
        for k, st in enumerate(result.stages):
            curve = self._stage_curve(k)
            label = f"{st.index}: {st.circuit}" if st.feasible else f"{st.index}: not built (planned)"
            curve.setData(f, _db(stage_h[k]))
            if not st.feasible:
                curve.setPen(self._pen(_PLANNED_PEN))
            self._legend_label(self.stage_legend, curve, label)
        # Edges and the edge level.
        for i, line in enumerate(self.edge_lines):
            line.setValue(math.log10(s.f_low_hz if i % 2 == 0 else s.f_high_hz))
            line.show()
        self.level_line.setValue(peak + s.edge_level_db)
        self.level_line.show()
        # Ranges: the band's skirts down to 60 dB below the peak; the deviation where it matters.
        lo, hi = math.log10(f[0]), math.log10(f[-1])
        self.overall.setXRange(lo, hi, padding=0.0)
        self.overall.setYRange(peak - 60.0, peak + 4.0, padding=0.0)
        stage_peak = float(np.max(_db(stage_h))) if len(result.stages) else peak
        self.stages.setYRange(stage_peak - 45.0, stage_peak + 4.0, padding=0.0)
        if result.feasible:
            band = (f >= s.f_low_hz / 1.05) & (f <= s.f_high_hz * 1.05)
            dev = np.abs((built_db - ref_db)[band])
            if act_db is not None:
                dev = np.concatenate([dev, np.abs((act_db - ref_db)[band])])
            span = max(0.5, 1.3 * float(np.nanmax(dev)) if dev.size else 0.5)
        else:
            span = 1.0
        self.deviation.setYRange(-span, span, padding=0.0)
        # Three labels, 0 and ± a round number well inside the range: in this short plot labels
        # at the very edge are dropped and closer ones overlap.
        t = _round_down(0.75 * span)
        ticks = [(-t, f"{-t:g}"), (0.0, "0"), (t, f"+{t:g}")] if built else [(0.0, "0")]
        self.deviation.getAxis("left").setTicks([ticks, []])

    def show_mask(self, points, centre_db: float) -> None:
        """Draw a mask's rejection points: a triangle at each point's ceiling (``centre_db −
        required_db``), filled red where the drawn chain misses it. ``points`` are the JSON
        ``mask`` entries (``f_hz``, ``required_db``, ``margin_db``)."""
        spots = []
        for p in points:
            missed = p.get("margin_db") is not None and p["margin_db"] < 0
            spots.append({"pos": (math.log10(p["f_hz"]), centre_db - p["required_db"]),
                          "brush": pg.mkBrush("#c62828" if missed else "#ffffff")})
        self.mask_points.setData(spots)

    @staticmethod
    def _legend_label(legend: pg.LegendItem, curve: pg.PlotDataItem, text: str) -> None:
        for sample, label in legend.items:
            if getattr(sample, "item", None) is curve:
                label.setText(text)

    @staticmethod
    def _legend_has(legend: pg.LegendItem, curve: pg.PlotDataItem) -> bool:
        return any(getattr(sample, "item", None) is curve for sample, _ in legend.items)

    def _entries(self, *, built: bool, with_amp: bool) -> None:
        """Name the built and op-amp curves in the legend only when they are drawn (in that order)."""
        legend = self.overall_legend
        for curve in (self.built_curve, self.actual_curve):
            if self._legend_has(legend, curve):
                legend.removeItem(curve)
        for curve, on in ((self.built_curve, built), (self.actual_curve, built and with_amp)):
            if on:
                legend.addItem(curve, curve.opts.get("name") or "")
        self._fit_legend(legend)

    def curve_data(self, curve: pg.PlotDataItem) -> tuple[np.ndarray, np.ndarray]:
        """(f_hz, y) of a curve as drawn (x back from the log axis)."""
        x, y = curve.getOriginalDataset()
        return (np.asarray(x if x is not None else []), np.asarray(y if y is not None else []))
