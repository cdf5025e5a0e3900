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

__all__ = ["pdf_bytes", "write_report_pdf"]

# A4 with 15 mm margins; the page is laid out at 96 CSS pixels per inch.
_PDF_MARGIN_MM = 15.0
_CSS_DPI = 96.0
_PDF_IMAGE_WIDTH = 660  # CSS pixels; the text column of A4 less 15 mm margins is 680
_PDF_DPI = 300


def pdf_bytes(html: str, *, title: str = "Bandsmith report") -> bytes:
    """Lay out report HTML on A4 pages with Qt (QTextDocument) and return the PDF file's bytes.

    Every page carries a footer with the page number. Needs a ``QGuiApplication`` (made
    offscreen when none runs).
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


def write_report_pdf(session: Session, path: str | os.PathLike, *, created: datetime | None = None, source: str | None = None) -> Path:
    """Write the PDF report atomically; returns the path."""
    p = Path(path)
    # Four plots and their heading fill one A4 page.
    ctx = make_context(session, images=True, created=created, source=source, image_width=_PDF_IMAGE_WIDTH, image_aspect=0.32)
    html = render_html(ctx, for_print=True)
    write_atomic(p, pdf_bytes(html))
    return p
