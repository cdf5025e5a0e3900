"""Each candidate column's verdict strip: every shelf model's verdict in words, the chosen model on
the Responses plots, and its headroom.

The models straddle the candidate's required GBW by ±0.1 % with every other margin far above its
comfort factor, so only GBW decides. The curve drawn for the chosen model is checked against the
exact transfer function from bandsmith.solver.ampmodel evaluated here, and the headroom against bandsmith.bench.headroom.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose
from PySide6 import QtCore

from bandsmith.app.window.widgets.amp_overlay import overlay_key
from bandsmith.app.window.verdicts import VerdictBook
from bandsmith.solver.ampmodel import amp_transfer_function
from bandsmith.analysis.analyzer import sweep
from bandsmith.design.candidate import Candidate
from bandsmith.bench.fitcheck import VERDICTS, check_amp
from bandsmith.bench.headroom import headroom
from bandsmith.files.session import CandidateEntry, OpAmpSpec, Session, Target
from bandsmith.bench.shelf import OpAmp, save_shelf
from window_helpers import open_window, screenshot

pytestmark = pytest.mark.gui

ARTIFACTS = Path(__file__).parent / "_artifacts"
MFB = {"R1": 10e3, "R2": 866.0, "R3": 82e3, "C1": 10e-9, "C2": 10e-9}  # the MFB example (core/circuits/mfb.py)


def bench(name, gbw_hz, **over):
    base = dict(
        name=name, gbw_hz=gbw_hz, a0=1e5, slew_v_per_us=1e3, iout_max_ma=500.0, supply_min_v=2.0,
        supply_max_v=40.0, swing_neg_v=0.5, swing_pos_v=0.5, cm_neg_v=0.5, cm_pos_v=0.5,
    )
    base.update(over)
    return OpAmp(**base)


def required_gbw(session, cid):
    """The candidate's required GBW with A0 = 1e5, from the core's own fit check."""
    entry = session.candidate(cid)
    net = Candidate(entry.topology_id, entry.values).netlist
    v = check_amp(net, bench("probe", 1e9), vin_v=session.target.vin_v, tolerances=session.tolerances)
    return v.needs.gbw_hz


@pytest.fixture
def session():
    return Session(
        target=Target(2000.0, 5.0, 4.0, vin_v=0.5, series="exact"),
        candidates=(CandidateEntry("mfb", "mfb", MFB, snap=None),),
        opamp=OpAmpSpec(gbw_hz=1e6),
    )


@pytest.fixture
def window(qtbot, tmp_path, monkeypatch, session):
    need = required_gbw(session, "mfb")
    shelf = tmp_path / "cfg" / "shelf.json"
    save_shelf((bench("just below", need * 0.999), bench("just above", need * 1.001), bench("plenty", 100 * need)), shelf)
    monkeypatch.setenv("BANDSMITH_SHELF", str(shelf))
    w = open_window(qtbot, tmp_path, monkeypatch, session, size=(1280, 860))
    w.need = need
    return w


def strip(w, cid="mfb"):
    return w.board.columns[cid].verdict_strip


def wait_verdicts(qtbot, w, cid="mfb"):
    book = VerdictBook.of(w.state)
    qtbot.waitUntil(lambda: book.is_current(cid) and all(r.verdict for r in strip(w, cid).rows), timeout=5000)


def test_every_model_reads_in_words(window, qtbot):
    wait_verdicts(qtbot, window)
    s = strip(window)
    assert s.isVisible()
    assert [r.amp_name for r in s.rows] == ["just below", "just above", "plenty"]
    for r in s.rows:
        assert r.verdict in VERDICTS
        assert r.text().split("  ")[0].split(" ", 1)[1] == r.verdict  # the word itself is on screen
        assert r.amp_name in r.toolTip() and "margins:" in r.toolTip()


def test_gbw_just_below_and_just_above_the_need(window, qtbot):
    wait_verdicts(qtbot, window)
    s = strip(window)
    assert s.row_text("just below").startswith("✗ does not fit")
    assert s.row("just above").verdict in ("fits", "marginal")
    assert s.row_text("just above").startswith("◐ marginal")  # 1.001× is below the 1.5× comfort factor
    assert s.row_text("plenty").startswith("✓ fits")
    assert "below the" in s.row("just below").toolTip()  # the reason says why


def test_the_strip_follows_an_edit_after_a_pause(window, qtbot):
    wait_verdicts(qtbot, window)
    book = VerdictBook.of(window.state)
    window.state.set_part("mfb", "R2", MFB["R2"] / 2)  # f0 up by about 1.4×, Q too: about 1.9× the GBW is needed
    assert not book.is_current("mfb")  # nothing computed during the edit itself
    wait_verdicts(qtbot, window)
    assert strip(window).row_text("just above").startswith("✗ does not fit")


def test_choosing_overlays_the_response_with_that_op_amp(window, qtbot):
    wait_verdicts(qtbot, window)
    s = strip(window)
    row = s.row("just below")
    qtbot.mouseClick(row, QtCore.Qt.MouseButton.LeftButton)
    book = VerdictBook.of(window.state)
    assert book.chosen("mfb") == "just below"
    mag = window.plot_grid.plots["magnitude"].overlays[overlay_key("mfb")]
    ph = window.plot_grid.plots["phase"].overlays[overlay_key("mfb")]
    f = np.asarray(mag.xData)
    assert_allclose(f, window.state.result("mfb").response.f_hz)
    # The exact rational response with this model (bandsmith.solver.ampmodel), evaluated here.
    amp = s.row("just below").amp_name
    model = next(a for a in book.amps() if a.name == amp)
    h = amp_transfer_function(Candidate("mfb", MFB).netlist, gbw_hz=model.gbw_hz, a0=model.a0, f_p2_hz=model.f_p2_hz).at_f(f)[0]
    assert_allclose(np.asarray(mag.yData), 20 * np.log10(np.abs(h)), rtol=1e-9, atol=1e-9)
    assert_allclose(np.asarray(ph.yData), sweep(amp_transfer_function(Candidate("mfb", MFB).netlist, gbw_hz=model.gbw_hz, a0=model.a0), f).phase_deg, atol=1e-7)
    # Behind the candidate's own curve (drawn with the session's 1 MHz op-amp), wider than it.
    own = window.plot_grid.plots["magnitude"].curves["mfb"]
    assert mag.zValue() < own.zValue() and mag.opts["pen"].widthF() > own.opts["pen"].widthF()
    assert "just below" in window.plot_grid.legend.note.text() and window.plot_grid.legend.note.isVisible()
    assert row.chosen and "▸" in row.label.text()
    # Clicking it again takes it off the plots.
    qtbot.mouseClick(row, QtCore.Qt.MouseButton.LeftButton)
    assert book.chosen("mfb") is None
    assert overlay_key("mfb") not in window.plot_grid.plots["magnitude"].overlays
    assert not window.plot_grid.legend.note.isVisible()


def test_headroom_of_the_chosen_one(window, qtbot, session):
    wait_verdicts(qtbot, window)
    s = strip(window)
    assert not s.headroom.isVisible()
    qtbot.mouseClick(s.row("plenty"), QtCore.Qt.MouseButton.LeftButton)
    assert s.headroom.isVisible()
    model = next(a for a in VerdictBook.of(window.state).amps() if a.name == "plenty")
    room = headroom(Candidate("mfb", MFB).netlist, vin_v=0.5, supply_v=15.0, amp=model)
    text = s.headroom_text()
    assert f"node {room.limiting_node} limits first" in text
    from bandsmith.common.values import format_value

    assert format_value(room.max_vin_v, "V", digits=3) in text
    assert "✓" in text  # 0.5 V fits


def test_choosing_in_the_pane_shows_in_the_column_and_on_the_plots(window, qtbot):
    wait_verdicts(qtbot, window)
    window.shelf_pane.choose("mfb", "plenty")
    assert strip(window).row("plenty").chosen
    assert overlay_key("mfb") in window.plot_grid.plots["phase"].overlays
    # and a strip click shows in the pane
    qtbot.mouseClick(strip(window).row("just above"), QtCore.Qt.MouseButton.LeftButton)
    assert "just above" in window.shelf_pane.detail_title.text()


def test_switched_off_or_empty_shelf_hides_the_strip(window, qtbot):
    wait_verdicts(qtbot, window)
    window.state.set_enabled("mfb", False)
    assert not strip(window).isVisible()
    window.state.set_enabled("mfb", True)
    VerdictBook.of(window.state).set_shelf(())
    assert not strip(window).isVisible()


def test_screenshot_of_a_column_with_its_strip(qtbot, tmp_path, monkeypatch):
    """The demo session with the shipped generic models: a column, and the window, looked at."""
    monkeypatch.setenv("BANDSMITH_SHELF", str(tmp_path / "none" / "shelf.json"))  # no file: the archetypes
    w = open_window(qtbot, tmp_path, monkeypatch, size=(1600, 1000))
    cid = next(iter(w.board.columns))
    wait_verdicts(qtbot, w, cid)
    s = strip(w, cid)
    qtbot.mouseClick(s.rows[1], QtCore.Qt.MouseButton.LeftButton)
    qtbot.wait(50)
    ARTIFACTS.mkdir(exist_ok=True)
    col = w.board.columns[cid]
    screenshot(col, ARTIFACTS / "verdict_strip_column.png", regions=(s, *s.rows), labels=(col.title, col.need_gbw))
    screenshot(w, ARTIFACTS / "verdict_strip_window.png", regions=(col, s), labels=(col.title, col.need_gbw))
    w.resize(1280, 800)  # the window's own size
    qtbot.wait(50)
    screenshot(w, ARTIFACTS / "verdict_strip_window_1280.png", regions=(col,), labels=(col.title, col.need_gbw))
    for r in s.rows:  # nothing clipped: each line as tall as its wrapped text needs
        assert r.label.height() >= r.label.heightForWidth(r.label.width())
        assert r.mapTo(col, r.rect().topRight()).x() <= col.contentsRect().right()
    assert s.headroom.height() >= s.headroom.heightForWidth(s.headroom.width())
