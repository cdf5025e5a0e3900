"""The plot of a tone burst: the output, its envelope (both signs), and where it settles and rings down.

:class:`BurstPlot` draws a :class:`bandsmith.analysis.burst.BurstResult` (or the ``burst --json``
object) in the light theme; every number comes from the core, this module only draws.
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtWidgets

from bandsmith.common.values import format_value

from bandsmith.app.plots.palette import INK, apply_plot_theme, candidate_style

__all__ = ["BurstPlot"]

_MARK_PEN = pg.mkPen("#9aa0a6", width=1, style=QtCore.Qt.PenStyle.DotLine)


class BurstPlot(pg.PlotWidget):
    """Output (V per volt of input peak) against time (s), with the envelope and two markers.

    Attributes
    ----------
    output_curve, envelope_curve, envelope_low_curve : pg.PlotDataItem
    burst_end_line, settle_line, ringdown_line : pg.InfiniteLine
        The burst's end, the settling time (from the start) and the end of the ring-down.
    """

    def __init__(self, parent: QtWidgets.QWidget | None = None):
        apply_plot_theme()
        super().__init__(parent)
        self.setObjectName("burstPlot")
        item = self.getPlotItem()
        item.setLabel("bottom", "time", units="s")
        item.setLabel("left", "output", units="V/V")
        item.showGrid(x=True, y=True, alpha=0.15)
        self.output_curve = item.plot([], [], pen=candidate_style(0).pen(1.2))
        env_pen = pg.mkPen(INK, width=2.0)
        self.envelope_curve = item.plot([], [], pen=env_pen)
        self.envelope_low_curve = item.plot([], [], pen=env_pen)
        self.burst_end_line = pg.InfiniteLine(angle=90, pen=_MARK_PEN)
        self.settle_line = pg.InfiniteLine(angle=90, pen=_MARK_PEN)
        self.ringdown_line = pg.InfiniteLine(angle=90, pen=_MARK_PEN)
        for line in (self.burst_end_line, self.settle_line, self.ringdown_line):
            item.addItem(line, ignoreBounds=True)
            line.hide()

    def show_burst(self, burst) -> None:
        """Draw a burst: a :class:`~bandsmith.analysis.burst.BurstResult` or its ``to_json()`` object; None clears."""
        if burst is None:
            for c in (self.output_curve, self.envelope_curve, self.envelope_low_curve):
                c.setData([], [])
            for line in (self.burst_end_line, self.settle_line, self.ringdown_line):
                line.hide()
            return
        j = burst if isinstance(burst, dict) else burst.to_json()
        w = j["waveform"]
        t, y, env = (np.asarray(w[k], dtype=float) for k in ("t_s", "y", "envelope"))
        self.output_curve.setData(t, y)
        self.envelope_curve.setData(t, env)
        self.envelope_low_curve.setData(t, -env)
        self.getPlotItem().setTitle(
            f"{j['cycles']:.4g} cycles at {format_value(j['freq_hz'], 'Hz', digits=4)}: envelope τ "
            + format_value(j["envelope_tau_s"], "s", digits=4),
            color=INK, size="9pt",
        )
        self._mark(self.burst_end_line, j["duration_s"])
        self._mark(self.settle_line, j["settle_time_s"])
        self._mark(self.ringdown_line, None if j["ringdown_time_s"] is None else j["duration_s"] + j["ringdown_time_s"])

    @staticmethod
    def _mark(line: pg.InfiniteLine, x) -> None:
        if x is None:
            line.hide()
        else:
            line.setValue(float(x))
            line.show()
