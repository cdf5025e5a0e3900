"""Exports: plot images (PNG with the widget's size, SVG with vector paths), tables and netlists,
all written atomically."""

from __future__ import annotations

import csv
import io
import os
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest

from bandsmith.circuits import all_topologies
from bandsmith.common.errors import InputError
from bandsmith.files.session import CandidateEntry, OpAmpSpec, Session, Target

ARTIFACTS = Path(__file__).resolve().parents[1] / "tests" / "_artifacts" / "exports"
SVG_NS = "{http://www.w3.org/2000/svg}"

pytestmark = pytest.mark.gui


def _session() -> Session:
    cands = tuple(CandidateEntry(t.id, t.id, dict(t.example)) for t in all_topologies())
    return Session(Target(2000.0, 5.0, 4.0, vin_v=0.5), cands, opamp=OpAmpSpec(gbw_hz=1e6))


@pytest.fixture
def plot_widget(qtbot):
    """A light-theme plot of the three example circuits, as the report draws it, shown 640×360."""
    from bandsmith.app.plots.curves import plot_inputs, response_plots
    from bandsmith.app.plots.render import build_plot_widget
    from bandsmith.design.candidate import Candidate

    s = _session()
    items = [(c.id, i, Candidate(c.topology_id, c.values).analyze(s.conditions_for(c))) for i, c in enumerate(s.candidates)]
    plots = response_plots(plot_inputs(items), target_f0_hz=s.target.f0_hz)
    w = build_plot_widget(plots[0], width=640, height=360)
    qtbot.addWidget(w)
    w.show()
    qtbot.waitExposed(w)
    return w


def test_png_export_has_the_widgets_size(plot_widget, tmp_path):
    from PySide6 import QtGui

    from bandsmith.app.window.exporting import export_plot_image

    out = export_plot_image(plot_widget, tmp_path / "magnitude.png")
    img = QtGui.QImage(str(out))
    assert not img.isNull()
    ratio = plot_widget.devicePixelRatioF()
    assert (img.width(), img.height()) == (round(640 * ratio), round(360 * ratio))
    # Not blank: a white ground with dark axes and coloured curves.
    colours = {img.pixel(x, y) for x in range(0, img.width(), 7) for y in range(0, img.height(), 7)}
    assert len(colours) > 10
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    (ARTIFACTS / "magnitude.png").write_bytes(out.read_bytes())


def _grey(img, w: int = 64, h: int = 36) -> np.ndarray:
    """A small greyscale copy (0..1) of a QImage, for comparing two drawings of one plot."""
    from PySide6 import QtCore, QtGui

    small = img.convertToFormat(QtGui.QImage.Format.Format_Grayscale8).scaled(
        w, h, QtCore.Qt.AspectRatioMode.IgnoreAspectRatio, QtCore.Qt.TransformationMode.SmoothTransformation
    )
    return np.array([[QtGui.qGray(small.pixel(x, y)) for x in range(w)] for y in range(h)], float) / 255.0


def test_svg_export_is_vector_svg(plot_widget, tmp_path):
    from PySide6 import QtGui, QtSvg

    from bandsmith.app.window.exporting import export_plot_image

    out = export_plot_image(plot_widget, tmp_path / "magnitude.SVG", title="magnitude")
    root = ET.parse(out).getroot()
    # SVG 1.2 Tiny (W3C), as Qt writes it: the root is <svg> in the SVG namespace.
    assert root.tag == f"{SVG_NS}svg"
    assert root.get("viewBox").split() == ["0", "0", "640", "360"]
    paths = root.findall(f".//{SVG_NS}path")
    lines = root.findall(f".//{SVG_NS}polyline")
    assert paths  # frames and fills are <path> elements
    # The curves are vector strokes with many points, not a bitmap.
    points = sum(len(e.get("points", "").split()) for e in lines) + sum(e.get("d", "").count("L") for e in paths)
    assert points > 1000
    assert not root.findall(f".//{SVG_NS}image")
    texts = " ".join("".join(t.itertext()) for t in root.iter(f"{SVG_NS}text"))
    assert "Frequency" in texts and "rlc-tank" in texts
    title = root.find(f"{SVG_NS}title")
    assert title is not None and "magnitude" in title.text
    # Drawn back, the SVG looks like the widget on screen: axes, curves and legend at one scale
    # (with the generator's default 72 dpi, pyqtgraph's cached axes came out 25 % too small).
    renderer = QtSvg.QSvgRenderer(str(out))
    img = QtGui.QImage(640, 360, QtGui.QImage.Format.Format_ARGB32)
    img.fill(0xFFFFFFFF)
    p = QtGui.QPainter(img)
    renderer.render(p)
    p.end()
    shown = plot_widget.grab().toImage()
    # Measured here: 0.0035 when right, 0.019 with the axes shrunk by the 72-dpi default.
    assert np.abs(_grey(img, 128, 72) - _grey(shown, 128, 72)).mean() < 0.008
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    (ARTIFACTS / "magnitude.svg").write_bytes(out.read_bytes())
    img.save(str(ARTIFACTS / "magnitude-from-svg.png"))


def test_image_export_rejects_other_suffixes_and_keeps_old_file(plot_widget, tmp_path):
    from bandsmith.app.window.exporting import export_plot_image

    old = tmp_path / "plot.jpg"
    old.write_text("old")
    with pytest.raises(InputError) as err:
        export_plot_image(plot_widget, old)
    assert err.value.field == "output"
    assert old.read_text() == "old"
    with pytest.raises(InputError) as err:
        export_plot_image(plot_widget, tmp_path / "no-such-folder" / "p.png")
    assert err.value.field == "output"


def test_write_atomic_replaces_whole_or_not_at_all(tmp_path, monkeypatch):
    from bandsmith.app.window import exporting

    target = tmp_path / "parts.csv"
    exporting.write_atomic(target, "first\n")
    os.chmod(target, 0o640)
    exporting.write_atomic(target, "second\n")
    assert target.read_text() == "second\n"
    assert (os.stat(target).st_mode & 0o777) == 0o640  # an existing file keeps its permissions

    def fail(*a, **k):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(exporting.os, "replace", fail)
    with pytest.raises(InputError) as err:
        exporting.write_atomic(target, "third\n")
    assert err.value.field == "output" and "No space left" in err.value.reason
    assert target.read_text() == "second\n"
    assert [p.name for p in tmp_path.iterdir()] == ["parts.csv"]


# --------------------------------------------------------------------------- tables and netlists


def test_parts_csv_lists_every_part(tmp_path):
    from bandsmith.app.window.exporting import export_parts_csv

    s = _session()
    for c in s.candidates:
        out = export_parts_csv(s, c.id, tmp_path / f"{c.id}.csv")
        text = out.read_text(encoding="utf-8")
        rows = list(csv.DictReader(io.StringIO(text)))
        listed = {r["reference"]: r for r in rows}
        for ref, v in c.values.items():
            if v > 0:  # an absent winding resistance (0 Ω) is not a part to buy
                np.testing.assert_allclose(float(listed[ref]["value"]), v, rtol=1e-12)
        assert "U1" in listed and "1 MHz" in listed["U1"]["formatted_value"]  # the session's op-amp


def test_response_csv_is_a_table_of_numbers(tmp_path):
    from bandsmith.app.window.exporting import export_response_csv

    s = _session()
    out = export_response_csv(s, "mfb", tmp_path / "mfb-response.csv")
    rows = list(csv.reader(io.StringIO(out.read_text(encoding="utf-8"))))
    header, data = rows[0], rows[1:]
    assert any("frequency" in h for h in header)
    values = np.array([[float(x) for x in r] for r in data if r and not r[0].startswith("#")])
    assert values.shape[0] >= 100 and np.all(np.isfinite(values))
    assert np.all(np.diff(values[:, 0]) > 0)


def test_netlist_has_every_part_and_ends(tmp_path):
    from bandsmith.app.window.exporting import export_netlist

    s = _session()
    for c in s.candidates:
        out = export_netlist(s, c.id, tmp_path / f"{c.id}.cir")
        text = out.read_text(encoding="utf-8")
        lines = [ln for ln in text.splitlines() if ln.strip()]
        # SPICE: the first line is the title; ".end" closes the deck (common practice, no source).
        assert lines[-1].strip().lower() == ".end"
        for ref in c.values:
            if c.values[ref] > 0:
                assert any(ln.split()[0].upper().endswith(ref.upper()) for ln in lines[1:] if not ln.startswith("*"))


def test_unknown_candidate_names_the_field(tmp_path):
    from bandsmith.app.window.exporting import export_netlist

    with pytest.raises(InputError) as err:
        export_netlist(_session(), "nope", tmp_path / "x.cir")
    assert err.value.field == "candidate"


def test_svg_of_a_grid_of_plots_is_vector_only(qtbot, tmp_path):
    """A widget holding several plots (as the window's plot grid does) exports as one SVG."""
    import pyqtgraph as pg
    from PySide6 import QtWidgets

    from bandsmith.app.window.exporting import export_plot_image

    top = QtWidgets.QWidget()
    qtbot.addWidget(top)
    grid = QtWidgets.QGridLayout(top)
    x = np.geomspace(10.0, 1e5, 300)
    for k in range(4):
        pw = pg.PlotWidget(background="w")
        pw.plot(x, np.sin(np.log(x) + k), pen=pg.mkPen("#1b5e9e", width=2))
        if k == 3:  # scatter symbols, as in a pole-zero view: drawn from a bitmap cache on screen
            pw.plot([1e2, 1e3, 1e4], [0.0, 0.5, -0.5], pen=None, symbol="x", symbolSize=12)
        pw.setTitle(f"plot {k}")
        grid.addWidget(pw, k // 2, k % 2)
    top.resize(800, 500)
    top.show()
    qtbot.waitExposed(top)
    root = ET.parse(export_plot_image(top, tmp_path / "grid.svg")).getroot()
    assert root.get("viewBox").split() == ["0", "0", "800", "500"]
    # No bitmaps: the plots' cached background and symbols would otherwise be <image> elements.
    assert not root.findall(f".//{SVG_NS}image")
    texts = " ".join("".join(t.itertext()) for t in root.iter(f"{SVG_NS}text"))
    assert all(f"plot {k}" in texts for k in range(4))
    points = sum(len(e.get("points", "").split()) for e in root.iter(f"{SVG_NS}polyline"))
    points += sum(e.get("d", "").count("L") for e in root.iter(f"{SVG_NS}path"))
    assert points > 4 * 250
    png = export_plot_image(top, tmp_path / "grid.png")
    from PySide6 import QtGui

    img = QtGui.QImage(str(png))
    assert (img.width(), img.height()) == (round(800 * top.devicePixelRatioF()), round(500 * top.devicePixelRatioF()))
