"""Shared pieces of the window tests: a scripted prompter and window factories."""

from __future__ import annotations

import numpy as np
from PySide6 import QtCore

from bandsmith.app.window.prompts import Prompter


class ScriptedPrompter(Prompter):
    """Answers from lists (first in, first out) instead of modal dialogs; records every message."""

    def __init__(self, **answers):
        self.answers = {k: list(v) for k, v in answers.items()}
        self.errors: list[tuple[str, str]] = []
        self.infos: list[tuple[str, str]] = []
        self.asked: list[str] = []

    def _next(self, key, default):
        self.asked.append(key)
        queue = self.answers.get(key)
        return queue.pop(0) if queue else default

    def ask_unsaved(self, parent, name):
        return self._next("unsaved", "cancel")

    def ask_open_path(self, parent, folder):
        return self._next("open_path", None)

    def ask_save_path(self, parent, suggested, filters=None):
        return self._next("save_path", None)

    def ask_choice(self, parent, title, label, items):
        return self._next("choice", items[0])

    def ask_restore(self, parent, original, when):
        return self._next("restore", "later")

    def error(self, parent, title, text):
        self.errors.append((title, text))

    def info(self, parent, title, text):
        self.infos.append((title, text))


def temp_settings(tmp_path) -> QtCore.QSettings:
    """A QSettings file of the test's own (the user's settings are never touched)."""
    return QtCore.QSettings(str(tmp_path / "settings.ini"), QtCore.QSettings.Format.IniFormat)


def open_window(qtbot, tmp_path, monkeypatch, session=None, *, prompter=None, size=None, show=True, **kw):
    """The main window on ``session`` (the demo session by default) as a test drives it: a scripted
    prompter, settings and a recovery folder of the test's own (under ``tmp_path``); resized to
    ``size`` if given, and shown and exposed unless ``show`` is False. ``kw`` goes to the window
    (``recovery=False``, say)."""
    from bandsmith.app.window.demo import demo_session
    from bandsmith.app.window.main_window import WorkbenchWindow
    from bandsmith.app.window.state import WorkbenchState

    monkeypatch.setenv("BANDSMITH_RECOVERY_DIR", str(tmp_path / "recovery"))
    state = WorkbenchState(session if session is not None else demo_session())
    w = WorkbenchWindow(state, prompter=prompter if prompter is not None else ScriptedPrompter(), settings=temp_settings(tmp_path), **kw)
    qtbot.addWidget(w)
    if size is not None:
        w.resize(*size)
    if show:
        w.show()
        qtbot.waitExposed(w)
    return w


def show_widget(qtbot, widget, size):
    """``widget`` (a pane on its own) at ``size``, shown and exposed; closed with the test."""
    qtbot.addWidget(widget)
    widget.resize(*size)
    widget.show()
    qtbot.waitExposed(widget)
    return widget


def chain_pane(qtbot, state, wait_ms: int = 30_000, **kw):
    """The chain pane on ``state`` with the window's style sheet, shown, once its first chain is built."""
    from bandsmith.app.window.panes.chain_pane import ChainPane
    from bandsmith.app.window.theme import STYLE_SHEET

    p = ChainPane(state, **kw)
    p.setStyleSheet(STYLE_SHEET)
    show_widget(qtbot, p, (1180, 760))
    qtbot.waitUntil(lambda: not p.busy, timeout=wait_ms)
    return p


def _pixels(image) -> np.ndarray:
    """The image's pixels as a (height, width) array of 32-bit ARGB values."""
    from PySide6 import QtGui

    if isinstance(image, QtGui.QPixmap):
        image = image.toImage()
    image = image.convertToFormat(QtGui.QImage.Format.Format_ARGB32)
    w, h, stride = image.width(), image.height(), image.bytesPerLine()
    raw = np.frombuffer(image.constBits(), dtype=np.uint32, count=h * stride // 4)
    return raw.reshape(h, stride // 4)[:, :w].copy()  # a copy: the converted image goes away


def drawn_fraction(image, rect: QtCore.QRect | None = None) -> float:
    """Share of the pixels in ``rect`` (all of ``image`` if None) that differ from its most common
    colour (taken as the background): 0 for a blank region."""
    import numpy as np

    px = _pixels(image)
    if rect is not None:
        px = px[rect.top(): rect.bottom() + 1, rect.left(): rect.right() + 1]
    assert px.size, f"empty region {rect}"
    _, counts = np.unique(px, return_counts=True)
    return 1.0 - counts.max() / px.size


def region_of(child, parent) -> QtCore.QRect:
    """The part of ``child`` that shows in a grab of ``parent``, in ``parent``'s coordinates: its
    rectangle clipped by every widget between them (a scroll area's viewport, say); empty when it
    is hidden or scrolled away."""
    if child is not parent and not child.isVisibleTo(parent):
        return QtCore.QRect()
    rect, w = child.rect(), child
    while w is not parent:
        rect = rect.translated(w.pos())
        w = w.parentWidget()
        assert w is not None, f"{child!r} is not inside {parent!r}"
        rect = rect.intersected(w.rect())
    return rect


def assert_text_shown(label) -> None:
    """``label`` is on screen with its text, not elided nor cut at its right edge (one-line labels)."""
    from PySide6 import QtGui

    assert label.isVisible(), f"{label.objectName() or label!r} is hidden"
    fmt, text = label.textFormat(), label.text()
    if fmt == QtCore.Qt.TextFormat.RichText or (fmt == QtCore.Qt.TextFormat.AutoText and QtGui.Qt.mightBeRichText(text)):
        text = QtGui.QTextDocumentFragment.fromHtml(text).toPlainText()
    assert text.strip(), f"{label!r} shows no text"
    if not label.wordWrap():
        widest = max(label.fontMetrics().horizontalAdvance(line) for line in text.splitlines() or [text])
        assert widest <= label.contentsRect().width(), f"{text!r} is cut: {widest} px in {label.contentsRect().width()} px"


def scroll_to(child) -> None:
    """Scroll every scroll area holding ``child`` so that it is in view, as a user would."""
    from PySide6 import QtWidgets

    w = child.parentWidget()
    while w is not None:
        if isinstance(w, QtWidgets.QScrollArea) and w.widget() is not None:
            top = child.mapTo(w.widget(), QtCore.QPoint(0, 0))
            w.verticalScrollBar().setValue(min(top.y(), w.verticalScrollBar().maximum()))
        w = w.parentWidget()
    QtWidgets.QApplication.processEvents()


def screenshot(widget, path, *, regions=(), labels=(), at_least: float = 0.005):
    """Grab ``widget``, save the picture to ``path`` (for a person to look at) and check what it shows.

    The whole picture, and the part of it each widget in ``regions`` covers, must not be blank:
    at least ``at_least`` of their pixels differ from the region's background colour (text, lines,
    curves). Each label of ``labels`` must show its text in full. Returns the grabbed QImage.
    """
    image = widget.grab().toImage()
    assert image.save(str(path)), path
    assert drawn_fraction(image) >= at_least, f"{path}: the picture is blank"
    for child in regions:
        box = region_of(child, widget)
        assert box.width() > 8 and box.height() > 8, f"{child!r} is not on screen in {path} ({box})"
        share = drawn_fraction(image, box)
        assert share >= at_least, f"{child!r} is blank in {path} ({share:.4f} of its pixels drawn)"
    for label in labels:
        assert_text_shown(label)
    return image
