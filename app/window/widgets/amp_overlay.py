"""The chosen shelf op-amp on the Responses plots: each candidate's response with its chosen model.

For every candidate with a chosen model (:meth:`~bandsmith.app.window.verdicts.VerdictBook.choose`, from its
column's verdict strip or the shelf pane) the magnitude and phase plots get one more curve: the
candidate's response with that op-amp (:meth:`~bandsmith.app.window.verdicts.VerdictBook.response`), drawn
as a wide, pale band in the candidate's colour behind its own line. Where the op-amp changes
nothing the band is a halo around the line; where it does, the band parts from it. A note at the
end of the legend strip says which model each band is.
"""

from __future__ import annotations

from html import escape

import pyqtgraph as pg
from PySide6 import QtCore, QtGui

from bandsmith.app.window.verdicts import VerdictBook

__all__ = ["AmpOverlay", "OVERLAY_PLOTS", "overlay_key", "install"]

OVERLAY_PLOTS = ("magnitude", "phase")
_WIDTH = 7.0
_ALPHA = 85


def overlay_key(candidate_id: str) -> str:
    """The key of a candidate's chosen-op-amp curve on the plots (``plot.overlays[key]``)."""
    return f"amp:{candidate_id}"


class AmpOverlay(QtCore.QObject):
    """Keeps the plots' chosen-op-amp curves in step with the book and the analyses."""

    def __init__(self, state, plot_grid, parent: QtCore.QObject | None = None):
        super().__init__(parent if parent is not None else plot_grid)
        self.state = state
        self.plot_grid = plot_grid
        self.book = VerdictBook.of(state)
        self.book.chosen_changed.connect(lambda *_: self.redraw())
        self.book.changed.connect(self.redraw)
        state.analyses_changed.connect(self.redraw)
        self.redraw()

    def _pen(self, candidate_id: str):
        colour = QtGui.QColor(self.state.style(candidate_id).colour)
        colour.setAlpha(_ALPHA)
        pen = pg.mkPen(colour, width=_WIDTH)
        pen.setCapStyle(QtCore.Qt.PenCapStyle.RoundCap)
        pen.setJoinStyle(QtCore.Qt.PenJoinStyle.RoundJoin)
        return pen

    def redraw(self) -> None:
        shown: dict[str, str] = {}
        for cid in self.book.chosen_ids():
            r = self.book.response(cid)
            if r is None:
                continue
            shown[cid] = r.amp.name
            pen = self._pen(cid)
            for key, y in (("magnitude", r.magnitude_db), ("phase", r.phase_deg)):
                plot = self.plot_grid.plots.get(key)
                if plot is not None:
                    plot.set_overlay(overlay_key(cid), r.f_hz, y, pen=pen)
        for key in OVERLAY_PLOTS:
            plot = self.plot_grid.plots.get(key)
            if plot is None:
                continue
            for k in [k for k in plot.overlays if k.startswith("amp:") and k[4:] not in shown]:
                plot.clear_overlay(k)
        legend = getattr(self.plot_grid, "legend", None)
        if legend is not None and hasattr(legend, "set_note"):
            legend.set_note(
                "Wide pale band: " + "; ".join(f"{escape(c)} with {escape(n)}" for c, n in shown.items()) if shown else ""
            )


def install(window) -> AmpOverlay:
    """Draw the chosen op-amps on a :class:`~bandsmith.app.window.main_window.WorkbenchWindow`'s plots."""
    overlay = AmpOverlay(window.state, window.plot_grid, window)
    window.amp_overlay = overlay
    return overlay
