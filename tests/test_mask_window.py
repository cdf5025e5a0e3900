"""The chain pane's mask: rejection points typed in the form, the least order, drawn on the plot."""

import math

import numpy as np
import pytest
import scipy.signal
from PySide6 import QtCore

from bandsmith.app.window.demo import demo_session
from bandsmith.app.window.state import WorkbenchState
from bandsmith.chain.cascade import chains_in
from window_helpers import chain_pane

WAIT_MS = 30_000


@pytest.fixture
def pane(qtbot):
    return chain_pane(qtbot, WorkbenchState(demo_session()), WAIT_MS)


def _type(field, text):
    field.edit.setFocus()
    field.edit.selectAll()
    field.edit.setText(text)
    field.edit.editingFinished.emit()


def test_least_order_from_the_form_is_buttords_and_the_mask_is_drawn(qtbot, pane):
    f = pane.form
    f.response_combo.setCurrentIndex(f.response_combo.findData("butterworth"))
    f.band_mode.setCurrentIndex(f.band_mode.findData("edges"))
    _type(f.band_a, "950")
    _type(f.band_b, "1050")
    _type(f.gain_field, "1")
    f.series_combo.setCurrentIndex(f.series_combo.findData("exact"))
    f.reject_field.setText("800=30, 1k2=30")
    f.order_auto.setChecked(True)
    qtbot.mouseClick(f.btn_build, QtCore.Qt.MouseButton.LeftButton)
    qtbot.waitUntil(lambda: not pane.busy, timeout=WAIT_MS)
    (chain,) = chains_in(pane.state.session)
    # scipy.signal.buttord (analog band-pass, edges at −3.01 dB)
    n, _ = scipy.signal.buttord(2 * np.pi * np.array([950, 1050]), 2 * np.pi * np.array([800, 1200]), 10 * math.log10(2), 30, analog=True)
    assert chain.settings.order == n
    spots = pane.view.plots.mask_points.data
    assert len(spots) == 2
    assert sorted(10 ** spots["x"]) == pytest.approx([800, 1200])
    assert list(spots["y"]) == pytest.approx([-30, -30])


def test_auto_without_points_is_refused_in_the_form(qtbot, pane):
    pane.form.order_auto.setChecked(True)
    pane.form.reject_field.setText("")
    qtbot.mouseClick(pane.form.btn_build, QtCore.Qt.MouseButton.LeftButton)
    assert not pane.busy
    assert "reject" in pane.form_error.text()
