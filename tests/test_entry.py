"""The ``bandsmith`` entry point: version, window or command, and a clear exit without a display."""

import os
import subprocess
import sys
import time

import pytest

from bandsmith.app import entry


def test_version_is_printed(capsys):
    assert entry.main(["--version"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("bandsmith ") and out.count("\n") == 1


def test_no_display_is_named():
    problem = entry.display_problem({})
    if not sys.platform.startswith("linux"):
        pytest.skip("the display check applies to Linux desktops")
    assert "DISPLAY" in problem and "WAYLAND_DISPLAY" in problem


def test_a_chosen_platform_is_trusted():
    assert entry.display_problem({"QT_QPA_PLATFORM": "offscreen"}) is None


def test_missing_x11_libraries_name_their_packages(monkeypatch):
    if not sys.platform.startswith("linux"):
        pytest.skip("the X11 check applies to Linux desktops")
    monkeypatch.setattr(entry, "_missing_libraries", lambda names: ["libxcb-cursor0", "libxcb-icccm4"])
    problem = entry.display_problem({"DISPLAY": ":0"})
    assert "apt-get install libxcb-cursor0 libxcb-icccm4" in problem


@pytest.mark.cli
def test_without_a_display_the_command_exits_2_at_once(tmp_path):
    if not sys.platform.startswith("linux"):
        pytest.skip("the display check applies to Linux desktops")
    env = {k: v for k, v in os.environ.items() if k not in ("DISPLAY", "WAYLAND_DISPLAY", "QT_QPA_PLATFORM")}
    env["HOME"] = str(tmp_path)
    t0 = time.monotonic()
    proc = subprocess.run([sys.executable, "-m", "bandsmith.app"], env=env, capture_output=True, text=True, timeout=60)
    elapsed = time.monotonic() - t0
    assert proc.returncode == 2
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("bandsmith: no display")
    assert "Traceback" not in proc.stderr
    assert elapsed < 10  # "within a few seconds": no window is built
