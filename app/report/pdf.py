"""The report on paper: the report page laid out on A4 by Qt (``QTextDocument``, ``QPdfWriter``).

The plots go on one page, each candidate starts a page, and every page carries a footer with its
number. Qt is imported only here and only when a PDF is made.
"""

from __future__ import annotations

import os
from datetime import datetime
from pathlib import Path

from bandsmith.files.exports import write_atomic
from bandsmith.files.session import Session

from bandsmith.app.report.context import make_context
from bandsmith.app.report.page import render_html

__all__ = ["paginate", "pdf_bytes", "write_report_pdf"]

# A4 with 15 mm margins; the page is laid out at 96 CSS pixels per inch.
_PDF_MARGIN_MM = 15.0
_CSS_DPI = 96.0
_PDF_IMAGE_WIDTH = 660  # CSS pixels; the text column of A4 less 15 mm margins is 680
_PDF_DPI = 300


def pdf_bytes(html: str, *, title: str = "Bandsmith report") -> bytes:
    """Lay out report HTML on A4 pages with Qt (QTextDocument) and return the PDF file's bytes.

    Every page carries a footer with the page number. Needs a ``QGuiApplication`` (made
    offscreen when none runs). It may run on a worker thread (a report written in the
    background): a ``QTextDocument`` and a ``QPainter`` on a ``QPdfWriter`` are usable outside the
    GUI thread (Qt 6 docs, "Threads and QObjects" / "Reentrancy and Thread-Safety": painting on
    a QImage, QPrinter or QPdfWriter device from other threads is supported); no widget is made.
    """
    from PySide6 import QtCore, QtGui

    from bandsmith.app.plots.render import ensure_qt_app

    ensure_qt_app()
    buf = QtCore.QBuffer()
    buf.open(QtCore.QIODevice.OpenModeFlag.WriteOnly)
    writer = QtGui.QPdfWriter(buf)
    writer.setTitle(title)
    writer.setCreator("Bandsmith")
    writer.setResolution(_PDF_DPI)
    writer.setPageLayout(
        QtGui.QPageLayout(
            QtGui.QPageSize(QtGui.QPageSize.PageSizeId.A4),
            QtGui.QPageLayout.Orientation.Portrait,
            QtCore.QMarginsF(_PDF_MARGIN_MM, _PDF_MARGIN_MM, _PDF_MARGIN_MM, _PDF_MARGIN_MM),
            QtGui.QPageLayout.Unit.Millimeter,
        )
    )
    paint_rect = writer.pageLayout().paintRectPixels(_PDF_DPI)
    scale = _PDF_DPI / _CSS_DPI
    page_w = paint_rect.width() / scale
    footer_h = 24.0
    page_h = paint_rect.height() / scale - footer_h

    doc = QtGui.QTextDocument()
    doc.setDocumentMargin(0)
    font = QtGui.QFont("DejaVu Sans")
    font.setPointSizeF(9.5)
    doc.setDefaultFont(font)
    doc.setHtml(html)
    doc.setPageSize(QtCore.QSizeF(page_w, page_h))
    paginate(doc, page_h)
    pages = doc.pageCount()

    painter = QtGui.QPainter(writer)
    try:
        for i in range(pages):
            if i:
                writer.newPage()
            painter.save()
            painter.scale(scale, scale)
            painter.translate(0, -i * page_h)
            doc.drawContents(painter, QtCore.QRectF(0, i * page_h, page_w, page_h))
            painter.restore()
            painter.save()
            painter.scale(scale, scale)
            f = QtGui.QFont("DejaVu Sans")
            f.setPixelSize(10)  # CSS pixels: the painter is scaled to them
            painter.setFont(f)
            painter.setPen(QtGui.QColor("#555a60"))
            painter.drawText(
                QtCore.QRectF(0, page_h + 6, page_w, footer_h - 6),
                int(QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter),
                f"{title} — page {i + 1} of {pages}",
            )
            painter.restore()
    finally:
        painter.end()
    del writer
    data = bytes(buf.data())
    buf.close()
    return data


# A page a forced break would leave less full than this is filled on instead (the test asks a
# quarter at least; this leaves a margin); a heading
# closer than _KEEP_WITH_NEXT CSS pixels to the foot of its page starts the next page.
_MIN_FILL = 0.4
_KEEP_WITH_NEXT = 60.0


def paginate(doc, page_h: float) -> None:
    """Move the page breaks of a laid-out ``QTextDocument`` so that no page is left near-empty.

    Two rules, applied in document order (each change re-lays out what follows):

    * a forced break (``page-break-before``) is dropped when the page it would close is less
      than 40 % full (a few lines spilled over) or already full (the break would leave a
      blank page);
    * a heading (``<h1>``–``<h3>``) whose next block does not start on the same page, or lies
      within ``_KEEP_WITH_NEXT`` of the page's foot, starts the next page (kept with its table).

    Common practice in typesetting (keep-with-next, no widowed headings); no source.
    """
    from PySide6 import QtGui

    layout = doc.documentLayout()
    always = QtGui.QTextFormat.PageBreakFlag.PageBreak_AlwaysBefore
    auto = QtGui.QTextFormat.PageBreakFlag.PageBreak_Auto

    def top(block) -> float:
        return layout.blockBoundingRect(block).top()

    def bottom(block) -> float:
        return layout.blockBoundingRect(block).bottom()

    def set_break(block, flag) -> None:
        fmt = block.blockFormat()
        fmt.setPageBreakPolicy(flag)
        cursor = QtGui.QTextCursor(block)
        cursor.setBlockFormat(fmt)
        # Qt re-lays out only near the edit; everything after it moves, so lay it all out again.
        doc.markContentsDirty(block.position(), doc.characterCount() - block.position())

    prev = None
    block = doc.begin()
    while block.isValid():
        policy = block.blockFormat().pageBreakPolicy()
        if prev is not None and policy & always:
            end = bottom(prev)
            fill = (end % page_h) / page_h
            if fill < _MIN_FILL or fill > 0.97:
                set_break(block, auto)
        elif prev is not None and block.blockFormat().headingLevel() > 0:
            nxt = block.next()
            if nxt.isValid():
                page = int(top(block) // page_h)
                foot = (page + 1) * page_h
                if int(top(nxt) // page_h) != page or top(nxt) + _KEEP_WITH_NEXT > foot:
                    set_break(block, always)
        prev = block
        block = block.next()


def write_report_pdf(session: Session, path: str | os.PathLike, *, created: datetime | None = None, source: str | None = None, progress=None) -> Path:
    """Write the PDF report atomically; returns the path.

    ``progress(fraction)``, when given, is called as the sections are built (see
    :func:`bandsmith.app.report.page.render_html`).
    """
    p = Path(path)
    # Four plots and their heading fill one A4 page.
    ctx = make_context(session, images=True, created=created, source=source, image_width=_PDF_IMAGE_WIDTH, image_aspect=0.32)
    html = render_html(ctx, for_print=True, progress=progress)
    write_atomic(p, pdf_bytes(html))
    return p
