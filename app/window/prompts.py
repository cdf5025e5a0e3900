"""The questions and messages the window puts to the user, in one replaceable object.

The window never calls ``QMessageBox`` or ``QFileDialog`` directly: it asks its
:class:`Prompter`. Tests hand the window a prompter with scripted answers, so no modal dialog ever
blocks a test run.
"""

from __future__ import annotations

from PySide6 import QtWidgets

__all__ = ["Prompter", "SESSION_FILTER"]

SESSION_FILTER = "Bandsmith sessions (*.bandsmith.json *.json);;All files (*)"


class Prompter:
    """Modal dialogs for the window (the real ones)."""

    def ask_unsaved(self, parent: QtWidgets.QWidget, name: str) -> str:
        """Unsaved changes in ``name``: returns ``"save"``, ``"discard"`` or ``"cancel"``."""
        box = QtWidgets.QMessageBox(parent)
        box.setIcon(QtWidgets.QMessageBox.Icon.Warning)
        box.setWindowTitle("Unsaved changes")
        box.setText(f"{name} has changes that are not saved.")
        box.setInformativeText("Save them first?")
        save = box.addButton("Save", QtWidgets.QMessageBox.ButtonRole.AcceptRole)
        discard = box.addButton("Don't save", QtWidgets.QMessageBox.ButtonRole.DestructiveRole)
        box.addButton("Cancel", QtWidgets.QMessageBox.ButtonRole.RejectRole)
        box.setDefaultButton(save)
        box.exec()
        clicked = box.clickedButton()
        return "save" if clicked is save else "discard" if clicked is discard else "cancel"

    def ask_open_path(self, parent: QtWidgets.QWidget, folder: str) -> str | None:
        path, _ = QtWidgets.QFileDialog.getOpenFileName(parent, "Open session", folder, SESSION_FILTER)
        return path or None

    def ask_save_path(self, parent: QtWidgets.QWidget, suggested: str, filters: str = SESSION_FILTER) -> str | None:
        from bandsmith.app.window.exporting import with_chosen_suffix

        path, chosen = QtWidgets.QFileDialog.getSaveFileName(parent, "Save as", suggested, filters)
        # The file type chosen in the dialog gives the suffix when the name has none of its own.
        return with_chosen_suffix(path, chosen) or None

    def ask_restore(self, parent: QtWidgets.QWidget, original: str, when: str) -> str:
        """A recovery copy exists: returns ``"restore"``, ``"discard"`` or ``"later"``."""
        box = QtWidgets.QMessageBox(parent)
        box.setIcon(QtWidgets.QMessageBox.Icon.Question)
        box.setWindowTitle("Recover unsaved work")
        what = original or "an untitled session"
        box.setText(f"Bandsmith closed unexpectedly with unsaved changes to {what} (last kept {when}).")
        box.setInformativeText("Restore them? The file itself has not been changed.")
        restore = box.addButton("Restore", QtWidgets.QMessageBox.ButtonRole.AcceptRole)
        discard = box.addButton("Discard", QtWidgets.QMessageBox.ButtonRole.DestructiveRole)
        box.addButton("Ask again later", QtWidgets.QMessageBox.ButtonRole.RejectRole)
        box.setDefaultButton(restore)
        box.exec()
        clicked = box.clickedButton()
        return "restore" if clicked is restore else "discard" if clicked is discard else "later"

    def ask_choice(self, parent: QtWidgets.QWidget, title: str, label: str, items: list[str]) -> str | None:
        """One of ``items`` (the first preselected), or None when cancelled."""
        item, ok = QtWidgets.QInputDialog.getItem(parent, title, label, items, 0, False)
        return item if ok else None

    def error(self, parent: QtWidgets.QWidget, title: str, text: str) -> None:
        QtWidgets.QMessageBox.warning(parent, title, text)

    def info(self, parent: QtWidgets.QWidget, title: str, text: str) -> None:
        QtWidgets.QMessageBox.information(parent, title, text)
