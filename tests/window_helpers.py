"""Shared pieces of the window tests: a scripted prompter and window factories."""

from __future__ import annotations

from PySide6 import QtCore

from bandsmith.app.window.prompts import Prompter


class ScriptedPrompter(Prompter):
    """Answers from lists (first in, first out) instead of modal dialogs; records every message."""

    def __init__(self, **answers):
        self.answers = {k: list(v) for k, v in answers.items()}
        self.errors: list[tuple[str, str]] = []
        self.infos: list[tuple[str, str]] = []
        self.asked: list[str] = []

    def _next(self, key, default):
        self.asked.append(key)
        queue = self.answers.get(key)
        return queue.pop(0) if queue else default

    def ask_unsaved(self, parent, name):
        return self._next("unsaved", "cancel")

    def ask_open_path(self, parent, folder):
        return self._next("open_path", None)

    def ask_save_path(self, parent, suggested, filters=None):
        return self._next("save_path", None)

    def ask_restore(self, parent, original, when):
        return self._next("restore", "later")

    def error(self, parent, title, text):
        self.errors.append((title, text))

    def info(self, parent, title, text):
        self.infos.append((title, text))


def temp_settings(tmp_path) -> QtCore.QSettings:
    """A QSettings file of the test's own (the user's settings are never touched)."""
    return QtCore.QSettings(str(tmp_path / "settings.ini"), QtCore.QSettings.Format.IniFormat)
