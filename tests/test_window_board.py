"""The Board pane: the selected candidate's single-supply bias and trim plan, as the core gives them.

Checks: the node voltages and trim parts shown are those of bandsmith.api.bias / bandsmith.api.trim
for the same candidate and settings; two equal divider resistors put every biased node at half the
supply (Ohm's law, no DC current through the capacitors); editing the supply recomputes and is
undone by the session's undo; a measured f0 shows the core's corrected value of the f0 part."""

from __future__ import annotations

from pathlib import Path

import pytest
from PySide6 import QtWidgets

import bandsmith
from bandsmith.app.document.extras_board import BOARD_KEY
from bandsmith.app.window.demo import demo_session
from bandsmith.app.window.panes.board_pane import BoardPane
from bandsmith.app.window.state import WorkbenchState
from bandsmith.common.values import format_value
from window_helpers import open_window, screenshot, scroll_to, show_widget

pytestmark = pytest.mark.gui
ARTIFACTS = Path(__file__).parent / "_artifacts"
WAIT_MS = 20_000


@pytest.fixture
def pane(qtbot):
    state = WorkbenchState(demo_session())
    p = show_widget(qtbot, BoardPane(state), (1100, 760))
    qtbot.waitUntil(lambda: p.biased is not None, timeout=WAIT_MS)
    return p


def shown_nodes(p) -> dict[str, str]:
    t = p.nodes_table  # one row: the node names in the header, their DC voltages below
    return {t.horizontalHeaderItem(c).text(): t.item(0, c).text() for c in range(1, t.columnCount())}


def entry(p):
    return p.state.session.candidate(p.picker.candidate_id)


def test_shows_the_node_voltages_of_the_core(pane):
    e = entry(pane)
    ref = bandsmith.api.bias(e.topology_id, dict(e.values), supply_v=12.0, vin_v=pane.state.session.target.vin_v)
    shown = shown_nodes(pane)
    for node, v in ref.node_dc_v.items():
        if node != "0":
            assert shown[node] == format_value(v, "V", digits=4)
    assert shown["ref"] == format_value(6.0, "V", digits=4)  # half of 12 V: two equal resistors


def test_editing_the_supply_recomputes_and_undoes(pane, qtbot):
    pane.supply_edit.setText("9")
    pane.supply_edit.editingFinished.emit()
    assert pane.state.session.extras[BOARD_KEY]["supply_v"] == 9.0
    qtbot.waitUntil(lambda: pane.biased is not None and pane.biased.settings.supply_v == 9.0, timeout=WAIT_MS)
    assert shown_nodes(pane)["ref"] == format_value(4.5, "V", digits=4)
    pane.state.undo_stack.undo()
    assert BOARD_KEY not in pane.state.session.extras
    qtbot.waitUntil(lambda: pane.biased.settings.supply_v == 12.0, timeout=WAIT_MS)
    assert shown_nodes(pane)["ref"] == format_value(6.0, "V", digits=4)
    assert pane.supply_edit.text() == format_value(12.0, "V", digits=4)


def test_bad_supply_is_said(pane):
    pane.supply_edit.setText("-3")
    pane.supply_edit.editingFinished.emit()
    assert "supply" in pane.error.text()
    assert BOARD_KEY not in pane.state.session.extras


def test_the_trim_table_lists_the_core_parts(pane):
    e = entry(pane)
    plan = bandsmith.api.trim(e.topology_id, dict(e.values))
    assert pane.trim_parts() == [plan.f0.part, plan.q.part, plan.gain.part]
    assert plan.procedure[0] in pane.procedure.text()


def test_a_measured_f0_shows_the_correction(pane, qtbot):
    e = entry(pane)
    pane.measured_edit.setText("5.8k")
    pane.measured_edit.editingFinished.emit()
    qtbot.waitUntil(lambda: pane.plan is not None and pane.plan.correction is not None, timeout=WAIT_MS)
    c = bandsmith.api.trim(e.topology_id, dict(e.values), measured_f0_hz=5800.0).correction
    assert pane.plan.correction.new_value == pytest.approx(c.new_value, rel=1e-12)
    text = pane.correction.text()
    assert c.part in text and format_value(c.new_value, "Ω", digits=4) in text


def test_header_texts_fit(pane):
    for t in pane.findChildren(QtWidgets.QTableWidget):
        h = t.horizontalHeader()
        fm = h.fontMetrics()
        for i in range(t.columnCount()):
            assert h.sectionSize(i) >= fm.horizontalAdvance(t.horizontalHeaderItem(i).text()), (t.objectName(), i)


@pytest.mark.parametrize("size", [(1366, 768), (1920, 1080)])
def test_screenshots(qtbot, tmp_path, monkeypatch, size):
    ARTIFACTS.mkdir(exist_ok=True)
    w = open_window(qtbot, tmp_path, monkeypatch, size=size)
    w.panes.setCurrentWidget(w.board_pane)
    p = w.board_pane
    p.measured_edit.setText("5.8k")
    p.measured_edit.editingFinished.emit()
    qtbot.waitUntil(lambda: p.plan is not None and p.plan.correction is not None, timeout=WAIT_MS)
    qtbot.wait(80)
    scroll_to(p.correction)  # below the bias at 1366×768: scroll, as a user would
    qtbot.wait(30)
    screenshot(w, ARTIFACTS / f"board_pane_{size[0]}x{size[1]}.png", regions=(p.trim_table,))
    for t in p.findChildren(QtWidgets.QTableWidget):
        h = t.horizontalHeader()
        for i in range(t.columnCount()):
            assert h.sectionSize(i) >= h.fontMetrics().horizontalAdvance(t.horizontalHeaderItem(i).text())


def test_reference_kind_is_kept_and_undone(pane, qtbot):
    pane.reference_combo.setCurrentIndex(pane.reference_combo.findData("buffered"))
    pane.reference_combo.activated.emit(pane.reference_combo.currentIndex())
    assert pane.state.session.extras[BOARD_KEY]["reference"] == "buffered"
    qtbot.waitUntil(lambda: pane.biased.settings.reference == "buffered", timeout=WAIT_MS)
    assert pane.biased.bypass_f is None  # a buffered reference needs no bypass capacitor
    pane.state.undo_stack.undo()
    qtbot.waitUntil(lambda: pane.biased.settings.reference == "divider", timeout=WAIT_MS)
    assert pane.reference_combo.currentData() == "divider"


def test_an_inductor_trim_follows_the_selected_candidate(pane, qtbot):
    pane.state.set_current("rlc-tank")
    qtbot.waitUntil(lambda: pane.plan is not None and pane.plan.f0.part == "L", timeout=WAIT_MS)
    e = entry(pane)
    plan = bandsmith.api.trim(e.topology_id, dict(e.values))
    assert pane.trim_parts() == [plan.f0.part, plan.q.part, plan.gain.part]
    assert pane.plan.f0.part == "L" and pane.trim_table.item(0, 4).text() == "—"  # no resistor trimmer for L


def test_a_hidden_pane_does_not_compute(qtbot):
    tabs = QtWidgets.QTabWidget()
    other = QtWidgets.QWidget()
    p = BoardPane(WorkbenchState(demo_session()))
    tabs.addTab(other, "other")
    tabs.addTab(p, "Board")
    qtbot.addWidget(tabs)
    tabs.show()
    qtbot.waitExposed(tabs)
    qtbot.wait(100)
    assert p.biased is None and p._key is None
    tabs.setCurrentWidget(p)
    qtbot.waitUntil(lambda: p.biased is not None, timeout=WAIT_MS)
