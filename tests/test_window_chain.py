"""The stage-chain pane: build a chain from the form (off the GUI thread), its stages and plots,
change a stage's circuit, keep it in the session (undo, save and reopen), a chain that cannot be
built, exports, and a screenshot of the pane."""

import math
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose
from PySide6 import QtCore

from bandsmith.app.window.panes.chain_pane import EXTRAS_KEY
from bandsmith.app.window.demo import demo_session
from bandsmith.app.window.state import WorkbenchState
from bandsmith.chain.cascade import chains_in
from bandsmith.files.session import load_session, save_session
from bandpass_reference import reference_db

from window_helpers import chain_pane, open_window, screenshot, ScriptedPrompter

pytestmark = pytest.mark.gui

ARTIFACTS = Path(__file__).parent / "_artifacts"
WAIT_MS = 30_000


@pytest.fixture
def state():
    return WorkbenchState(demo_session())


def make_pane(qtbot, state, **kw):
    return chain_pane(qtbot, state, WAIT_MS, **kw)


@pytest.fixture
def pane(qtbot, state):
    return make_pane(qtbot, state)


def type_into(field, text):
    """As a user does: type the text and press Enter (editingFinished)."""
    field.edit.setFocus()
    field.edit.selectAll()
    field.edit.setText(text)
    field.edit.editingFinished.emit()


def fill_form(pane, *, response="butterworth", order=4, f0="10k", bw="3k", gain="2", series="E24", circuit="auto", ripple=None):
    pane.response_combo.setCurrentIndex(pane.response_combo.findData(response))
    pane.order_spin.setValue(order)
    pane.band_mode.setCurrentIndex(pane.band_mode.findData("centre"))
    type_into(pane.band_a, f0)
    type_into(pane.band_b, bw)
    type_into(pane.gain_field, gain)
    if ripple is not None:
        type_into(pane.ripple_field, ripple)
    pane.series_combo.setCurrentIndex(pane.series_combo.findData(series))
    pane.circuit_combo.setCurrentIndex(pane.circuit_combo.findData(circuit))


def build(qtbot, pane):
    qtbot.mouseClick(pane.btn_build, QtCore.Qt.MouseButton.LeftButton)
    assert pane.busy  # the design runs off the GUI thread
    qtbot.waitUntil(lambda: not pane.busy, timeout=WAIT_MS)


def band_edges(f0, bw):
    """Edges with f_low·f_high = f0² and f_high − f_low = bw (arithmetic, no project code)."""
    lo = -bw / 2 + math.sqrt(bw * bw / 4 + f0 * f0)
    return lo, lo + bw


def test_a_new_session_shows_no_chain_and_says_how_to_build_one(pane, state):
    assert EXTRAS_KEY not in state.session.extras
    assert pane.shown is None
    assert pane.stage_table.rowCount() == 0
    assert "Build chain" in pane.summary.text()
    assert not pane.btn_netlist.isEnabled() and not pane.btn_parts.isEnabled()


def test_build_from_the_form_lists_the_stages_and_plots_them(qtbot, pane, state):
    fill_form(pane, order=4, f0="10k", bw="3k", gain="2", series="exact")
    build(qtbot, pane)
    # The chain is kept in the session, as bandsmith.chain.cascade defines it.
    (chain,) = chains_in(state.session)
    assert chain.id == "chain-1" and len(chain.stages) == 4
    lo, hi = band_edges(10e3, 3e3)
    assert_allclose([chain.settings.f_low_hz, chain.settings.f_high_hz], [lo, hi], rtol=1e-12)
    # One row per stage, with its circuit and parts.
    assert pane.stage_table.rowCount() == 4
    for k, st in enumerate(chain.stages, start=1):
        assert pane.stage_combo(k).currentData() == st.topology_id
        parts = pane.stage_table.item(k - 1, 7).text()
        for ref in st.values:
            if st.values[ref] > 0:
                assert ref in parts
    # The whole chain as drawn matches scipy.signal's Butterworth band-pass of the same edges
    # (iirfilter, analog=True, btype='bandpass'), scaled to the centre gain: exact parts.
    f, y = pane.plots.curve_data(pane.plots.built_curve)
    assert f.size > 500
    assert_allclose(y, reference_db("butterworth", 4, lo, hi, f, gain=2.0), atol=0.01)
    # Each stage is drawn beneath, and the stages multiply to the whole (dB add).
    assert len(pane.plots.stage_curves) == 4
    stage_db = np.array([pane.plots.curve_data(c)[1] for c in pane.plots.stage_curves])
    assert_allclose(stage_db.sum(axis=0), y, atol=1e-9)
    # The deviation plot is the difference to the ideal response, small with exact parts.
    _, dev = pane.plots.curve_data(pane.plots.deviation_curve)
    assert np.max(np.abs(dev)) < 0.01
    # Figures in words, units included.
    text = pane.summary.text()
    assert "chain-1" in text and "Butterworth" in text and "Hz" in text and "dB" in text
    assert pane.btn_netlist.isEnabled() and pane.btn_parts.isEnabled()


def test_building_is_undoable_and_a_second_chain_gets_its_own_id(qtbot, pane, state):
    fill_form(pane, order=2)
    build(qtbot, pane)
    fill_form(pane, response="bessel", order=3)
    build(qtbot, pane)
    assert [c.id for c in chains_in(state.session)] == ["chain-1", "chain-2"]
    assert pane.shown_id == "chain-2" and pane.chain_combo.count() == 2
    state.undo_stack.undo()
    assert [c.id for c in chains_in(state.session)] == ["chain-1"]
    qtbot.waitUntil(lambda: not pane.busy and pane.shown_id == "chain-1", timeout=WAIT_MS)
    assert pane.stage_table.rowCount() == 2
    state.undo_stack.undo()
    assert EXTRAS_KEY not in state.session.extras
    qtbot.waitUntil(lambda: not pane.busy, timeout=WAIT_MS)
    assert pane.shown is None and pane.stage_table.rowCount() == 0
    state.undo_stack.redo()
    qtbot.waitUntil(lambda: not pane.busy and pane.shown_id == "chain-1", timeout=WAIT_MS)
    assert pane.stage_table.rowCount() == 2


def test_changing_a_stage_circuit_rebuilds_that_stage_only(qtbot, pane, state):
    fill_form(pane, order=3, f0="10k", bw="3k", series="E96")
    build(qtbot, pane)
    before = chains_in(state.session)[0]
    old = before.stages[1].topology_id
    new = next(c for c in ("mfb", "sallen-key", "rlc-tank") if c != old)
    combo = pane.stage_combo(2)
    combo.setCurrentIndex(combo.findData(new))
    combo.activated.emit(combo.currentIndex())
    assert pane.busy
    qtbot.waitUntil(lambda: not pane.busy, timeout=WAIT_MS)
    after = chains_in(state.session)[0]
    assert after.stages[1].topology_id == new
    assert after.stages[0] == before.stages[0] and after.stages[2] == before.stages[2]  # the others keep their parts
    assert pane.stage_combo(2).currentData() == new
    assert new in pane.plots.stage_legend.items[1][1].text
    assert "stage 2" in state.undo_stack.undoText()
    state.undo_stack.undo()
    qtbot.waitUntil(lambda: not pane.busy, timeout=WAIT_MS)
    assert chains_in(state.session)[0] == before
    assert pane.stage_combo(2).currentData() == old


def test_save_and_reopen_keeps_the_chain(qtbot, pane, state, tmp_path):
    fill_form(pane, response="chebyshev", order=3, ripple="0.5", f0="12k", bw="4k", gain="3")
    build(qtbot, pane)
    chain = chains_in(state.session)[0]
    rows = [[pane.stage_table.item(r, c).text() for c in (2, 3, 4, 7)] for r in range(3)]
    path = tmp_path / "chain.bandsmith.json"
    save_session(state.session, path)
    reopened = load_session(path)
    assert chains_in(reopened) == (chain,)
    state2 = WorkbenchState(reopened, str(path))
    pane2 = make_pane(qtbot, state2)
    assert pane2.shown_id == "chain-1"
    assert [[pane2.stage_table.item(r, c).text() for c in (2, 3, 4, 7)] for r in range(3)] == rows
    assert [pane2.stage_combo(k).currentData() for k in (1, 2, 3)] == [s.topology_id for s in chain.stages]
    # Measured again from the saved parts, the same curve.
    assert_allclose(pane2.plots.curve_data(pane2.plots.built_curve)[1], pane.plots.curve_data(pane.plots.built_curve)[1], atol=1e-9)
    # The form shows the saved request.
    assert pane2.response_combo.currentData() == "chebyshev" and pane2.order_spin.value() == 3


def test_a_chain_that_cannot_be_built_says_why_and_is_not_kept(qtbot, pane, state):
    # A narrow order-6 Chebyshev band: its sharpest stages need Q of about 65 (core cascade's
    # own numbers), which E24 parts on the Sallen–Key circuit cannot hold within half a stage
    # bandwidth (the multi-amplifier circuits can: tests/test_circuits_multiamp.py).
    fill_form(pane, response="chebyshev", order=6, ripple="0.5", f0="10k", bw="2k", gain="2", circuit="sallen-key")
    build(qtbot, pane)
    assert EXTRAS_KEY not in state.session.extras
    assert not pane.shown.feasible
    text = pane.summary.text()
    assert "Cannot be built" in text and "not kept" in text
    bad = [st.index for st in pane.shown.stages if not st.feasible]
    for k in bad:
        assert f"stage {k}" in text
        assert pane.stage_table.item(k - 1, 7).text().startswith("not built")
    pane.stage_table.setCurrentCell(bad[0] - 1, 0)
    assert "not built" in pane.detail.toPlainText()
    assert "not kept" in pane.chain_combo.currentText()
    assert not pane.btn_netlist.isEnabled()


def test_a_bad_band_is_named_in_plain_words(qtbot, pane, state):
    pane.band_mode.setCurrentIndex(pane.band_mode.findData("edges"))
    type_into(pane.band_a, "12k")
    type_into(pane.band_b, "9k")
    qtbot.mouseClick(pane.btn_build, QtCore.Qt.MouseButton.LeftButton)
    assert not pane.busy
    assert pane.form_error.isVisible()
    assert pane.form_error.text().startswith("upper edge:")
    assert EXTRAS_KEY not in state.session.extras


def test_exports_of_the_shown_chain(qtbot, state, tmp_path):
    prompter = ScriptedPrompter(save_path=[str(tmp_path / "c.cir"), str(tmp_path / "c.csv")])
    pane = make_pane(qtbot, state, prompter=prompter)
    fill_form(pane, order=2)
    build(qtbot, pane)
    qtbot.mouseClick(pane.btn_netlist, QtCore.Qt.MouseButton.LeftButton)
    qtbot.mouseClick(pane.btn_parts, QtCore.Qt.MouseButton.LeftButton)
    net = (tmp_path / "c.cir").read_text(encoding="utf-8")
    csv_text = (tmp_path / "c.csv").read_text(encoding="utf-8")
    chain = chains_in(state.session)[0]
    assert net.rstrip().endswith(".end") and "chain chain-1" in net
    rows = csv_text.splitlines()[1:]
    for st in chain.stages:
        assert f"_S{st.index} " in net
        assert any(r.startswith(f"{st.index},") for r in rows)
    assert prompter.errors == []


def test_the_window_has_the_pane_and_runs_its_jobs_in_the_status_bar(qtbot, tmp_path, monkeypatch):
    win = open_window(qtbot, tmp_path, monkeypatch, size=(1280, 800), recovery=False)
    state = win.state
    pane = win.chain_pane
    titles = [win.panes.tabText(i) for i in range(win.panes.count())]
    assert "Stage chain" in titles
    win.panes.setCurrentWidget(pane)
    fill_form(pane, order=4)
    qtbot.mouseClick(pane.btn_build, QtCore.Qt.MouseButton.LeftButton)
    assert win.job_status.job is not None  # the window's status bar watches the design
    qtbot.waitUntil(lambda: not pane.busy, timeout=WAIT_MS)
    assert len(chains_in(state.session)) == 1
    assert win.act_undo.isEnabled()
    ARTIFACTS.mkdir(exist_ok=True)
    qtbot.wait(50)
    screenshot(win, ARTIFACTS / "chain_pane_window.png", regions=(pane.plots, pane.stage_table), labels=(pane.summary,))


def test_screenshot_of_the_pane(qtbot, pane, state):
    fill_form(pane, order=5, f0="10k", bw="2.5k", gain="2")
    build(qtbot, pane)
    pane.stage_table.setCurrentCell(2, 0)
    ARTIFACTS.mkdir(exist_ok=True)
    qtbot.wait(50)
    screenshot(pane, ARTIFACTS / "chain_pane.png", regions=(pane.plots, pane.stage_table), labels=(pane.summary,))
    # And one of a chain that cannot be built.
    fill_form(pane, response="chebyshev", order=6, ripple="0.5", f0="10k", bw="2k", gain="2")
    build(qtbot, pane)
    qtbot.wait(50)
    screenshot(pane, ARTIFACTS / "chain_pane_not_built.png", labels=(pane.summary,))


def test_with_an_ideal_op_amp_nothing_claims_a_finite_one(qtbot):
    from dataclasses import replace

    from bandsmith.files.session import OpAmpSpec

    state = WorkbenchState(replace(demo_session(), opamp=OpAmpSpec(gbw_hz=None, a0=1e5)))
    pane = make_pane(qtbot, state)
    fill_form(pane, order=3)
    build(qtbot, pane)
    names = [label.text for _, label in pane.plots.overall_legend.items]
    assert not any("op-amp" in n and "ideal" not in n for n in names)
    assert pane.plots.curve_data(pane.plots.actual_curve)[1].size == 0
    assert "op-amp is ideal" in pane.summary.text()


def test_remeasuring_the_shown_chain_keeps_what_the_user_typed(qtbot, pane, state):
    fill_form(pane, order=2)
    build(qtbot, pane)
    type_into(pane.band_a, "7k")
    state.set_opamp(gbw_hz=20e6)  # the chain is measured again with the new op-amp
    qtbot.waitUntil(lambda: not pane.busy, timeout=WAIT_MS)
    assert "20 MHz" in pane.plots.overall_legend.items[-1][1].text
    assert pane.band_a.edit.text() == "7 kHz"


def test_fixing_the_stage_that_could_not_be_built_keeps_the_chain(qtbot, pane, state):
    # With E48 parts on the tank alone, stage 5 of this Chebyshev chain misses (core cascade's
    # rule: f0 off by more than half the stage's bandwidth); the Sallen-Key circuit builds it.
    fill_form(pane, response="chebyshev", order=6, ripple="0.5", f0="10k", bw="2k", gain="2", series="E48", circuit="rlc-tank")
    build(qtbot, pane)
    assert not pane.shown.feasible and EXTRAS_KEY not in state.session.extras
    assert [st.index for st in pane.shown.stages if not st.feasible] == [5]
    combo = pane.stage_combo(5)
    combo.setCurrentIndex(combo.findData("sallen-key"))
    combo.activated.emit(combo.currentIndex())
    qtbot.waitUntil(lambda: not pane.busy, timeout=WAIT_MS)
    (chain,) = chains_in(state.session)
    assert [s.topology_id for s in chain.stages] == ["rlc-tank"] * 4 + ["sallen-key", "rlc-tank"]
    assert pane.shown.feasible and pane.shown_chain() == chain
    assert "not kept" not in pane.chain_combo.currentText()
    state.undo_stack.undo()
    assert EXTRAS_KEY not in state.session.extras


def test_remove_takes_the_chain_out_and_undo_brings_it_back(qtbot, pane, state):
    fill_form(pane, order=2)
    build(qtbot, pane)
    kept = chains_in(state.session)
    qtbot.mouseClick(pane.btn_remove, QtCore.Qt.MouseButton.LeftButton)
    assert EXTRAS_KEY not in state.session.extras
    assert pane.shown is None and pane.stage_table.rowCount() == 0
    state.undo_stack.undo()
    assert chains_in(state.session) == kept
    qtbot.waitUntil(lambda: not pane.busy and pane.shown_id == "chain-1", timeout=WAIT_MS)
    assert pane.stage_table.rowCount() == 2


def test_a_session_chain_that_cannot_be_read_is_said_and_left_alone(qtbot):
    from dataclasses import replace

    raw = [{"id": "odd", "settings": {"response": "elliptic"}, "stages": []}]
    state = WorkbenchState(replace(demo_session(), extras={EXTRAS_KEY: raw}))
    pane = make_pane(qtbot, state)
    assert "cannot be read" in pane.messages.text()
    fill_form(pane, order=2)
    build(qtbot, pane)
    kept = state.session.extras[EXTRAS_KEY]
    assert kept[0] == raw[0] and len(kept) == 2  # the unreadable entry is kept as it was
    assert [c.id for c in chains_in(replace(state.session, extras={EXTRAS_KEY: kept[1:]}))] == ["chain-1"]
