"""Window benchmarks (run by tests/benchmarks/run.py; absolute numbers, not ratios).

- :func:`gui_replot_median_ms`: median over 30 edits of the time a part edit keeps the window busy,
  on the demo session at 1366×768 with the Responses tab shown. Each edit types a value into a
  required part's field of a candidate column (cycling through the columns) and commits it as
  Enter does (``editingFinished``); the clock runs from just before the commit until

  1. the event loop is idle: the posted events are sent and the pending ones processed, round
     after round, until a round lets a zero-delay timer posted at its start fire and takes under
     0.2 ms (nothing else was waiting; the paint Qt scheduled for the changed plots and column
     happens in these rounds), and
  2. the repaint is done: every plot of the grid has been repainted since the commit (a paint
     event reached its viewport during those rounds, counted by an event filter; a plot that had
     none is repainted now, synchronously, the whole plot, and that time counts too). Every edit
     repaints all six plots in the rounds (the edited candidate has a curve on each), so the
     figure is the edit, the layout and one paint of each plot. (Until 2026-12-05 the job also
     repainted every plot once more after the rounds, an upper bound that painted each plot twice.)

  Between edits the loop is left idle. The job fails (raises) when an edit did not change the
  edited candidate's magnitude curve, so a replot that silently stopped would not pass as fast.
- :func:`gui_startup_s`: from launching ``bandsmith`` (a subprocess, offscreen Qt, the environment of
  a user's shell: :func:`jobs_cli.user_env`) until the window is shown (it prints a marker line to
  stderr, then quits); the median of three runs after a warm-up run.
"""

from __future__ import annotations

import os
import statistics
import subprocess
import tempfile
import time

import numpy as np
from jobs_cli import command, user_env

_EDITS = 30


def _settle(app) -> None:
    """Run the event loop until it is idle: until a round (send the posted events, process the
    pending ones, with a zero-delay timer posted at its start) lets the timer fire and takes under
    0.2 ms, i.e. nothing but the timer was waiting."""
    from PySide6 import QtCore

    for _ in range(100):
        fired = []
        QtCore.QTimer.singleShot(0, lambda fired=fired: fired.append(True))
        t = time.perf_counter()
        app.sendPostedEvents()
        app.processEvents(QtCore.QEventLoop.ProcessEventsFlag.AllEvents)
        if fired and time.perf_counter() - t < 2e-4:
            return


class _PaintWatch:
    """Which of the watched widgets received a paint event (``painted``, cleared by the caller)."""

    def __init__(self, widgets):
        from PySide6 import QtCore

        painted: set = set()

        class _Filter(QtCore.QObject):
            def eventFilter(self, obj, event):  # noqa: N802 - Qt's name
                if event.type() == QtCore.QEvent.Type.Paint:
                    painted.add(obj)
                return False

        self.painted = painted
        self._filter = _Filter()  # kept: an event filter must outlive its use
        for w in widgets:
            w.installEventFilter(self._filter)


def gui_replot_median_ms(size: tuple[int, int] = (1366, 768)) -> float:
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    os.environ.setdefault("BANDSMITH_RECOVERY_DIR", tempfile.mkdtemp(prefix="bandsmith-bench-"))
    from PySide6 import QtCore, QtWidgets

    app = QtWidgets.QApplication.instance() or QtWidgets.QApplication(["bench"])
    from bandsmith.app.window.main import build_window

    settings = QtCore.QSettings(os.path.join(tempfile.mkdtemp(), "s.ini"), QtCore.QSettings.Format.IniFormat)
    window, _ = build_window(None, settings=settings, recovery=False)
    window.resize(*size)
    window.show()
    window.panes.setCurrentWidget(window.plot_grid)
    _settle(app)
    state = window.state
    mag = window.plot_grid.plots["magnitude"]
    plots = list(window.plot_grid.plots.values())
    cols = list(window.board.columns.values())
    watch = _PaintWatch(plot.viewport() for plot in plots)
    times = []
    for i in range(_EDITS):
        col = cols[i % len(cols)]
        ref = next(r for r, f in col.fields.items() if col.topology.component(r).required)
        field = col.fields[ref]
        value = state.session.candidate(col.candidate_id).values[ref] * (1.1 if (i // len(cols)) % 2 == 0 else 1 / 1.1)
        before = np.array(mag.curves[col.candidate_id].yData, copy=True)
        field.edit.setText(f"{value:.6g}")
        watch.painted.clear()
        t0 = time.perf_counter()
        field.edit.editingFinished.emit()  # what Enter in the field does
        _settle(app)
        for plot in plots:
            if plot.viewport() not in watch.painted:
                plot.viewport().repaint()
        times.append(time.perf_counter() - t0)
        after = mag.curves[col.candidate_id].yData
        if after is None or (after.shape == before.shape and np.allclose(after, before)):
            raise RuntimeError(f"edit {i} ({col.candidate_id} {ref} → {value:.6g}) did not change the magnitude curve")
    window.state.mark_saved("")
    window.close()
    return 1e3 * statistics.median(times)


def _seconds_until_shown(env: dict[str, str]) -> float:
    t0 = time.perf_counter()
    proc = subprocess.Popen(command(), env=env, stderr=subprocess.PIPE, stdout=subprocess.DEVNULL, text=True)
    shown = None
    for line in proc.stderr:
        if "window shown" in line:
            shown = time.perf_counter() - t0
            break
    proc.wait(timeout=60)
    if shown is None:
        raise RuntimeError("the window never reported it was shown")
    return shown


def gui_startup_s(runs: int = 3) -> float:
    env = user_env(QT_QPA_PLATFORM="offscreen", BANDSMITH_STARTUP_MARK="1", BANDSMITH_QUIT_AFTER_SHOW="1")
    env.setdefault("BANDSMITH_RECOVERY_DIR", tempfile.mkdtemp(prefix="bandsmith-bench-"))
    _seconds_until_shown(env)  # warm-up: the file cache, and the bytecode an editable install writes once
    return statistics.median(_seconds_until_shown(env) for _ in range(runs))


if __name__ == "__main__":
    print("gui_replot_median_ms", gui_replot_median_ms())
    print("gui_startup_s", gui_startup_s())
