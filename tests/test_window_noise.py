"""The Noise pane: per-source curves and the integrated figures as the core computes them, settings in
the session (any notation, undo, save/reopen), live recomputation only while the tab is visible.

Outside references:
- Johnson–Nyquist: a resistor R at temperature T has a noise voltage density √(4kTR), k the
  Boltzmann constant, exactly 1.380649e-23 J/K (SI Brochure, 9th ed., 2019).
- The tank with a noiseless ideal op-amp and a lossless inductor: at f0 the parallel L and C
  cancel, leaving an inverting amplifier with R1 in and R2 in feedback. R2's noise current
  √(4kT/R2) flows through R2 into the output: √(4kT·R2). R1's noise voltage √(4kT·R1) is
  amplified by R2/R1: √(4kT·R1)·R2/R1 = √(4kT·R2·R2/R1). Uncorrelated, they add as powers:
  e_out(f0) = √(4kT·R2·(1 + R2/R1)) (derived here; the issue states the same).
"""

import math
from pathlib import Path

import numpy as np
import pytest
import scipy.constants
from numpy.testing import assert_allclose
from PySide6 import QtCore, QtWidgets

from bandsmith.app.window.demo import demo_session
from bandsmith.app.window.panes.noise_pane import NoisePane
from bandsmith.app.window.state import WorkbenchState
from bandsmith.design.candidate import Candidate
from bandsmith.solver.mna import IDEAL
from bandsmith.analysis.noise import NoiseSettings, output_noise
from bandsmith.files.session import load_session
from bandsmith.common.values import format_value
from window_helpers import open_window, screenshot, ScriptedPrompter, scroll_to, show_widget

pytestmark = pytest.mark.gui

ARTIFACTS = Path(__file__).parent / "_artifacts"


@pytest.fixture
def state():
    return WorkbenchState(demo_session())


@pytest.fixture
def tabs(qtbot, state):
    """The pane in a tab widget beside an empty page (so it can be hidden and shown)."""
    t = QtWidgets.QTabWidget()
    other = QtWidgets.QWidget()
    pane = NoisePane(state)
    t.addTab(other, "other")
    t.addTab(pane, "Noise")
    t.setCurrentWidget(pane)
    show_widget(qtbot, t, (1100, 760))
    return t, pane


def circuit(state, cid):
    entry = state.session.candidate(cid)
    return Candidate(entry.topology_id, entry.values).netlist, state.session.conditions_for(entry).opamp or IDEAL


def type_into(qtbot, field, text):
    field.edit.selectAll()
    if text.isascii():
        qtbot.keyClicks(field.edit, text)
    else:  # QtTest types ASCII only: put the text in as a paste would
        field.edit.insert(text)
    qtbot.keyClick(field.edit, QtCore.Qt.Key.Key_Return)


def test_curves_per_source_and_integrated_as_the_core(tabs, state):
    _t, pane = tabs
    cid = pane.picker.candidate_id
    net, opamp = circuit(state, cid)
    ref = output_noise(net, NoiseSettings(), opamp=opamp, vin_v=state.session.target.vin_v)
    assert_allclose(pane.result.total_v_rms, ref.total_v_rms, rtol=1e-12)
    assert pane.integrated.text() == format_value(ref.total_v_rms, "V", digits=4) + " rms"
    assert f"{ref.snr_db:.1f} dB" in pane.figures.text()
    # One curve per source that reaches the output; the multiple-feedback circuit's + input is
    # grounded, so its current noise goes nowhere (no curve, a zero in the table).
    drawn = pane.source_names()
    assert drawn == [s.name for s in ref.sources if s.name != "in+"]
    for name in drawn:
        x, y = pane.curves[name].getOriginalDataset()
        assert_allclose(y, pane.view.source_density_v_rthz[name], rtol=1e-12)
    # The view's total is the power sum of the sources.
    total = np.sqrt(sum(pane.view.source_density_v_rthz[s.name] ** 2 for s in ref.sources))
    assert_allclose(pane.total_curve.getOriginalDataset()[1], total, rtol=1e-12)
    # Table: largest first, shares of the power summing to 100 %.
    rows = [pane.table.item(r, 0).text() for r in range(pane.table.rowCount())]
    assert rows[0] == max(ref.integrated_v_rms, key=ref.integrated_v_rms.get)
    shares = [float(pane.table.item(r, 3).text().rstrip(" %")) for r in range(pane.table.rowCount())]
    assert_allclose(sum(shares), 100.0, atol=0.3)
    assert rows[0] in pane.largest.text()


def test_tank_density_at_f0_is_johnson_nyquist(qtbot, tabs, state):
    _t, pane = tabs
    state.set_current("rlc-tank")
    state.set_opamp(gbw_hz=None)  # ideal op-amp
    state.set_snap("rlc-tank", None)
    state.set_part("rlc-tank", "RL", 0.0)  # lossless inductor
    type_into(qtbot, pane.fields["en"], "0")
    type_into(qtbot, pane.fields["in"], "0 pA/√Hz")
    qtbot.waitUntil(lambda: pane.result is not None and pane.result.settings.in_a_per_rthz == 0.0)
    v = state.session.candidate("rlc-tank").values
    k = scipy.constants.k
    assert k == 1.380649e-23  # exact since 2019 (SI Brochure, 9th ed.)
    expected = math.sqrt(4 * k * 300.0 * v["R2"] * (1 + v["R2"] / v["R1"]))
    assert_allclose(pane.result.total_at_f0_v_rthz, expected, rtol=1e-6)
    assert format_value(expected, "V/√Hz", digits=4) in pane.figures.text()
    assert set(pane.source_names()) == {"R1", "R2"}  # a noiseless op-amp draws no curve of its own


def test_settings_in_any_notation_undo_and_band(qtbot, tabs, state):
    _t, pane = tabs
    type_into(qtbot, pane.fields["en"], "4.5 nV/√Hz")
    type_into(qtbot, pane.fields["in"], "0.5p")
    type_into(qtbot, pane.fields["temp"], "27 °C")
    sec = state.session.extras["noise"]
    assert_allclose([sec["en_v_per_rthz"], sec["in_a_per_rthz"], sec["temperature_k"]], [4.5e-9, 0.5e-12, 300.15])
    qtbot.waitUntil(lambda: pane.result.settings.temperature_k == 300.15)
    f0 = pane.result.f0_hz
    type_into(qtbot, pane.fields["f1"], "1k")
    assert_allclose(state.session.extras["noise"]["band_hz"], [1000.0, 10 * f0], rtol=1e-12)
    qtbot.waitUntil(lambda: pane.result.band_hz[0] == 1000.0)
    assert "1 kHz" in pane.figures.text()
    before = state.session
    type_into(qtbot, pane.fields["f2"], "500")  # below the lower edge
    assert state.session == before and pane.fields["f2"].error_text
    type_into(qtbot, pane.fields["temp"], "-5")
    assert state.session == before and pane.fields["temp"].error_text
    qtbot.mouseClick(pane.band_auto, QtCore.Qt.MouseButton.LeftButton)
    assert state.session.extras["noise"]["band_hz"] is None
    state.undo_stack.undo()
    assert_allclose(state.session.extras["noise"]["band_hz"][0], 1000.0)
    for _ in range(4):
        state.undo_stack.undo()
    assert "noise" not in state.session.extras
    assert pane.fields["en"].edit.text() == format_value(10e-9, "V/√Hz", digits=4)


def test_recomputes_live_but_only_while_visible(qtbot, tabs, state):
    t, pane = tabs
    cid = pane.picker.candidate_id
    r0 = pane.result
    with qtbot.waitSignal(pane.computed, timeout=5000):
        state.set_snap(cid, None)
        state.set_part(cid, "R3", state.session.candidate(cid).values["R3"] * 2)
    assert pane.result is not r0 and pane.result.total_v_rms != r0.total_v_rms
    t.setCurrentIndex(0)  # hide the pane
    seen = []
    pane.computed.connect(lambda: seen.append(1))
    state.set_part(cid, "R3", state.session.candidate(cid).values["R3"] * 2)
    qtbot.wait(100)
    assert seen == []  # nothing computed while hidden
    t.setCurrentWidget(pane)
    qtbot.waitUntil(lambda: bool(seen))
    net, opamp = circuit(state, cid)
    assert_allclose(pane.result.total_v_rms, output_noise(net, NoiseSettings(), opamp=opamp, vin_v=state.session.target.vin_v).total_v_rms, rtol=1e-12)


def test_settings_survive_save_and_reopen(qtbot, tmp_path, monkeypatch):
    target = tmp_path / "n.bandsmith.json"
    w = open_window(qtbot, tmp_path, monkeypatch, prompter=ScriptedPrompter(save_path=[str(target)]), show=False)
    pane = w.noise_pane
    type_into(qtbot, pane.fields["en"], "3n")
    type_into(qtbot, pane.fields["f2"], "20k")
    assert w.save()
    saved = NoiseSettings.from_json(load_session(target).extras["noise"])
    assert_allclose(saved.en_v_per_rthz, 3e-9)
    assert_allclose(saved.band_hz[1], 20e3)
    w2 = open_window(qtbot, tmp_path, monkeypatch, show=False)
    assert w2.open_path(str(target))
    assert w2.noise_pane.settings == saved
    assert w2.noise_pane.fields["f2"].edit.text() == "20 kHz"


def test_screenshots(qtbot, tmp_path, monkeypatch, tabs):
    ARTIFACTS.mkdir(exist_ok=True)
    t, pane = tabs
    qtbot.wait(50)
    screenshot(pane, ARTIFACTS / "noise_pane.png", regions=(pane.canvas, pane.table), labels=(pane.integrated,))
    w = open_window(qtbot, tmp_path, monkeypatch, size=(1280, 800))
    w.state.set_current("rlc-tank")
    w.panes.setCurrentWidget(w.noise_pane)
    qtbot.waitUntil(lambda: w.noise_pane.result is not None and w.noise_pane.picker.candidate_id == "rlc-tank")
    qtbot.wait(50)
    p = w.noise_pane
    scroll_to(p.table)  # the sources table lies below the plot at 1280×800: scroll, as a user would
    screenshot(w, ARTIFACTS / "noise_pane_window.png", regions=(p.canvas, p.table), labels=(p.integrated, p.winding))
    assert "Inductor L: Q at f0" in w.noise_pane.winding.text()
