"""The light style sheet of the workbench and its small styled widgets.

The colours, line styles and symbols are those of every plot (:mod:`bandsmith.app.plots.palette`),
re-exported here for the window's modules.
"""

from __future__ import annotations

from PySide6 import QtCore, QtWidgets

from bandsmith.app.plots.palette import (
    BAD,
    GOOD,
    INK,
    LINE_STYLES,
    MUTED,
    PALETTE,
    WARN,
    CandidateStyle,
    apply_plot_theme,
    candidate_style,
)

__all__ = ["CandidateStyle", "candidate_style", "PALETTE", "LINE_STYLES", "STYLE_SHEET", "apply_plot_theme", "GOOD", "WARN", "BAD", "INK", "MUTED", "error_label", "note_label", "section_title", "selectable_label", "settings_group", "fit_columns", "headline"]

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


def section_title(parent: QtWidgets.QWidget | None, text: str, *, wrap: bool = False) -> QtWidgets.QLabel:
    """The bold title over a part of a pane (styled as ``sectionTitle``); ``wrap`` for a long one."""
    label = QtWidgets.QLabel(text, parent)
    label.setObjectName("sectionTitle")
    if wrap:
        label.setWordWrap(True)
    return label


def selectable_label(parent: QtWidgets.QWidget, object_name: str, *, rich: bool = False) -> QtWidgets.QLabel:
    """A word-wrapped label whose text the user can select and copy (a summary, messages);
    ``rich`` for HTML text."""
    label = QtWidgets.QLabel(parent)
    label.setObjectName(object_name)
    label.setWordWrap(True)
    if rich:
        label.setTextFormat(QtCore.Qt.TextFormat.RichText)
    label.setTextInteractionFlags(QtCore.Qt.TextInteractionFlag.TextSelectableByMouse)
    return label


def settings_group(parent: QtWidgets.QWidget, title: str, object_name: str) -> tuple[QtWidgets.QGroupBox, QtWidgets.QGridLayout]:
    """A titled group of settings fields and the tight grid they are laid out on."""
    box = QtWidgets.QGroupBox(title, parent)
    box.setObjectName(object_name)
    grid = QtWidgets.QGridLayout(box)
    grid.setHorizontalSpacing(6)
    grid.setVerticalSpacing(3)
    return box, grid


def note_label(parent: QtWidgets.QWidget, object_name: str, text: str = "") -> QtWidgets.QLabel:
    """A word-wrapped line of muted text (what a run was, a note under a table)."""
    label = QtWidgets.QLabel(text, parent)
    label.setObjectName(object_name)
    label.setStyleSheet(f"color: {MUTED};")
    label.setWordWrap(True)
    return label


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


def fit_columns(table: QtWidgets.QTableView, *, stretch_last: bool = True) -> None:
    """Size a table's columns to their contents, header text included (never narrower than the
    header's text), the last one taking what room is left; a table narrower than its columns
    scrolls sideways instead of cutting its headers."""
    header = table.horizontalHeader()
    header.setSectionResizeMode(QtWidgets.QHeaderView.ResizeMode.ResizeToContents)
    header.setStretchLastSection(stretch_last)
    header.setMinimumSectionSize(36)
