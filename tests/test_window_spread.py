"""The Tolerance spread pane: settings in the session, a run off the GUI thread, cancel, histograms,
yield, worst case, the envelope on the magnitude plot, stale results, save/reopen and undo.

The reference for every number is the core (bandsmith.spread.tolerance, itself checked against the
first-order sensitivity prediction, scipy.stats.kstest and the worst-case bound in
tests/test_tolerance.py): the pane must show exactly what the core computes for the same settings
and seed. The one outside fact used here: for the uniform distribution no trial lies beyond the
corners of the tolerance box when the figure is monotonic in each part (true of these circuits
for small tolerances; common practice, no source).
"""

from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose
from PySide6 import QtCore

from bandsmith.app.window.demo import demo_session
from bandsmith.app.window.widgets.plots import MagnitudePlot
from bandsmith.app.document.results import frequency_grid
from bandsmith.app.window.panes.spread_pane import ENVELOPE_KEY, ENVELOPE_TRIALS, SpreadPane
from bandsmith.app.window.state import WorkbenchState
from bandsmith.design.candidate import Candidate
from bandsmith.solver.mna import IDEAL
from bandsmith.files.session import load_session
from bandsmith.spread.tolerance import SpreadSettings, magnitude_envelope, run_spread
from bandsmith.common.values import format_value
from window_helpers import open_window, screenshot, ScriptedPrompter, scroll_to, show_widget

pytestmark = pytest.mark.gui

ARTIFACTS = Path(__file__).parent / "_artifacts"


@pytest.fixture
def state():
    return WorkbenchState(demo_session())


@pytest.fixture
def pane(qtbot, state):
    return show_widget(qtbot, SpreadPane(state, magnitude_plot=MagnitudePlot(state)), (1100, 900))


@pytest.fixture
def window(qtbot, tmp_path, monkeypatch):
    return open_window(qtbot, tmp_path, monkeypatch, prompter=ScriptedPrompter(save_path=[str(tmp_path / "s.bandsmith.json")]), size=(1280, 800))


def circuit(state, cid):
    entry = state.session.candidate(cid)
    return Candidate(entry.topology_id, entry.values).netlist, state.session.conditions_for(entry).opamp or IDEAL


def type_into(qtbot, field, text):
    field.edit.selectAll()
    qtbot.keyClicks(field.edit, text)
    qtbot.keyClick(field.edit, QtCore.Qt.Key.Key_Return)


def run_and_wait(qtbot, pane, timeout=30_000):
    with qtbot.waitSignal(pane.run_finished, timeout=timeout) as sig:
        qtbot.mouseClick(pane.run_button, QtCore.Qt.MouseButton.LeftButton)
    return sig.args[0]


def test_run_shows_what_the_core_computes(qtbot, pane, state):
    cid = pane.picker.candidate_id
    assert cid == state.current_id == "mfb"
    run = run_and_wait(qtbot, pane)
    net, opamp = circuit(state, cid)
    ref = run_spread(net, SpreadSettings(), opamp=opamp)  # same settings and seed: the same trials
    assert_allclose(run.spread.f0_hz, ref.f0_hz, rtol=0, atol=0)
    assert pane.yield_label.text() == f"{100 * ref.yield_fraction:.1f} %"
    passed = int(np.count_nonzero(ref.passed))
    assert f"{passed:,}".replace(",", " ") in pane.yield_text.text()
    # Histograms hold every measured trial, binned as numpy bins them.
    for key, h in pane.histograms.items():
        x = getattr(ref, key)[ref.measured]
        assert h.counts.sum() == x.size
        counts, edges = np.histogram(x, bins=h.edges)
        assert (counts == h.counts).all()
    # The window is marked around nominal: ±5 % in f0 (the default).
    f0 = float(ref.nominal.item().f0_hz)
    assert_allclose(pane.histograms["f0_hz"].window.getRegion(), (0.95 * f0, 1.05 * f0), rtol=1e-12)
    # Statistics table: mean of f0 and the worst-case extremes.
    assert pane.stats.item(1, 0).text() == format_value(ref.stats("f0_hz")["mean"], "Hz", digits=5)
    lo, hi = ref.worst.f0_hz
    # Uniform trials never pass the corners (see the module notes).
    assert lo <= ref.f0_hz.min() and ref.f0_hz.max() <= hi
    assert pane.corners.rowCount() == 5 and pane.corners.columnCount() == 6
    assert not pane.stale.isVisible()


def test_cancel_a_long_run(qtbot, window):
    pane = window.spread_pane
    window.panes.setCurrentWidget(pane)
    type_into(qtbot, pane.fields["trials"], "1M")  # 1 000 000 trials: about 50 chunks of work
    assert window.state.session.extras["spread"]["trials"] == 1_000_000
    job = pane.run()
    with qtbot.waitSignal(job.progress, timeout=20_000):
        pass
    assert window.job_status.isVisible() and "1 000 000 trials" in window.job_status.label.text()
    with qtbot.waitSignal(job.cancelled, timeout=20_000):
        qtbot.mouseClick(window.job_status.cancel_button, QtCore.Qt.MouseButton.LeftButton)
    assert pane.current_run() is None
    assert pane.run_info.text().startswith("Cancelled")
    assert pane.run_button.isEnabled() and pane.run_button.text() == "Run"
    assert not window.job_status.isVisible()
    assert ENVELOPE_KEY not in window.plot_grid.plots["magnitude"].envelopes


def test_envelope_on_the_magnitude_plot_and_stale_after_an_edit(qtbot, window):
    state = window.state
    pane = window.spread_pane
    window.panes.setCurrentWidget(pane)
    run = run_and_wait(qtbot, pane)
    plot = window.plot_grid.plots["magnitude"]
    assert ENVELOPE_KEY in plot.envelopes
    lo, hi, band = plot.envelopes[ENVELOPE_KEY]
    net, opamp = circuit(state, run.candidate_id)
    f = frequency_grid(state.session.target.f0_hz)
    env = magnitude_envelope(net, SpreadSettings(), f, opamp=opamp, trials=ENVELOPE_TRIALS, percentiles=(5.0, 50.0, 95.0))
    x, y = lo.getOriginalDataset()
    assert_allclose(x, f)
    assert_allclose(y, env.magnitude_db[0], rtol=1e-12)
    assert_allclose(hi.getOriginalDataset()[1], env.magnitude_db[-1], rtol=1e-12)
    # The candidate's own curve lies inside the band at f0 (nominal between p5 and p95 there).
    res = state.result(run.candidate_id)
    i0 = int(np.argmin(np.abs(f - res.figures.f0_hz)))
    assert env.magnitude_db[0][i0] <= res.response.magnitude_db[i0] <= env.magnitude_db[-1][i0]
    # Any change of the candidate makes the result stale and takes the band off the plot.
    entry = state.session.candidate(run.candidate_id)
    state.set_snap(run.candidate_id, None)
    state.set_part(run.candidate_id, "R1", entry.values["R1"] * 1.1)
    assert pane.is_stale() and pane.stale.isVisible() and "Stale" in pane.stale.text()
    assert ENVELOPE_KEY not in plot.envelopes
    # Undoing the edits brings the very design back: the result fits it again.
    state.undo_stack.undo()
    state.undo_stack.undo()
    assert not pane.is_stale() and ENVELOPE_KEY in plot.envelopes
    pane.show_envelope.setChecked(False)
    assert ENVELOPE_KEY not in plot.envelopes
    # A change of the settings makes it stale too.
    pane.show_envelope.setChecked(True)
    type_into(qtbot, pane.fields["seed"], "7")
    assert pane.is_stale()


def test_fields_take_any_notation_and_bad_input_changes_nothing(qtbot, pane, state):
    type_into(qtbot, pane.fields["R"], "0.5%")
    type_into(qtbot, pane.fields["C"], "0.02")
    type_into(qtbot, pane.fields["trials"], "20k")
    type_into(qtbot, pane.fields["window_gain_db"], "0.5 dB")
    sec = state.session.extras["spread"]
    assert_allclose([sec["tolerances"]["R"], sec["tolerances"]["C"], sec["window"]["gain_db"]], [0.005, 0.02, 0.5])
    assert sec["trials"] == 20_000
    before = state.session
    type_into(qtbot, pane.fields["R"], "60%")  # beyond a part tolerance (core: at most 50 %)
    assert state.session == before
    assert "50" in pane.fields["R"].error_text
    type_into(qtbot, pane.fields["trials"], "2.5")
    assert state.session == before and "whole" in pane.fields["trials"].error_text
    # Per-part tolerance in the table: C2 gets its own, then back to its kind's.
    row = [pane.parts.item(r, 0).text() for r in range(pane.parts.rowCount())].index("C2")
    pane.parts.item(row, 2).setText("2 %")
    assert_allclose(state.session.extras["spread"]["tolerances"]["C2"], 0.02)
    assert pane.parts.item(row, 2).text() == "2 %"
    pane.parts.item(row, 2).setText("")
    assert "C2" not in state.session.extras["spread"]["tolerances"]
    assert pane.parts.item(row, 2).text().startswith("(")
    pane.parts.item(row, 2).setText("abc")
    assert pane.parts_error.isVisible() and "C2" not in state.session.extras["spread"]["tolerances"]


def test_distribution_and_undo_restore_settings(qtbot, pane, state):
    assert "spread" not in state.session.extras
    pane.dist.setCurrentIndex(pane.dist.findData("normal"))
    pane.dist.activated.emit(pane.dist.currentIndex())
    type_into(qtbot, pane.fields["window_f0"], "2%")
    assert state.session.extras["spread"]["dist"] == "normal"
    assert "f0" in state.undo_stack.undoText()
    state.undo_stack.undo()
    assert_allclose(pane.fields["window_f0"].value, 0.05)
    assert pane.fields["window_f0"].edit.text() == "5 %"
    state.undo_stack.undo()
    assert "spread" not in state.session.extras
    assert pane.dist.currentData() == "uniform"


def test_override_of_a_part_other_circuits_lack_is_left_out(qtbot, pane, state):
    pane.set_part_tolerance("RB", 0.001)  # Sallen-Key only
    run = run_and_wait(qtbot, pane)  # on mfb: no RB; runs, and says so
    assert "RB" not in run.spread.tolerances
    assert "RB" in pane.yield_text.text()
    state.set_current("sallen-key")
    assert pane.picker.candidate_id == "sallen-key" and pane.current_run() is None
    run = run_and_wait(qtbot, pane)
    assert_allclose(run.spread.tolerances["RB"], 0.001)


def test_settings_survive_save_and_reopen(qtbot, window, tmp_path, monkeypatch):
    pane = window.spread_pane
    type_into(qtbot, pane.fields["L"], "2%")
    pane.set_part_tolerance("C", 0.01)
    assert window.save()
    path = window.state.path
    saved = load_session(path).extras["spread"]
    assert SpreadSettings.from_json(saved) == SpreadSettings(tolerances={"L": 0.02, "C": 0.01})
    w2 = open_window(qtbot, tmp_path, monkeypatch, show=False)
    assert w2.open_path(path)
    p2 = w2.spread_pane
    w2.show()
    w2.panes.setCurrentWidget(p2)  # a hidden pane refills its fields when it is shown
    assert p2.fields["L"].edit.text() == "2 %"
    assert p2.settings == SpreadSettings(tolerances={"L": 0.02, "C": 0.01})


def test_tank_shows_its_inductor(qtbot, pane, state):
    state.set_current("rlc-tank")
    assert pane.winding.isVisible()
    text = pane.winding.text()
    from bandsmith.analysis.inductor import winding_effect

    net, opamp = circuit(state, "rlc-tank")
    w = winding_effect(net, opamp=opamp)[0]
    assert f"Q at f0 = {w.inductor_q:.3g}" in text and f"{w.q_lossless:.4g} to {w.q:.4g}" in text
    state.set_current("mfb")
    assert not pane.winding.isVisible()


def test_screenshots(qtbot, window, pane):
    ARTIFACTS.mkdir(exist_ok=True)
    run_and_wait(qtbot, pane)
    qtbot.wait(50)
    screenshot(pane, ARTIFACTS / "spread_pane.png", regions=(*pane.histograms.values(), pane.parts), labels=(pane.yield_label,))
    spread = window.spread_pane
    window.panes.setCurrentWidget(spread)
    window.state.set_current("sallen-key")
    run_and_wait(qtbot, spread)
    scroll_to(spread.histograms["q"])  # below the comparison table and the settings: scroll, as a user would
    qtbot.wait(50)
    screenshot(window, ARTIFACTS / "spread_pane_window.png", regions=(spread.histograms["f0_hz"], spread.histograms["q"]), labels=(spread.yield_label,))
    window.panes.setCurrentWidget(window.plot_grid)
    plot = window.plot_grid.plots["magnitude"]
    f0 = window.state.session.target.f0_hz
    plot.getPlotItem().setXRange(np.log10(f0 / 2), np.log10(f0 * 2), padding=0)
    plot.getPlotItem().setYRange(-5, 17, padding=0)
    qtbot.wait(50)
    screenshot(plot, ARTIFACTS / "spread_envelope.png", at_least=0.05)
