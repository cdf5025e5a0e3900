"""The op-amp shelf pane: editor, verdicts (words beside colours), the chosen pair, session copy."""

from pathlib import Path

import pytest
from PySide6 import QtCore

from bandsmith.app.window.demo import demo_session
from bandsmith.app.window.panes.shelf_pane import SESSION_KEY, VERDICT_LOOK, ShelfPane
from bandsmith.app.window.state import WorkbenchState
from bandsmith.bench.fitcheck import VERDICTS
from bandsmith.bench.shelf import ARCHETYPES, OpAmp, ShelfState, load_shelf, open_shelf, save_shelf
from window_helpers import open_window, screenshot, show_widget

pytestmark = pytest.mark.gui

ARTIFACTS = Path(__file__).parent / "_artifacts"


def bench(**over):
    base = dict(
        name="bench amp", gbw_hz=200e6, a0=1e5, slew_v_per_us=1e3, iout_max_ma=500.0, supply_min_v=2.0,
        supply_max_v=40.0, swing_neg_v=0.5, swing_pos_v=0.5, cm_neg_v=0.5, cm_pos_v=0.5,
    )
    base.update(over)
    return OpAmp(**base)


@pytest.fixture
def state():
    return WorkbenchState(demo_session())


@pytest.fixture
def pane(qtbot, state, tmp_path):
    shelf = ShelfState((bench(),) + ARCHETYPES[:2], tmp_path / "shelf.json", False, None)
    return show_widget(qtbot, ShelfPane(state, shelf), (1280, 760))


def active(state):
    return [c.id for c in state.session.candidates if c.enabled]



def editor_cell(pane, row, header):
    for c in range(pane.editor.columnCount()):
        if pane.editor.horizontalHeaderItem(c).text() == header:
            return pane.editor.item(row, c)
    raise KeyError(header)


def test_every_pair_has_a_word_and_a_symbol(pane, state):
    ids = active(state)
    assert pane.verdicts.columnCount() == len(ids) + 1  # and the "why" column
    assert pane.verdicts.rowCount() == 3
    for cid in ids:
        for a in pane.amps():
            text = pane.cell_text(cid, a.name)
            word = text.split(" ", 1)[1]
            assert word in VERDICTS  # the word itself is on screen, not only a colour
            assert text.startswith(VERDICT_LOOK[word][0])
            pos = pane._position(cid, a.name)
            tip = pane.verdicts.item(*pos).toolTip()
            assert a.name in tip and "margins:" in tip


def test_editing_gbw_flips_the_verdict_where_the_margin_crosses_1(pane, state, qtbot):
    cid = active(state)[0]
    need = pane.verdict(cid, "bench amp").needs.gbw_hz
    assert pane.cell_text(cid, "bench amp").endswith("fits")
    item = editor_cell(pane, 0, "GBW")
    item.setText(repr(need * 0.999))  # as typed by the user
    qtbot.waitUntil(lambda: pane.cell_text(cid, "bench amp").endswith("does not fit"))
    assert pane.shelf.amps[0].gbw_hz == pytest.approx(need * 0.999, rel=1e-12)
    editor_cell(pane, 0, "GBW").setText(repr(need * 1.001))
    qtbot.waitUntil(lambda: pane.cell_text(cid, "bench amp").endswith("marginal"))
    editor_cell(pane, 0, "GBW").setText("200M")
    qtbot.waitUntil(lambda: pane.cell_text(cid, "bench amp").endswith("fits") and "not" not in pane.cell_text(cid, "bench amp"))
    assert pane.shelf.modified


def test_bad_cell_shows_why_and_keeps_the_model(pane):
    before = pane.shelf.amps
    item = editor_cell(pane, 0, "GBW")
    item.setText("4x7")
    assert pane.editor_error.isVisible() and "gbw_hz" in pane.editor_error.text()
    assert pane.shelf.amps == before
    assert editor_cell(pane, 0, "GBW").text() == "200 MHz"
    editor_cell(pane, 0, "name").setText(ARCHETYPES[0].name.upper())  # a name already on the shelf
    assert "already named" in pane.editor_error.text() and pane.shelf.amps == before
    editor_cell(pane, 0, "2nd pole").setText("300M")
    assert pane.shelf.amps[0].f_p2_hz == 300e6 and not pane.editor_error.isVisible()
    editor_cell(pane, 0, "2nd pole").setText("")
    assert pane.shelf.amps[0].f_p2_hz is None


def test_choosing_shows_reasons_overlay_and_headroom(pane, state, qtbot):
    cid = active(state)[0]
    row = [a.name for a in pane.amps()].index(ARCHETYPES[0].name)
    col = active(state).index(cid)
    rect = pane.verdicts.visualItemRect(pane.verdicts.item(row, col))
    with qtbot.waitSignal(pane.chosen_changed) as sig:
        qtbot.mouseClick(pane.verdicts.viewport(), QtCore.Qt.MouseButton.LeftButton, pos=rect.center())
    assert sig.args == [cid, ARCHETYPES[0].name]
    v = pane.verdict(cid, ARCHETYPES[0].name)
    assert v.verdict in pane.detail_title.text() and ARCHETYPES[0].name in pane.detail_title.text()
    assert all(r.split(":")[0][:20] in pane.detail_reasons.text() for r in v.reasons)
    x, y = pane.curve_amp.getData()
    assert x is not None and len(x) == 400
    xi, yi = pane.curve_ideal.getData()
    assert len(xi) == 400
    nodes = [pane.headroom_table.item(r, 0).text() for r in range(pane.headroom_table.rowCount())]
    assert any("limits first" in n for n in nodes)
    assert nodes[0].startswith("in")
    assert "Largest input" in pane.max_input.text() and v.headroom.limiting_node in pane.max_input.text()


def test_supply_lives_in_the_session_and_undoes(pane, state, qtbot):
    cid = active(state)[0]
    pane.choose(cid, "bench amp")
    before = pane.verdict(cid, "bench amp").headroom.max_vin_v
    pane.supply.edit.setFocus()
    pane.supply.edit.selectAll()
    qtbot.keyClicks(pane.supply.edit, "5")
    qtbot.keyClick(pane.supply.edit, QtCore.Qt.Key.Key_Return)
    assert state.session.extras[SESSION_KEY]["supply_v"] == 5.0
    qtbot.waitUntil(lambda: pane.verdict(cid, "bench amp").headroom.supply_v == 5.0)
    assert pane.verdict(cid, "bench amp").headroom.max_vin_v < before
    state.undo_stack.undo()
    assert SESSION_KEY not in state.session.extras
    assert pane.supply.value == 15.0


def test_copy_to_session_keeps_the_model(pane, state, tmp_path):
    cid = active(state)[0]
    pane.choose(cid, "bench amp")
    assert pane.btn_copy.isEnabled()
    pane.btn_copy.click()
    sec = state.session.extras[SESSION_KEY]
    assert sec["chosen"] == {cid: "bench amp"}
    assert OpAmp.from_json(sec["amps"][0]) == bench()
    # It survives a save and a load of the session, and shows on a shelf that lacks it.
    from bandsmith.files.session import load_session, save_session

    path = tmp_path / "s.bandsmith.json"
    save_session(state.session, path)
    other = WorkbenchState(load_session(path))
    p2 = ShelfPane(other, ShelfState(ARCHETYPES[:1], None, False, None))
    p2.refresh()
    assert [a.name for a in p2.amps()] == [ARCHETYPES[0].name, "bench amp"]
    assert "(session)" in p2.verdicts.verticalHeaderItem(1).text()
    p2.deleteLater()


def test_add_duplicate_remove_restore_save(pane, tmp_path):
    n = len(pane.shelf.amps)
    pane.btn_add.click()
    assert len(pane.shelf.amps) == n + 1 and pane.shelf.amps[-1].name == "my op-amp"
    pane.editor.setCurrentCell(0, 0)
    pane.btn_dup.click()
    assert pane.shelf.amps[1].name == "bench amp copy"
    pane.editor.setCurrentCell(1, 0)
    pane.btn_remove.click()
    assert [a.name for a in pane.shelf.amps].count("bench amp copy") == 0
    pane.btn_restore.click()
    assert {a.name for a in ARCHETYPES} <= {a.name for a in pane.shelf.amps}
    assert pane.btn_save.isEnabled()
    pane.btn_save.click()
    assert load_shelf(tmp_path / "shelf.json") == pane.shelf.amps
    assert not pane.shelf.modified and not pane.btn_save.isEnabled()
    assert "saved" in pane.shelf_file.text()


def test_damaged_shelf_file_banner_archetypes_file_untouched(qtbot, state, tmp_path):
    p = tmp_path / "shelf.json"
    p.write_text('{"format": "bandsmith-shelf", "version": 1, "amps": [')
    before = p.read_bytes()
    pane = ShelfPane(state, open_shelf(p))
    qtbot.addWidget(pane)
    pane.show()
    assert pane.banner.isVisible() and "truncated" in pane.banner.text() and "archetypes" in pane.banner.text()
    assert pane.shelf.amps == ARCHETYPES
    assert pane.verdicts.rowCount() == len(ARCHETYPES)
    assert p.read_bytes() == before  # only an explicit save replaces it
    pane.save_shelf()
    assert load_shelf(p) == ARCHETYPES and not pane.banner.isVisible()


def test_main_window_has_the_pane(qtbot, tmp_path, monkeypatch):
    shelf = tmp_path / "cfg" / "shelf.json"
    save_shelf((bench(),), shelf)
    monkeypatch.setenv("BANDSMITH_SHELF", str(shelf))
    w = open_window(qtbot, tmp_path, monkeypatch, show=False)
    titles = [w.panes.tabText(i) for i in range(w.panes.count())]
    assert "Op-amp shelf" in titles
    assert w.shelf_pane.shelf.amps == (bench(),)
    w.resize(1600, 900)
    w.show()
    qtbot.waitExposed(w)
    w.panes.setCurrentWidget(w.shelf_pane)
    cid = active(w.state)[0]
    qtbot.waitUntil(lambda: w.shelf_pane.verdicts.rowCount() == 1)
    w.shelf_pane.choose(cid, "bench amp")
    qtbot.wait(30)
    ARTIFACTS.mkdir(exist_ok=True)
    p = w.shelf_pane
    screenshot(w, ARTIFACTS / "shelf_pane_window.png", regions=(p.verdicts, p.plot, p.headroom_table), labels=(p.detail_title,))


def test_screenshot_of_the_pane(pane, state, qtbot):
    pane.choose("sallen-key" if "sallen-key" in active(state) else active(state)[0], ARCHETYPES[1].name)
    qtbot.wait(30)
    ARTIFACTS.mkdir(exist_ok=True)
    image = screenshot(pane, ARTIFACTS / "shelf_pane.png", regions=(pane.verdicts, pane.plot, pane.headroom_table), labels=(pane.detail_title,))
    assert image.width() == 1280
