"""Colours, line styles and the light style sheet of the workbench.

Candidate colours are our own set, picked so that neighbours differ in hue *and* lightness (they
stay apart for the common red-green colour vision deficiencies and in greyscale print); each
candidate also gets its own line style, so no curve depends on colour alone.
"""

from __future__ import annotations

from dataclasses import dataclass

from PySide6 import QtCore, QtGui, QtWidgets

__all__ = ["CandidateStyle", "candidate_style", "PALETTE", "LINE_STYLES", "STYLE_SHEET", "apply_plot_theme", "GOOD", "WARN", "BAD", "INK", "MUTED", "error_label", "headline"]

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

# Status colours of flags; each flag also carries a symbol so it does not rely on colour.
# Text: body ink and the muted grey of captions and notes.
INK = "#202124"
MUTED = "#5f6368"
GOOD = "#1d7a3a"
WARN = "#a35f00"
BAD = "#b0191e"


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

    pg.setConfigOptions(background="w", foreground="#202124", antialias=True)


STYLE_SHEET = f"""
QMainWindow, QWidget#board {{ background: #f6f6f3; }}
QFrame#candidateColumn {{ background: white; border: 1px solid #c9c9c4; border-radius: 6px; }}
QFrame#candidateColumn[current="true"] {{ border: 2px solid #1b5e9e; }}
QFrame#candidateColumn[enabledCandidate="false"] {{ background: #eeeeea; }}
QFrame#targetStrip {{ background: #ebeef2; border-bottom: 1px solid #c9ccd2; }}
QLabel#sectionTitle {{ font-weight: 600; color: #3c4043; margin-top: 4px; }}
QLabel#fieldError {{ color: {BAD}; }}
QLabel#needBig {{ font-size: 15px; font-weight: 700; }}
QLabel#needFlagOk {{ color: {GOOD}; font-weight: 600; }}
QLabel#needFlagBad {{ color: white; background: {BAD}; font-weight: 700; padding: 1px 4px; border-radius: 3px; }}
QLabel#candidateTitle {{ font-weight: 700; font-size: 13px; }}
QLineEdit[invalid="true"] {{ border: 1px solid {BAD}; background: #fff1f0; }}
"""


def error_label(parent: QtWidgets.QWidget) -> QtWidgets.QLabel:
    """The hidden, word-wrapped label a form shows its input error in (styled as ``fieldError``)."""
    label = QtWidgets.QLabel(parent)
    label.setObjectName("fieldError")
    label.setWordWrap(True)
    label.hide()
    return label


def headline(parent: QtWidgets.QWidget, caption: str, object_name: str, size_px: int) -> tuple[QtWidgets.QVBoxLayout, QtWidgets.QLabel]:
    """A pane's headline figure: a muted caption over a large bold value (``—`` until set).
    Returns the column to place and the value label."""
    col = QtWidgets.QVBoxLayout()
    col.setSpacing(0)
    cap = QtWidgets.QLabel(caption, parent)
    cap.setStyleSheet(f"color: {MUTED}; font-weight: 600;")
    col.addWidget(cap)
    value = QtWidgets.QLabel("—", parent)
    value.setObjectName(object_name)
    value.setStyleSheet(f"font-size: {size_px}px; font-weight: 700; color: {INK};")
    col.addWidget(value)
    return col, value
