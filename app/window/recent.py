"""The recent-files list, kept in QSettings (tests pass their own QSettings)."""

from __future__ import annotations

import os

from PySide6 import QtCore

__all__ = ["RecentFiles", "MAX_RECENT"]

MAX_RECENT = 8
_KEY = "recent_files"


class RecentFiles:
    """Most recently used session files first, at most :data:`MAX_RECENT`."""

    def __init__(self, settings: QtCore.QSettings):
        self.settings = settings

    def paths(self) -> list[str]:
        v = self.settings.value(_KEY, [])
        if isinstance(v, str):
            v = [v]
        return [str(p) for p in (v or [])]

    def add(self, path: str) -> None:
        path = os.path.abspath(path)
        items = [p for p in self.paths() if p != path]
        self.settings.setValue(_KEY, [path] + items[: MAX_RECENT - 1])
        self.settings.sync()

    def remove(self, path: str) -> None:
        self.settings.setValue(_KEY, [p for p in self.paths() if p != path])
        self.settings.sync()

    def clear(self) -> None:
        self.settings.setValue(_KEY, [])
        self.settings.sync()
