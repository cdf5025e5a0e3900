"""The window's at-a-glance comparison, the columns' verdicts and sensitivities, and the limits dialog.

The verdicts shown are checked against the core's own comparison (:func:`bandsmith.verdict.compare_verdicts`)
on a session made of the core's designs; the sensitivities against
:attr:`bandsmith.analysis.analyzer.Analysis.sensitivity`. Screenshots at 1366×768 and 1920×1080 are kept
in tests/_artifacts/ (not committed) for a person to look at.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from PySide6 import QtCore, QtGui, QtWidgets

from bandsmith.app.window.demo import demo_session
from bandsmith.app.window.main_window import WorkbenchWindow
from bandsmith.app.window.widgets.comparison_table import COLUMNS, RECOMMENDED_MARK, VERDICT_LOOK
from bandsmith.app.window.widgets.verdict_limits_dialog import VerdictLimitsDialog
from bandsmith.design.candidate import Candidate, Conditions
from bandsmith.design.designer import Spec
from bandsmith.files.session import CandidateEntry, Session, Target
from bandsmith.verdict import compare_verdicts
from window_helpers import open_window

pytestmark = pytest.mark.gui

ARTIFACTS = Path(__file__).parent / "_artifacts"
# Invented test target (our own scenario, no source needed): a 1.2 kHz tone filter, Q 4, gain 2.
SPEC = Spec(1200.0, 4.0, 2.0)


@pytest.fixture(scope="module")
def core():
    return compare_verdicts(SPEC, series="E24", conditions=Conditions())


def _core_session(core) -> Session:
    cands = tuple(CandidateEntry(r.topology_id, r.topology_id, dict(r.chosen), snap="E24") for r in core.results if r.feasible)
    return Session(target=Target(1200.0, 4.0, 2.0), candidates=cands)


def _window(qtbot, tmp_path, monkeypatch, session: Session) -> WorkbenchWindow:
    return open_window(qtbot, tmp_path, monkeypatch, session, show=False, recovery=False)


@pytest.fixture
def window(qtbot, tmp_path, monkeypatch, core):
    return _window(qtbot, tmp_path, monkeypatch, _core_session(core))


def _rows(w: WorkbenchWindow) -> dict[str, int]:
    t = w.comparison
    return {t.row_id(i): i for i in range(t.table.rowCount())}


def test_one_row_per_candidate_with_the_core_verdict_and_rank(window, core):
    t = window.comparison
    rows = _rows(window)
    assert sorted(rows) == sorted(c.id for c in window.state.session.candidates)
    for r, v, rank in core.ranked():
        if not r.feasible:
            continue
        i = rows[r.topology_id]
        assert t.cell_text(i, "Verdict") == f"{VERDICT_LOOK[v.verdict][0]} {v.verdict}"
        assert t.cell_text(i, "parts") == str(v.part_count)
        assert t.cell_text(i, "L") == ("yes" if v.needs_inductor else "no")
        assert t.cell_text(i, "yield") == f"{100 * v.yield_fraction:.1f} %"
        col = window.board.columns[r.topology_id]
        assert col.verdict_badge.verdict == v.verdict
        for reason in v.reasons:
            assert reason.text in QtGui.QTextDocumentFragment.fromHtml(col.verdict_details.reasons.text()).toPlainText()
    # The ranks of the judged candidates follow the core's ranking.
    core_order = [r.topology_id for r, _, _ in core.ranked() if r.feasible]
    ranks = {cid: int(t.cell_text(i, "#").lstrip(RECOMMENDED_MARK)) for cid, i in rows.items()}
    assert sorted(ranks, key=ranks.get) == core_order


def test_the_recommended_candidate_is_marked(window, core):
    assert core.recommended is not None
    t = window.comparison
    rows = _rows(window)
    marked = [cid for cid, i in rows.items() if t.cell_text(i, "#").startswith(RECOMMENDED_MARK)]
    assert marked == [core.recommended]
    assert "Recommended:" in t.summary.text() and core.recommended in t.summary.text()
    assert "recommended" in window.board.columns[core.recommended].verdict_badge.text()
    for cid in rows:
        if cid != core.recommended:
            assert "recommended" not in window.board.columns[cid].verdict_badge.text()
    # Every badge fits its column (the recommended one is the longest).
    window.resize(1366, 768)
    window.show()
    for col in window.board.columns.values():
        assert col.verdict_badge.sizeHint().width() <= col.verdict_badge.width(), col.verdict_badge.text()


def test_a_limit_changed_in_the_dialog_changes_a_verdict_and_is_undoable(window, core):
    i = _rows(window)["mfb"]
    t = window.comparison
    before = t.cell_text(i, "Verdict")
    assert before.endswith("buildable") and "not" not in before
    dialog = window.show_verdict_limits()
    assert isinstance(dialog, VerdictLimitsDialog)
    dialog.fields["r_spread_marginal"].setText("1.5")
    dialog.fields["r_spread_max"].setText("2")
    dialog.accept()
    assert t.cell_text(i, "Verdict") == f"{VERDICT_LOOK['not buildable'][0]} not buildable"
    assert "resistor spread" in window.board.columns["mfb"].verdict_details.reasons.text()
    assert window.state.session.extras["verdict_limits"]["r_spread_max"] == 2.0
    window.act_undo.trigger()
    assert t.cell_text(i, "Verdict") == before
    assert "verdict_limits" not in window.state.session.extras
    window.act_redo.trigger()
    assert "not buildable" in t.cell_text(i, "Verdict")


def test_a_bad_limit_keeps_the_dialog_open_naming_the_field(window):
    dialog = window.show_verdict_limits()
    dialog.fields["yield_min"].setText("95")  # above the marginal yield (90 %)
    dialog.accept()
    assert dialog.isVisible() and "yield-min" in dialog.error.text()
    assert "verdict_limits" not in window.state.session.extras
    dialog.fields["yield_min"].setText("lots")
    dialog.accept()
    assert dialog.isVisible() and "yield-min" in dialog.error.text()
    dialog.reject()


def test_the_current_candidate_shows_its_sensitivities(window, qtbot):
    window.resize(1920, 1080)
    window.show()
    qtbot.waitExposed(window)
    cur = window.state.current_id
    for cid, col in window.board.columns.items():
        assert col.verdict_details.sensitivities.isVisibleTo(col) == (cid == cur)
    col = window.board.columns[cur]
    sens = Candidate(col.topology.id, window.state.session.candidate(cur).values).analyze(window.state.session.conditions_for(cur)).sensitivity
    table = col.verdict_details.sensitivities
    assert table.rowCount() == len(sens["f0"])
    for i in range(table.rowCount()):
        ref = table.item(i, 0).text()
        for c, key in ((1, "f0"), (2, "q"), (3, "gain")):
            shown = float(table.item(i, c).text().replace("−", "-"))
            assert shown == pytest.approx(sens[key][ref], abs=0.006)
    # Clicking another row of the comparison selects that candidate, and its column shows them instead.
    other = next(cid for cid in window.board.columns if cid != cur)
    t = window.comparison.table
    rect = t.visualItemRect(t.item(_rows(window)[other], 2))
    qtbot.mouseClick(t.viewport(), QtCore.Qt.MouseButton.LeftButton, pos=rect.center())
    assert window.state.current_id == other
    assert window.board.columns[other].verdict_details.sensitivities.isVisibleTo(window.board.columns[other])
    assert not window.board.columns[cur].verdict_details.sensitivities.isVisibleTo(window.board.columns[cur])


def _header_fits(table: QtWidgets.QTableWidget) -> list[str]:
    """Headers whose text is wider than their section (with the header's own padding)."""
    hh = table.horizontalHeader()
    fm = QtGui.QFontMetrics(hh.font())
    bad = []
    for c in range(hh.count()):
        text = table.horizontalHeaderItem(c).text()
        if fm.horizontalAdvance(text) > hh.sectionSize(c):
            bad.append(f"{text}: {fm.horizontalAdvance(text)} > {hh.sectionSize(c)}")
    return bad


@pytest.mark.parametrize("size", [(1366, 768), (1920, 1080)])
def test_the_comparison_fits_without_scrolling(qtbot, tmp_path, monkeypatch, size):
    w = _window(qtbot, tmp_path, monkeypatch, demo_session())
    w.resize(*size)
    w.show()
    qtbot.waitExposed(w)
    qtbot.wait(50)
    ARTIFACTS.mkdir(exist_ok=True)
    assert w.grab().save(str(ARTIFACTS / f"comparison_{size[0]}x{size[1]}.png"))
    t = w.comparison.table
    assert t.rowCount() == len(w.state.session.candidates)
    assert _header_fits(t) == []
    # Every cell's text fits its column too (no "…").
    fm = QtGui.QFontMetrics(t.font())
    bold = QtGui.QFont(t.font())
    bold.setBold(True)
    fmb = QtGui.QFontMetrics(bold)
    for i in range(t.rowCount()):
        for c in range(len(COLUMNS)):
            item = t.item(i, c)
            width = (fmb if item.font().bold() else fm).horizontalAdvance(item.text())
            assert width <= t.columnWidth(c), (item.text(), width, t.columnWidth(c))
    # The whole table lies inside the window's visible area and shows every row without a scroll bar.
    top_left = t.mapTo(w, QtCore.QPoint(0, 0))
    assert w.rect().contains(QtCore.QRect(top_left, t.size()))
    assert not t.verticalScrollBar().isVisible() and not t.horizontalScrollBar().isVisible()
    last = t.visualItemRect(t.item(t.rowCount() - 1, len(COLUMNS) - 1))
    assert t.viewport().rect().contains(last)
    # The recommendation beside it is on screen, not squeezed to nothing.
    s = w.comparison.summary
    assert s.isVisible() and s.width() >= 300 and s.height() >= s.heightForWidth(s.width()) - 2
    # The current column's sensitivity table: every header fits.
    col = w.board.columns[w.state.current_id]
    assert _header_fits(col.verdict_details.sensitivities) == []
    for col in w.board.columns.values():
        assert col.verdict_badge.sizeHint().width() <= col.verdict_badge.width(), col.verdict_badge.text()


def test_a_damaged_limits_section_is_noted_and_the_defaults_used(qtbot, tmp_path, monkeypatch, core):
    s = _core_session(core)
    from dataclasses import replace

    w = _window(qtbot, tmp_path, monkeypatch, replace(s, extras={"verdict_limits": {"yield_min": "half"}}))
    text = w.comparison.summary.text()
    assert "verdict limits cannot be used" in text and "defaults apply" in text
    assert f"{RECOMMENDED_MARK}1" in [w.comparison.cell_text(i, "#") for i in range(w.comparison.table.rowCount())]


def test_a_part_typed_far_off_still_gets_a_verdict_with_its_reason(window):
    window.state.set_part("mfb", "R3", 1.0)  # 1 Ω: below the practical range, the figures far off
    i = _rows(window)["mfb"]
    assert window.comparison.cell_text(i, "Verdict").endswith("not buildable")
    reasons = window.board.columns["mfb"].verdict_details.reasons.text()
    assert "R3 = 1 Ω is below 100 Ω" in reasons and "misses the target" in reasons
