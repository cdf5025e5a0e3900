"""The ``bandsmith`` command: the workbench window, or a headless sub-command.

``bandsmith`` alone, or with a session file as its only argument, opens the window; anything else
is a sub-command of :mod:`bandsmith.app.cli`. The window's modules (and Qt) are imported only
when the window opens, so the headless commands start without them.
"""

from __future__ import annotations

import sys

from bandsmith.app import cli

__all__ = ["main"]


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``bandsmith`` command; returns the exit status."""
    argv = list(sys.argv[1:] if argv is None else argv)
    if cli.wants_window(argv):
        from bandsmith.app.window.main import run_window

        return run_window(argv[0] if argv else None)
    return cli.main(argv)


if __name__ == "__main__":
    sys.exit(main())
