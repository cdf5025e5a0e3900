"""The "Tone burst" pane: the selected candidate's burst response, drawn from bandsmith.api.burst."""

import math
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

from bandsmith import api
from window_helpers import open_window, screenshot

pytestmark = pytest.mark.gui

ARTIFACTS = Path(__file__).parent / "_artifacts"


@pytest.fixture
def window(qtbot, tmp_path, monkeypatch):
    w = open_window(qtbot, tmp_path, monkeypatch, size=(1366, 768), recovery=False)
    yield w
    w.state.mark_saved("")


def _show(window, qtbot, cid):
    window.state.set_current(cid)
    window.panes.setCurrentWidget(window.burst_pane)
    qtbot.waitUntil(lambda: window.burst_pane.result is not None and window.burst_pane.picker.candidate_id == cid)
    qtbot.wait(30)
    return window.burst_pane


def test_the_pane_draws_what_the_api_gives(window, qtbot):
    pane = _show(window, qtbot, "mfb")
    s = window.state.session
    entry = s.candidate("mfb")
    c = s.conditions_for(entry)
    f0 = window.state.results["mfb"].analysis.ideal.item().f0_hz
    ref = api.burst("mfb", dict(entry.values), freq_hz=f0, cycles=20, gbw_hz=c.gbw_hz, a0=c.a0).result
    assert_allclose(pane.result.result.envelope_tau_s, ref.envelope_tau_s, rtol=1e-12)
    x, y = pane.plot.output_curve.getData()
    assert len(x) > 100 and np.isfinite(y).all() and np.abs(y).max() > 0
    # A second-order band-pass's envelope time constant is 2Q/ω0 = Q/(π·f0) (derived: the
    # envelope of a resonance decays as exp(−ω0·t/(2Q))); the MFB is one such stage.
    q = window.state.results["mfb"].analysis.ideal.item().q
    assert pane.result.result.envelope_tau_s == pytest.approx(q / (math.pi * f0), rel=0.05)
    assert "envelope time constant" in pane.times.text()
    ARTIFACTS.mkdir(exist_ok=True)
    screenshot(window, ARTIFACTS / "burst_pane_window.png", regions=(pane.plot,), labels=(pane.times,))


def test_a_bad_field_is_named_and_nothing_is_lost(window, qtbot):
    pane = _show(window, qtbot, "mfb")
    before = pane.result
    pane.cycles_edit.setText("many")
    pane.cycles_edit.editingFinished.emit()
    qtbot.waitUntil(lambda: pane.error.isVisible())
    assert "cycles" in pane.error.text().lower()
    assert pane.result is before
    pane.cycles_edit.setText("40")
    pane.cycles_edit.editingFinished.emit()
    qtbot.waitUntil(lambda: not pane.error.isVisible() and pane.result is not before)
