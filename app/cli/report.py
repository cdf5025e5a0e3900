"""``bandsmith report FILE -o OUT.html|OUT.pdf``: the design report of a session, headless.

The plots are drawn with Qt offscreen (no display is needed). The output is written atomically:
an existing file is replaced only once the new report is complete.
"""

from __future__ import annotations

import os
import sys

from bandsmith.app.cli.common import Command


def configure(p):
    p.add_argument("session", metavar="FILE", help="session file (.bandsmith.json)")
    p.add_argument("-o", "--output", metavar="OUT", required=True, help="report file to write: OUT.html or OUT.pdf")


def _offscreen_if_headless() -> None:
    """Use Qt's offscreen platform when there is no display (before any Qt application exists)."""
    if "QT_QPA_PLATFORM" in os.environ:
        return
    if sys.platform.startswith("linux") and not (os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY")):
        os.environ["QT_QPA_PLATFORM"] = "offscreen"


def run(args) -> int:
    # Check the output and read the session before Qt starts, so bad input fails fast.
    from bandsmith.api import open_session

    from bandsmith.app.report.builder import report_file

    out, kind = report_file(args.output)
    session = open_session(args.session)
    _offscreen_if_headless()
    from bandsmith.app.report.builder import write_report_html, write_report_pdf

    source = os.path.basename(args.session)
    if kind == "pdf":
        write_report_pdf(session, out, source=source)
    else:
        write_report_html(session, out, source=source)
    print(f"wrote {out}")
    return 0


COMMAND = Command("report", "write the design report of a session (HTML or PDF)", configure, run, order=80)
