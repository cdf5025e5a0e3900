"""Hostile input in the window: Save of a session holding a lone surrogate shows a message
instead of raising out of its slot (finding 5), and the recovery copy is skipped quietly."""

import pytest

pytest.importorskip("PySide6")

from bandsmith.app.window.demo import demo_session  # noqa: E402
from bandsmith.app.window.recovery import RecoveryKeeper  # noqa: E402
from dataclasses import replace  # noqa: E402

from window_helpers import open_window, ScriptedPrompter  # noqa: E402

pytestmark = pytest.mark.gui


def test_save_of_a_surrogate_shows_a_message(qtbot, tmp_path, monkeypatch):
    target = tmp_path / "s.bandsmith.json"
    # A measured file name read with surrogateescape (Linux: a name that is not UTF-8) is the
    # ordinary way a lone surrogate reaches a session's extras.
    session = replace(demo_session(), extras={"later": {"source": "board\udcff.csv"}})
    prompter = ScriptedPrompter(save_path=[str(target)])
    w = open_window(qtbot, tmp_path, monkeypatch, session, prompter=prompter, show=False)
    assert w.save() is False
    assert prompter.errors and "surrogate" in prompter.errors[-1][1]
    assert not target.exists()
    keeper = RecoveryKeeper(w.state, folder=tmp_path)
    keeper.write_now()  # nothing unsaved or unwritable: returns quietly either way
