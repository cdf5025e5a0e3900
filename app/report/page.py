"""The report as one self-contained HTML page: every registered section, with the style sheet
for the screen (a centred column) or for paper (the page breaks :mod:`bandsmith.app.report.pdf` uses).
"""

from __future__ import annotations

from datetime import datetime
from html import escape

from bandsmith.common.values import format_value
from bandsmith.files.session import Session

from bandsmith.app.report import sections
from bandsmith.app.report.context import ReportContext, make_context

__all__ = ["render_html", "build_report_html"]

_CSS = """
body { font-family: 'DejaVu Sans', 'Segoe UI', Helvetica, Arial, sans-serif; color: #202124; }
h1 { font-size: 20pt; margin-bottom: 0.2em; }
h2 { font-size: 14pt; margin-top: 1.4em; border-bottom: 1px solid #c9ccd2; }
h2.candidate { color: #1b5e9e; }
h3 { font-size: 11pt; margin-top: 1em; margin-bottom: 0.3em; }
table { border-collapse: collapse; border-color: #c9ccd2; margin: 0.3em 0; }
th { background: #ebeef2; text-align: left; font-weight: 600; }
td, th { padding: 3px 8px; border: 1px solid #c9ccd2; }
p.meta, p.note { color: #555a60; font-size: 9pt; }
p.cand-notes { font-style: italic; font-size: 8.5pt; }
p.error, span.bad { color: #b0191e; font-weight: 600; }
img.plot { max-width: 100%; height: auto; }
ul.cautions li { margin-bottom: 0.4em; }
code { font-family: 'DejaVu Sans Mono', monospace; }
"""


# On screen the page is a centred column; on paper (QTextDocument) the page margins do that.
_SCREEN_CSS = "body { max-width: 960px; margin: 1.5em auto; padding: 0 1em; }\n"
# On paper the plots, each candidate and the cautions start a page of their own.
_PRINT_CSS = (
    "h2.plots, h2.candidate, h2.cautions-title { page-break-before: always; }\n"
    "h3 { margin-top: 0.7em; margin-bottom: 0.2em; }\np.note, p.meta { margin-top: 0.2em; margin-bottom: 0.3em; }\n"
    "p.plot { margin-top: 0; margin-bottom: 4px; }\n"
)


def render_html(ctx: ReportContext, *, for_print: bool = False, progress=None) -> str:
    """The report page from a prepared context (every section of :data:`SECTIONS`).

    ``for_print`` leaves out the screen layout (a centred column with padding), which would
    narrow the text on a PDF page. ``progress(fraction)``, when given, is called after each
    section (it may raise to stop the report: a background job's cancel).
    """
    parts = []
    for k, (_, builder) in enumerate(sections.SECTIONS):
        parts.append(builder(ctx))
        if progress is not None:
            progress((k + 1) / len(sections.SECTIONS))
    body = "\n\n".join(part for part in parts if part)
    title = f"Bandsmith report: f0 {format_value(ctx.session.target.f0_hz, 'Hz')}, Q {format_value(ctx.session.target.q)}"
    css = _CSS + (_PRINT_CSS if for_print else _SCREEN_CSS)
    return (
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n"
        f"<title>{escape(title)}</title>\n<style>{css}</style>\n</head>\n<body>\n{body}\n</body>\n</html>\n"
    )


def build_report_html(
    session: Session,
    *,
    images: bool = True,
    created: datetime | None = None,
    source: str | None = None,
    image_width: int = 900,
    progress=None,
) -> str:
    """The report of a session as one self-contained HTML page.

    Parameters
    ----------
    session : Session
        The design.
    images : bool
        Embed the plots as PNG ``data:`` URIs (needs Qt; a ``QApplication`` is made offscreen
        when none runs). False leaves the plots out.
    created : datetime, optional
        The date shown; now by default.
    source : str, optional
        The session file name shown on the report.
    image_width : int
        Width of the plots in CSS pixels.
    """
    return render_html(make_context(session, images=images, created=created, source=source, image_width=image_width), progress=progress)
