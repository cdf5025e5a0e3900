"""The plain-Python document model and its undo history (no Qt, no display)."""

from __future__ import annotations

import subprocess
import sys

import pytest
from numpy.testing import assert_allclose

from bandsmith.app.document.history import Edit, History
from bandsmith.app.document.model import Document
from bandsmith.circuits import get_topology
from bandsmith.files.session import CandidateEntry, Session, Target


def _session() -> Session:
    example = dict(get_topology("mfb").example)
    return Session(
        target=Target(f0_hz=2000.0, q=5.0, gain=2.0),
        candidates=(CandidateEntry("mfb", "mfb", example), CandidateEntry("mfb-2", "mfb", example, enabled=False)),
    )


class Recorder:
    """Connects to every notification of a Document and keeps them in order as (name, args)."""

    NAMES = ("session_changed", "analyses_changed", "path_changed", "clean_changed", "current_changed", "notice")

    def __init__(self, doc: Document):
        self.seen: list[tuple[str, tuple]] = []
        for name in self.NAMES:
            getattr(doc, name).connect(lambda *a, n=name: self.seen.append((n, a)))

    def names(self) -> list[str]:
        return [n for n, _ in self.seen]


@pytest.fixture
def doc() -> Document:
    return Document(_session(), "/tmp/x.bandsmith.json")


def test_starts_clean_analysed_and_current(doc):
    assert doc.is_clean
    assert doc.path == "/tmp/x.bandsmith.json"
    assert doc.current_id == "mfb"  # the first enabled candidate
    assert list(doc.results) == ["mfb"]  # the switched-off one is not analysed
    assert doc.result("mfb").ok
    assert not doc.history.can_undo and not doc.history.can_redo


def test_edit_undo_redo_and_clean_state(doc):
    before = doc.session
    doc.set_snap("mfb", "E24")
    doc.set_part("mfb", "R1", 4750.0)
    # 4750 Ω lies between the E24 values 4.7 k and 5.1 k, nearer 4.7 k (IEC 60063, Table 1).
    assert_allclose(doc.session.candidate("mfb").values["R1"], 4700.0)
    assert not doc.is_clean
    assert doc.history.undo_text == "R1 of mfb = 4.7 kΩ"
    doc.undo()
    assert doc.history.redo_text == "R1 of mfb = 4.7 kΩ"
    doc.undo()
    assert doc.session == before and doc.is_clean
    doc.redo()
    assert doc.session.candidate("mfb").snap == "E24" and not doc.is_clean


def test_an_edit_that_changes_nothing_is_not_a_step(doc):
    doc.edit(doc.session, "nothing")
    assert not doc.history.can_undo and doc.is_clean


def test_save_moves_the_clean_point_and_a_new_edit_after_undo_loses_it(doc):
    doc.set_enabled("mfb-2", True)
    doc.mark_saved("/tmp/y.bandsmith.json")
    assert doc.is_clean and doc.path == "/tmp/y.bandsmith.json"
    doc.undo()
    assert not doc.is_clean
    doc.redo()
    assert doc.is_clean
    doc.undo()
    doc.set_pinned("mfb", True)  # the saved state was redoable only; now it is gone for good
    assert not doc.history.can_redo
    doc.undo()
    assert not doc.is_clean


def test_replace_document_clears_history_and_may_stay_unsaved(doc):
    doc.set_pinned("mfb", True)
    doc.replace_document(_session(), None, clean=False)
    assert not doc.history.can_undo and doc.path == ""
    assert not doc.is_clean  # a restored recovery copy is not the file's content
    doc.mark_saved("/tmp/z.bandsmith.json")
    assert doc.is_clean


def test_results_follow_edits_and_undo_reuses_them(doc):
    first = doc.result("mfb")
    doc.set_part("mfb", "R1", 15000.0)
    changed = doc.result("mfb")
    assert changed is not first
    # Centre gain of the multiple-feedback band-pass with an ideal op-amp: R3·C2 / (R1·(C1 + C2)),
    # = R3 / (2·R1) with equal capacitors (common practice, no source; it follows from the circuit's
    # transfer function, whatever R2). 82 kΩ / (2 · 10 kΩ) = 4.1, then 82 kΩ / (2 · 15 kΩ) ≈ 2.733.
    assert_allclose(abs(float(first.figures.gain_center)), 4.1, rtol=1e-6)
    assert_allclose(abs(float(changed.figures.gain_center)), 82.0 / 30.0, rtol=1e-6)
    doc.undo()
    assert doc.result("mfb") is first  # the cached result of the earlier document
    doc.set_enabled("mfb", False)
    assert doc.result("mfb") is None and "mfb" not in doc.results


def test_notifications_in_order(doc):
    rec = Recorder(doc)
    doc.set_part("mfb", "R1", 12000.0)
    assert rec.names() == ["session_changed", "analyses_changed", "clean_changed"]
    assert rec.seen[0][1] == (doc.session,)
    assert rec.seen[2][1] == (False,)
    rec.seen.clear()
    doc.undo()
    assert rec.names() == ["session_changed", "analyses_changed", "clean_changed"]
    assert rec.seen[2][1] == (True,)
    rec.seen.clear()
    doc.mark_saved("/tmp/other.json")
    assert rec.seen == [("path_changed", ("/tmp/other.json",))]  # already clean: no clean_changed
    rec.seen.clear()
    doc.set_current("mfb-2")
    doc.set_current("mfb-2")
    assert rec.seen == [("current_changed", ("mfb-2",))]


def test_removing_the_current_candidate_picks_another(doc):
    rec = Recorder(doc)
    doc.remove("mfb")
    assert doc.current_id == "mfb-2"
    assert ("current_changed", ("mfb-2",)) in rec.seen


def test_duplicate_gets_a_new_style_and_becomes_current(doc):
    new = doc.duplicate("mfb")
    assert doc.current_id == new
    assert doc.session.candidate(new).values == doc.session.candidate("mfb").values
    assert doc.style_index(new) != doc.style_index("mfb")
    assert doc.history.undo_text == f"duplicate mfb as {new}"


def test_extras_set_and_removed_undoably(doc):
    doc.set_extra("noise", {"temp_c": 27.0}, "noise temperature")
    assert doc.session.extras["noise"] == {"temp_c": 27.0}
    doc.set_extra("noise", None, "no noise settings")
    assert "noise" not in doc.session.extras
    doc.undo()
    assert doc.session.extras["noise"] == {"temp_c": 27.0}


def test_history_alone_with_plain_values():
    shown: list[int] = []
    h: History[int] = History(shown.append)
    changes: list[None] = []
    cleans: list[bool] = []
    h.changed.connect(lambda: changes.append(None))
    h.clean_changed.connect(cleans.append)
    h.push(Edit(0, 1, "one"))
    h.push(Edit(1, 2, "two"))
    h.undo()
    h.undo()
    h.undo()  # nothing left: no call, no notification
    assert shown == [1, 2, 1, 0]
    assert len(changes) == 4 and cleans == [False, True]
    h.redo()
    h.clear()
    assert (h.count, h.index, h.is_clean, h.undo_text) == (0, 0, True, "")
    assert cleans == [False, True, False, True]


def test_importing_the_document_package_never_imports_qt():
    code = (
        "import sys\n"
        "import bandsmith.app.document.model, bandsmith.app.document.history\n"
        "import bandsmith.app.document.results, bandsmith.app.document.extras_settings\n"
        "bad = sorted(m for m in sys.modules if m.split('.')[0] in ('PySide6', 'shiboken6', 'pyqtgraph'))\n"
        "print(','.join(bad))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""
