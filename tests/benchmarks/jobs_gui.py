"""Window benchmarks (run by tests/benchmarks/run.py; absolute numbers, not ratios).

- :func:`gui_replot_median_ms`: median over 30 edits of the time from the user's edit (a part value
  committed in a candidate column) until every plot holds the new data (the curves' ``setData``
  done); the repaint that follows is not included.
- :func:`gui_startup_s`: from launching ``bandsmith`` (a subprocess, offscreen Qt) until the window
  is shown (it prints a marker line to stderr, then quits).
"""

from __future__ import annotations

import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time

_EDITS = 30


def gui_replot_median_ms() -> float:
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    os.environ.setdefault("BANDSMITH_RECOVERY_DIR", tempfile.mkdtemp(prefix="bandsmith-bench-"))
    from PySide6 import QtCore, QtWidgets

    app = QtWidgets.QApplication.instance() or QtWidgets.QApplication(["bench"])
    from bandsmith.app.window.main import build_window

    settings = QtCore.QSettings(os.path.join(tempfile.mkdtemp(), "s.ini"), QtCore.QSettings.Format.IniFormat)
    window, _ = build_window(None, settings=settings, recovery=False)
    window.resize(1280, 800)
    window.show()
    app.processEvents()
    state = window.state
    mag = window.plot_grid.plots["magnitude"]
    cols = list(window.board.columns.values())
    times = []
    for i in range(_EDITS):
        col = cols[i % len(cols)]
        ref = next(r for r, f in col.fields.items() if col.topology.component(r).required)
        field = col.fields[ref]
        value = state.session.candidate(col.candidate_id).values[ref] * (1.1 if i % 2 == 0 else 1 / 1.1)
        field.edit.setText(f"{value:.6g}")
        t0 = time.perf_counter()
        field.edit.editingFinished.emit()  # what Enter in the field does
        curve = mag.curves[col.candidate_id]
        assert curve.yData is not None
        times.append(time.perf_counter() - t0)
        app.processEvents()  # let the repaint happen between edits, as it would for a user
    window.state.mark_saved("")
    window.close()
    return 1e3 * statistics.median(times)


def _command() -> list[str]:
    """The installed ``bandsmith`` command, or the same entry point through this interpreter."""
    exe = shutil.which("bandsmith")
    return [exe] if exe else [sys.executable, "-m", "bandsmith.app"]


def gui_startup_s() -> float:
    env = dict(os.environ, QT_QPA_PLATFORM="offscreen", BANDSMITH_STARTUP_MARK="1", BANDSMITH_QUIT_AFTER_SHOW="1")
    env.setdefault("BANDSMITH_RECOVERY_DIR", tempfile.mkdtemp(prefix="bandsmith-bench-"))
    runs = []
    for _ in range(3):
        t0 = time.perf_counter()
        proc = subprocess.Popen(_command(), env=env, stderr=subprocess.PIPE, stdout=subprocess.DEVNULL, text=True)
        shown = None
        for line in proc.stderr:
            if "window shown" in line:
                shown = time.perf_counter() - t0
                break
        proc.wait(timeout=60)
        if shown is None:
            raise RuntimeError("the window never reported it was shown")
        runs.append(shown)
    return statistics.median(runs)


if __name__ == "__main__":
    print("gui_replot_median_ms", gui_replot_median_ms())
    print("gui_startup_s", gui_startup_s())
