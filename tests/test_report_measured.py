"""The report's "Measured against the design" section: the overlay, the figures and the diagnosis.

The bench sweep is made here (tests/measured_helpers.py): the MFB example with C2 6 % high, from
scipy.signal.freqs on the textbook biquad, with seeded scatter (0.05 dB, 0.5°). Its true f0, Q and
centre gain follow from that biquad's coefficients (derived in measured_helpers.true_figures).
Rendered pages go to tests/_artifacts/report/ for a person to look at.
"""

from __future__ import annotations

import base64
import html as htmllib
import re
from pathlib import Path

from numpy.testing import assert_allclose

from bandsmith.bench.measured import read_measurement, with_measurement
from bandsmith.files.session import CandidateEntry, OpAmpSpec, Session, Target, save_session
from cli_helpers import run_command
from measured_helpers import MFB, moved, sweep, true_figures, write_layouts
from report_helpers import visible_text, png_size

ROOT = Path(__file__).resolve().parents[1]
ARTIFACTS = ROOT / "tests" / "_artifacts" / "report"




def _measured_session(tmp_path, layout="csv_khz", candidate="mfb"):
    f, mag, ph = sweep("mfb", MFB, {"C2": 0.06})
    paths = write_layouts(tmp_path / "bench", f, mag, ph)
    m = read_measurement(paths[layout])
    s = Session(
        target=Target(2000.0, 5.0, 4.0, vin_v=0.5, series="exact"),
        candidates=(CandidateEntry("mfb", "mfb", MFB, snap=None),),
        opamp=OpAmpSpec(gbw_hz=100e6),
    )
    return with_measurement(s, m, candidate=candidate), m


def _section(page: str) -> str:
    start = page.index('<h2 class="measured"')
    end = page.index("<h2", start + 10)
    return page[start:end]


def test_report_shows_overlay_figures_and_diagnosis(qapp, tmp_path):
    from bandsmith.app.report.builder import build_report_html
    from bandsmith.design.candidate import Candidate
    from bandsmith.bench.diagnose import diagnose
    from bandsmith.bench.readoff import read_off_measurement

    session, m = _measured_session(tmp_path)
    page = build_report_html(session)
    sec = _section(page)
    text = visible_text(sec)
    assert "Measured against the design" in text and m.source in text and m.sha256[:12] in text
    assert "201 points" in text and "magnitude and phase" in text and "built from candidate mfb" in text

    # Two images, magnitude and phase, as PNG of the report's width.
    for key in ("magnitude", "phase"):
        mt = re.search(rf'<img src="data:image/png;base64,([A-Za-z0-9+/=]+)"[^>]*id="measured-1-{key}"', sec)
        assert mt, key
        w, h = png_size(base64.b64decode(mt.group(1)))
        assert w >= 900 and h >= 300

    # The read-off figures match the moved board's true ones (derived from its biquad), within what
    # the scatter allows (the bounds of tests/test_measured.py for noisy sweeps: 0.5 %, 4 %, 0.12 dB).
    true = true_figures("mfb", moved(MFB, {"C2": 0.06}))
    ro = read_off_measurement(m)
    assert_allclose(ro.f0_hz, true["f0_hz"], rtol=0.005)
    assert_allclose(ro.q, true["q"], rtol=0.04)
    assert_allclose(ro.gain_center_db, true["gain_db"], atol=0.12)
    from bandsmith.common.values import format_value

    assert format_value(ro.f0_hz, "Hz", digits=5) in text
    assert f"{ro.gain_center_db:+.2f} dB" in text

    # The diagnosis as the core gives it (with the session's op-amp), and C2 ranked first.
    d = diagnose(Candidate("mfb", MFB), m, opamp=session.conditions_for(session.candidates[0]).opamp)
    assert htmllib.unescape(re.sub(r"\s+", " ", d.summary)) in text
    assert d.alone[0].part == "C2" and "C2" in d.summary
    ranking = re.search(r'<table class="ranking".*?</table>', sec, flags=re.S).group(0)
    first_row = re.search(r"</thead>\s*<tr>(.*?)</tr>", ranking, flags=re.S).group(1)
    assert "C2" in first_row and f"{d.alone[0].change_pct:+.2f}" in first_row
    assert format_value(d.fitted_figures["f0_hz"], "Hz", digits=5) in text  # the fitted column
    assert format_value(d.design_figures["f0_hz"], "Hz", digits=5) in text  # the design column
    # Before the cautions, after the candidates.
    assert page.index("Achieved figures") < page.index('<h2 class="measured"') < page.index(">Cautions<")

    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    (ARTIFACTS / "report_measured.html").write_text(page, encoding="utf-8")


def test_magnitude_only_and_missing_candidate(qapp, tmp_path):
    from bandsmith.app.report.builder import build_report_html

    session, m = _measured_session(tmp_path, layout="quoted_magnitude")
    sec = _section(build_report_html(session))
    assert 'id="measured-1-magnitude"' in sec and 'id="measured-1-phase"' not in sec
    assert "magnitude only" in visible_text(sec) and "Diagnosis:" in visible_text(sec)

    orphan, _ = _measured_session(tmp_path, candidate="gone")
    text = visible_text(_section(build_report_html(orphan, images=False)))
    assert "No diagnosis: its candidate is not in this session" in text
    assert "<img" not in _section(build_report_html(orphan, images=False))


def test_no_measurement_no_section(qapp, tmp_path):
    from bandsmith.app.report.builder import build_report_html

    session, _ = _measured_session(tmp_path)
    from dataclasses import replace

    plain = replace(session, extras={})
    assert 'class="measured"' not in build_report_html(plain, images=False)


def test_headless_report_command_includes_it(tmp_path):
    # `bandsmith report` in-process through the entry point (tests/cli_helpers.py)
    session, m = _measured_session(tmp_path)
    path = tmp_path / "bench.bandsmith.json"
    save_session(session, path)
    out = tmp_path / "report.html"
    r = run_command(["report", path, "-o", out], cwd=ROOT)
    assert r.returncode == 0, r.stderr
    page = out.read_text(encoding="utf-8")
    sec = _section(page)
    assert 'id="measured-1-magnitude"' in sec and 'id="measured-1-phase"' in sec and "Diagnosis:" in visible_text(sec)
    pdf = tmp_path / "report.pdf"
    r = run_command(["report", path, "-o", pdf], cwd=ROOT)
    assert r.returncode == 0, r.stderr
    import pypdf  # a test dependency (pyproject.toml, extra "test"): missing, the test fails
    reader = pypdf.PdfReader(str(pdf))
    text = re.sub(r"\s+", " ", " ".join(p.extract_text() for p in reader.pages))  # words come tab-separated
    assert "Measured against the design" in text and "Diagnosis" in text
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    (ARTIFACTS / "report_measured.pdf").write_bytes(pdf.read_bytes())
