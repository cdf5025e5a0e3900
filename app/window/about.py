"""The About / Help dialog: what Bandsmith does, its keyboard shortcuts and the cautions.

:func:`about_html` builds the page (testable without showing anything); :func:`show_about` shows
it in a modal dialog. The shortcuts listed are the window's own: every action of ``parent`` that
has a shortcut, or, without a parent, the standard desktop set the window uses.
"""

from __future__ import annotations

from html import escape
from typing import Iterable, Sequence

from PySide6 import QtCore, QtGui, QtWidgets

from bandsmith.common.cautions import cautions_html
from bandsmith.common.version import installed_version

__all__ = ["about_html", "show_about", "default_shortcuts", "shortcuts_of", "AboutDialog"]

_WHAT_IT_DOES = (
    "Bandsmith is a workbench for active band-pass filters. Give it a target centre frequency, "
    "Q (or bandwidth) and centre gain; it proposes part values for several circuits, drawn from a "
    "standard E-series or kept exact, and shows them side by side.",
    "For every candidate it measures the achieved f0, Q, bandwidth and centre gain on the computed "
    "response, and works out what the op-amp must deliver: the gain-bandwidth needed to stay "
    "within tolerance, the slew rate for a sine at f0 and for an input step, and the peak output "
    "current. Sensitivities show which parts matter most.",
    "Designs are kept as session files and can be exported as plot images (PNG, SVG), response "
    "and parts tables (CSV), a SPICE netlist, and a report (HTML or PDF). The same report is made "
    "headless with <code>bandsmith report FILE -o OUT.html</code> (or <code>.pdf</code>).",
)

_VALUES_HELP = (
    "Part values can be typed as plain numbers (4700, 4.7e3), with SI prefixes (4.7k, 10n, 1meg) "
    "or as IEC 60062 RKM codes (4k7, 2R2, 4n7)."
)

# What each standard key does in the window, in the order the dialog lists them.
_STANDARD = (
    ("New session", QtGui.QKeySequence.StandardKey.New),
    ("Open a session", QtGui.QKeySequence.StandardKey.Open),
    ("Save", QtGui.QKeySequence.StandardKey.Save),
    ("Save as", QtGui.QKeySequence.StandardKey.SaveAs),
    ("Undo", QtGui.QKeySequence.StandardKey.Undo),
    ("Redo", QtGui.QKeySequence.StandardKey.Redo),
    ("Help", QtGui.QKeySequence.StandardKey.HelpContents),
    ("Close the window", QtGui.QKeySequence.StandardKey.Quit),
)
_FALLBACK = {  # where a platform defines no key for a standard action
    "Save as": "Ctrl+Shift+S",
    "Close the window": "Ctrl+Q",
    "Help": "F1",
}


def _native(seq: QtGui.QKeySequence) -> str:
    return seq.toString(QtGui.QKeySequence.SequenceFormat.NativeText)


def _typed(seq: QtGui.QKeySequence) -> bool:
    """True for a binding on a letter or on F1–F12 (not a dedicated "Undo" or "Open" key, nor the
    F13–F35 some platforms bind for keyboards that have them: X11 binds Undo to F14)."""
    if seq.isEmpty():
        return False
    key = seq[0].key()
    Key = QtCore.Qt.Key
    return Key.Key_A.value <= key.value <= Key.Key_Z.value or Key.Key_F1.value <= key.value <= Key.Key_F12.value


def default_shortcuts() -> list[tuple[str, str]]:
    """The standard desktop shortcuts as ``(what it does, keys)``, in this platform's notation."""
    out = []
    for what, key in _STANDARD:
        keys = [_native(s) for s in QtGui.QKeySequence.keyBindings(key) if _typed(s)]
        text = ", ".join(dict.fromkeys(k for k in keys if k)) or _FALLBACK.get(what, "")
        if text:
            out.append((what, text))
    return out


# Actions whose text changes as the user works (an undo stack's "Undo import measurement …"):
# the help lists them under a fixed name, by the action's object name.
_FIXED_NAMES = {"actUndo": "Undo", "actRedo": "Redo"}


def shortcuts_of(widget: QtWidgets.QWidget) -> list[tuple[str, str]]:
    """Every action of ``widget`` (and its children) that has a shortcut, as ``(name, keys)``.

    The name is the action's fixed name (:data:`_FIXED_NAMES`, or a ``helpName`` property), else
    its menu text without the mnemonic ``&`` and the trailing ellipsis.
    """
    seen: dict[str, str] = {}
    for action in widget.findChildren(QtGui.QAction):
        keys = list(dict.fromkeys(_native(s) for s in action.shortcuts() if _typed(s)))
        fixed = action.property("helpName") or _FIXED_NAMES.get(action.objectName())
        text = fixed or action.text().replace("&&", "\0").replace("&", "").replace("\0", "&").rstrip(".… ")
        if keys and text and text not in seen:
            seen[text] = ", ".join(keys)
    return list(seen.items())


def about_html(shortcuts: Sequence[tuple[str, str]] | None = None, *, version: str | None = None) -> str:
    """The About / Help page as HTML.

    Parameters
    ----------
    shortcuts : sequence of (str, str), optional
        ``(what it does, keys)`` rows; :func:`default_shortcuts` when not given.
    version : str, optional
        The program version shown under the title; the installed package's by default.
    """
    if shortcuts is None:
        shortcuts = default_shortcuts()
    if version is None:
        version = installed_version() or ""
    rows = "\n".join(
        f"<tr><td style='padding:2px 16px 2px 0'>{escape(what)}</td><td><b>{escape(keys)}</b></td></tr>"
        for what, keys in shortcuts
    )
    paras = "\n".join(f"<p>{p}</p>" for p in _WHAT_IT_DOES)
    ver = f"<p style='color:#555'>Version {escape(version)}</p>" if version else ""
    return f"""<h1>Bandsmith</h1>
{ver}
<h2>What it does</h2>
{paras}
<p>{escape(_VALUES_HELP)}</p>
<h2>Keyboard shortcuts</h2>
<table class="shortcuts">
{rows}
</table>
{cautions_html(heading_level=2)}
"""


class AboutDialog(QtWidgets.QDialog):
    """A modal dialog showing :func:`about_html` in a read-only text browser."""

    def __init__(self, parent: QtWidgets.QWidget | None = None, *, shortcuts: Iterable[tuple[str, str]] | None = None):
        super().__init__(parent)
        self.setObjectName("aboutDialog")
        self.setWindowTitle("About Bandsmith")
        if shortcuts is None and parent is not None:
            shortcuts = shortcuts_of(parent) or None
        self.browser = QtWidgets.QTextBrowser(self)
        self.browser.setObjectName("aboutText")
        self.browser.setOpenExternalLinks(False)
        self.browser.setHtml(about_html(list(shortcuts) if shortcuts is not None else None))
        buttons = QtWidgets.QDialogButtonBox(QtWidgets.QDialogButtonBox.StandardButton.Close, self)
        buttons.rejected.connect(self.reject)
        buttons.accepted.connect(self.accept)
        layout = QtWidgets.QVBoxLayout(self)
        layout.addWidget(self.browser)
        layout.addWidget(buttons)
        self.resize(QtCore.QSize(620, 640))


def show_about(parent: QtWidgets.QWidget | None = None, *, shortcuts: Iterable[tuple[str, str]] | None = None, modal: bool = True) -> AboutDialog:
    """Show the About / Help dialog and return it.

    Modal (``exec``) by default; with ``modal=False`` it is shown and returned at once (tests).
    """
    dialog = AboutDialog(parent, shortcuts=shortcuts)
    if modal:
        dialog.exec()
    else:
        dialog.show()
    return dialog
