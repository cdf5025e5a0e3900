"""The window's state object: edits, undo/redo, snapping, switches, analyses (no widgets)."""

import pytest
from numpy.testing import assert_allclose
from PySide6 import QtCore

from bandsmith.app.window.demo import demo_session
from bandsmith.app.window.state import WorkbenchState

pytestmark = pytest.mark.gui


@pytest.fixture
def state(qapp):
    return WorkbenchState(demo_session())


def _first(state):
    return state.session.candidates[0]


def test_every_enabled_candidate_is_analysed(state):
    ids = [c.id for c in state.session.candidates if c.enabled]
    assert list(state.results) == ids
    assert all(r.ok for r in state.results.values())


def test_part_edit_is_undoable_and_snaps(state, qtbot):
    entry = _first(state)
    ref = state.session.candidate(entry.id)
    ref_name = next(iter(entry.values))
    state.set_snap(entry.id, "E24")
    with qtbot.waitSignal(state.analyses_changed):
        state.set_part(entry.id, ref_name, 4750.0)
    # 4750 lies between the E24 values 4.7k and 5.1k, nearer 4.7k (IEC 60063, Table 1).
    assert_allclose(state.session.candidate(entry.id).values[ref_name], 4700.0)
    assert not state.is_clean
    state.undo_stack.undo()
    state.undo_stack.undo()
    assert state.session.candidate(entry.id) == ref
    assert state.is_clean
    state.undo_stack.redo()
    assert state.session.candidate(entry.id).snap == "E24"


def test_switch_off_drops_results_and_back(state):
    cid = _first(state).id
    state.set_enabled(cid, False)
    assert cid not in state.results
    state.undo_stack.undo()
    assert cid in state.results


def test_duplicate_and_remove(state):
    cid = _first(state).id
    n = len(state.session.candidates)
    new = state.duplicate(cid)
    assert len(state.session.candidates) == n + 1
    assert state.session.candidate(new).values == state.session.candidate(cid).values
    assert state.style(new) != state.style(cid)
    state.remove(new)
    assert len(state.session.candidates) == n


def test_undo_reuses_cached_results(state):
    cid = _first(state).id
    before = state.results[cid]
    ref = next(iter(state.session.candidate(cid).values))
    state.set_part(cid, ref, state.session.candidate(cid).values[ref] * 1.5)
    assert state.results[cid] is not before
    state.undo_stack.undo()
    assert state.results[cid] is before


def test_opamp_change_reanalyses_with_finite_gbw(state):
    state.set_opamp(gbw_hz=1e5)
    res = next(iter(state.results.values()))
    assert res.conditions.gbw_hz == 1e5
    assert res.analysis.actual is not None


def test_the_adapter_re_emits_the_document_as_qt_signals(state):
    seen = []
    state.session_changed.connect(lambda s: seen.append(("session", s)))
    state.analyses_changed.connect(lambda: seen.append(("analyses", None)))
    state.clean_changed.connect(lambda c: seen.append(("clean", c)))
    state.path_changed.connect(lambda p: seen.append(("path", p)))
    cid = _first(state).id
    assert state.document.session is state.session
    state.set_pinned(cid, not _first(state).pinned)
    assert seen == [("session", state.session), ("analyses", None), ("clean", False)]
    seen.clear()
    state.mark_saved("/tmp/adapter.bandsmith.json")
    assert seen[0] == ("path", "/tmp/adapter.bandsmith.json")
    assert set(seen[1:]) == {("clean", True)}  # told at least once, never anything else
    assert state.is_clean


def test_undo_and_redo_actions_follow_the_plain_history(state):
    parent = QtCore.QObject()
    undo = state.undo_stack.createUndoAction(parent, "&Undo")
    redo = state.undo_stack.createRedoAction(parent, "&Redo")
    assert (undo.isEnabled(), undo.text(), redo.isEnabled(), redo.text()) == (False, "&Undo", False, "&Redo")
    cid = _first(state).id
    state.set_enabled(cid, False)
    assert undo.isEnabled() and undo.text() == f"&Undo switch {cid} off"
    undo.trigger()
    assert _first(state).enabled and not undo.isEnabled()
    assert redo.isEnabled() and redo.text() == f"&Redo switch {cid} off"
    redo.trigger()
    assert not _first(state).enabled
    del parent  # the actions go with their parent; a later edit must not touch them
    state.set_enabled(cid, True)
