"""The design report of a session, written to a file: HTML with the plots embedded, or PDF.

:func:`write_report` picks the kind by the file's suffix. The report is assembled by modules of
one job each, whose public names this module gathers:

- :mod:`~bandsmith.app.report.context`: every candidate analysed, the plots rendered;
- :mod:`~bandsmith.app.report.sections`: the sections and :func:`register_section` (later
  sections auto-register from ``app/report/*_section.py``);
- :mod:`~bandsmith.app.report.page`: the self-contained HTML page;
- :mod:`~bandsmith.app.report.pdf`: the page on A4 through Qt.

Every file is written atomically (:func:`bandsmith.files.exports.write_atomic`).
"""

from __future__ import annotations

import os
from datetime import datetime
from pathlib import Path

from bandsmith.common.errors import InputError
from bandsmith.files.exports import write_atomic
from bandsmith.files.session import Session, load_session

from bandsmith.app.report.context import CandidateReport, ReportContext, SectionBuilder, make_context
from bandsmith.app.report.page import build_report_html, render_html
from bandsmith.app.report.pdf import pdf_bytes, write_report_pdf
from bandsmith.app.report.sections import SECTIONS, register_section

__all__ = [
    "CandidateReport",
    "ReportContext",
    "SectionBuilder",
    "SECTIONS",
    "register_section",
    "make_context",
    "build_report_html",
    "render_html",
    "pdf_bytes",
    "write_report",
    "write_report_html",
    "write_report_pdf",
    "report_file",
    "REPORT_SUFFIXES",
]

REPORT_SUFFIXES = (".html", ".htm", ".pdf")


def report_file(path: str | os.PathLike) -> tuple[Path, str]:
    """Check an output path for a report; returns it and its kind (``html`` or ``pdf``).

    Raises InputError on the field ``output`` for an unknown suffix or a missing folder.
    """
    p = Path(path)
    suffix = p.suffix.lower()
    if suffix not in REPORT_SUFFIXES:
        raise InputError("output", f"{p.name!r} must end in .html or .pdf (got {suffix or 'no suffix'})")
    folder = p.parent if str(p.parent) else Path(".")
    try:
        if not folder.is_dir():
            raise InputError("output", f"the folder {folder} does not exist")
        if p.is_dir():
            raise InputError("output", f"{p} is a folder")
    except OSError as exc:  # a name too long for the file system, say
        raise InputError("output", f"cannot write there: {exc.strerror or exc}") from None
    return p, ("pdf" if suffix == ".pdf" else "html")


def write_report_html(session: Session, path: str | os.PathLike, **kw) -> Path:
    """Write the HTML report atomically; returns the path."""
    p = Path(path)
    write_atomic(p, build_report_html(session, **kw))
    return p


def write_report(
    session: Session | str | os.PathLike,
    path: str | os.PathLike,
    *,
    created: datetime | None = None,
    source: str | None = None,
    progress=None,
) -> Path:
    """Write the report of a session (or of a session file) to ``path``: HTML or PDF by its suffix.

    ``source`` is the session's file name shown on the report (that of the file when a path is
    given). ``progress(fraction)`` is called as the sections are built; it may raise (a
    background job's cancel) to stop before anything is written.

    Raises
    ------
    InputError
        An unknown suffix or missing folder (field ``output``); a missing or damaged session file
        (:class:`bandsmith.files.session.SessionError`, field ``session``).
    """
    out, kind = report_file(path)
    if not isinstance(session, Session):
        source = source or Path(session).name
        session = load_session(session)
    if kind == "pdf":
        return write_report_pdf(session, out, created=created, source=source, progress=progress)
    return write_report_html(session, out, created=created, source=source, progress=progress)
