"""Starting the window: ``bandsmith`` (the demo session) or ``bandsmith FILE``.

Start-up does as little as it can before the window shows: one analysis of the session's
candidates (a few milliseconds each) and the widgets; the candidates' design notes (their design
procedures, and the optimiser one of them needs) are worked out just after it shows. With ``BANDSMITH_STARTUP_MARK=1`` a line
``bandsmith: window shown`` goes to stderr once the window is on screen (the benchmark times it);
with ``BANDSMITH_QUIT_AFTER_SHOW=1`` the program then quits.
"""

from __future__ import annotations

import os
import sys

__all__ = ["run_window", "build_window", "STARTUP_MARK"]

STARTUP_MARK = "bandsmith: window shown"


def build_window(path: str | None = None, *, prompter=None, settings=None, recovery: bool = True, defer_notes: bool = False):
    """The window on a session file (or the demo). A file that cannot be opened gives a message
    (the file is left as it is) and the window opens on the demo instead.

    With ``defer_notes`` the candidates' design notes (each runs its circuit's design procedure)
    read "working out…" until :func:`finish_start` works them out, after the window shows.
    """
    from bandsmith.app.document.comparison import cache_of
    from bandsmith.files.session import SessionError, load_session

    from bandsmith.app.window.demo import demo_session
    from bandsmith.app.window.main_window import WorkbenchWindow
    from bandsmith.app.window.state import WorkbenchState
    from bandsmith.app.window.theme import apply_plot_theme

    apply_plot_theme()
    problem = None
    session = None
    if path:
        try:
            session = load_session(path)
        except SessionError as exc:
            problem = exc.reason
    state = WorkbenchState(session if session is not None else demo_session(), os.path.abspath(path) if session is not None else None)
    cache_of(state.document).defer_notes = defer_notes
    window = WorkbenchWindow(state, prompter=prompter, settings=settings, recovery=recovery)
    if session is not None:
        window.recent.add(path)
    return window, problem


def finish_start(window) -> None:
    """Work out what the start left for after the window showed (the design notes)."""
    from bandsmith.app.document.comparison import cache_of

    if cache_of(window.state.document).fill_notes():
        window.state.analyses_changed.emit()  # the views judge again, now with the notes


def run_window(path: str | None) -> int:
    """Open the workbench window and run until it closes; returns the exit status.

    The caller has checked the display (:func:`bandsmith.app.entry.display_problem`).
    """
    from PySide6 import QtCore, QtWidgets

    app = QtWidgets.QApplication.instance() or QtWidgets.QApplication(sys.argv[:1] or ["bandsmith"])
    app.setOrganizationName("Bandsmith")
    app.setApplicationName("Bandsmith")
    window, problem = build_window(path, defer_notes=True)
    window.show()

    def after_show():
        if os.environ.get("BANDSMITH_STARTUP_MARK") == "1":
            print(STARTUP_MARK, file=sys.stderr, flush=True)
        if os.environ.get("BANDSMITH_QUIT_AFTER_SHOW") == "1":
            window.keeper and window.keeper.discard()
            app.quit()
            return
        QtCore.QTimer.singleShot(0, lambda: finish_start(window))
        if problem:
            print(f"bandsmith: {problem}", file=sys.stderr)
            window.prompter.error(window, "Cannot open the session", f"{problem}\n\nThe file was not changed. The demo session is open instead.")
        window.offer_recovery()

    QtCore.QTimer.singleShot(0, after_show)
    return app.exec()
