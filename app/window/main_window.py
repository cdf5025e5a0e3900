"""The workbench window: target strip, candidates board, plot panes, menus, status bar.

Layout (top to bottom): the target strip; a splitter with the candidates board on the left and the
panes on the right (a tab widget whose first tab is the plot grid; later panes are added with
:meth:`WorkbenchWindow.add_pane`); the status bar with the cursor read-out, notices and the
progress of background work.

File handling goes through the state (document, path, clean flag), a
:class:`~bandsmith.app.window.prompts.Prompter` (all dialogs; tests script it) and
:class:`~bandsmith.app.window.recent.RecentFiles`.

The module is a little over 500 lines: it is the shell every action of the menus is wired
through (files, recovery, exports, the report job, help), each a short method; the panes, the
board and the plots live in their own modules.
"""

from __future__ import annotations

import importlib
import os
from pathlib import Path

from PySide6 import QtCore, QtGui, QtWidgets

from bandsmith.common.errors import InputError
from bandsmith.files.session import SessionError, load_session, save_session

from bandsmith.app.window.background import BackgroundJob, JobStatus
from bandsmith.app.window.widgets.candidates_board import CandidatesBoard
from bandsmith.app.window.widgets.comparison_table import ComparisonTable
from bandsmith.app.window.demo import blank_session
from bandsmith.app.window.widgets.plot_grid import PlotGrid
from bandsmith.app.window.prompts import Prompter
from bandsmith.app.window.recent import RecentFiles
from bandsmith.app.window.recovery import RecoveryKeeper, left_behind
from bandsmith.app.window.state import WorkbenchState
from bandsmith.app.window.widgets.target_strip import TargetStrip
from bandsmith.app.window.theme import STYLE_SHEET

__all__ = ["WorkbenchWindow"]

_HELPER_MODULES = {
    "exporting": "bandsmith.app.window.exporting",
    "report": "bandsmith.app.report.builder",
    "about": "bandsmith.app.window.about",
}
_IMAGE_FILTER = "PNG image (*.png);;SVG image (*.svg)"
_CSV_FILTER = "CSV table (*.csv)"
_NETLIST_FILTER = "SPICE netlist (*.cir *.sp *.net)"
_REPORT_FILTER = "HTML report (*.html);;PDF report (*.pdf)"

# Where a platform defines no key for a standard action (Quit and Help on some desktops, every
# one under the offscreen platform), the usual ones.
_K = QtGui.QKeySequence.StandardKey
_FALLBACK_KEYS = {
    _K.New: "Ctrl+N",
    _K.Open: "Ctrl+O",
    _K.Save: "Ctrl+S",
    _K.SaveAs: "Ctrl+Shift+S",
    _K.Quit: "Ctrl+Q",
    _K.HelpContents: "F1",
}


def _unique_keys(standard, *usual: str) -> list[QtGui.QKeySequence]:
    """The platform's keys for a standard action plus the usual ones, each once (a key bound
    twice to one action would be ambiguous and fire nothing)."""
    keys = list(QtGui.QKeySequence.keyBindings(standard)) + [QtGui.QKeySequence(k) for k in usual]
    out, seen = [], set()
    for k in keys:
        if not k.isEmpty() and k.toString() not in seen:
            seen.add(k.toString())
            out.append(k)
    return out


class PaneTabs(QtWidgets.QTabWidget):
    """The tabs beside the board; panes added with :meth:`add_scrolled` sit in a scroll area.

    ``indexOf`` and ``setCurrentWidget`` accept the pane itself as well as its scroll area.
    """

    def add_scrolled(self, widget: QtWidgets.QWidget, title: str) -> int:
        area = QtWidgets.QScrollArea(self)
        area.setObjectName(f"scroll_{widget.objectName() or title}")
        area.setFrameShape(QtWidgets.QFrame.NoFrame)
        area.setWidgetResizable(True)
        area.setWidget(widget)
        return self.addTab(area, title)

    def _holder(self, widget: QtWidgets.QWidget) -> QtWidgets.QWidget:
        for i in range(self.count()):
            page = self.widget(i)
            if isinstance(page, QtWidgets.QScrollArea) and page.widget() is widget:
                return page
        return widget

    def indexOf(self, widget: QtWidgets.QWidget) -> int:  # noqa: N802 - Qt's name
        return super().indexOf(self._holder(widget))

    def setCurrentWidget(self, widget: QtWidgets.QWidget) -> None:  # noqa: N802 - Qt's name
        super().setCurrentWidget(self._holder(widget))


class WorkbenchWindow(QtWidgets.QMainWindow):
    """The main window over a :class:`WorkbenchState`.

    Parameters
    ----------
    state : WorkbenchState
        The document and its analyses.
    prompter : Prompter, optional
        Dialogs; tests pass one with scripted answers.
    settings : QSettings, optional
        Where recent files are kept; tests pass a temporary one.
    recovery : bool
        Keep a recovery copy while there are unsaved changes.
    """

    def __init__(
        self,
        state: WorkbenchState,
        *,
        prompter: Prompter | None = None,
        settings: QtCore.QSettings | None = None,
        recovery: bool = True,
        parent: QtWidgets.QWidget | None = None,
    ):
        super().__init__(parent)
        self.setObjectName("workbench")
        self.state = state
        self.prompter = prompter or Prompter()
        self.recent = RecentFiles(settings or QtCore.QSettings())
        self.keeper = RecoveryKeeper(state, parent=self) if recovery else None
        self.setStyleSheet(STYLE_SHEET)

        self._build_central()
        self._build_status_bar()
        self._build_menus()
        state.path_changed.connect(self._on_path_changed)
        state.clean_changed.connect(self._on_clean_changed)
        state.current_changed.connect(self._on_current_changed)
        self._on_path_changed(state.path)
        self._on_clean_changed(state.is_clean)
        self._on_current_changed(state.current_id)
        self._size_to_screen()
        self._fit_splitter()
        from bandsmith.app.window.panes.measurement_pane import install as install_measurement_pane

        install_measurement_pane(self)
        from bandsmith.app.window.panes.shelf_pane import install as install_shelf_pane

        install_shelf_pane(self)
        from bandsmith.app.window.panes.spread_pane import install as install_spread_pane

        install_spread_pane(self)
        from bandsmith.app.window.panes.noise_pane import install as install_noise_pane

        install_noise_pane(self)
        from bandsmith.app.window.panes.chain_pane import install as install_chain_pane

        install_chain_pane(self)
        from bandsmith.app.window.panes.bank_pane import install as install_bank_pane

        install_bank_pane(self)
        from bandsmith.app.window.panes.board_pane import install as install_board_pane

        install_board_pane(self)
        from bandsmith.app.window.panes.burst_pane import install as install_burst_pane

        install_burst_pane(self)

    def _build_central(self) -> None:
        """The target strip above the candidates board and, beside it, the pane tabs (Responses first)."""
        self.target_strip = TargetStrip(self.state, self)
        self.board = CandidatesBoard(self.state, self)
        # The at-a-glance comparison (verdicts and the recommendation) under the target strip.
        self.comparison = ComparisonTable(self.state, self)
        self.comparison.limits_requested.connect(self.show_verdict_limits)
        self.plot_grid = PlotGrid(self.state, self)
        self.panes = PaneTabs(self)
        self.panes.setObjectName("panes")
        self.panes.setDocumentMode(True)
        self.panes.addTab(self.plot_grid, "Responses")
        self.splitter = QtWidgets.QSplitter(QtCore.Qt.Orientation.Horizontal, self)
        self.splitter.addWidget(self.board)
        self.splitter.addWidget(self.panes)
        self.splitter.setStretchFactor(0, 0)
        self.splitter.setStretchFactor(1, 1)
        self.splitter.setChildrenCollapsible(False)
        self.panes.currentChanged.connect(self._on_pane_changed)
        central = QtWidgets.QWidget(self)
        lay = QtWidgets.QVBoxLayout(central)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setSpacing(0)
        lay.addWidget(self.target_strip)
        lay.addWidget(self.comparison)
        lay.addWidget(self.splitter, 1)
        self.setCentralWidget(central)

    def _build_status_bar(self) -> None:
        """The plot cursor's read-out, background jobs, and the state's notices (for 8 s)."""
        self.cursor_label = QtWidgets.QLabel(self)
        self.cursor_label.setObjectName("cursorReadout")
        self.cursor_label.setMinimumWidth(360)
        self.job_status = JobStatus(self)
        self.statusBar().addWidget(self.cursor_label)
        self.statusBar().addPermanentWidget(self.job_status)
        self.plot_grid.cursor_text.connect(self.cursor_label.setText)
        self.state.notice.connect(lambda text: self.statusBar().showMessage(text, 8000))

    # ------------------------------------------------------------------ building
    def _action(self, text: str, name: str, slot, shortcut=None, tip: str = "") -> QtGui.QAction:
        act = QtGui.QAction(text, self)
        act.setObjectName(name)
        if shortcut is not None:
            act.setShortcut(QtGui.QKeySequence(shortcut))
        if tip:
            act.setStatusTip(tip)
            act.setToolTip(tip)
        if shortcut is not None and act.shortcut().isEmpty() and shortcut in _FALLBACK_KEYS:
            act.setShortcut(QtGui.QKeySequence(_FALLBACK_KEYS[shortcut]))
        act.triggered.connect(slot)
        self.addAction(act)
        return act

    def _build_menus(self) -> None:
        K = QtGui.QKeySequence.StandardKey
        bar = self.menuBar()
        m = bar.addMenu("&File")
        self.act_new = self._action("&New session", "actNew", self.new_session, K.New, "Start a new session from the demo target")
        self.act_open = self._action("&Open…", "actOpen", self.open_dialog, K.Open, "Open a session file")
        self.act_save = self._action("&Save", "actSave", self.save, K.Save, "Save the session")
        self.act_save_as = self._action("Save &as…", "actSaveAs", self.save_as, K.SaveAs, "Save the session under another name")
        m.addActions([self.act_new, self.act_open])
        self.recent_menu = m.addMenu("Open &recent")
        self.recent_menu.aboutToShow.connect(self._fill_recent_menu)
        m.addActions([self.act_save, self.act_save_as])
        m.addSeparator()
        ex = m.addMenu("&Export")
        self.act_export_plots = self._action("Plots as image (PNG, SVG)…", "actExportPlots", self.export_plots)
        self.act_export_parts = self._action("Parts list (CSV)…", "actExportParts", lambda: self._export_candidate("parts"))
        self.act_export_response = self._action("Response table (CSV)…", "actExportResponse", lambda: self._export_candidate("response"))
        self.act_export_netlist = self._action("SPICE netlist…", "actExportNetlist", lambda: self._export_candidate("netlist"))
        ex.addActions([self.act_export_plots, self.act_export_parts, self.act_export_response, self.act_export_netlist])
        self.act_report = self._action("&Report (HTML, PDF)…", "actReport", self.write_report, "Ctrl+R", "Write a report of the session")
        m.addAction(self.act_report)
        m.addSeparator()
        self.act_quit = self._action("&Quit", "actQuit", self.close, K.Quit)
        m.addAction(self.act_quit)

        e = bar.addMenu("&Edit")
        stack = self.state.undo_stack
        self.act_undo = stack.createUndoAction(self, "&Undo")
        self.act_undo.setObjectName("actUndo")
        self.act_undo.setShortcuts(_unique_keys(K.Undo, "Ctrl+Z"))
        self.act_redo = stack.createRedoAction(self, "&Redo")
        self.act_redo.setObjectName("actRedo")
        self.act_redo.setShortcuts(_unique_keys(K.Redo, "Ctrl+Shift+Z", "Ctrl+Y"))
        for a in (self.act_undo, self.act_redo):
            self.addAction(a)
        e.addActions([self.act_undo, self.act_redo])
        e.addSeparator()
        add = e.addMenu("&Add candidate")
        from bandsmith.circuits import all_topologies

        for topo in all_topologies():
            act = add.addAction(topo.title)
            act.triggered.connect(lambda _=False, t=topo.id: self.state.add_candidate(t))
        self.act_duplicate = self._action("&Duplicate selected candidate", "actDuplicate", lambda: self._on_current(self.state.duplicate), "Ctrl+D")
        self.act_remove = self._action("Re&move selected candidate", "actRemove", lambda: self._on_current(self.state.remove))
        self.act_redesign = self._action("Re&design selected candidate", "actRedesign", lambda: self._on_current(self.state.redesign))
        e.addActions([self.act_duplicate, self.act_remove, self.act_redesign])
        e.addSeparator()
        self.act_limits = self._action("&Verdict limits…", "actVerdictLimits", self.show_verdict_limits,
                                       tip="Show or change what makes a candidate marginal or not buildable")
        e.addAction(self.act_limits)

        h = bar.addMenu("&Help")
        self.act_help = self._action("Bandsmith &help and cautions", "actHelp", self.show_help, K.HelpContents)
        h.addAction(self.act_help)

    def add_pane(self, title: str, widget: QtWidgets.QWidget) -> int:
        """Add a pane (tolerance spread, noise, …) as a tab beside the plots; returns its index.

        The pane sits in a scroll area, so a wide pane scrolls instead of squeezing the board.
        """
        return self.panes.add_scrolled(widget, title)

    def run_job(self, job: BackgroundJob) -> BackgroundJob:
        """Start long work off the GUI thread with its progress and Cancel in the status bar."""
        self.job_status.watch(job)
        job.start()
        return job

    def _size_to_screen(self) -> None:
        """Open sized to the screen's available area (less the panels and docks), not a fixed size.

        The title bar is not part of the available area's height once the window is placed, so
        its height (the style's, as the frame is not known before the window is shown) is taken
        off.
        """
        screen = self.screen() or QtGui.QGuiApplication.primaryScreen()
        if screen is None:
            self.resize(1280, 800)
            return
        area = screen.availableGeometry()
        title = self.style().pixelMetric(QtWidgets.QStyle.PixelMetric.PM_TitleBarHeight)
        self.resize(area.width(), max(480, area.height() - title))
        self.move(area.topLeft())

    def _fit_splitter(self) -> None:
        # The board shows whole columns only: as many as fit in about half the width (60 % on a
        # wide screen: four columns at 1920 px), at least one, at most all of them; the rest scroll
        # sideways (the comparison table above compares them all at a glance). A pane that needs
        # more room (the stage chain) gets it, the board keeping a quarter of the width.
        self.comparison.set_max_rows(5 if self.height() < 900 else 8)
        share = 0.6 if self.width() >= 1600 else 0.5
        want = self.board.width_for(int(self.width() * share))
        page = self.panes.currentWidget()
        if isinstance(page, QtWidgets.QScrollArea) and page.widget() is not None:
            need = page.widget().minimumSizeHint().width() + page.verticalScrollBar().sizeHint().width() + 8
            if want > self.width() - need:
                want = self.board.width_for(max(self.width() - need, int(self.width() * 0.25)))
        self.splitter.setSizes([want, max(300, self.width() - want)])

    def _on_pane_changed(self, _index: int) -> None:
        if not getattr(self, "_user_split", False):
            self._fit_splitter()

    def resizeEvent(self, event) -> None:  # noqa: N802 - Qt's name
        super().resizeEvent(event)
        if not getattr(self, "_user_split", False):
            self._fit_splitter()

    # ------------------------------------------------------------------ view updates
    def _display_name(self) -> str:
        return Path(self.state.path).name if self.state.path else "Untitled session"

    def _on_path_changed(self, _path: str) -> None:
        self.setWindowTitle(f"{self._display_name()}[*] — Bandsmith")

    def _on_clean_changed(self, clean: bool) -> None:
        self.setWindowModified(not clean)

    def _on_current_changed(self, cid: str) -> None:
        for act in (self.act_export_parts, self.act_export_response, self.act_export_netlist, self.act_duplicate, self.act_remove, self.act_redesign):
            act.setEnabled(bool(cid))

    def _on_current(self, fn) -> None:
        if self.state.current_id:
            fn(self.state.current_id)

    def _fill_recent_menu(self) -> None:
        self.recent_menu.clear()
        paths = self.recent.paths()
        if not paths:
            a = self.recent_menu.addAction("(none yet)")
            a.setEnabled(False)
            return
        for i, p in enumerate(paths, 1):
            a = self.recent_menu.addAction(f"&{i} {p}")
            a.triggered.connect(lambda _=False, path=p: self.open_path(path))
        self.recent_menu.addSeparator()
        self.recent_menu.addAction("Clear list").triggered.connect(self.recent.clear)

    # ------------------------------------------------------------------ sessions
    def _settle_unsaved(self) -> bool:
        """Before the document goes away: True when it may (saved, discarded), False to stay."""
        if self.state.is_clean:
            return True
        answer = self.prompter.ask_unsaved(self, self._display_name())
        if answer == "save":
            return self.save()
        if answer == "discard":
            if self.keeper is not None:
                self.keeper.discard()
            return True
        return False

    def new_session(self) -> None:
        if self._settle_unsaved():
            self.state.replace_document(blank_session(), None)

    def open_dialog(self) -> None:
        if not self._settle_unsaved():
            return
        folder = str(Path(self.state.path).parent) if self.state.path else str(Path.home())
        path = self.prompter.ask_open_path(self, folder)
        if path:
            self.open_path(path, settled=True)

    def open_path(self, path: str, *, settled: bool = False) -> bool:
        """Open a session file; a damaged or newer file gives a message and changes nothing."""
        if not settled and not self._settle_unsaved():
            return False
        try:
            session = load_session(path)
        except SessionError as exc:
            self.prompter.error(self, "Cannot open the session", exc.reason)
            if exc.kind == "missing":
                self.recent.remove(os.path.abspath(path))
            return False
        self.state.replace_document(session, os.path.abspath(path))
        self.recent.add(path)
        return True

    def save(self) -> bool:
        if not self.state.path:
            return self.save_as()
        return self._write(self.state.path)

    def save_as(self) -> bool:
        suggested = self.state.path or str(Path.home() / "bandsmith-session.bandsmith.json")
        path = self.prompter.ask_save_path(self, suggested)
        if not path:
            return False
        return self._write(path)

    def _write(self, path: str) -> bool:
        try:
            save_session(self.state.session, path)
        except (SessionError, InputError) as exc:
            self.prompter.error(self, "Cannot save the session", exc.reason)
            return False
        self.state.mark_saved(os.path.abspath(path))
        self.recent.add(path)
        self.statusBar().showMessage(f"Saved {path}", 5000)
        return True

    def offer_recovery(self) -> bool:
        """Offer the newest copy a crashed run left behind; True when one was restored."""
        copies = left_behind(self.keeper.folder if self.keeper else None)
        if not copies:
            return False
        copy = copies[0]
        answer = self.prompter.ask_restore(self, copy.original, copy.when)
        if answer == "discard":
            copy.discard()
            return False
        if answer != "restore":
            return False
        try:
            session = copy.load()
        except SessionError as exc:
            self.prompter.error(self, "Cannot restore the unsaved work", exc.reason)
            return False
        self.state.replace_document(session, copy.original or None, clean=False)
        copy.discard()
        if self.keeper is not None:
            self.keeper.write_now()
        self.statusBar().showMessage("Restored unsaved work; save it to keep it", 8000)
        return True

    def closeEvent(self, event: QtGui.QCloseEvent) -> None:  # noqa: N802 - Qt's name
        if self._settle_unsaved():
            if self.keeper is not None:
                self.keeper.discard()
            event.accept()
        else:
            event.ignore()

    # ------------------------------------------------------------------ exports, report, help
    @staticmethod
    def _helper(module: str, name: str):
        # Imported on first use: exports, the report and the help page add nothing to start-up.
        return getattr(importlib.import_module(_HELPER_MODULES[module]), name)

    def _stem(self) -> str:
        return Path(self.state.path).name.split(".")[0] if self.state.path else "bandsmith"

    def export_plots(self) -> None:
        fn = self._helper("exporting", "export_plot_image")
        path = self.prompter.ask_save_path(self, str(Path.home() / f"{self._stem()}-plots.png"), _IMAGE_FILTER)
        if not path:
            return
        from bandsmith.common.values import format_value

        t = self.state.session.target
        title = f"{self._display_name()} — target f0 {format_value(t.f0_hz, 'Hz')}, Q {format_value(t.q)}, gain {format_value(t.gain)}"
        scale = None
        if Path(path).suffix.lower() == ".png":
            scales = self._helper("exporting", "PNG_SCALES")
            choice = self.prompter.ask_choice(self, "PNG resolution", "Resolution of the image:", list(scales))
            if choice is None:
                return
            scale = scales[choice]
        self._run_export(lambda: fn(self.plot_grid, path, title=title, scale=scale), path)

    def _export_candidate(self, what: str) -> None:
        cid = self.state.current_id
        if not cid:
            return
        name, filt, suffix = {
            "parts": ("export_parts_csv", _CSV_FILTER, "parts.csv"),
            "response": ("export_response_csv", _CSV_FILTER, "response.csv"),
            "netlist": ("export_netlist", _NETLIST_FILTER, "cir"),
        }[what]
        fn = self._helper("exporting", name)
        sep = "." if suffix == "cir" else "-"
        path = self.prompter.ask_save_path(self, str(Path.home() / f"{self._stem()}-{cid}{sep}{suffix}"), filt)
        if path:
            self._run_export(lambda: fn(self.state.session, cid, path), path)

    def write_report(self) -> None:
        path = self.prompter.ask_save_path(self, str(Path.home() / f"{self._stem()}-report.html"), _REPORT_FILTER)
        if not path:
            return
        if Path(path).suffix.lower() not in (".html", ".htm", ".pdf"):
            self.prompter.error(self, "Report not written", f"A report is written as HTML (.html) or PDF (.pdf); choose one of these types for {Path(path).name}.")
            return
        # Written in the background: progress and Cancel in the status bar, the window stays usable.
        job = self._helper("exporting", "report_job")(self.state.session, path)
        job.finished.connect(lambda _p: self.statusBar().showMessage(f"Wrote {path}", 5000))
        job.failed.connect(lambda text: self.prompter.error(self, "Report not written", text.split(": ", 1)[-1]))
        job.cancelled.connect(lambda: self.statusBar().showMessage("Report cancelled; nothing written", 5000))
        self.report_job = self.run_job(job)

    def _run_export(self, call, path: str) -> None:
        # A report takes a second or two on the GUI thread (its plots are drawn with Qt): say so
        # and show the busy cursor meanwhile.
        self.statusBar().showMessage(f"Writing {Path(path).name} …")
        QtWidgets.QApplication.setOverrideCursor(QtCore.Qt.CursorShape.WaitCursor)
        QtWidgets.QApplication.processEvents(QtCore.QEventLoop.ProcessEventsFlag.ExcludeUserInputEvents)
        error = None
        try:
            call()
        except InputError as exc:
            error = str(exc)
        except OSError as exc:
            error = f"cannot write {path}: {exc.strerror or exc}"
        finally:
            QtWidgets.QApplication.restoreOverrideCursor()
        if error is not None:
            self.statusBar().clearMessage()
            self.prompter.error(self, "Export failed", error)
            return
        self.statusBar().showMessage(f"Wrote {path}", 5000)

    def show_verdict_limits(self) -> QtWidgets.QDialog:
        """Open the verdict limits dialog (non-modal; OK writes the limits as one undoable edit)."""
        from bandsmith.app.window.widgets.verdict_limits_dialog import VerdictLimitsDialog

        dialog = VerdictLimitsDialog(self.state, self)
        dialog.setAttribute(QtCore.Qt.WidgetAttribute.WA_DeleteOnClose)
        dialog.open()
        return dialog

    def show_help(self) -> None:
        self._helper("about", "show_about")(self)
