"""Offscreen images of :class:`~bandsmith.app.plots.curves.PlotData`: PNG bytes for the report and exports.

Each plot is drawn by a pyqtgraph ``PlotWidget`` in the light theme (white ground, dark axes,
grid, a legend, axis titles with units, every candidate in its own colour and line style) that is
never shown on screen, then painted into a ``QImage`` and written as PNG through a ``QBuffer``.
A ``QApplication`` must exist; :func:`ensure_qt_app` makes one (offscreen when there is no display).
"""

from __future__ import annotations

import contextlib
import math
import os
import sys
from typing import Iterator, Sequence

import pyqtgraph as pg
from PySide6 import QtCore, QtGui, QtWidgets

from bandsmith.app.plots.axes import FrequencyAxis
from bandsmith.app.plots.curves import Curve, PlotData
from bandsmith.app.plots.gui_thread import on_gui_thread
from bandsmith.app.plots.palette import INK, candidate_style

__all__ = [
    "ensure_qt_app",
    "render_widget_png",
    "FrequencyAxis",
    "PlotImageWidget",
    "build_plot_widget",
    "paint_widget",
    "quiet_size_hints",
    "image_png",
    "render_plot_png",
    "render_plots_png",
    "INK",
]

_GRID_ALPHA = 0.25


def ensure_qt_app() -> QtWidgets.QApplication:
    """The running ``QApplication``, or a new one (offscreen when there is no display)."""
    app = QtWidgets.QApplication.instance()
    if app is not None:
        if not isinstance(app, QtWidgets.QApplication):
            raise RuntimeError("plots need a QApplication, but a QGuiApplication is running")
        return app
    if "QT_QPA_PLATFORM" not in os.environ and sys.platform.startswith("linux"):
        if not (os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY")):
            os.environ["QT_QPA_PLATFORM"] = "offscreen"
    return QtWidgets.QApplication(sys.argv[:1] or ["bandsmith"])


class PlotImageWidget(pg.GraphicsLayoutWidget):
    """A plot with its legend in a row of its own underneath, so the legend never hides a curve."""

    def __init__(self, plot_item: pg.PlotItem, legend: pg.LegendItem):
        super().__init__()
        self.setBackground("w")
        self.addItem(plot_item, row=0, col=0)
        self.addItem(legend, row=1, col=0)
        lay = self.ci.layout
        lay.setRowStretchFactor(0, 1)
        lay.setRowStretchFactor(1, 0)
        legend.setSizePolicy(QtWidgets.QSizePolicy.Policy.Preferred, QtWidgets.QSizePolicy.Policy.Fixed)
        lay.setRowFixedHeight(1, legend.preferredHeight())
        self.ci.layout.setContentsMargins(2, 2, 2, 2)
        self.plot_item = plot_item
        self.legend = legend

    def getPlotItem(self) -> pg.PlotItem:  # noqa: N802 - the name PlotWidget uses
        return self.plot_item


def build_plot_widget(plot: PlotData, *, width: int = 900, height: int = 380, line_width: float = 2.0) -> PlotImageWidget:
    """A light-theme widget drawing ``plot`` (not shown): the plot, and its legend underneath.

    The curves are in ``widget.getPlotItem().listDataItems()``, one per candidate in legend
    order; the legend is ``widget.legend``.
    """
    ensure_qt_app()
    axis_items = {"bottom": FrequencyAxis("bottom")} if plot.log_x else {}
    item = pg.PlotItem(axisItems=axis_items)
    item.setTitle(plot.title, color=INK, size="11pt")
    for name in ("left", "bottom", "right", "top"):
        ax = item.getAxis(name)
        ax.setPen(pg.mkPen(INK))
        ax.setTextPen(pg.mkPen(INK))
    item.showAxis("right", False)
    item.showAxis("top", False)
    item.setContentsMargins(4, 4, 26, 0)  # room for the last tick label on the right
    _label(item, "bottom", plot.x_label, plot.x_unit, log=plot.log_x)
    _label(item, "left", plot.y_label, plot.y_unit, log=False)
    item.showGrid(x=True, y=True, alpha=_GRID_ALPHA)
    if plot.log_x:
        item.setLogMode(x=True, y=False)
    legend = pg.LegendItem(colCount=max(1, min(len(plot.curves), 5)), labelTextColor=INK, labelTextSize="9pt", horSpacing=24, verSpacing=-4)
    legend.layout.setContentsMargins(40, 0, 0, 0)
    for c in plot.curves:
        curve = item.plot(c.x, _finite(c), pen=candidate_style(c.index).pen(line_width), connect="finite")
        curve.opts["name"] = c.label
        legend.addItem(curve, c.label)
    guide_pen = pg.mkPen("#7d8590", width=max(1.0, line_width / 2), style=QtCore.Qt.PenStyle.DashLine)
    for g in plot.guides:
        vertical = g.axis == "x"
        value = math.log10(g.value) if (vertical and plot.log_x) else g.value
        # Labels inside the view: beside the top of a vertical line, under a horizontal one.
        opts = {"position": 0.95 if vertical else 0.02, "color": "#5f6368", "anchors": [(0, 0), (0, 0)]}
        line = pg.InfiniteLine(pos=value, angle=90 if vertical else 0, pen=guide_pen, label=g.label or None, labelOpts=opts)
        item.addItem(line, ignoreBounds=True)
    item.enableAutoRange()
    if plot.log_x and plot.curves:
        xs = [c.x for c in plot.curves if len(c.x)]
        lo = min(float(x.min()) for x in xs)
        hi = max(float(x.max()) for x in xs)
        item.setXRange(math.log10(lo), math.log10(hi), padding=0.0)
    elif plot.curves:
        hi = max(float(c.x.max()) for c in plot.curves if len(c.x))
        item.setXRange(0.0, hi, padding=0.0)
    w = PlotImageWidget(item, legend)
    w.setAttribute(QtCore.Qt.WidgetAttribute.WA_DontShowOnScreen, True)
    w.resize(width, height)
    return w


def _finite(c: Curve):
    import numpy as np

    y = np.asarray(c.y, dtype=float)
    return np.where(np.isfinite(y), y, np.nan)


# Units shown with an SI prefix chosen by the axis (ms, µs, kHz); the others are shown as they are.
_SCALED_UNITS = {"s", "Hz", "V", "A"}


def _label(item, side: str, text: str, unit: str, *, log: bool) -> None:
    ax = item.getAxis(side)
    if unit in _SCALED_UNITS and not log:
        ax.enableAutoSIPrefix(True)
        item.setLabel(side, text, units=unit, color=INK)
    else:
        ax.enableAutoSIPrefix(False)
        item.setLabel(side, f"{text} ({unit})" if unit else text, color=INK)


# Emitted by Qt's platform window when a plugin (offscreen and others) cannot pass a widget's
# size hints on to a window manager; harmless for a widget that is only painted into an image.
_SIZE_HINTS_MESSAGE = "does not support propagateSizeHints()"


@contextlib.contextmanager
def quiet_size_hints() -> Iterator[None]:
    """Drop Qt's "This plugin does not support propagateSizeHints()" messages while painting offscreen.

    Only that message is dropped; every other Qt message goes on to the handler that was
    installed before (or to stderr, as Qt's default handler would). The handler is restored on
    exit.
    """
    previous = None

    def handler(mode, context, message):
        if _SIZE_HINTS_MESSAGE in message:
            return
        if previous is not None:
            previous(mode, context, message)
        else:
            sys.stderr.write(message + "\n")

    previous = QtCore.qInstallMessageHandler(handler)
    try:
        yield
    finally:
        QtCore.qInstallMessageHandler(previous)


def paint_widget(widget: QtWidgets.QWidget, *, scale: float = 2.0) -> QtGui.QImage:
    """Paint a (possibly never shown) widget into a white ``QImage`` at ``scale`` × its size.

    The image holds ``scale``² as many pixels as the widget covers on screen, so it stays sharp
    when printed or zoomed. A graphics view (a plot) is re-drawn from its scene at that size, so
    its text and lines are drawn sharp, not enlarged pixels (the image's device pixel ratio is
    ``scale``).
    """
    ensure_qt_app()
    with quiet_size_hints():
        return _paint(widget, scale)


def _paint(widget: QtWidgets.QWidget, scale: float) -> QtGui.QImage:
    shown_here = not widget.isVisible()
    if shown_here:
        widget.setAttribute(QtCore.Qt.WidgetAttribute.WA_DontShowOnScreen, True)
        widget.show()
    QtWidgets.QApplication.processEvents()
    size = widget.size()
    img = QtGui.QImage(round(size.width() * scale), round(size.height() * scale), QtGui.QImage.Format.Format_ARGB32)
    img.setDevicePixelRatio(scale)
    img.fill(QtGui.QColor("white"))
    painter = QtGui.QPainter(img)
    painter.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing, True)
    painter.setRenderHint(QtGui.QPainter.RenderHint.TextAntialiasing, True)
    try:
        # QWidget.render, not QGraphicsView.render: the widget paints itself as on a screen of
        # this pixel ratio, so items that ignore transformations (legends, labels) scale too.
        QtWidgets.QWidget.render(widget, painter, QtCore.QPoint(0, 0))
    finally:
        painter.end()
    if shown_here:
        widget.hide()
    return img


def image_png(img: "QtGui.QImage | QtGui.QPixmap") -> bytes:
    """A ``QImage`` (or ``QPixmap``) as PNG bytes (through a ``QBuffer``)."""
    buf = QtCore.QBuffer()
    buf.open(QtCore.QIODevice.OpenModeFlag.WriteOnly)
    if not img.save(buf, "PNG"):
        raise RuntimeError("Qt could not encode the image as PNG")
    data = bytes(buf.data())
    buf.close()
    return data


@on_gui_thread  # one plot at a time: the GUI thread is held a few tens of milliseconds each
def render_plot_png(plot: PlotData, *, width: int = 900, height: int = 380, scale: float = 2.0) -> bytes:
    """PNG bytes of one plot, ``width`` × ``height`` logical pixels at ``scale`` (2 = sharp)."""
    return render_widget_png(build_plot_widget(plot, width=width, height=height, line_width=2.0 * scale), scale=scale)


def render_widget_png(widget: QtWidgets.QWidget, *, scale: float = 2.0) -> bytes:
    """PNG bytes of a widget made for one image (sized and filled by the caller), painted at
    ``scale`` (:func:`paint_widget`); the widget is closed and deleted afterwards."""
    try:
        return image_png(paint_widget(widget, scale=scale))
    finally:
        widget.close()
        widget.deleteLater()


def render_plots_png(plots: Sequence[PlotData], **kw) -> dict[str, bytes]:
    """PNG bytes of several plots, keyed by ``PlotData.key``."""
    return {p.key: render_plot_png(p, **kw) for p in plots}
