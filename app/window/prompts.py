"""The questions and messages the window puts to the user, in one replaceable object.

The window never calls ``QMessageBox`` or ``QFileDialog`` directly: it asks its
:class:`Prompter`. Tests hand the window a prompter with scripted answers, so no modal dialog ever
blocks a test run.
"""

from __future__ import annotations

from PySide6 import QtWidgets

__all__ = ["Prompter", "SESSION_FILTER"]

SESSION_FILTER = "Bandsmith sessions (*.bandsmith.json *.json);;All files (*)"


def _three_way(
    parent: QtWidgets.QWidget, icon, title: str, text: str, informative: str,
    accept: tuple[str, str], destructive: tuple[str, str], reject: tuple[str, str],
) -> str:
    """A modal question with three buttons, each a ``(label, answer)``: the accepting one (the
    default), the destructive one and the one that puts it off (also what closing the box gives).
    Returns the answer of the button clicked."""
    box = QtWidgets.QMessageBox(parent)
    box.setIcon(icon)
    box.setWindowTitle(title)
    box.setText(text)
    box.setInformativeText(informative)
    yes = box.addButton(accept[0], QtWidgets.QMessageBox.ButtonRole.AcceptRole)
    no = box.addButton(destructive[0], QtWidgets.QMessageBox.ButtonRole.DestructiveRole)
    box.addButton(reject[0], QtWidgets.QMessageBox.ButtonRole.RejectRole)
    box.setDefaultButton(yes)
    box.exec()
    clicked = box.clickedButton()
    return accept[1] if clicked is yes else destructive[1] if clicked is no else reject[1]


class Prompter:
    """Modal dialogs for the window (the real ones)."""

    def ask_unsaved(self, parent: QtWidgets.QWidget, name: str) -> str:
        """Unsaved changes in ``name``: returns ``"save"``, ``"discard"`` or ``"cancel"``."""
        return _three_way(
            parent, QtWidgets.QMessageBox.Icon.Warning, "Unsaved changes", f"{name} has changes that are not saved.",
            "Save them first?", ("Save", "save"), ("Don't save", "discard"), ("Cancel", "cancel"),
        )

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
        what = original or "an untitled session"
        return _three_way(
            parent, QtWidgets.QMessageBox.Icon.Question, "Recover unsaved work",
            f"Bandsmith closed unexpectedly with unsaved changes to {what} (last kept {when}).",
            "Restore them? The file itself has not been changed.", ("Restore", "restore"), ("Discard", "discard"), ("Ask again later", "later"),
        )

    def ask_choice(self, parent: QtWidgets.QWidget, title: str, label: str, items: list[str]) -> str | None:
        """One of ``items`` (the first preselected), or None when cancelled."""
        item, ok = QtWidgets.QInputDialog.getItem(parent, title, label, items, 0, False)
        return item if ok else None

    def error(self, parent: QtWidgets.QWidget, title: str, text: str) -> None:
        QtWidgets.QMessageBox.warning(parent, title, text)

    def info(self, parent: QtWidgets.QWidget, title: str, text: str) -> None:
        QtWidgets.QMessageBox.information(parent, title, text)
