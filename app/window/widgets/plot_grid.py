"""The grid of plots: magnitude, phase, group delay, step response, error vs GBW, poles and zeros.

Three columns when the grid is wide, two when it is narrow (it re-flows on resize), so each plot
keeps a readable size. ``cursor_text`` forwards the read-out of whichever plot the mouse is over.

While the user edits part values the axes stay put (auto-range is switched off for that edit, so
only the edited candidate's curves are redrawn, not the ticks and grid); any other change (the
target, the op-amp, a candidate added, removed, switched on or off, a new session) fits the axes
to the curves again. The axes are drawn into a cached pixmap (a device-coordinate cache) and
only re-rendered when their range or size changes.
"""

from __future__ import annotations

from PySide6 import QtCore, QtWidgets

from bandsmith.app.window.widgets.plots import PLOT_CLASSES, CandidatePlot
from bandsmith.app.window.state import WorkbenchState
from bandsmith.app.window.theme import apply_plot_theme

__all__ = ["PlotGrid"]

# Below this width (px) the grid uses two columns instead of three.
_THREE_COLUMNS_FROM = 1000
# The least height (px) of a plot: axis labels, ticks and a readable curve.
_MIN_PLOT_HEIGHT = 140


class PlotGrid(QtWidgets.QWidget):
    """All the workbench plots of one state, laid out in a grid."""

    cursor_text = QtCore.Signal(str)

    def __init__(self, state: WorkbenchState, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("plotGrid")
        self.state = state
        self.plots: dict[str, CandidatePlot] = {}
        apply_plot_theme()  # before the first plot is made: pyqtgraph reads it at construction
        for cls in PLOT_CLASSES:
            plot = cls(state, self)
            plot.cursor_text.connect(self.cursor_text)
            # Three rows of plots, the tabs and the legend must fit under the target strip and
            # the comparison table of a 768 px high laptop screen.
            plot.setMinimumHeight(_MIN_PLOT_HEIGHT)
            self.plots[cls.key] = plot
        for plot in self.plots.values():
            item = plot.getPlotItem()
            for side in ("left", "bottom"):
                item.getAxis(side).setCacheMode(QtWidgets.QGraphicsItem.CacheMode.DeviceCoordinateCache)
        # The plots that fit their axes to the curves (the pole-zero plot sets its own range).
        self._fitting = [p for p in self.plots.values() if any(p.getPlotItem().getViewBox().autoRangeEnabled())]
        self._last_session = state.session
        state.session_changed.connect(self._keep_axes_on_part_edits)
        outer = QtWidgets.QVBoxLayout(self)
        outer.setContentsMargins(0, 0, 0, 0)
        outer.setSpacing(0)
        self.legend = LegendStrip(state, self)
        outer.addWidget(self.legend)
        self._layout = QtWidgets.QGridLayout()
        outer.addLayout(self._layout, 1)
        self._layout.setContentsMargins(4, 4, 4, 4)
        self._layout.setSpacing(6)
        self._columns = 0
        self._reflow(3)

    def _keep_axes_on_part_edits(self, session) -> None:
        """Before the plots redraw: keep the axes when only part values changed, else fit them."""
        before, self._last_session = self._last_session, session
        part_edit = (
            before is not None
            and before.target == session.target
            and before.opamp == session.opamp
            and [(c.id, c.topology_id, c.enabled) for c in before.candidates]
            == [(c.id, c.topology_id, c.enabled) for c in session.candidates]
        )
        for plot in self._fitting:
            vb = plot.getPlotItem().getViewBox()
            if part_edit:
                if any(vb.autoRangeEnabled()):
                    vb.updateAutoRange()  # settle a fit still pending (no paint yet) before keeping it
                vb.disableAutoRange()
            else:
                vb.enableAutoRange()

    def _reflow(self, columns: int) -> None:
        if columns == self._columns:
            return
        self._columns = columns
        for plot in self.plots.values():
            self._layout.removeWidget(plot)
        for i, plot in enumerate(self.plots.values()):
            self._layout.addWidget(plot, i // columns, i % columns)
        rows = (len(self.plots) + columns - 1) // columns
        for r in range(4):
            self._layout.setRowStretch(r, 1 if r < rows else 0)
        for c in range(3):
            self._layout.setColumnStretch(c, 1 if c < columns else 0)

    def resizeEvent(self, event) -> None:  # noqa: N802 - Qt's name
        self._reflow(3 if event.size().width() >= _THREE_COLUMNS_FROM else 2)
        super().resizeEvent(event)


class LegendStrip(QtWidgets.QWidget):
    """One line above the plots naming every active candidate with its line sample."""

    def __init__(self, state: WorkbenchState, parent: QtWidgets.QWidget | None = None):
        super().__init__(parent)
        self.setObjectName("legendStrip")
        self.state = state
        self._row = QtWidgets.QHBoxLayout(self)
        self._row.setContentsMargins(8, 2, 8, 0)
        self._row.setSpacing(14)
        self.entries: list[QtWidgets.QLabel] = []
        # A note at the end of the strip (kept across rebuilds), e.g. what an overlay curve shows.
        self.note = QtWidgets.QLabel(self)
        self.note.setObjectName("legendNote")
        self.note.setStyleSheet("color: #5f6368;")
        self.note.hide()
        state.analyses_changed.connect(self._on_analyses_changed)
        self._on_analyses_changed()

    def set_note(self, text: str) -> None:
        """Show ``text`` (rich text allowed) at the end of the strip; "" hides it."""
        self.note.setText(text)
        self.note.setVisible(bool(text))

    def _on_analyses_changed(self) -> None:
        from bandsmith.app.window.widgets.candidate_column import style_swatch

        names = [(cid, self.state.style(cid)) for cid in self.state.results]
        if names == getattr(self, "_shown_names", None):
            return  # the same candidates in the same styles: the strip stays (part edits)
        self._shown_names = names

        while self._row.count():
            item = self._row.takeAt(0)
            if item.widget() and item.widget() is not self.note:
                item.widget().deleteLater()
        self.entries = []
        title = QtWidgets.QLabel("Curves:")
        title.setStyleSheet("color: #5f6368;")
        self._row.addWidget(title)
        for cid in self.state.results:
            pic = QtWidgets.QLabel()
            pic.setPixmap(style_swatch(self.state.style(cid)))
            text = QtWidgets.QLabel(cid)
            text.setObjectName(f"legend_{cid}")
            self._row.addWidget(pic)
            self._row.addWidget(text)
            self.entries.append(text)
        self._row.addStretch(1)
        self._row.addWidget(self.note)
