"""The design report: `bandsmith report` to HTML and PDF, its sections, and its plots.

Rendered images are kept in tests/_artifacts/report/ (not committed) for a person to look at.
"""

from __future__ import annotations

import base64
import math
import re
import shutil
import subprocess
from datetime import datetime, timezone
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

from bandsmith.design.candidate import Candidate
from bandsmith.circuits import all_topologies, get_topology
from bandsmith.files.session import CandidateEntry, OpAmpSpec, Session, Target, load_session, save_session
from bandsmith.common.values import format_rkm, format_value
from cli_helpers import run_command, run_installed
from report_helpers import visible_text, png_size

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "resources" / "demo_session.bandsmith.json"
ARTIFACTS = ROOT / "tests" / "_artifacts" / "report"
UNITS = {"R": "Ω", "L": "H", "C": "F"}

# The three cautions the README states ("Cautions"); each fact must be in every report.
CAUTION_FACTS = ("prototype", "production", "common-mode", "output swing", "datasheet", "mains", "electrical codes", "licensed practice")


def _built_session() -> Session:
    """Every circuit with its module's example values (a stand-in while no demo session ships)."""
    cands = tuple(CandidateEntry(t.id, t.id, dict(t.example)) for t in all_topologies())
    return Session(
        Target(f0_hz=2000.0, q=5.0, gain=4.0, vin_v=0.5),
        cands,
        opamp=OpAmpSpec(gbw_hz=1e6),
        notes="Bench notes: <check> the layout & the supply.",
    )


@pytest.fixture
def session_file(tmp_path) -> Path:
    """The shipped demo session, or (until it ships) one built from the circuits' examples."""
    if DEMO.exists():
        return DEMO
    path = tmp_path / "examples.bandsmith.json"
    save_session(_built_session(), path)
    return path


def _bandsmith(*args, cwd=None):
    """``bandsmith ARGS…`` in-process through the entry point (tests/cli_helpers.py)."""
    return run_command(args, cwd=cwd or ROOT)




def _analyses(session: Session):
    return {c.id: Candidate(c.topology_id, c.values).analyze(session.conditions_for(c)) for c in session.candidates}


# --------------------------------------------------------------------------- HTML


def test_cli_html_report_has_plots_parts_needs_and_cautions(session_file, tmp_path):
    out = tmp_path / "report.html"
    r = _bandsmith("report", session_file, "-o", out)
    assert r.returncode == 0, r.stderr
    page = out.read_text(encoding="utf-8")
    text = visible_text(page)
    session = load_session(session_file)

    # The four plots, embedded as PNG images (later sections may add images of their own).
    uris = re.findall(r'<img src="data:image/png;base64,([A-Za-z0-9+/=]+)"[^>]* id="plot-', page)
    assert len(uris) == 4
    for u in uris:
        w, h = png_size(base64.b64decode(u))
        assert w >= 900 and h >= 300
    for key in ("magnitude", "phase", "group_delay", "step"):
        assert f'id="plot-{key}"' in page

    # Every candidate's parts (value and RKM code) and amplifier needs.
    analyses = _analyses(session)
    for c in session.candidates:
        topo = get_topology(c.topology_id)
        assert f"{c.id}: {topo.title}" in text
        for comp in topo.components:
            v = c.values[comp.ref]
            assert format_value(v, UNITS[comp.kind], digits=4) in text
            if v > 0:
                assert format_rkm(v, comp.kind) in text
        req = analyses[c.id].requirements
        if req.gbw_hz is not None:
            assert format_value(req.gbw_hz, "Hz", digits=4) in text
        assert f"{req.slew_sine_v_per_us:.3g} V/µs" in text
        assert f"{req.slew_step_v_per_us:.3g} V/µs" in text
        assert format_value(req.iout_peak_ma * 1e-3, "A", digits=4) in text
    for heading in ("Target", "Candidates at a glance", "Responses", "Achieved figures", "Amplifier needs", "Sensitivities", "Cautions"):
        assert heading in text
    for fact in CAUTION_FACTS:
        assert fact in text
    assert re.search(r"Made by Bandsmith on \d{4}-\d\d-\d\d \d\d:\d\d", text)
    assert session_file.name in text
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    shutil.copy(out, ARTIFACTS / "report.html")


def test_figures_in_report_match_closed_form_mfb(qapp):
    """The f0, Q and gain the report prints for the mfb example match the textbook formulas."""
    from bandsmith.app.report.builder import build_report_html

    topo = get_topology("mfb")
    v = dict(topo.example)
    s = Session(Target(2000.0, 5.0, 4.0), (CandidateEntry("mfb", "mfb", v),))
    text = visible_text(build_report_html(s, images=False))
    # S. Franco, Design with Operational Amplifiers and Analog Integrated Circuits, 3rd ed., ch. 3:
    # w0 = sqrt((1/R1 + 1/R2)/(R3 C1 C2)), Q = w0 R3 C1 C2/(C1 + C2), H0 = -R3 C1/(R1 (C1 + C2)).
    r1, r2, r3, c1, c2 = (v[k] for k in ("R1", "R2", "R3", "C1", "C2"))
    w0 = math.sqrt((1 / r1 + 1 / r2) / (r3 * c1 * c2))
    q = w0 * r3 * c1 * c2 / (c1 + c2)
    h0 = -r3 * c1 / (r1 * (c1 + c2))
    assert format_value(w0 / (2 * math.pi), "Hz", digits=4) in text
    assert format_value(q, "", digits=4).strip() in text
    assert format_value(h0, "", digits=4).strip() in text
    # Error against the target, as printed: 100·(f0/target − 1) with three significant digits.
    assert f"{100 * (w0 / (2 * math.pi) / 2000.0 - 1):+.3f} %" in text


def test_report_without_images_and_with_notes_escaped(qapp):
    from bandsmith.app.report.builder import build_report_html

    s = _built_session()
    page = build_report_html(s, images=False, created=datetime(2026, 3, 4, 5, 6, tzinfo=timezone.utc))
    assert "<img" not in page
    assert "2026-03-04 05:06" in page
    assert "&lt;check&gt; the layout &amp; the supply" in page  # notes are text, not markup


def test_switched_off_candidate_is_listed_but_not_plotted(qapp):
    from dataclasses import replace

    from bandsmith.app.plots.curves import plot_inputs
    from bandsmith.app.report.builder import make_context

    s = _built_session()
    off = replace(s.candidates[1], enabled=False)
    s = s.with_candidate(off)
    ctx = make_context(s, images=False)
    assert [c.label for c in ctx.active] == [c.id for c in s.candidates if c.enabled]
    assert off.id not in [p.label for p in plot_inputs([(c.label, c.index, c.analysis) for c in ctx.active])]
    from bandsmith.app.report.builder import render_html

    text = visible_text(render_html(ctx))
    assert f"{off.id}: " in text and "switched off (not in the plots)" in text


def test_sections_can_be_added_before_the_cautions(qapp, monkeypatch):
    from bandsmith.app.report import builder as report
    from bandsmith.app.report import sections

    monkeypatch.setattr(sections, "SECTIONS", list(sections.SECTIONS))
    report.register_section("later-feature", lambda ctx: "<h2>A later feature</h2><p>later</p>")
    names = [n for n, _ in sections.SECTIONS]
    assert names.index("later-feature") == names.index("cautions") - 1 == len(names) - 2
    page = report.build_report_html(_built_session(), images=False)
    assert page.index(">Notes<") < page.index("Achieved figures") < page.index("A later feature") < page.index(">Cautions<")
    report.register_section("later-feature", lambda ctx: "")  # replacing keeps one entry
    assert [n for n, _ in sections.SECTIONS].count("later-feature") == 1


# --------------------------------------------------------------------------- PDF


@pytest.mark.cli
def test_cli_pdf_report_opens_with_pages_text_and_images(session_file, tmp_path):
    # a smoke test of the installed program itself (fails when it is not installed)
    import pypdf  # a test dependency (pyproject.toml, extra "test"): missing, the test fails
    out = tmp_path / "report.pdf"
    r = run_installed(["report", session_file, "-o", out], cwd=ROOT)
    assert r.returncode == 0, r.stderr
    assert out.read_bytes()[:5] == b"%PDF-"
    reader = pypdf.PdfReader(str(out))
    session = load_session(session_file)
    # Title, target and summary; the plots; then one page (or more) per candidate.
    assert len(reader.pages) >= 2 + len(session.candidates)
    text = re.sub(r"\s+", " ", " ".join(p.extract_text() for p in reader.pages))
    assert "Band-pass design report" in text
    for c in session.candidates:
        assert c.id in text
    for fact in ("prototype", "datasheet", "licensed practice"):
        assert fact in text
    assert f"page 1 of {len(reader.pages)}" in text
    images = sum(len(p.images) for p in reader.pages)
    assert images >= 4
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    shutil.copy(out, ARTIFACTS / "report.pdf")
    if shutil.which("pdftoppm"):
        # A page as a picture for a person to look at (pdftoppm from poppler-utils).
        subprocess.run(["pdftoppm", "-r", "80", "-f", "1", "-l", "2", "-png", str(out), str(ARTIFACTS / "page")], check=True, timeout=120)
        pages = sorted(ARTIFACTS.glob("page-*.png"))
        assert pages
        w, h = png_size(pages[0].read_bytes())
        # A4 at 80 dpi: 210 mm × 297 mm → 661 × 935 px (ISO 216).
        assert abs(w - 661) <= 2 and abs(h - 935) <= 2


# --------------------------------------------------------------------------- bad input


@pytest.mark.parametrize(
    "content, field",
    [
        (None, "session"),  # missing file
        ('{"format": "bandsmith-session", "version": 1, "target": {"f0_hz": 10', "session"),  # truncated
        ("not json at all", "session"),  # damaged
        ('{"format": "bandsmith-session", "version": 99, "target": {}}', "session"),  # newer
    ],
)
def test_cli_bad_session_exits_2_with_one_line(tmp_path, content, field):
    src = tmp_path / "in.bandsmith.json"
    if content is not None:
        src.write_text(content, encoding="utf-8")
    out = tmp_path / "out.html"
    out.write_text("old report", encoding="utf-8")
    r = _bandsmith("report", src, "-o", out)
    assert r.returncode == 2
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"{field}: ")
    assert out.read_text(encoding="utf-8") == "old report"  # never touched


@pytest.mark.parametrize("name", ["out.docx", "out", "missing-folder/out.html"])
def test_cli_bad_output_exits_2_naming_output(session_file, tmp_path, name):
    r = _bandsmith("report", session_file, "-o", tmp_path / name)
    assert r.returncode == 2
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("output: ")
    assert not (tmp_path / name).exists()


def test_write_report_is_atomic(qapp, tmp_path, monkeypatch):
    from bandsmith.app.window import exporting
    from bandsmith.app.report import builder as report

    out = tmp_path / "r.html"
    out.write_text("old", encoding="utf-8")

    def fail(*a, **k):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(exporting.os, "replace", fail)
    from bandsmith.common.errors import InputError

    with pytest.raises(InputError) as err:
        report.write_report(_built_session(), out)
    assert err.value.field == "output"
    assert out.read_text(encoding="utf-8") == "old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r.html"]  # no temporary file left


# --------------------------------------------------------------------------- the plots


def test_curves_match_scipy_freqs_and_step(qapp):
    """The report's curves are the core's response: checked against scipy.signal."""
    import scipy.signal

    from bandsmith.app.plots.curves import PLOT_KEYS, plot_inputs, response_plots

    s = _built_session()
    an = _analyses(s)
    items = [(cid, i, a) for i, (cid, a) in enumerate(an.items())]
    inputs = plot_inputs(items)
    f = np.geomspace(20.0, 2e5, 400)
    plots = response_plots(inputs, f_hz=f, target_f0_hz=2000.0, target_gain_db=20 * math.log10(4.0))
    assert tuple(p.key for p in plots) == PLOT_KEYS
    mag, phase, gd, step = plots
    assert [c.label for c in mag.curves] == list(an)
    assert mag.log_x and not step.log_x
    assert (mag.y_unit, phase.y_unit, gd.y_unit, step.x_unit) == ("dB", "°", "s", "s")
    assert {g.axis for g in mag.guides} == {"x", "y"}
    for curve, (cid, a) in zip(mag.curves, an.items()):
        b, den = a.h_actual.to_s(0)
        # scipy.signal.freqs evaluates b(jw)/a(jw): an independent evaluation of the same H(s).
        _, h = scipy.signal.freqs(b, den, worN=2 * np.pi * f)
        assert_allclose(curve.y, 20 * np.log10(np.abs(h)), atol=1e-6)
    for curve, (cid, a) in zip(step.curves, an.items()):
        b, den = a.h_actual.to_s(0)
        _, y = scipy.signal.step((b, den), T=curve.x)
        assert_allclose(curve.y, y, atol=1e-6 * max(1.0, np.abs(y).max()))


def test_rendered_plots_are_png_with_every_candidate(qapp):
    from bandsmith.app.plots.curves import plot_inputs, response_plots
    from bandsmith.app.plots.render import build_plot_widget, render_plots_png

    s = _built_session()
    an = _analyses(s)
    inputs = plot_inputs([(cid, i, a) for i, (cid, a) in enumerate(an.items())])
    plots = response_plots(inputs, target_f0_hz=2000.0)
    imgs = render_plots_png(plots, width=800, height=340, scale=2.0)
    assert set(imgs) == {"magnitude", "phase", "group_delay", "step"}
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    for key, data in imgs.items():
        assert png_size(data) == (1600, 680)
        (ARTIFACTS / f"plot-{key}.png").write_bytes(data)
    w = build_plot_widget(plots[0])
    item = w.getPlotItem()
    assert [d.name() for d in item.listDataItems()] == list(an)
    assert "Frequency" in item.getAxis("bottom").labelText and item.getAxis("bottom").labelUnits in ("", None)
    assert "(Hz)" in item.getAxis("bottom").label.toPlainText()
    assert "(dB)" in item.getAxis("left").label.toPlainText()
    w.deleteLater()


def test_empty_session_and_ideal_opamp(qapp, tmp_path):
    import pypdf  # a test dependency (pyproject.toml, extra "test"): missing, the test fails
    from bandsmith.app.report.builder import build_report_html, write_report

    empty = Session(Target(1000.0, 2.0, 1.0), ())
    page = build_report_html(empty)
    assert "This session has no candidates" in page and "<img" not in page
    assert "licensed practice" in page
    out = write_report(empty, tmp_path / "empty.pdf")
    assert len(pypdf.PdfReader(str(out)).pages) >= 1

    ideal = Session(Target(2000.0, 5.0, 4.0), (CandidateEntry("mfb", "mfb", dict(get_topology("mfb").example)),))
    page = build_report_html(ideal)
    text = visible_text(page)
    assert page.count('class="plot" id="plot-') == 4
    assert "with an ideal op-amp" in text
    assert "GBW " not in re.search(r"Achieved figures.*?Amplifier needs", text).group(0)  # one column: ideal


def test_unstable_candidate_is_warned_and_kept_out_of_the_plots(qapp):
    from bandsmith.app.report.builder import make_context, render_html

    bad = dict(get_topology("sallen-key").example)
    # K = 1 + RB/RA = 101: far beyond the gain at which this band-pass turns unstable (a K of a
    # few; from memory). The core's stability flag decides; the report only follows it.
    bad["RB"] = 1e6
    s = Session(
        Target(500.0, 2.0, 2.0),
        (CandidateEntry("sk", "sallen-key", bad), CandidateEntry("mfb", "mfb", dict(get_topology("mfb").example))),
        opamp=OpAmpSpec(gbw_hz=1e6),
    )
    ctx = make_context(s, images=False)
    assert [c.label for c in ctx.active] == ["mfb"]
    assert ctx.candidates[1].index == 1  # keeps its colour
    text = visible_text(render_html(ctx))
    assert "Warning: unstable" in text
