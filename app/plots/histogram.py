"""The histogram of one spread figure (f0, Q or centre gain), shared by the spread pane and the report.

:class:`FigureHistogram` draws the trials per bin in the candidate's colour, the yield window
shaded (:func:`window_of`), the nominal value and the worst-case extremes.
"""

from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtGui

from bandsmith.spread.tolerance import SpreadSettings

from bandsmith.app.plots.palette import BAD, INK

__all__ = ["HISTOGRAM_FIGURES", "FigureHistogram", "window_of"]

#: The figures a spread is shown by: (key of :class:`~bandsmith.spread.tolerance.Spread`, title, unit).
HISTOGRAM_FIGURES = (("f0_hz", "f0", "Hz"), ("q", "Q", ""), ("gain_center_db", "Centre gain", "dB"))
_BINS = 48
# A histogram shows all of the yield window unless it is this many times wider than the trials.
_ZOOM_RATIO = 6.0
_WINDOW_BRUSH = (46, 139, 87, 40)
_WORST_PEN = pg.mkPen(BAD, width=1.2, style=QtCore.Qt.PenStyle.DotLine)
_NOMINAL_PEN = pg.mkPen(INK, width=1.5)


def window_of(settings: SpreadSettings, key: str, nominal: float) -> tuple[float, float]:
    """The yield window of one figure (``f0_hz``, ``q``, ``gain_center_db``) around its nominal."""
    if key == "gain_center_db":
        return nominal - settings.window_gain_db, nominal + settings.window_gain_db
    w = settings.window_f0 if key == "f0_hz" else settings.window_q
    return nominal * (1.0 - w), nominal * (1.0 + w)


class FigureHistogram(pg.PlotWidget):
    """One figure's histogram: trials per bin, the yield window shaded, nominal and worst case."""

    def __init__(self, key: str, title: str, unit: str, parent=None):
        super().__init__(parent, background="w")
        self.key = key
        self.title = title
        self.setObjectName(f"hist_{key}")
        item = self.getPlotItem()
        item.setMenuEnabled(False)
        item.setContentsMargins(2, 2, 14, 2)  # room for the last tick label on the right
        item.setMouseEnabled(x=False, y=False)
        item.hideButtons()
        item.setTitle(title, color=INK, size="10pt")
        item.showGrid(x=True, y=True, alpha=0.2)
        if unit == "Hz":
            item.setLabel("bottom", title, units="Hz", color=INK)
        else:
            item.getAxis("bottom").enableAutoSIPrefix(False)
            item.setLabel("bottom", f"{title} ({unit})" if unit else title, color=INK)
        item.getAxis("left").enableAutoSIPrefix(False)
        item.setLabel("left", "trials", color=INK)
        self.window = pg.LinearRegionItem(values=(0, 1), movable=False, brush=pg.mkBrush(*_WINDOW_BRUSH), pen=pg.mkPen((46, 139, 87, 160), width=1))
        self.window.setZValue(-10)
        item.addItem(self.window)
        self.bars = pg.PlotDataItem([0, 1], [0], stepMode="center", fillLevel=0, pen=pg.mkPen("#1b5e9e", width=1.2), brush=pg.mkBrush(27, 94, 158, 90))
        item.addItem(self.bars)
        self.nominal = pg.InfiniteLine(angle=90, pen=_NOMINAL_PEN)
        self.worst_lo = pg.InfiniteLine(angle=90, pen=_WORST_PEN)
        self.worst_hi = pg.InfiniteLine(angle=90, pen=_WORST_PEN)
        for line in (self.nominal, self.worst_lo, self.worst_hi):
            item.addItem(line, ignoreBounds=True)
        self.counts = np.zeros(0)
        self.edges = np.zeros(0)
        self.setMinimumSize(200, 170)
        self.clear_data()

    def clear_data(self) -> None:
        self.counts, self.edges = np.zeros(0), np.zeros(0)
        self.bars.setData([0.0, 1.0], [0.0])
        for it in (self.window, self.nominal, self.worst_lo, self.worst_hi, self.bars):
            it.setVisible(False)

    def show_data(self, values: np.ndarray, nominal: float, window: tuple[float, float], worst: tuple[float, float], colour: str) -> None:
        v = values[np.isfinite(values)]
        if v.size == 0:
            self.clear_data()
            return
        core = [m for m in (*worst, nominal) if math.isfinite(m)]
        lo, hi = float(min(v.min(), *core)), float(max(v.max(), *core))
        span = hi - lo
        wide = span > 0 and (window[1] - window[0]) > _ZOOM_RATIO * span
        if not wide:  # the window fits: show all of it
            lo, hi = min(lo, window[0]), max(hi, window[1])
        self.getPlotItem().setTitle(self.title + (" (window is wider)" if wide else ""), color=INK, size="10pt")
        pad = 0.04 * (hi - lo) if hi > lo else max(abs(lo) * 1e-3, 1e-12)
        lo, hi = lo - pad, hi + pad
        counts, edges = np.histogram(v, bins=_BINS, range=(float(v.min()), float(v.max())) if v.max() > v.min() else None)
        self.counts, self.edges = counts, edges
        c = QtGui.QColor(colour)
        fill = QtGui.QColor(colour)
        fill.setAlpha(95)
        self.bars.setData(edges, counts, stepMode="center", fillLevel=0)
        self.bars.setPen(pg.mkPen(c, width=1.2))
        self.bars.setBrush(pg.mkBrush(fill))
        self.window.setRegion(window)
        self.nominal.setValue(nominal)
        self.worst_lo.setValue(worst[0])
        self.worst_hi.setValue(worst[1])
        self.worst_lo.setVisible(math.isfinite(worst[0]))
        self.worst_hi.setVisible(math.isfinite(worst[1]))
        for it in (self.window, self.nominal, self.bars):
            it.setVisible(True)
        item = self.getPlotItem()
        item.setXRange(lo, hi, padding=0)
        item.setYRange(0, max(1, int(counts.max())) * 1.08, padding=0)
