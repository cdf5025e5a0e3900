"""The cautions text and the About / Help dialog."""

import re

import pytest

from bandsmith.common.cautions import CAUTIONS, cautions_comment, cautions_html, cautions_text


def _plain(html: str) -> str:
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", html))


# The three cautions the README states ("Cautions", near its top); each must be said somewhere in
# the text, in our words. These fragments are the facts each caution carries.
CAUTION_FACTS = (
    ("prototype", "measure", "production"),
    ("supply", "common-mode", "output swing", "datasheet"),
    ("mains", "high voltage", "electrical codes", "licensed practice"),
)


@pytest.mark.parametrize("facts", CAUTION_FACTS)
def test_every_caution_is_in_text_and_html(facts):
    text = cautions_text().lower()
    html = _plain(cautions_html()).lower()
    for fact in facts:
        assert fact in text
        assert fact in html


def test_cautions_forms_agree():
    assert len(CAUTIONS) == 3
    assert len({c.key for c in CAUTIONS}) == 3
    html = cautions_html(heading_level=3)
    assert html.startswith("<h3") and html.count("<li") == 3
    assert "<h" not in cautions_html(title=False)
    comment = cautions_comment("* ")
    assert len(comment.splitlines()) == 3 and all(line.startswith("* ") for line in comment.splitlines())
    with pytest.raises(ValueError):
        cautions_html(heading_level=0)


@pytest.mark.gui
def test_about_html_has_purpose_shortcuts_and_cautions(qapp):
    from bandsmith.app.window.about import about_html, default_shortcuts

    html = about_html()
    text = _plain(html)
    assert "band-pass" in text and "gain-bandwidth" in text
    keys = dict(default_shortcuts())
    # Common practice, no source: the usual desktop keys for these actions.
    assert "Ctrl+S" in keys["Save"] and "Ctrl+Z" in keys["Undo"] and "Ctrl+O" in keys["Open a session"]
    for what, k in keys.items():
        assert what in text and k in text
    for facts in CAUTION_FACTS:
        for fact in facts:
            assert fact in text.lower()


@pytest.mark.gui
def test_about_dialog_lists_the_parents_own_shortcuts(qtbot):
    from PySide6 import QtGui, QtWidgets

    from bandsmith.app.window.about import show_about

    parent = QtWidgets.QMainWindow()
    qtbot.addWidget(parent)
    act = QtGui.QAction("&Export report…", parent)
    act.setShortcut(QtGui.QKeySequence("Ctrl+R"))
    parent.addAction(act)
    dialog = show_about(parent, modal=False)
    qtbot.addWidget(dialog)
    text = dialog.browser.toPlainText()
    assert "Export report" in text and "Ctrl+R" in text
    assert "licensed practice" in text
    assert dialog.windowTitle() == "About Bandsmith"
    dialog.close()
