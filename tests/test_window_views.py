"""The window as a whole: screenshots at two sizes, background jobs, start-up from the command."""

import os
import subprocess
import sys
import time
from pathlib import Path

import pytest
from PySide6 import QtCore

from bandsmith.app.window.background import BackgroundJob
from bandsmith.app.window.main import STARTUP_MARK
from window_helpers import assert_text_shown, open_window, screenshot

pytestmark = pytest.mark.gui

ARTIFACTS = Path(__file__).parent / "_artifacts"


@pytest.fixture
def window(qtbot, tmp_path, monkeypatch):
    return open_window(qtbot, tmp_path, monkeypatch, show=False)


@pytest.mark.parametrize("size", [(1280, 800), (1920, 1080)])
def test_screenshot_of_the_demo_session(window, qtbot, size):
    window.resize(*size)
    window.show()
    qtbot.waitExposed(window)
    qtbot.wait(50)
    ARTIFACTS.mkdir(exist_ok=True)
    out = ARTIFACTS / f"window_{size[0]}x{size[1]}.png"
    plots = window.plot_grid.plots
    first = next(iter(window.board.columns.values()))  # the board scrolls: the first column shows
    image = screenshot(window, out, regions=(plots["magnitude"], first), labels=(first.title,))
    assert image.width() == size[0] and image.height() == size[1]
    # Every column's title and needs are on screen at this size (not squeezed to nothing).
    for col in window.board.columns.values():
        assert col.need_gbw.text().startswith(("GBW", "—"))
        assert_text_shown(col.need_gbw)
        assert col.need_gbw.width() >= col.need_gbw.sizeHint().width() - 2
    # Six plots beside the board under the comparison table (five rows on a screen under 900 px):
    # each keeps room for its axes, ticks and a readable curve.
    for plot in window.plot_grid.plots.values():
        assert plot.width() >= 220 and plot.height() >= 150


def test_background_job_reports_progress_and_result(qtbot, window):
    def work(progress, cancelled):
        for i in range(5):
            progress((i + 1) / 5)
        return 42

    job = BackgroundJob(work, "test job")
    seen = []
    job.progress.connect(seen.append)
    with qtbot.waitSignal(job.finished, timeout=5000) as blocker:
        window.run_job(job)
    assert blocker.args == [42]
    assert seen[-1] == pytest.approx(1.0)
    qtbot.waitUntil(lambda: not window.job_status.isVisible() or window.job_status.job is None)


def test_background_job_can_be_cancelled(qtbot, window):
    started = []

    def work(progress, cancelled):
        started.append(True)
        while not cancelled():
            time.sleep(0.005)
        return None

    job = BackgroundJob(work, "long job")
    window.show()
    window.run_job(job)
    qtbot.waitUntil(lambda: bool(started), timeout=5000)
    assert window.job_status.isVisible()
    with qtbot.waitSignal(job.cancelled, timeout=5000):
        qtbot.mouseClick(window.job_status.cancel_button, QtCore.Qt.MouseButton.LeftButton)
    assert window.job_status.job is None


def test_background_job_failure_is_reported(qtbot):
    def work(progress, cancelled):
        raise ValueError("bad trial")

    job = BackgroundJob(work)
    with qtbot.waitSignal(job.failed, timeout=5000) as blocker:
        job.start()
    assert "bad trial" in blocker.args[0]


def test_help_key_and_shortcuts(window):
    assert window.act_help.shortcut().toString() == "F1"
    assert window.act_save.shortcut().toString() == "Ctrl+S"
    assert window.act_save_as.shortcut().toString() == "Ctrl+Shift+S"
    assert window.act_open.shortcut().toString() == "Ctrl+O"
    assert window.act_new.shortcut().toString() == "Ctrl+N"
    assert window.act_quit.shortcut().toString() == "Ctrl+Q"


def test_tooltips_name_units(window):
    strip = window.target_strip
    assert "Hz" in strip.f0.edit.toolTip()
    assert "V/V" in strip.gain.edit.toolTip()
    assert "Hz" in strip.gbw.edit.toolTip()
    col = next(iter(window.board.columns.values()))
    tips = [f.edit.toolTip() for f in col.fields.values()]
    assert all(("ohm" in t) or ("farad" in t) or ("henry" in t) for t in tips)


@pytest.mark.cli
def test_bandsmith_command_shows_the_window(tmp_path):
    env = dict(
        os.environ,
        QT_QPA_PLATFORM="offscreen",
        BANDSMITH_STARTUP_MARK="1",
        BANDSMITH_QUIT_AFTER_SHOW="1",
        BANDSMITH_RECOVERY_DIR=str(tmp_path),
        XDG_CONFIG_HOME=str(tmp_path),
        HOME=str(tmp_path),
    )
    proc = subprocess.run([sys.executable, "-m", "bandsmith.app"], env=env, capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert STARTUP_MARK in proc.stderr
