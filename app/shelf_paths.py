"""Where the user's op-amp shelf lives: the configuration folder Qt's standard locations give.

The file is ``shelf.json`` in ``QStandardPaths.AppConfigLocation`` for the application name
"Bandsmith" (on Linux ``~/.config/Bandsmith/shelf.json``). The environment variable
``BANDSMITH_SHELF`` names another file instead (tests, scripts). Only QtCore is used, so the command
line can call it without a display.
"""

from __future__ import annotations

import os
from pathlib import Path

from PySide6 import QtCore

from bandsmith.bench.shelf import ShelfState, open_shelf

__all__ = ["ENV_VAR", "APP_NAME", "FILE_NAME", "shelf_path", "open_user_shelf"]

ENV_VAR = "BANDSMITH_SHELF"
APP_NAME = "Bandsmith"
FILE_NAME = "shelf.json"


def shelf_path() -> Path:
    """The shelf file's path (it may not exist yet): ``$BANDSMITH_SHELF`` or the config folder's."""
    env = os.environ.get(ENV_VAR, "").strip()
    if env:
        return Path(env).expanduser()
    app = QtCore.QCoreApplication
    # Ask for our own names whatever the running application calls itself, then put them back.
    old_app, old_org = app.applicationName(), app.organizationName()
    try:
        app.setApplicationName(APP_NAME)
        app.setOrganizationName("")
        folder = QtCore.QStandardPaths.writableLocation(QtCore.QStandardPaths.StandardLocation.AppConfigLocation)
    finally:
        app.setApplicationName(old_app)
        app.setOrganizationName(old_org)
    return Path(folder) / FILE_NAME


def open_user_shelf() -> ShelfState:
    """The user's shelf, or the archetypes (with a warning if the file could not be used)."""
    return open_shelf(shelf_path())
