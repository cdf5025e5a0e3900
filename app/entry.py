"""The ``bandsmith`` command: the workbench window, or a headless sub-command.

``bandsmith`` alone, or with a session file as its only argument, opens the window; ``bandsmith
--version`` prints the version; anything else is a sub-command of :mod:`bandsmith.app.cli`. The
window's modules (and Qt) are imported only when the window opens, so the headless commands start
without them.

Before the window opens, the display is checked: with no display at all, or (on X11) without the
system libraries Qt's X11 platform needs, the command exits 2 with one line saying what is missing
and how to get it, instead of hanging on an invisible window or aborting inside Qt.
"""

from __future__ import annotations

import os
import sys

from bandsmith.common.version import installed_version

from bandsmith.app import cli

__all__ = ["main", "display_problem"]

# The X11 libraries Qt 6's xcb platform plugin loads that a minimal Debian system may lack, with
# the Debian package of each (the plugin's NEEDED entries, read with `objdump -p`).
_XCB_LIBRARIES = {
    "libxcb-cursor.so.0": "libxcb-cursor0",
    "libxcb-icccm.so.4": "libxcb-icccm4",
    "libxcb-keysyms.so.1": "libxcb-keysyms1",
    "libxcb-image.so.0": "libxcb-image0",
    "libxcb-util.so.1": "libxcb-util1",
    "libxcb-render-util.so.0": "libxcb-render-util0",
    "libxcb-randr.so.0": "libxcb-randr0",
    "libxcb-shape.so.0": "libxcb-shape0",
    "libxcb-sync.so.1": "libxcb-sync1",
    "libxcb-xfixes.so.0": "libxcb-xfixes0",
    "libxcb-xkb.so.1": "libxcb-xkb1",
    "libxkbcommon-x11.so.0": "libxkbcommon-x11-0",
    "libX11-xcb.so.1": "libx11-xcb1",
}


def _missing_libraries(names: dict[str, str]) -> list[str]:
    """Debian packages of the libraries in ``names`` that the dynamic loader cannot find."""
    import ctypes  # here: only the window's start needs it

    missing = []
    for soname, package in names.items():
        try:
            ctypes.CDLL(soname)
        except OSError:
            missing.append(package)
    return missing


def display_problem(environ: dict[str, str] | None = None) -> str | None:
    """Why the window cannot open here, in one line; None when it can (or cannot be told).

    ``QT_QPA_PLATFORM`` set by the user is taken as it is (``offscreen`` included). Otherwise, on
    Linux, a display is needed (``DISPLAY`` or ``WAYLAND_DISPLAY``), and under X11 the libraries
    of Qt's X11 platform.
    """
    env = os.environ if environ is None else environ
    platform = env.get("QT_QPA_PLATFORM", "")
    if platform and platform != "xcb":
        return None
    if not sys.platform.startswith("linux"):
        return None
    if not platform and env.get("WAYLAND_DISPLAY"):
        return None
    if not env.get("DISPLAY"):
        return (
            "no display to open the window on (DISPLAY and WAYLAND_DISPLAY are unset); "
            "run it on a desktop, or use the headless commands (bandsmith --help)"
        )
    missing = _missing_libraries(_XCB_LIBRARIES)
    if missing:
        return (
            f"the window needs X11 libraries this system lacks; on Debian or Ubuntu: "
            f"sudo apt-get install {' '.join(missing)}"
        )
    return None


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``bandsmith`` command; returns the exit status."""
    argv = list(sys.argv[1:] if argv is None else argv)
    if argv == ["--version"]:
        print(f"bandsmith {installed_version() or 'unknown'}")
        return 0
    if cli.wants_window(argv):
        problem = display_problem()
        if problem:
            print(f"bandsmith: {problem}", file=sys.stderr)
            return 2
        from bandsmith.app.window.main import run_window

        return run_window(argv[0] if argv else None)
    return cli.main(argv)


if __name__ == "__main__":
    sys.exit(main())
