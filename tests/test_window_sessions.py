"""Sessions in the window: save/close/reopen, recent files, recovery after a crash, damaged files."""

import json
import subprocess
import sys

import pytest

from bandsmith.app.window.demo import demo_session
from bandsmith.app.window.main_window import WorkbenchWindow
from bandsmith.app.window.recovery import left_behind
from bandsmith.app.window.state import WorkbenchState
from bandsmith.files.session import dumps_session, load_session
from window_helpers import ScriptedPrompter, temp_settings

pytestmark = pytest.mark.gui


@pytest.fixture
def recovery_dir(tmp_path, monkeypatch):
    d = tmp_path / "recovery"
    monkeypatch.setenv("BANDSMITH_RECOVERY_DIR", str(d))
    return d


def _window(qtbot, tmp_path, session=None, path=None, **answers):
    prompter = ScriptedPrompter(**answers)
    w = WorkbenchWindow(WorkbenchState(session or demo_session(), path), prompter=prompter, settings=temp_settings(tmp_path))
    qtbot.addWidget(w)
    w.show()
    return w, prompter


def _edit_something(w):
    cid = w.state.session.candidates[0].id
    ref = next(iter(w.state.session.candidate(cid).values))
    w.state.set_snap(cid, None)
    w.state.set_part(cid, ref, w.state.session.candidate(cid).values[ref] * 1.37)
    return cid, ref


def _dead_pid() -> int:
    p = subprocess.Popen([sys.executable, "-c", "pass"])
    p.wait()
    return p.pid


def test_save_close_reopen_gives_the_same_design(qtbot, tmp_path, recovery_dir):
    target = tmp_path / "work.bandsmith.json"
    w, prompter = _window(qtbot, tmp_path, save_path=[str(target)])
    _edit_something(w)
    assert w.isWindowModified() and w.windowTitle().startswith("Untitled")
    assert w.save()  # untitled: asks for a name (Save As)
    assert not w.isWindowModified()
    assert w.windowTitle().startswith("work.bandsmith.json")
    saved = w.state.session
    assert w.close()
    w2, _ = _window(qtbot, tmp_path)
    assert w2.open_path(str(target))
    assert w2.state.session == saved
    assert dumps_session(w2.state.session) == target.read_text(encoding="utf-8")
    assert str(target) in w2.recent.paths()[0]


def test_closing_unsaved_work_asks_first(qtbot, tmp_path, recovery_dir):
    w, prompter = _window(qtbot, tmp_path, unsaved=["cancel", "discard"])
    _edit_something(w)
    assert not w.close()  # cancelled: the window stays
    assert w.isVisible()
    assert w.close()  # "don't save": closes
    assert prompter.asked.count("unsaved") == 2


def test_recovery_copy_is_kept_while_unsaved_and_offered_after_a_crash(qtbot, tmp_path, recovery_dir):
    w, _ = _window(qtbot, tmp_path)
    w.keeper.timer.setInterval(20)
    with qtbot.waitSignal(w.keeper.written, timeout=3000):
        cid, ref = _edit_something(w)
    copy = w.keeper.copy_path
    assert copy.is_file()
    assert load_session(copy) == w.state.session
    edited = w.state.session
    # A crash: the process is gone and its copy stays. Simulate it by handing the copy to a
    # process id that no longer runs.
    dead = _dead_pid()
    meta = json.loads(w.keeper.meta_path.read_text())
    meta["pid"] = dead
    (recovery_dir / f"unsaved-{dead}.meta.json").write_text(json.dumps(meta))
    copy.rename(recovery_dir / f"unsaved-{dead}.bandsmith.json")
    w.keeper.meta_path.unlink()
    w.state.mark_saved(str(tmp_path / "elsewhere.json"))  # let this window close quietly
    assert [c.pid for c in left_behind(recovery_dir)] == [dead]

    w2, prompter = _window(qtbot, tmp_path, restore=["restore"])
    assert w2.offer_recovery()
    assert w2.state.session == edited
    assert not w2.state.is_clean and w2.isWindowModified()
    assert left_behind(recovery_dir) == []
    w2.state.mark_saved(str(tmp_path / "restored.json"))


def test_saving_removes_the_recovery_copy(qtbot, tmp_path, recovery_dir):
    target = tmp_path / "s.bandsmith.json"
    w, _ = _window(qtbot, tmp_path, save_path=[str(target)])
    w.keeper.timer.setInterval(20)
    with qtbot.waitSignal(w.keeper.written, timeout=3000):
        _edit_something(w)
    assert w.keeper.copy_path.is_file()
    w.save()
    assert not w.keeper.copy_path.exists()


@pytest.mark.parametrize(
    "content, words",
    [
        ('{"format": "bandsmith-session", "version": 1, "target": {', "truncated"),
        ('{"format": "bandsmith-session",, "version": 1}', "damaged"),
        (json.dumps({"format": "bandsmith-session", "version": 99, "target": {}}), "newer"),
        (json.dumps({"format": "something-else", "version": 1}), "not a Bandsmith session"),
    ],
)
def test_unusable_file_gives_its_message_and_is_not_touched(qtbot, tmp_path, recovery_dir, content, words):
    bad = tmp_path / "bad.bandsmith.json"
    bad.write_text(content, encoding="utf-8")
    before = bad.read_bytes()
    w, prompter = _window(qtbot, tmp_path)
    session = w.state.session
    assert not w.open_path(str(bad))
    assert prompter.errors and words in prompter.errors[-1][1]
    assert w.state.session is session  # the open document stays
    assert bad.read_bytes() == before


def test_open_dialog_and_recent_menu(qtbot, tmp_path, recovery_dir):
    target = tmp_path / "r.bandsmith.json"
    from bandsmith.files.session import save_session

    save_session(demo_session(), target)
    w, _ = _window(qtbot, tmp_path, open_path=[str(target)])
    w.open_dialog()
    assert w.state.path == str(target)
    w._fill_recent_menu()
    texts = [a.text() for a in w.recent_menu.actions()]
    assert any(str(target) in t for t in texts)


def test_new_session_starts_clean(qtbot, tmp_path, recovery_dir):
    w, _ = _window(qtbot, tmp_path, unsaved=["discard"])
    _edit_something(w)
    w.new_session()
    assert w.state.is_clean and not w.state.undo_stack.canUndo()
    assert w.state.path == ""
