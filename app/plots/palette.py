"""Colours, line styles and scatter symbols of every plot, on screen, in exports and in the report.

Candidate colours are our own set, picked so that neighbours differ in hue *and* lightness (they
stay apart for the common red-green colour vision deficiencies and in greyscale print); each
candidate also gets its own line style, so no curve depends on colour alone. The window's style
sheet (:mod:`bandsmith.app.window.theme`) takes its colours from here.
"""

from __future__ import annotations

from dataclasses import dataclass

from PySide6 import QtCore, QtGui

# The status colours' home is the Qt-free bandsmith.app.plots.status; re-exported here with the rest.
from bandsmith.app.plots.status import BAD, GOOD, INK, MUTED, WARN

__all__ = ["CandidateStyle", "candidate_style", "PALETTE", "LINE_STYLES", "SYMBOLS", "apply_plot_theme", "GOOD", "WARN", "BAD", "INK", "MUTED"]

# Blue, amber, dark magenta, sky, vermilion-brown, bluish green, olive, slate: alternating dark and
# light so that any two neighbours are told apart by lightness as well as by hue.
PALETTE = (
    "#1b5e9e",
    "#e09b1a",
    "#8e2c7c",
    "#4fb0e0",
    "#b3471d",
    "#2b9c84",
    "#7a7a1f",
    "#5c6470",
)

LINE_STYLES = (
    QtCore.Qt.PenStyle.SolidLine,
    QtCore.Qt.PenStyle.DashLine,
    QtCore.Qt.PenStyle.DotLine,
    QtCore.Qt.PenStyle.DashDotLine,
    QtCore.Qt.PenStyle.DashDotDotLine,
)

# Scatter symbols of the pole-zero view, one per candidate (poles; zeros are always "o").
SYMBOLS = ("x", "t", "s", "d", "star", "+", "t1", "p")


@dataclass(frozen=True, slots=True)
class CandidateStyle:
    """How one candidate is drawn everywhere: colour (hex), Qt pen style and scatter symbol."""

    colour: str
    pen_style: QtCore.Qt.PenStyle
    symbol: str

    def pen(self, width: float = 2.0):
        import pyqtgraph as pg

        return pg.mkPen(QtGui.QColor(self.colour), width=width, style=self.pen_style)


def candidate_style(index: int) -> CandidateStyle:
    """The style of the ``index``-th candidate of a session (cycles after the palette's end)."""
    return CandidateStyle(
        colour=PALETTE[index % len(PALETTE)],
        pen_style=LINE_STYLES[index % len(LINE_STYLES)],
        symbol=SYMBOLS[index % len(SYMBOLS)],
    )


def apply_plot_theme() -> None:
    """A light theme for every pyqtgraph plot (white ground, dark axes, antialiased lines)."""
    import pyqtgraph as pg

    pg.setConfigOptions(background="w", foreground=INK, antialias=True)
