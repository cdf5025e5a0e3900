"""The filter-bank pane: design a third-octave bank from the form (off the GUI thread), its summary,
plot and table, kept in the session (undo), and a session keeping a bank shown on open. The
numbers shown are checked against the core's (``bandsmith.filter_bank``) and the IEC 61260-1:2014
nominal labels."""

import pytest

import bandsmith
from bandsmith.app.window.demo import demo_session
from bandsmith.app.window.panes.bank_pane import BankPane
from bandsmith.app.window.state import WorkbenchState
from bandsmith.bank.bank_session import EXTRAS_KEY
from window_helpers import open_window, show_widget

pytestmark = pytest.mark.gui
WAIT_MS = 30_000


def make_pane(qtbot, state):
    return show_widget(qtbot, BankPane(state), (1100, 700))


def test_design_from_the_form_keeps_the_bank(qtbot):
    state = WorkbenchState(demo_session())
    pane = make_pane(qtbot, state)
    assert pane.shown is None
    pane.fraction_spin.setValue(3)
    pane.from_edit.setText("100")
    pane.to_edit.setText("1k")
    pane.series_combo.setCurrentIndex(pane.series_combo.findData("E96"))
    pane.circuit_combo.setCurrentIndex(pane.circuit_combo.findData("mfb"))
    pane.design()
    qtbot.waitUntil(lambda: EXTRAS_KEY in state.session.extras, timeout=WAIT_MS)
    out = pane.shown
    ref = bandsmith.filter_bank(octave_fraction=3, from_hz=100, to_hz="1k", series="E96", circuit="mfb").to_json()
    assert [c["label_hz"] for c in out["channels"]] == [100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000]
    assert [c["chosen"] for c in out["channels"]] == [c["chosen"] for c in ref["channels"]]
    assert pane.table.rowCount() == 11 and pane.table.item(0, 1).text() == "100 Hz"
    assert f"distinct values: {ref['distinct_values']}" in pane.summary.text()
    state.undo_stack.undo()
    assert EXTRAS_KEY not in state.session.extras
    assert pane.shown is None


def test_bad_input_is_said(qtbot):
    pane = make_pane(qtbot, WorkbenchState(demo_session()))
    pane.mode_combo.setCurrentIndex(pane.mode_combo.findData("list"))
    pane.centres_edit.setText("1k, fast")
    pane.design()
    qtbot.waitUntil(lambda: pane.form_error.text() != "", timeout=WAIT_MS)
    assert "centres" in pane.form_error.text()


def test_a_session_keeping_a_bank_shows_it(qtbot):
    report = bandsmith.filter_bank(octave_fraction=1, from_hz=63, to_hz="8k", circuit="mfb", series="E96")
    pane = make_pane(qtbot, WorkbenchState(report.to_session()))
    assert pane.table.rowCount() == 8
    assert pane.shown["distinct_values"] == report.to_json()["distinct_values"]


def test_the_window_has_the_pane(qtbot, tmp_path, monkeypatch):
    win = open_window(qtbot, tmp_path, monkeypatch, show=False, recovery=False)
    titles = [win.panes.tabText(i) for i in range(win.panes.count())]
    assert "Filter bank" in titles and win.bank_pane.shown is None
