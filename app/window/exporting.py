"""Exports from the window: plot images (PNG, SVG), parts and response tables (CSV), SPICE netlists.

Every file is written atomically (:func:`write_atomic`: a temporary file in the same folder,
flushed and synced, then :func:`os.replace`), so an export that fails half-way leaves any older
file as it was. The tables and the netlist come from :mod:`bandsmith.files.exports`; this module only picks
the candidate and the session's op-amp and writes the text.

Images: PNG is the widget as it is on screen (``QWidget.grab``: the widget's size times the
screen's pixel ratio); SVG is a vector drawing made by rendering the widget into a
``QSvgGenerator`` with a ``QPainter`` (pyqtgraph's own SVG exporter fails with PySide6 6.12).
"""

from __future__ import annotations

import os
from pathlib import Path

from bandsmith.common.errors import InputError
from bandsmith.files import exports
from bandsmith.files.session import Session

__all__ = [
    "IMAGE_SUFFIXES",
    "write_atomic",
    "widget_png",
    "widget_svg",
    "export_plot_image",
    "export_parts_csv",
    "export_response_csv",
    "export_netlist",
    "with_chosen_suffix",
    "PNG_SCALES",
    "report_job",
]

IMAGE_SUFFIXES = (".png", ".svg")


def with_chosen_suffix(path: str, chosen_filter: str | None) -> str:
    """``path`` with the suffix of the file type chosen in a save dialog, when it has none of them.

    ``chosen_filter`` is the dialog's selected filter, e.g. ``"PDF report (*.pdf)"``; the
    suffixes are its ``*.ext`` patterns. A name already ending in one of them (in any case) is
    kept; a name with no suffix or another one gets the filter's first (``myreport`` →
    ``myreport.pdf``). A filter of every file (``*``) leaves the name alone.
    """
    import re

    if not path or not chosen_filter:
        return path
    suffixes = [s.lower() for s in re.findall(r"\*(\.[\w.]+)", chosen_filter)]
    if not suffixes:
        return path
    name = Path(path).name.lower()
    if any(name.endswith(s) for s in suffixes):
        return path
    return path + suffixes[0]


def report_job(session: Session, path: str):
    """A :class:`~bandsmith.app.window.background.BackgroundJob` writing the report of ``session``.

    The candidates are analysed, the spreads and noise computed and the HTML assembled on the
    worker thread; only the drawing of the plots (and the PDF's page layout) is handed to the
    GUI thread (:func:`bandsmith.app.plots.gui_thread.on_gui_thread`), a few hundred
    milliseconds in all. Progress follows the report's sections; Cancel stops at the next
    section and nothing is written.
    """
    from bandsmith.app.report.builder import write_report
    from bandsmith.app.window.background import BackgroundJob, Cancelled

    def work(progress, cancelled):
        def step(fraction: float) -> None:
            if cancelled():
                raise Cancelled()
            progress(0.05 + 0.9 * fraction)

        progress(0.02)
        return write_report(session, path, progress=step)

    return BackgroundJob(work, f"Writing {Path(path).name}")


def write_atomic(path: str | os.PathLike, data: bytes | str) -> Path:
    """Write ``data`` (text is UTF-8) to ``path`` atomically; returns the path.

    A temporary file in the same folder is written, flushed and fsynced, then renamed over
    ``path``. On any failure the temporary file is removed and an existing ``path`` is untouched.

    Raises
    ------
    InputError
        On the field ``output`` when the folder is missing or the file cannot be written.
    """
    p = Path(path)
    folder = p.parent if str(p.parent) else Path(".")
    if not folder.is_dir():
        raise InputError("output", f"the folder {folder} does not exist")
    if p.is_dir():
        raise InputError("output", f"{p} is a folder")
    return exports.write_atomic(p, data)


# --------------------------------------------------------------------------- images


#: The resolutions offered for a PNG export: name → scale (image pixels per widget pixel).
PNG_SCALES = {
    "screen size (1×)": 1.0,
    "sharp on paper (2×)": 2.0,
    "large print (4×)": 4.0,
}
_TITLE_PX = 30  # height of the title band, in widget pixels (scaled with the image)


def widget_png(widget, *, scale: float | None = None, title: str | None = None) -> bytes:
    """PNG bytes of a widget.

    Without ``scale`` and ``title``: as it is drawn (``grab()``: its size × the screen's pixel
    ratio). With ``scale``, the widget is painted afresh at ``scale`` × its size (text and
    lines drawn sharp, :func:`bandsmith.app.plots.render.paint_widget`); with ``title``, a band
    above the widget carries the title in bold.
    """
    from PySide6 import QtCore, QtGui

    from bandsmith.app.plots.render import image_png

    if scale is not None or title:
        from bandsmith.app.plots.render import paint_widget

        s = float(scale or 1.0)
        body = paint_widget(widget, scale=s)
        if not title:
            return image_png(body)
        band = round(_TITLE_PX * s)
        img = QtGui.QImage(body.width(), body.height() + band, QtGui.QImage.Format.Format_ARGB32)
        img.fill(QtGui.QColor("white"))
        p = QtGui.QPainter(img)
        try:
            p.setRenderHint(QtGui.QPainter.RenderHint.TextAntialiasing, True)
            font = QtGui.QFont(widget.font())
            font.setBold(True)
            font.setPixelSize(max(8, round(15 * s)))
            p.setFont(font)
            p.setPen(QtGui.QColor("#202124"))
            p.drawText(QtCore.QRect(round(10 * s), 0, body.width() - round(20 * s), band), int(QtCore.Qt.AlignmentFlag.AlignLeft | QtCore.Qt.AlignmentFlag.AlignVCenter), title)
            body.setDevicePixelRatio(1.0)
            p.drawImage(0, band, body)
        finally:
            p.end()
        return image_png(img)
    return image_png(widget.grab())


def widget_svg(widget, *, title: str = "Bandsmith plot", description: str = "") -> bytes:
    """SVG bytes of a widget: a vector drawing (paths and text) at the widget's size."""
    from PySide6 import QtCore, QtGui, QtSvg, QtWidgets

    size = widget.size()
    buf = QtCore.QBuffer()
    buf.open(QtCore.QIODevice.OpenModeFlag.WriteOnly)
    gen = QtSvg.QSvgGenerator()
    gen.setOutputDevice(buf)
    gen.setSize(size)
    gen.setViewBox(QtCore.QRect(0, 0, size.width(), size.height()))
    # The screen's resolution: pyqtgraph replays cached QPictures (axes), which Qt rescales by
    # the ratio of resolutions; the generator's default (72 dpi) would shrink them by a quarter.
    gen.setResolution(widget.logicalDpiX())
    gen.setTitle(title)
    gen.setDescription(description or "Exported from Bandsmith")
    # Graphics views (pyqtgraph plots) paint their background from a cached bitmap; switch the
    # cache off while drawing so that the SVG holds only vector shapes and text.
    views = widget.findChildren(QtWidgets.QGraphicsView)
    if isinstance(widget, QtWidgets.QGraphicsView):
        views.append(widget)
    modes = [(v, v.cacheMode()) for v in views]
    for v, _ in modes:
        v.setCacheMode(QtWidgets.QGraphicsView.CacheModeFlag.CacheNone)
        v.resetCachedContent()
    # pyqtgraph items in "export mode" draw shapes instead of cached bitmaps (scatter symbols).
    exporting = [it for v in views if v.scene() is not None for it in v.scene().items() if hasattr(it, "setExportMode")]
    painter = QtGui.QPainter()
    if not painter.begin(gen):
        raise RuntimeError("Qt could not start the SVG drawing")
    for it in exporting:
        it.setExportMode(True, {"antialias": True, "background": QtGui.QColor("white"), "painter": painter})
    try:
        painter.fillRect(QtCore.QRect(0, 0, size.width(), size.height()), QtGui.QColor("white"))
        # QWidget.render (a plain widget needs the offset; a graphics view would otherwise
        # take its own render(), which draws only the scene): the widget and its children as
        # they are painted on screen.
        QtWidgets.QWidget.render(widget, painter, QtCore.QPoint(0, 0))
    finally:
        painter.end()
        for it in exporting:
            it.setExportMode(False)
        for v, mode in modes:
            v.setCacheMode(mode)
    data = bytes(buf.data())
    buf.close()
    return data


def export_plot_image(widget, path: str | os.PathLike, *, title: str | None = None, scale: float | None = None) -> Path:
    """Save a plot (any widget) as PNG or SVG, chosen by the suffix of ``path``; returns the path.

    A PNG is drawn at ``scale`` × the widget's size with ``title`` above it when these are given
    (:func:`widget_png`), else as on screen.

    Raises
    ------
    InputError
        On the field ``output`` for a suffix other than ``.png`` or ``.svg``, or a missing folder.
    """
    p = Path(path)
    suffix = p.suffix.lower()
    if suffix not in IMAGE_SUFFIXES:
        raise InputError("output", f"{p.name!r} must end in .png or .svg (got {suffix or 'no suffix'})")
    if suffix == ".png":
        data = widget_png(widget, scale=scale, title=title) if (scale is not None or title) else widget_png(widget)
    else:
        name = title or widget.objectName() or "plot"
        data = widget_svg(widget, title=f"Bandsmith: {name}")
    return write_atomic(p, data)


# --------------------------------------------------------------------------- tables and netlists


def export_parts_csv(session: Session, candidate_id: str, path: str | os.PathLike) -> Path:
    """Write the parts list of one candidate of ``session`` as CSV (:func:`bandsmith.files.exports.parts_csv`)."""
    entry = session.candidate(candidate_id)
    return write_atomic(path, exports.parts_csv(entry, gbw_hz=session.opamp.gbw_hz))


def export_response_csv(session: Session, candidate_id: str, path: str | os.PathLike, *, f_hz=None) -> Path:
    """Write one candidate's frequency response with the session's op-amp as CSV
    (:func:`bandsmith.files.exports.response_csv`).

    The frequencies are those of the plots (two decades each side of the target f0, see
    :func:`bandsmith.app.plots.curves.frequency_grid`) unless ``f_hz`` (Hz) is given.
    """
    from bandsmith.app.plots.curves import frequency_grid

    entry = session.candidate(candidate_id)
    cond = session.conditions_for(entry)
    if f_hz is None:
        f_hz = frequency_grid([session.target.f0_hz])
    return write_atomic(path, exports.response_csv(entry, gbw_hz=cond.gbw_hz, a0=cond.a0, f_hz=f_hz))


def export_netlist(session: Session, candidate_id: str, path: str | os.PathLike) -> Path:
    """Write one candidate as a SPICE netlist with the session's op-amp (:func:`bandsmith.files.exports.spice_netlist`)."""
    entry = session.candidate(candidate_id)
    cond = session.conditions_for(entry)
    return write_atomic(path, exports.spice_netlist(entry, gbw_hz=cond.gbw_hz, a0=cond.a0))
