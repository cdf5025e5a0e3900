"""Recovery copies: unsaved work written aside while it is unsaved, offered after a crash.

While the document has unsaved changes, a copy (an ordinary session file) is written a moment
after each change (debounced) to the recovery folder, under a name that carries this process's id
and a random token drawn once per run (``unsaved-<pid>-<token>``), with a small ``.meta.json``
beside it saying which file it belongs to, the process id, the token and the process's start time
(Linux: field 22 of ``/proc/<pid>/stat``). Saving, or leaving without saving on purpose, deletes
the copy. A copy whose owner no longer runs was left by a crash: :func:`left_behind` finds those at
the next start. The owner is gone when its process id is not running, or when it runs with
another start time or (for this very process id) another token: a process id reused by a later
run, common in containers, neither hides the old copy nor overwrites it.

The folder is the platform's application-data location (``QStandardPaths``) plus ``recovery``;
the environment variable ``BANDSMITH_RECOVERY_DIR`` overrides it (tests use this).
"""

from __future__ import annotations

import json
import os
import secrets
import time
from dataclasses import dataclass
from pathlib import Path

from PySide6 import QtCore

from bandsmith.common.atomic import write_bytes_atomic
from bandsmith.files.session import SessionError, dumps_session, load_session

from bandsmith.app.window.state import WorkbenchState

__all__ = ["recovery_dir", "RecoveryCopy", "RecoveryKeeper", "left_behind", "DEBOUNCE_MS"]

DEBOUNCE_MS = 1500
_SUFFIX = ".bandsmith.json"


def recovery_dir() -> Path:
    """The recovery folder (created on demand)."""
    env = os.environ.get("BANDSMITH_RECOVERY_DIR")
    if env:
        d = Path(env)
    else:
        base = QtCore.QStandardPaths.writableLocation(QtCore.QStandardPaths.StandardLocation.AppDataLocation)
        d = Path(base or Path.home() / ".bandsmith") / "recovery"
    d.mkdir(parents=True, exist_ok=True)
    return d


_RUN_TOKEN = secrets.token_hex(6)  # this run's token: tells it from an earlier run with the same pid


def _start_time(pid: int) -> str | None:
    """The start time of process ``pid`` in clock ticks since boot (Linux), None where unknown."""
    try:
        with open(f"/proc/{pid}/stat", "rb") as fh:
            stat = fh.read().decode("ascii", "replace")
        return stat.rsplit(")", 1)[1].split()[19]
    except (OSError, IndexError):
        return None


def _owner_alive(info: dict) -> bool:
    """Whether the run that wrote a copy's meta ``info`` still runs (module notes)."""
    pid = int(info["pid"])
    if pid == os.getpid():
        run = info.get("run")
        return run is None or run == _RUN_TOKEN
    if not _alive(pid):
        return False
    start, now = info.get("start"), _start_time(pid)
    return start is None or now is None or str(start) == now


def _alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


@dataclass(frozen=True, slots=True)
class RecoveryCopy:
    """A recovery copy on disk: the copy, its meta file, the file it belongs to ("" untitled), when."""

    path: Path
    meta_path: Path
    original: str
    saved_at: float
    pid: int

    def load(self):
        """The session in the copy (SessionError if the copy itself is damaged)."""
        return load_session(self.path)

    def discard(self) -> None:
        for p in (self.path, self.meta_path):
            try:
                p.unlink()
            except FileNotFoundError:
                pass

    @property
    def when(self) -> str:
        return time.strftime("%Y-%m-%d %H:%M", time.localtime(self.saved_at))


def left_behind(folder: Path | None = None) -> list[RecoveryCopy]:
    """Copies left by processes that no longer run (newest first)."""
    d = folder or recovery_dir()
    out = []
    for meta in d.glob("unsaved-*.meta.json"):
        try:
            info = json.loads(meta.read_text(encoding="utf-8"))
            pid = int(info["pid"])
            alive = _owner_alive(info)
        except (OSError, ValueError, KeyError, TypeError, AttributeError):
            continue
        copy = meta.with_name(meta.name[: -len(".meta.json")] + _SUFFIX)
        if alive or not copy.is_file():
            continue
        out.append(RecoveryCopy(copy, meta, str(info.get("original", "")), float(info.get("saved_at", 0.0)), pid))
    return sorted(out, key=lambda c: c.saved_at, reverse=True)


class RecoveryKeeper(QtCore.QObject):
    """Keeps this process's recovery copy of a state's document up to date.

    ``written(str)`` is emitted with the copy's path after each write.
    """

    written = QtCore.Signal(str)

    def __init__(self, state: WorkbenchState, *, debounce_ms: int = DEBOUNCE_MS, folder: Path | None = None, parent: QtCore.QObject | None = None):
        super().__init__(parent)
        self.state = state
        self.folder = folder or recovery_dir()
        key = f"unsaved-{os.getpid()}-{_RUN_TOKEN}"
        self.copy_path = self.folder / f"{key}{_SUFFIX}"
        self.meta_path = self.folder / f"{key}.meta.json"
        self.timer = QtCore.QTimer(self)
        self.timer.setSingleShot(True)
        self.timer.setInterval(debounce_ms)
        self.timer.timeout.connect(self.write_now)
        state.session_changed.connect(self._on_session_changed)
        state.clean_changed.connect(self._on_clean_changed)

    def _on_session_changed(self, _session) -> None:
        if not self.state.is_clean:
            self.timer.start()

    def _on_clean_changed(self, clean: bool) -> None:
        if clean:
            self.timer.stop()
            self.discard()
        else:
            self.timer.start()

    def write_now(self) -> None:
        """Write the copy at once (if there is anything unsaved)."""
        self.timer.stop()
        if self.state.is_clean:
            return
        try:
            text = dumps_session(self.state.session)
            write_bytes_atomic(self.copy_path, text)
            meta = {"pid": os.getpid(), "run": _RUN_TOKEN, "start": _start_time(os.getpid()),
                    "original": self.state.path, "saved_at": time.time()}
            self.meta_path.write_text(json.dumps(meta), encoding="utf-8")
        except (OSError, SessionError):
            return  # a recovery copy is a courtesy; failing to write one must not disturb work
        self.written.emit(str(self.copy_path))

    def discard(self) -> None:
        """Delete this process's copy (after a save, or when leaving without saving on purpose)."""
        self.timer.stop()
        for p in (self.copy_path, self.meta_path):
            try:
                p.unlink()
            except FileNotFoundError:
                pass
