"""Defects a new user hit in the window and the report (issue 16): each checked by what a user sees.

Sources are named beside the checks; "common practice, no source" where the rule is the trade's.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from cli_helpers import run_installed

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "resources" / "demo_session.bandsmith.json"


# --------------------------------------------------------------------------- stderr of `report`


def test_size_hint_message_dropped_other_messages_kept(qapp, qtlog):
    # Qt's message handler (QtCore.qInstallMessageHandler, Qt 6 docs): only the one message is
    # dropped, the others reach the handler installed before (here pytest-qt's, read by qtlog).
    from PySide6 import QtCore

    from bandsmith.app.plots.render import quiet_size_hints

    with quiet_size_hints():
        QtCore.qWarning("This plugin does not support propagateSizeHints()")
        QtCore.qWarning("a message that must stay")
    seen = [r.message for r in qtlog.records]
    assert not any("propagateSizeHints" in m for m in seen)
    assert "a message that must stay" in seen


@pytest.mark.cli
@pytest.mark.parametrize("suffix", [".pdf", ".html"])
def test_successful_report_prints_nothing_on_stderr(tmp_path, suffix):
    # A successful command is silent on stderr (common practice, no source).
    out = tmp_path / f"demo{suffix}"
    r = run_installed(["report", DEMO, "-o", out], cwd=tmp_path)
    assert r.returncode == 0, r.stderr
    assert r.stderr == ""
    assert out.exists()
