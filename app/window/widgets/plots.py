"""The plots of the workbench, each a thin pyqtgraph view over the state's results.

Every plot creates one curve per candidate the first time it sees the candidate and afterwards
only calls ``setData`` on it (a candidate that is switched off or removed loses its curve). The
data come ready-made from :class:`~bandsmith.app.document.results.CandidateResult`; the plots only pick fields
and draw. Axes carry their quantity and unit; each plot has a legend; moving the mouse over a plot
emits a read-out of the point under the cursor (``cursor_text``).

The module is a little over 500 lines because the six plots share one base class (curves per
candidate, legend, read-out, axes kept during part edits) and each adds only what it draws; split
apart, each would have to reach back into that base.
"""

from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtGui, QtWidgets

from bandsmith.common.values import format_value

from bandsmith.app.document.results import CandidateResult
from bandsmith.app.plots.axes import LogAxis
from bandsmith.app.window.state import WorkbenchState
from bandsmith.app.window.theme import INK, MUTED

__all__ = [
    "CandidatePlot",
    "MagnitudePlot",
    "PhasePlot",
    "GroupDelayPlot",
    "StepPlot",
    "GbwErrorPlot",
    "PoleZeroPlot",
    "PLOT_CLASSES",
    "LogAxis",
]

_GUIDE = pg.mkPen("#7d8590", width=1, style=QtCore.Qt.PenStyle.DashLine)
_LIMIT = pg.mkPen("#b0191e", width=1.2, style=QtCore.Qt.PenStyle.DashLine)
# The error chart clips errors to this range (×tolerance) so that "no band-pass at all" (an
# infinite error) shows at the top edge rather than vanishing.
_ERR_FLOOR, _ERR_CEIL = 1e-3, 1e3


def _short(x: float, unit: str = "") -> str:
    return format_value(x, unit, digits=3)


class CandidatePlot(pg.PlotWidget):
    """Base of the workbench plots: one curve per active candidate, kept and updated with setData.

    Subclasses set the titles and implement :meth:`curve_data` (and :meth:`_readout`).
    """

    key = ""
    title = ""
    x_label, x_unit = "", ""
    y_label, y_unit = "", ""
    log_x = False
    log_y = False
    # Where this plot's own legend sits (pyqtgraph offset), or None: by default the grid's shared
    # legend strip names every candidate once, above all the plots, and no plot hides curves
    # under a legend box.
    legend_offset: tuple[int, int] | None = None

    cursor_text = QtCore.Signal(str)

    def __init__(self, state: WorkbenchState, parent: QtWidgets.QWidget | None = None):
        axes = {}
        if self.log_x:
            axes["bottom"] = LogAxis("bottom")
        if self.log_y:
            axes["left"] = LogAxis("left", plain=True)
        super().__init__(parent, axisItems=axes or None)
        self.setObjectName(f"plot_{self.key}")
        self.state = state
        self.curves: dict[str, pg.PlotDataItem] = {}
        self.overlays: dict[str, pg.PlotDataItem] = {}
        item = self.getPlotItem()
        item.setTitle(self.title, color=INK, size="10pt")
        self._label_axes(item)
        item.showGrid(x=True, y=True, alpha=0.22)
        item.setLogMode(x=self.log_x, y=self.log_y)
        item.setMenuEnabled(False)
        self.legend = None
        if self.legend_offset is not None:
            self.legend = item.addLegend(offset=self.legend_offset, labelTextSize="8pt", verSpacing=-6)
            self.legend.setBrush(pg.mkBrush(255, 255, 255, 215))
            self.legend.setPen(pg.mkPen("#c9c9c4"))
        self.setMinimumSize(220, 170)
        self.scene().sigMouseMoved.connect(self._on_mouse_moved)
        state.analyses_changed.connect(self._on_analyses_changed)
        self._setup_extras(item)
        self._on_analyses_changed()

    # -- to override ------------------------------------------------------------------
    def curve_data(self, res: CandidateResult) -> tuple[np.ndarray, np.ndarray] | None:
        raise NotImplementedError

    def _setup_extras(self, item: pg.PlotItem) -> None:
        """Guide lines and markers that are not candidate curves."""

    def _update_extras(self) -> None:
        """Bring guides and markers up to date (after the curves)."""

    def _readout(self, x: float, y: float) -> str:
        return f"{self.x_label} {_short(x, self.x_unit)}, {self.y_label.lower()} {_short(y, self.y_unit)}"

    # -- common -------------------------------------------------------------------------
    def _label_axes(self, item: pg.PlotItem) -> None:
        # Log axes get the unit in the title (their ticks carry the prefix); linear ones let
        # pyqtgraph pick an SI prefix for the unit ("ms", "kHz").
        for side, text, unit, log in (("bottom", self.x_label, self.x_unit, self.log_x), ("left", self.y_label, self.y_unit, self.log_y)):
            if log or unit in ("dB", "°", "V/V", "× tol"):
                # No SI scaling on these axes: a "(x0.001)" beside "V/V" reads as nonsense.
                item.getAxis(side).enableAutoSIPrefix(False)
                item.setLabel(side, f"{text} ({unit})" if unit else text, color=INK)
            else:
                item.setLabel(side, text, units=unit, color=INK)

    def _new_curve(self, cid: str) -> pg.PlotDataItem:
        st = self.state.style(cid)
        curve = self.getPlotItem().plot([], [], pen=st.pen(2.0), name=cid, connect="finite")
        curve.setObjectName(cid)
        # Drawn once into a pixmap and blitted while unchanged: a part edit redraws the edited
        # candidate's curve only, not every curve under the repainted region.
        curve.curve.setCacheMode(QtWidgets.QGraphicsItem.CacheMode.DeviceCoordinateCache)
        return curve

    def _on_analyses_changed(self) -> None:
        results = self.state.results
        for cid in list(self.curves):
            if cid not in results or not results[cid].ok:
                item = self.curves.pop(cid)
                self.getPlotItem().removeItem(item)
        shown = getattr(self, "_shown", {})
        self._shown = {}
        self._updated: set[str] = set()  # the candidates redrawn by this call
        for cid, res in results.items():
            if not res.ok:
                continue
            pen_key = self.state.style(cid)
            prev = shown.get(cid)
            if cid in self.curves and prev is not None and prev[0] is res and prev[1] == pen_key:
                self._shown[cid] = shown[cid]  # unchanged result and style: the curve stays as it is
                continue
            self._shown[cid] = (res, pen_key)
            self._updated.add(cid)
            data = self.curve_data(res)
            if data is None:
                continue
            curve = self.curves.get(cid)
            if curve is None:
                curve = self.curves[cid] = self._new_curve(cid)
            else:
                curve.setPen(self.state.style(cid).pen(2.0))
            curve.setData(*data)
        self._update_extras()

    # -- overlays (a candidate's curve under other conditions, e.g. with a shelf op-amp) ------
    def set_overlay(self, key: str, x, y, *, pen) -> pg.PlotDataItem:
        """Draw (or redraw) the extra curve ``key`` behind the candidate curves, with ``pen``.

        The curve does not move the view's range; :meth:`clear_overlay` removes it.
        """
        curve = self.overlays.get(key)
        if curve is None:
            curve = pg.PlotDataItem([], [], connect="finite")
            curve.setObjectName(f"overlay_{key}")
            curve.setZValue(-3)
            self.getPlotItem().addItem(curve, ignoreBounds=True)
            self.overlays[key] = curve
        curve.setPen(pen)
        curve.setData(x, y)
        return curve

    def clear_overlay(self, key: str) -> None:
        """Remove the extra curve ``key`` (nothing happens when there is none)."""
        curve = self.overlays.pop(key, None)
        if curve is not None:
            self.getPlotItem().removeItem(curve)

    def _on_mouse_moved(self, pos: QtCore.QPointF) -> None:
        vb = self.getPlotItem().getViewBox()
        if not vb.sceneBoundingRect().contains(pos):
            self.cursor_text.emit("")  # over the axes or the title: no value to read
            return
        p = vb.mapSceneToView(pos)
        x, y = p.x(), p.y()
        snapped = self.nearest_point(x, y)
        who = ""
        if snapped is not None:  # within a few pixels of a curve: read the curve, not the cursor
            who, x, y = snapped
            who += " — "
        if self.log_x:
            x = 10.0**x
        if self.log_y:
            y = 10.0**y
        self.cursor_text.emit(f"{self.title}: {who}{self._readout(x, y)}")

    SNAP_PX = 10.0

    def nearest_point(self, x: float, y: float):
        """The curve point nearest the view point (x, y) (view coordinates, log10 on log axes),
        as ``(candidate id, x, y)``, when it lies within :attr:`SNAP_PX` screen pixels; else None."""
        vb = self.getPlotItem().getViewBox()
        px, py = vb.viewPixelSize()
        if not (px > 0 and py > 0):
            return None
        best = None
        for cid, curve in self.curves.items():
            cx, cy = curve.getData()
            if cx is None or len(cx) == 0:
                continue
            cx = np.asarray(cx, dtype=float)
            cy = np.asarray(cy, dtype=float)
            d2 = ((cx - x) / px) ** 2 + ((cy - y) / py) ** 2
            d2 = np.where(np.isfinite(d2), d2, np.inf)
            i = int(np.argmin(d2))
            if d2[i] <= self.SNAP_PX**2 and (best is None or d2[i] < best[0]):
                best = (float(d2[i]), cid, float(cx[i]), float(cy[i]))
        return None if best is None else best[1:]

    def leaveEvent(self, event) -> None:  # noqa: N802 - Qt's name
        # The read-out belongs to the point under the mouse: gone when the mouse leaves.
        self.cursor_text.emit("")
        super().leaveEvent(event)


class MagnitudePlot(CandidatePlot):
    key = "magnitude"
    title = "Magnitude"
    x_label, x_unit = "Frequency", "Hz"
    y_label, y_unit = "Gain", "dB"
    log_x = True

    def curve_data(self, res):
        return res.response.f_hz, res.response.magnitude_db

    def _setup_extras(self, item):
        self.envelopes: dict[str, tuple] = {}
        self.f0_line = pg.InfiniteLine(angle=90, pen=_GUIDE)
        self.gain_line = pg.InfiniteLine(angle=0, pen=_GUIDE, label="target", labelOpts={"position": 0.93, "color": "#5f6368", "anchors": [(0.5, 0), (0.5, 0)]})
        item.addItem(self.f0_line, ignoreBounds=True)
        item.addItem(self.gain_line, ignoreBounds=True)
        self.state.session_changed.connect(self._on_session_changed)
        self._on_session_changed(self.state.session)

    def _on_session_changed(self, session):
        self.f0_line.setValue(math.log10(session.target.f0_hz))
        self.gain_line.setValue(20.0 * math.log10(session.target.gain))

    def _update_extras(self):
        # Each candidate's achieved f0 (▼ on the peak) and −3 dB points (| on the band edges),
        # in its colour, from the figures the core measured (bandsmith.analysis.figures).
        if not hasattr(self, "markers"):
            self.markers: dict[str, pg.ScatterPlotItem] = {}
        item = self.getPlotItem()
        for cid in list(self.markers):
            if cid not in self.curves:
                item.removeItem(self.markers.pop(cid))
        for cid in self.curves:
            if cid in self.markers and cid not in getattr(self, "_updated", self.curves):
                continue  # the same result and style: its markers stay as they are
            fig = self.state.results[cid].figures
            xs, ys, symbols = [], [], []
            if fig is not None and math.isfinite(fig.gain_center_db):
                for f, dy, sym in ((fig.f0_hz, 0.0, "t"), (fig.f_low_hz, -3.0, "|"), (fig.f_high_hz, -3.0, "|")):
                    if math.isfinite(f) and f > 0:
                        xs.append(math.log10(f))
                        ys.append(fig.gain_center_db + dy)
                        symbols.append(sym)
            marks = self.markers.get(cid)
            if marks is None:
                marks = self.markers[cid] = pg.ScatterPlotItem(size=9)
                marks.setObjectName(f"markers_{cid}")
                marks.setZValue(5)
                marks.setCacheMode(QtWidgets.QGraphicsItem.CacheMode.DeviceCoordinateCache)  # blitted while unchanged
                item.addItem(marks, ignoreBounds=True)
            colour = self.state.style(cid).colour
            marks.setData(xs, ys, symbol=symbols, pen=pg.mkPen(colour, width=2.0), brush=pg.mkBrush(colour))

    def marker_points(self, cid: str) -> list[tuple[float, float]]:
        """The f0 and −3 dB markers of ``cid`` as (frequency Hz, gain dB), f0 first."""
        marks = self.markers.get(cid)
        if marks is None:
            return []
        x, y = marks.getData()
        return [(10.0 ** a, float(b)) for a, b in zip(x, y)]

    def _readout(self, x, y):
        return f"{_short(x, 'Hz')}, {y:.2f} dB"

    # -- shaded bands (a tolerance envelope) -------------------------------------------------
    def set_envelope(self, key: str, f_hz, low_db, high_db, *, colour: str, zoom: bool = False) -> None:
        """Shade the band between two magnitude curves (dB over Hz), edged in ``colour``.

        ``key`` names the band (a later call with the same key replaces it); the band sits below
        the candidate curves. With ``zoom`` the view moves to the pass band (:meth:`zoom_to_band`),
        where the band is wide enough to be seen; otherwise the view's range is kept.
        """
        self.clear_envelope(key)
        item = self.getPlotItem()
        edge = QtGui.QColor(colour)
        edge.setAlpha(170)
        fill = QtGui.QColor(colour)
        fill.setAlpha(55)
        pen = pg.mkPen(edge, width=1.0)
        lo = pg.PlotDataItem(f_hz, low_db, pen=pen, connect="finite")
        hi = pg.PlotDataItem(f_hz, high_db, pen=pen, connect="finite")
        for c in (lo, hi):
            c.setObjectName(f"envelope_{key}")
            c.setZValue(-8)
            item.addItem(c, ignoreBounds=True)
        band = pg.FillBetweenItem(lo, hi, brush=pg.mkBrush(fill))
        band.setZValue(-9)
        item.addItem(band, ignoreBounds=True)
        self.envelopes[key] = (lo, hi, band)
        if zoom:
            self.zoom_to_band(f_hz, low_db, high_db)

    def zoom_to_band(self, f_hz, low_db, high_db) -> None:
        """Show the pass band of an envelope: where its upper edge is within 12 dB of its peak.

        Over the whole sweep (some 80 dB tall) a p5–p95 band a few dB wide near f0 is a line's
        width; over the pass band it is a visible fraction of the plot. A double click or the
        mouse wheel gives the whole sweep back (pyqtgraph's view box).
        """
        f = np.asarray(f_hz, dtype=float)
        lo = np.asarray(low_db, dtype=float)
        hi = np.asarray(high_db, dtype=float)
        ok = np.isfinite(f) & (f > 0) & np.isfinite(lo) & np.isfinite(hi)
        if not ok.any():
            return
        f, lo, hi = f[ok], lo[ok], hi[ok]
        top = float(hi.max())
        near = hi >= top - 12.0
        f_lo, f_hi = float(f[near].min()), float(f[near].max())
        span = max(math.log10(f_hi / f_lo), 0.05)
        x0, x1 = math.log10(f_lo) - 0.25 * span, math.log10(f_hi) + 0.25 * span
        self.getPlotItem().getViewBox().setRange(xRange=(x0, x1), yRange=(top - 15.0, top + 3.0), padding=0)

    def clear_envelope(self, key: str) -> None:
        """Remove the band ``key`` (nothing happens when there is none)."""
        for it in self.envelopes.pop(key, ()):
            self.getPlotItem().removeItem(it)


class PhasePlot(CandidatePlot):
    key = "phase"
    title = "Phase"
    x_label, x_unit = "Frequency", "Hz"
    y_label, y_unit = "Phase", "°"
    log_x = True

    def curve_data(self, res):
        return res.response.f_hz, res.response.phase_deg

    def _readout(self, x, y):
        return f"{_short(x, 'Hz')}, {y:.1f}°"


class GroupDelayPlot(CandidatePlot):
    key = "group_delay"
    title = "Group delay"
    x_label, x_unit = "Frequency", "Hz"
    y_label, y_unit = "Delay", "s"
    log_x = True

    def curve_data(self, res):
        return res.response.f_hz, res.response.group_delay_s

    def _readout(self, x, y):
        return f"{_short(x, 'Hz')}, {_short(y, 's')}"


class StepPlot(CandidatePlot):
    key = "step"
    # Drawn per volt of input step (a unit step), so the axis reads V/V whatever the input.
    title = "Unit step response"
    x_label, x_unit = "Time", "s"
    y_label, y_unit = "Output", "V/V"

    def curve_data(self, res):
        return res.step.t_s, res.step.y

    def _readout(self, x, y):
        return f"t = {_short(x, 's')}, {y:.3f} V/V"


class GbwErrorPlot(CandidatePlot):
    """Worst figure error (in multiples of its tolerance) against the op-amp's GBW.

    A round marker sits at each candidate's required GBW (where its curve drops through the
    tolerance line); a vertical line marks the session's op-amp.
    """

    key = "gbw_error"
    title = "Error vs op-amp GBW"
    x_label, x_unit = "Op-amp GBW", "Hz"
    y_label, y_unit = "Worst error", "× tol"
    log_x = True
    log_y = True

    def curve_data(self, res):
        if res.gbw is None:
            return None
        y = np.clip(np.where(np.isnan(res.gbw.worst), np.inf, res.gbw.worst), _ERR_FLOOR, _ERR_CEIL)
        return res.gbw.gbw_hz, y

    def _setup_extras(self, item):
        self.limit_line = pg.InfiniteLine(angle=0, pos=0.0, pen=_LIMIT, label="tolerance", labelOpts={"position": 0.98, "color": "#b0191e", "anchors": [(1, 1), (1, 1)]})
        item.addItem(self.limit_line, ignoreBounds=True)
        self.opamp_line = pg.InfiniteLine(angle=90, pen=pg.mkPen("#202124", width=1.5), label="op-amp", labelOpts={"position": 0.92, "color": "#202124"})
        item.addItem(self.opamp_line, ignoreBounds=True)
        self.need_markers = pg.ScatterPlotItem(size=10, pxMode=True)
        item.addItem(self.need_markers)

    def _update_extras(self):
        gbw = self.state.session.opamp.gbw_hz
        self.opamp_line.setVisible(gbw is not None)
        if gbw is not None and gbw != getattr(self, "_shown_gbw", None):  # a part edit leaves the line alone
            self._shown_gbw = gbw
            self.opamp_line.setValue(math.log10(gbw))
            self.opamp_line.label.setFormat(f"op-amp {_short(gbw, 'Hz')}")
        needs = [
            (cid, res.analysis.requirements.gbw_hz, self.state.style(cid).colour)
            for cid, res in self.state.results.items()
            if res.ok and res.analysis.requirements.gbw_hz is not None
        ]
        if needs == getattr(self, "_shown_needs", None):
            return  # the same needs in the same colours: the markers stay as they are
        self._shown_needs = needs
        spots = []
        for cid, res in self.state.results.items():
            if res.ok and res.analysis.requirements.gbw_hz is not None:
                st = self.state.style(cid)
                spots.append(
                    {
                        "pos": (math.log10(res.analysis.requirements.gbw_hz), 0.0),
                        "brush": pg.mkBrush(st.colour),
                        "pen": pg.mkPen("w", width=1.2),
                        "symbol": "o",
                        "data": cid,
                    }
                )
        self.need_markers.setData(spots)

    def _readout(self, x, y):
        return f"GBW {_short(x, 'Hz')}, worst error {y:.3g} × tolerance"


class PoleZeroPlot(CandidatePlot):
    """Poles (each candidate's own symbol) and zeros (rings) in the s-plane, in Hz (s / 2π).

    The view centres on the band: a dotted circle has the radius of the target f0. Poles and zeros
    outside the view (an op-amp's own far pole, mostly) are listed in a note at its top left, each
    with its candidate and its distance |s|/2π (zoom out with the mouse wheel to see them).
    """

    key = "pole_zero"
    title = "Poles (filled markers) and zeros (○)"
    x_label, x_unit = "σ / 2π", "Hz"
    y_label, y_unit = "ω / 2π", "Hz"

    def __init__(self, state, parent=None):
        self.zero_items: dict[str, pg.ScatterPlotItem] = {}
        super().__init__(state, parent)
        self.getPlotItem().getViewBox().setAspectLocked(True)

    def _new_curve(self, cid):
        st = self.state.style(cid)
        fill = QtGui.QColor(st.colour)
        fill.setAlpha(150)  # coinciding poles of two candidates stay visible
        item = pg.ScatterPlotItem(size=11, pen=pg.mkPen(st.colour, width=1.5), brush=pg.mkBrush(fill), symbol=st.symbol, name=cid)
        item.setObjectName(cid)
        self.getPlotItem().addItem(item)
        zeros = pg.ScatterPlotItem(size=10, pen=pg.mkPen(st.colour, width=1.8), brush=pg.mkBrush(None), symbol="o")
        self.getPlotItem().addItem(zeros)
        # Blitted from a pixmap while unchanged, as the curves are: an edit redraws one candidate's markers.
        for scatter in (item, zeros):
            scatter.setCacheMode(QtWidgets.QGraphicsItem.CacheMode.DeviceCoordinateCache)
        self.zero_items[cid] = zeros
        return item

    def curve_data(self, res):
        return res.poles_hz.real, res.poles_hz.imag

    def _on_analyses_changed(self):
        super()._on_analyses_changed()
        for cid in list(self.zero_items):
            if cid not in self.curves:
                self.getPlotItem().removeItem(self.zero_items.pop(cid))
        for cid, item in self.curves.items():
            if cid not in self._updated:  # the same result and style: its markers stay as they are
                continue
            res = self.state.results[cid]
            item.setPen(pg.mkPen(self.state.style(cid).colour, width=1.5))
            self.zero_items[cid].setData(res.zeros_hz.real, res.zeros_hz.imag)
        self._update_multiplicity()
        self._update_far_note()

    def _update_multiplicity(self) -> None:
        # Coincident poles (or zeros), of one candidate or of several, draw on top of each other:
        # a "×n" beside them says how many there are.
        item = self.getPlotItem()
        results = [self.state.results[cid] for cid in self.curves]
        groups = [
            group
            for points in (
                np.concatenate([np.asarray(r.poles_hz).ravel() for r in results] or [np.zeros(0, complex)]),
                np.concatenate([np.asarray(r.zeros_hz).ravel() for r in results] or [np.zeros(0, complex)]),
            )
            for group in coincident(points, rel=OVERLAP)
        ]
        labels = getattr(self, "multiplicity_labels", [])
        # The labels already there are moved and retitled (an edit rarely changes how many
        # there are); only the missing ones are made, only the extra ones removed.
        for label in labels[len(groups):]:
            item.removeItem(label)
        labels = labels[: len(groups)]
        for k, (p, n) in enumerate(groups):
            if k < len(labels):
                label = labels[k]
                if label.textItem.toPlainText() != f"×{n}":
                    label.setText(f"×{n}")
            else:
                label = pg.TextItem(f"×{n}", color=INK, anchor=(-0.2, 1.0))
                label.setFont(QtGui.QFont(self.font().family(), 8, QtGui.QFont.Weight.Bold))
                item.addItem(label, ignoreBounds=True)
                labels.append(label)
            if (label.pos().x(), label.pos().y()) != (p.real, p.imag):
                label.setPos(p.real, p.imag)
        self.multiplicity_labels = labels

    def far_text(self) -> str:
        """The note on the poles and zeros outside the current view ("" when there are none)."""
        (x0, x1), (y0, y1) = self.getPlotItem().getViewBox().viewRange()
        parts = []
        for cid in self.curves:
            res = self.state.results[cid]
            for what, points in (("pole", res.poles_hz), ("zero", res.zeros_hz)):
                out = [p for p in np.asarray(points).tolist() if not (x0 <= p.real <= x1 and y0 <= p.imag <= y1)]
                far = sorted(abs(p) for p in out if math.isfinite(abs(p)))
                if far:
                    where = ", ".join(_short(r, "Hz") for r in far[:3]) + (" …" if len(far) > 3 else "")
                    parts.append(f"{cid} {what}{'s' if len(far) > 1 else ''} {where}")
        return "\n".join(["outside the view, |s|/2π:"] + parts) if parts else ""

    def _update_far_note(self) -> None:
        note = self.far_note
        text = self.far_text()
        if text != note.toPlainText():
            note.setText(text)
        note.setVisible(bool(text))
        (x0, _), (_, y1) = self.getPlotItem().getViewBox().viewRange()
        note.setPos(x0, y1)

    def _setup_extras(self, item):
        self.circle = QtWidgets.QGraphicsEllipseItem()
        self.circle.setPen(pg.mkPen("#7d8590", width=1, style=QtCore.Qt.PenStyle.DotLine, cosmetic=True))
        item.addItem(self.circle, ignoreBounds=True)
        item.addItem(pg.InfiniteLine(angle=90, pos=0.0, pen=pg.mkPen("#b5b9bf", width=1)), ignoreBounds=True)
        item.addItem(pg.InfiniteLine(angle=0, pos=0.0, pen=pg.mkPen("#b5b9bf", width=1)), ignoreBounds=True)
        self._range_f0 = None
        # top left of whatever the view shows, in small muted type
        self.far_note = pg.TextItem("", color=MUTED, anchor=(0, 0), fill=pg.mkBrush(255, 255, 255, 210))
        self.far_note.setFont(QtGui.QFont(self.font().family(), 8))
        self.far_note.setZValue(-5)  # under the markers: a pole near the corner stays on top
        item.addItem(self.far_note, ignoreBounds=True)
        item.getViewBox().sigRangeChanged.connect(lambda *_: self._update_far_note())

    def _update_extras(self):
        f0 = self.state.session.target.f0_hz
        self.circle.setRect(-f0, -f0, 2 * f0, 2 * f0)
        pen = self.circle.pen()
        pen.setCosmetic(True)
        self.circle.setPen(pen)
        if self._range_f0 != f0:  # re-centre only when the target moves, not on every edit
            self._range_f0 = f0
            self.getPlotItem().getViewBox().setRange(xRange=(-1.6 * f0, 0.6 * f0), yRange=(-1.3 * f0, 1.3 * f0), padding=0)

    def _readout(self, x, y):
        return f"σ/2π {_short(x, 'Hz')}, ω/2π {_short(y, 'Hz')}"


# Poles this close (relative to their distance from the origin) draw as one marker at the
# plot's usual zoom: they are counted together.
OVERLAP = 0.02


def coincident(points, rel: float = 1e-6) -> list[tuple[complex, int]]:
    """Groups of coinciding points (within ``rel`` of their size, or 1e-9 Hz): (point, count ≥ 2)."""
    left = [complex(p) for p in np.asarray(points).ravel() if np.isfinite(p)]
    out = []
    while left:
        p = left.pop(0)
        tol = max(rel * abs(p), 1e-9)
        same = [q for q in left if abs(q - p) <= tol]
        if same:
            out.append((p, 1 + len(same)))
            left = [q for q in left if abs(q - p) > tol]
    return out


PLOT_CLASSES = (MagnitudePlot, PhasePlot, GroupDelayPlot, StepPlot, GbwErrorPlot, PoleZeroPlot)
