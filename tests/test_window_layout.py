"""The window's layout at a laptop size (1366×768) and a desktop size (1920×1080), pane by pane.

For every pane tab: each visible table's header texts fit their sections (the text's advance in
the header's font plus the header's padding ≤ the section's width), and the pane's essential
controls lie wholly inside the window (after scrolling their scroll area to them, as a user would).
The screenshots are saved under tests/_artifacts/ for a person to look at.

What the screenshots showed before the layout work, and what was changed: at 1366×768 the window
was 787 px high (three rows of 170 px plots could not shrink) and "+ Add candidate" scrolled away
with the columns; 2½ columns showed; the shelf's verdict columns were hidden beside its plot and an
empty 2–9 Hz plot showed before a verdict was picked; the measured pane's part tables, side by
side with stretched columns, cut their headers ("art alor"); the chain pane showed three empty
plots with overlapping ticks. Now: plots fit 768 px, the add button sits in a strip that never
scrolls, the board shows whole columns, the shelf stacks verdicts / chosen pair / shelf on a narrow
pane, the part tables are one above the other sized to their contents, and empty plots are hidden.

Sizes: 1366×768 is the commonest laptop panel and 1920×1080 the commonest desktop one (fact of
the trade, e.g. the screen-resolution shares published by web statistics services).
"""

from __future__ import annotations

from pathlib import Path

import pytest
from PySide6 import QtCore, QtGui, QtWidgets

from window_helpers import open_window, region_of, scroll_to

pytestmark = pytest.mark.gui

ARTIFACTS = Path(__file__).parent / "_artifacts"
SIZES = [(1366, 768), (1920, 1080)]
#: Room the header needs beside its text: the style's margin on each side (common practice, no source).
PAD = 6


def _essentials(window) -> dict[str, list[tuple[str, QtWidgets.QWidget]]]:
    """The controls a user cannot do without, by pane tab title."""
    m, s, sp, n, c = window.measurement_pane, window.shelf_pane, window.spread_pane, window.noise_pane, window.chain_pane
    return {
        "Responses": [("magnitude plot", window.plot_grid.plots["magnitude"]), ("comparison table", window.comparison.table)],
        # (The deviation plot shows once a measurement is imported.)
        "Measured": [("Import button", m.import_button), ("figures table", m.figures), ("part ranking", m.ranking), ("fitted parts", m.fitted)],
        "Op-amp shelf": [("verdict table", s.verdicts), ("model editor", s.editor), ("Add model", s.btn_add)],
        "Tolerance spread": [("Run button", sp.run_button), ("per-part tolerances", sp.parts)],
        "Noise": [("noise plot", n.canvas), ("sources table", n.table)],
        "Stage chain": [("Build chain", c.form.btn_build), ("stage table", c.view.stage_table)],
        "Filter bank": [("Design bank", window.bank_pane.btn_design), ("channel table", window.bank_pane.table)],
        "Tone burst": [("burst plot", window.burst_pane.plot), ("frequency field", window.burst_pane.freq_edit)],
        "Board": [("supply field", window.board_pane.supply_edit), ("trim table", window.board_pane.trim_table)],
    }


def _header_problems(table: QtWidgets.QTableView) -> list[str]:
    out = []
    header = table.horizontalHeader()
    if not header.isVisible():
        return out
    fm = QtGui.QFontMetrics(header.font())
    model = table.model()
    for i in range(header.count()):
        if header.isSectionHidden(i) or header.sectionSize(i) <= 0:
            continue
        text = model.headerData(i, QtCore.Qt.Orientation.Horizontal, QtCore.Qt.ItemDataRole.DisplayRole)
        if not text:
            continue
        need = max(fm.horizontalAdvance(line) for line in str(text).splitlines()) + PAD
        if need > header.sectionSize(i):
            out.append(f"{table.objectName() or type(table).__name__} column {i} {text!r}: {need} px in {header.sectionSize(i)} px")
    return out


def _fully_shown(widget, window) -> bool:
    if any(isinstance(w, QtWidgets.QScrollArea) and w.widget() is not None and w.widget().isAncestorOf(widget)
           for w in _ancestors(widget)):
        scroll_to(widget)
    box = region_of(widget, window)
    return box.width() >= widget.width() - 1 and box.height() >= widget.height() - 1 and window.rect().contains(box)


def _ancestors(widget):
    w = widget.parentWidget()
    while w is not None:
        yield w
        w = w.parentWidget()


@pytest.fixture
def window(qtbot, tmp_path, monkeypatch):
    w = open_window(qtbot, tmp_path, monkeypatch, show=False, recovery=False)
    yield w
    w.state.mark_saved("")


@pytest.mark.parametrize("size", SIZES, ids=lambda s: f"{s[0]}x{s[1]}")
def test_every_pane_fits(window, qtbot, size):
    window.resize(*size)
    window.show()
    qtbot.waitExposed(window)
    qtbot.wait(30)
    assert (window.width(), window.height()) == size, "the window cannot shrink to this size"
    ARTIFACTS.mkdir(exist_ok=True)
    essentials = _essentials(window)
    problems = []
    for index in range(window.panes.count()):
        title = window.panes.tabText(index)
        window.panes.setCurrentIndex(index)
        qtbot.wait(20)
        page = window.panes.widget(index)
        window.grab().save(str(ARTIFACTS / f"layout_{size[0]}x{size[1]}_{index}_{title.replace(' ', '_')}.png"))
        tables = [t for t in page.findChildren(QtWidgets.QTableView) if t.isVisible()]
        tables.append(window.comparison.table)
        for t in tables:
            problems += [f"{title}: {p}" for p in _header_problems(t)]
        # "+ Add candidate" is reachable whatever the pane and however many candidates.
        assert title in essentials, f"name the essential controls of the {title!r} pane in _essentials"
        for name, w in [("+ Add candidate", window.board.add_button), *essentials[title]]:
            if not _fully_shown(w, window):
                problems.append(f"{title}: {name} is not wholly inside the window ({region_of(w, window)} of {w.size()})")
    assert not problems, "\n".join(problems)


def test_board_columns_and_add_button_with_many_candidates(window, qtbot):
    """With six candidates at the laptop size the board scrolls sideways and the add button stays in view."""
    window.resize(1366, 768)
    window.show()
    qtbot.waitExposed(window)
    for _ in range(2):
        window.board.add_button.menu().actions()[0].trigger()
    qtbot.wait(30)
    assert len(window.board.columns) >= 6
    assert _fully_shown(window.board.add_button, window)
    assert window.board.horizontalScrollBar().maximum() > 0
    last = list(window.board.columns.values())[-1]
    def shown():
        window.board.ensureWidgetVisible(last.title)
        assert region_of(last.title, window).width() >= last.title.width() - 1

    qtbot.waitUntil(shown, timeout=3000)


@pytest.mark.parametrize("area", [(0, 0, 1366, 728), (0, 30, 1920, 1050)], ids=["laptop", "desktop"])
def test_window_opens_sized_to_the_available_area(qtbot, tmp_path, monkeypatch, area):
    """Not a fixed 1280×800: the screen's available area (without its panels), less a title bar."""
    monkeypatch.setattr(QtGui.QScreen, "availableGeometry", lambda self: QtCore.QRect(*area))
    w = open_window(qtbot, tmp_path, monkeypatch, show=False, recovery=False)
    title = w.style().pixelMetric(QtWidgets.QStyle.PixelMetric.PM_TitleBarHeight)
    assert w.width() == area[2]
    assert w.height() == area[3] - title
    assert (w.x(), w.y()) == (area[0], area[1])
    w.state.mark_saved("")


def test_a_part_edit_redraws_only_the_edited_candidate(window, qtbot):
    """The edited candidate's curves change; the others' keep their very arrays; the axes stay put
    while the user edits; another column's fields are not refilled."""
    window.resize(1366, 768)
    window.show()
    qtbot.waitExposed(window)
    qtbot.wait(20)
    cols = list(window.board.columns.values())
    col, other = cols[0], cols[1]
    mag = window.plot_grid.plots["magnitude"]
    vb = mag.getPlotItem().getViewBox()
    before_range = vb.viewRange()
    before_other = mag.curves[other.candidate_id].yData
    before_edited = mag.curves[col.candidate_id].yData.copy()
    other_value = other.fields[next(iter(other.fields))].edit.text()
    ref = next(r for r in col.fields if col.topology.component(r).required)
    value = window.state.session.candidate(col.candidate_id).values[ref] * 1.2
    col.fields[ref].edit.setText(f"{value:.6g}")
    col.fields[ref].edit.editingFinished.emit()
    qtbot.wait(20)
    after_edited = mag.curves[col.candidate_id].yData
    assert after_edited.shape != before_edited.shape or not (after_edited == before_edited).all()
    assert mag.curves[other.candidate_id].yData is before_other
    assert vb.viewRange() == before_range
    assert other.fields[next(iter(other.fields))].edit.text() == other_value
    # A change of target fits the axes again.
    window.state.set_target(f0_hz=window.state.session.target.f0_hz * 2)
    qtbot.wait(20)
    assert any(vb.autoRangeEnabled())
