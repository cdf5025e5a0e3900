"""Driving the workbench as a user: typing values, switches, undo/redo, the target, the needs flag."""

import numpy as np
import pytest
from numpy.testing import assert_allclose
from PySide6 import QtCore

from window_helpers import drawn_fraction, open_window, screenshot

pytestmark = pytest.mark.gui


@pytest.fixture
def window(qtbot, tmp_path, monkeypatch):
    return open_window(qtbot, tmp_path, monkeypatch)


def _column(window, index=0):
    cid = window.state.session.candidates[index].id
    return window.board.columns[cid]


def _first_resistor(col):
    return next(r for r, f in col.fields.items() if f.unit == "Ω" and col.topology.component(r).required)


def _type(qtbot, edit, text):
    edit.setFocus()
    edit.selectAll()
    for ch in text:
        if ch.isascii():
            qtbot.keyClicks(edit, ch)
        else:  # QTest types ASCII keys only; a user's Ω arrives as text input
            edit.insert(ch)
    qtbot.keyClick(edit, QtCore.Qt.Key.Key_Return)


def _magnitude(window, cid):
    return window.plot_grid.plots["magnitude"].curves[cid].yData.copy()


@pytest.mark.parametrize(
    "text, ohms",
    [
        ("4k7", 4700.0),  # IEC 60062 RKM code
        ("2.2k", 2200.0),  # SI prefix
        ("1.5e4", 15000.0),  # plain exponent
        ("6800", 6800.0),  # plain number
        ("3.3 kΩ", 3300.0),  # with its unit
    ],
)
def test_typed_value_in_any_notation_replots(window, qtbot, text, ohms):
    col = _column(window)
    cid = col.candidate_id
    window.state.set_snap(cid, None)  # exact, so the typed value is kept as typed
    ref = _first_resistor(col)
    before = _magnitude(window, cid)
    with qtbot.waitSignal(window.state.analyses_changed, timeout=2000):
        _type(qtbot, col.fields[ref].edit, text)
    assert_allclose(window.state.session.candidate(cid).values[ref], ohms)
    after = _magnitude(window, cid)
    assert not np.allclose(before, after)
    assert_allclose(after, window.state.results[cid].response.magnitude_db)


def test_invalid_value_shows_reason_and_keeps_last_good_design(window, qtbot):
    col = _column(window)
    cid = col.candidate_id
    ref = _first_resistor(col)
    session = window.state.session
    before = _magnitude(window, cid)
    with qtbot.assertNotEmitted(window.state.analyses_changed):
        _type(qtbot, col.fields[ref].edit, "4x7")
    msg = col.fields[ref].error_text
    assert "not a value" in msg and "4k7" in msg  # names the reason and how to write one
    assert window.state.session is session
    assert_allclose(_magnitude(window, cid), before)
    with qtbot.assertNotEmitted(window.state.analyses_changed):
        _type(qtbot, col.fields[ref].edit, "-10")
    assert "greater than zero" in col.fields[ref].error_text
    # A good value clears the message.
    with qtbot.waitSignal(window.state.analyses_changed):
        _type(qtbot, col.fields[ref].edit, "12k")
    assert col.fields[ref].error_text == ""


def test_switch_candidate_off_and_on(window, qtbot):
    col = _column(window)
    cid = col.candidate_id
    mag = window.plot_grid.plots["magnitude"]
    assert cid in mag.curves
    with qtbot.waitSignal(window.state.analyses_changed):
        qtbot.mouseClick(col.active, QtCore.Qt.MouseButton.LeftButton, pos=QtCore.QPoint(8, col.active.height() // 2))
    assert cid not in mag.curves
    assert cid not in window.plot_grid.plots["step"].curves
    assert "switched off" in col.figures.text()
    with qtbot.waitSignal(window.state.analyses_changed):
        qtbot.mouseClick(col.active, QtCore.Qt.MouseButton.LeftButton, pos=QtCore.QPoint(8, col.active.height() // 2))
    assert cid in mag.curves


def test_undo_redo_from_the_menu_actions(window, qtbot):
    col = _column(window)
    cid = col.candidate_id
    ref = _first_resistor(col)
    old = window.state.session.candidate(cid).values[ref]
    window.state.set_snap(cid, None)
    with qtbot.waitSignal(window.state.analyses_changed):
        _type(qtbot, col.fields[ref].edit, "12k")
    assert window.isWindowModified()
    window.act_undo.trigger()
    assert_allclose(window.state.session.candidate(cid).values[ref], old)
    assert col.fields[ref].edit.text().startswith("12") is False
    window.act_redo.trigger()
    assert_allclose(window.state.session.candidate(cid).values[ref], 12e3)
    assert col.fields[ref].edit.text() == "12 kΩ"
    assert "Ctrl+Z" in [s.toString() for s in window.act_undo.shortcuts()]
    assert "Ctrl+Shift+Z" in [s.toString() for s in window.act_redo.shortcuts()]


def test_target_field_accepts_notation_and_explains_errors(window, qtbot):
    strip = window.target_strip
    with qtbot.waitSignal(window.state.session_changed):
        _type(qtbot, strip.f0.edit, "2k5")
    assert_allclose(window.state.session.target.f0_hz, 2500.0)
    with qtbot.assertNotEmitted(window.state.session_changed):
        _type(qtbot, strip.f0.edit, "fast")
    assert "not a value" in strip.f0.error_text
    assert_allclose(window.state.session.target.f0_hz, 2500.0)
    window.act_undo.trigger()
    assert window.state.session.target.f0_hz != 2500.0


def test_bandwidth_mode_sets_q(window, qtbot):
    strip = window.target_strip
    strip.q_mode.setCurrentIndex(1)
    f0 = window.state.session.target.f0_hz
    with qtbot.waitSignal(window.state.session_changed):
        _type(qtbot, strip.bw.edit, format(f0 / 4.0, ".6g"))
    assert_allclose(window.state.session.target.q, 4.0)  # Q = f0 / bandwidth (definition)


def test_gbw_below_need_is_flagged(window, qtbot):
    col = _column(window)
    need = window.state.results[col.candidate_id].analysis.requirements.gbw_hz
    with qtbot.waitSignal(window.state.analyses_changed):
        _type(qtbot, window.target_strip.gbw.edit, format(need / 10.0, ".4g"))
    assert col.need_flag_is_bad
    assert "below the need" in col.need_flag.text()
    with qtbot.waitSignal(window.state.analyses_changed):
        _type(qtbot, window.target_strip.gbw.edit, format(need * 10.0, ".4g"))
    assert not col.need_flag_is_bad
    assert "GBW ≥" in col.need_gbw.text()


def test_plots_have_labelled_axes(window):
    for key, plot in window.plot_grid.plots.items():
        item = plot.getPlotItem()
        for side in ("bottom", "left"):
            text = item.getAxis(side).labelText
            assert text, f"{key} {side} axis has no label"
    assert "Hz" in window.plot_grid.plots["magnitude"].getPlotItem().getAxis("bottom").labelText
    assert "dB" in window.plot_grid.plots["magnitude"].getPlotItem().getAxis("left").labelText


def test_cursor_readout(window, qtbot):
    plot = window.plot_grid.plots["magnitude"]
    vb = plot.getPlotItem().getViewBox()
    centre = vb.mapViewToScene(vb.viewRect().center())
    with qtbot.waitSignal(plot.cursor_text) as blocker:
        plot.scene().sigMouseMoved.emit(centre)
    assert "Hz" in blocker.args[0] and "dB" in blocker.args[0]
    assert window.cursor_label.text() == blocker.args[0]


def test_add_candidate_from_the_board(window, qtbot):
    n = len(window.state.session.candidates)
    with qtbot.waitSignal(window.state.session_changed):
        window.board.add_button.menu().actions()[0].trigger()
    assert len(window.state.session.candidates) == n + 1
    assert len(window.board.columns) == n + 1


def test_duplicate_and_pin_buttons(window, qtbot):
    col = _column(window)
    n = len(window.state.session.candidates)
    with qtbot.waitSignal(window.state.session_changed):
        qtbot.mouseClick(col.dup, QtCore.Qt.MouseButton.LeftButton)
    assert len(window.board.columns) == n + 1
    with qtbot.waitSignal(window.state.session_changed):
        qtbot.mouseClick(col.pin, QtCore.Qt.MouseButton.LeftButton)
    assert window.state.session.candidate(col.candidate_id).pinned


def test_pole_zero_plot_names_the_poles_outside_its_view(window, qtbot):
    # The demo's 3 MHz op-amp adds a real pole far from the 5.6 kHz band (an op-amp pole lies near
    # −GBW times the feedback factor; common practice, no source): the note names it per candidate.
    plot = window.plot_grid.plots["pole_zero"]
    text = plot.far_note.toPlainText()
    assert plot.far_note.isVisible() and text.startswith("outside the view")
    for cid, res in window.state.results.items():
        far = max(abs(p) for p in res.poles_hz)
        assert far > 100 * window.state.session.target.f0_hz
        assert f"{cid} pole" in text
    from pathlib import Path

    out = Path(__file__).resolve().parent / "_artifacts"
    out.mkdir(exist_ok=True)
    image = screenshot(plot, out / "pole_zero_note.png")
    # the note is drawn where it stands: its box in the picture holds text, not background only
    box = plot.mapFromScene(plot.far_note.sceneBoundingRect()).boundingRect().intersected(image.rect())
    assert drawn_fraction(image, box) > 0.02, drawn_fraction(image, box)
    # zoomed out far enough, nothing is outside and the note goes
    plot.getPlotItem().getViewBox().setRange(xRange=(-1e9, 1e9), yRange=(-1e9, 1e9), padding=0)
    assert plot.far_note.toPlainText() == "" and not plot.far_note.isVisible()


def test_an_export_shows_busy_then_what_it_wrote(window, tmp_path):
    from PySide6 import QtWidgets

    seen = {}

    def slow_write():
        seen["cursor"] = QtWidgets.QApplication.overrideCursor()
        seen["message"] = window.statusBar().currentMessage()

    window._run_export(slow_write, str(tmp_path / "report.html"))
    assert seen["cursor"] is not None and seen["cursor"].shape() == QtCore.Qt.CursorShape.WaitCursor
    assert seen["message"].startswith("Writing report.html")
    assert QtWidgets.QApplication.overrideCursor() is None
    assert window.statusBar().currentMessage().startswith("Wrote ")

    def failing():
        raise OSError(28, "No space left on device")

    window._run_export(failing, str(tmp_path / "report.html"))
    assert QtWidgets.QApplication.overrideCursor() is None
    assert window.prompter.errors and "No space left" in window.prompter.errors[-1][1]
