"""The Measured pane: import a bench sweep, see it over the plots, read the diagnosis.

The sweep is made here (tests/measured_helpers.py): the MFB example with C2 6 % high, from
scipy.signal.freqs on the textbook biquad, with seeded scatter.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose
from PySide6 import QtWidgets

from bandsmith.app.window.panes.measurement_pane import ColumnMappingDialog
from bandsmith.bench.measured import ColumnMapping, MappingNeeded, read_measurement, session_measurements
from bandsmith.files.session import CandidateEntry, Session, Target, load_session
from measured_helpers import MFB, sweep, write_layouts
from window_helpers import open_window, screenshot

pytestmark = pytest.mark.gui

ARTIFACTS = Path(__file__).parent / "_artifacts"


@pytest.fixture
def files(tmp_path):
    f, mag, ph = sweep("mfb", MFB, {"C2": 0.06})
    paths = write_layouts(tmp_path / "bench", f, mag, ph)
    positive = tmp_path / "bench" / "positive.txt"
    positive.write_text("".join(f"{x:.4f} {10 ** (m / 20):.7f}\n" for x, m in zip(f, mag)))
    paths["positive"] = positive
    bad = tmp_path / "bench" / "bad.csv"
    lines = paths["csv_khz"].read_text().splitlines()
    lines[20] = "2.0,oops,1"  # line 21
    bad.write_text("\n".join(lines) + "\n")
    paths["bad"] = bad
    return paths


@pytest.fixture
def window(qtbot, tmp_path, monkeypatch):
    session = Session(target=Target(2000.0, 5.0, 4.0, series="exact"), candidates=(CandidateEntry("mfb", "mfb", MFB, snap=None),))
    return open_window(qtbot, tmp_path, monkeypatch, session, size=(1280, 800))


def _points(w, key):
    item = w.measurement_pane._points[key]  # xData/yData: the data as given (getData is log-mapped)
    x, y = item.xData, item.yData
    return (np.array([]), np.array([])) if x is None else (np.asarray(x), np.asarray(y))


def test_import_shows_the_overlay_and_the_diagnosis(window, files, qtbot):
    pane = window.measurement_pane
    assert window.panes.tabText(window.panes.indexOf(pane)) == "Measured"
    assert _points(window, "magnitude")[0].size == 0
    assert pane.import_file(str(files["csv_khz"]))
    m = read_measurement(files["csv_khz"])
    x, y = _points(window, "magnitude")
    assert x.size == 201
    assert_allclose(x, m.f_hz)
    assert_allclose(y, m.mag_db)
    px, py = _points(window, "phase")
    assert px.size == 201
    # On the candidate's own phase branch: within a few degrees of its curve near f0.
    res = window.state.result("mfb")
    model = np.interp(np.log(px), np.log(res.response.f_hz), res.response.phase_deg)
    assert abs(np.median(py - model)) < 20
    fx = window.measurement_pane._fit_curves["magnitude"].xData
    assert fx is not None and len(fx) > 100
    assert "C2 about 6 % high explains it" in pane.summary.text()
    assert pane.ranking.item(0, 0).text() == "C2"
    assert pane.figures.item(0, 0).text().endswith("kHz")
    # Kept in the session with its file name and hash.
    stored = session_measurements(window.state.session)
    assert stored[0][0].source == "csv_khz.csv" and stored[0][0].sha256 == m.sha256 and stored[0][1] == "mfb"

    window.panes.setCurrentIndex(0)
    qtbot.wait(50)
    ARTIFACTS.mkdir(exist_ok=True)
    screenshot(window, ARTIFACTS / "measured_overlay.png", regions=(window.plot_grid.plots["magnitude"], window.plot_grid.plots["phase"]))
    window.panes.setCurrentWidget(pane)
    qtbot.wait(50)
    screenshot(window, ARTIFACTS / "measured_pane.png", regions=(pane.figures, pane.ranking, pane.deviation), labels=(pane.source_label, pane.summary))


def test_import_is_undoable_and_saved(window, files, tmp_path):
    pane = window.measurement_pane
    assert pane.import_file(str(files["semicolon_comma"]))
    assert not window.state.is_clean
    window.state.undo_stack.undo()
    assert pane.measurement is None and _points(window, "magnitude")[0].size == 0
    window.state.undo_stack.redo()
    assert pane.measurement is not None and _points(window, "magnitude")[0].size == 201
    from bandsmith.files.session import save_session

    out = tmp_path / "with_measurement.json"
    save_session(window.state.session, out)
    back = session_measurements(load_session(out))
    assert back[0][0].source == "semicolon_comma.csv"
    pane.remove()
    assert pane.measurement is None


def test_a_file_that_needs_a_mapping_asks_for_one(window, files):
    pane = window.measurement_pane
    asked = []

    def answer(scan, guess, reason):
        asked.append(reason)
        return ColumnMapping(0, 1, mag_unit="linear")

    pane.ask_mapping = answer
    assert pane.import_file(str(files["positive"]))
    assert "dB or linear" in asked[0]
    assert pane.measurement.points == 201
    assert "C2" in pane.summary.text()
    # Cancelling the mapping step imports nothing.
    pane.remove()
    pane.ask_mapping = lambda scan, guess, reason: None
    assert not pane.import_file(str(files["positive"]))
    assert pane.measurement is None


def test_a_bad_file_gives_a_message_with_its_line(window, files):
    pane = window.measurement_pane
    assert not pane.import_file(str(files["bad"]))
    title, text = window.prompter.errors[-1]
    assert "line 21" in text and "oops" in text
    assert pane.measurement is None


def test_the_mapping_dialog(qtbot, files):
    with pytest.raises(MappingNeeded) as need:
        read_measurement(files["positive"])
    dlg = ColumnMappingDialog(need.value.scan, need.value.guess, need.value.reason)
    qtbot.addWidget(dlg)
    assert dlg.preview.rowCount() == 8 and dlg.preview.columnCount() == 2
    dlg.mag_unit.setCurrentText("linear")
    dlg.freq_unit.setCurrentText("Hz")
    m = dlg.mapping()
    assert (m.freq, m.mag, m.phase, m.mag_unit, m.freq_unit) == (0, 1, None, "linear", "Hz")
    dlg.mag.setCurrentIndex(0)  # frequency and magnitude in one column: refused, the dialog stays
    dlg._accept()
    assert dlg.problem.text() and dlg.result() != QtWidgets.QDialog.DialogCode.Accepted


def test_editing_the_design_refits_after_a_pause(window, files, qtbot):
    pane = window.measurement_pane
    assert pane.import_file(str(files["csv_khz"]))
    assert pane.diagnosis.alone[0].part == "C2"
    # The board's C2 really is 6 % high: put that into the design, and nothing is left to explain.
    window.state.set_part("mfb", "C2", MFB["C2"] * 1.06)
    with qtbot.waitSignal(pane.diagnosed, timeout=5000):
        pass
    assert pane.diagnosis.verdict == "matches"
    assert "matches the design" in pane.summary.text()
