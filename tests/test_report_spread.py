"""Report sections of the tolerance spread and the output noise, in process and from `bandsmith report`.

The numbers are the core's (bandsmith.spread.tolerance, bandsmith.analysis.noise; checked against outside sources in
tests/test_tolerance.py and tests/test_noise.py): the report must carry them for the session's
own settings, skip the spread when the session keeps none, and use the noise defaults, saying so.
"""

import os
import re
import subprocess
import sys
from dataclasses import replace
from datetime import datetime, timezone
from pathlib import Path

import pytest

from bandsmith.app.window.demo import demo_session
from bandsmith.app.report.builder import SECTIONS, build_report_html
from bandsmith.app.report.spread_section import section_noise, section_spread
from bandsmith.design.candidate import Candidate
from bandsmith.solver.mna import IDEAL
from bandsmith.analysis.noise import NoiseSettings, output_noise
from bandsmith.files.session import OpAmpSpec, save_session
from bandsmith.spread.tolerance import SpreadSettings, run_spread
from bandsmith.common.values import format_value
from cli_helpers import run_command

WHEN = datetime(2026, 3, 1, 12, 0, tzinfo=timezone.utc)
ROOT = Path(__file__).resolve().parents[1]


def _circuit(session, cid):
    entry = session.candidate(cid)
    return Candidate(entry.topology_id, entry.values).netlist, session.conditions_for(entry).opamp or IDEAL


def test_sections_registered_before_the_cautions():
    names = [n for n, _ in SECTIONS]
    assert names.index("spread") < names.index("noise") < names.index("cautions") == len(names) - 1


def test_no_spread_without_settings_and_noise_with_defaults():
    s = demo_session()
    html = build_report_html(s, images=False, created=WHEN)
    assert "Tolerance spread" not in html
    assert "Output noise" in html and "keeps no noise settings" in html
    net, opamp = _circuit(s, "mfb")
    r = output_noise(net, NoiseSettings(), opamp=opamp, vin_v=s.target.vin_v)
    table = html[html.index('class="noise-summary"'):]
    row = re.search(r"<td[^>]*><b>mfb</b></td>(.*?)</tr>", table, re.S).group(1)
    assert format_value(r.total_v_rms, "V") + " rms" in row
    assert format_value(r.total_at_f0_v_rthz, "V/√Hz") in row
    assert f"{r.snr_db:.1f} dB" in row
    assert 'id="noise-density"' not in html  # no images asked for


def test_spread_section_from_saved_settings():
    settings = SpreadSettings(tolerances={"C": 0.02, "RB": 0.005}, trials=4000, seed=3)
    noise = NoiseSettings(en_v_per_rthz=4e-9, band_hz=(1e3, 20e3))
    s = replace(demo_session(), extras={"spread": settings.to_json(), "noise": noise.to_json()})
    html = build_report_html(s, images=True, created=WHEN)
    assert "Tolerance spread" in html and "C ±2" in html.replace("\u00a0", " ")
    for cid in ("mfb", "sallen-key", "rlc-tank"):
        net, opamp = _circuit(s, cid)
        tol = {k: v for k, v in settings.tolerances.items() if k in ("R", "C", "L") or k in {e.ref for e in net.passives}}
        sp = run_spread(net, replace(settings, tolerances=tol), opamp=opamp)
        assert f"{cid}: yield {100 * sp.yield_fraction:.1f} %" in html
        assert f'id="spread-hist-{cid}"' in html
    assert "RB not used" in html.replace("\u00a0", " ")  # mfb has no RB: said, not an error
    assert "keeps no noise settings" not in html and "1 kHz to 20 kHz" in html
    assert 'id="noise-density"' in html


def test_spread_with_an_ideal_opamp_leaves_the_gbw_spread_out():
    s = replace(demo_session(), opamp=OpAmpSpec(gbw_hz=None), extras={"spread": SpreadSettings(gbw_tol=0.3, trials=500).to_json()})
    from bandsmith.app.report.builder import make_context

    ctx = make_context(s, images=False, created=WHEN)
    text = section_spread(ctx)
    assert "GBW spread not used" in text and 'class="error"' not in text
    assert "ideal op-amp" in text
    assert "Output noise" in section_noise(ctx)


def test_unreadable_settings_are_said_not_raised():
    s = replace(demo_session(), extras={"spread": {"trials": "many"}, "noise": {"en_v_per_rthz": -1}})
    html = build_report_html(s, images=False, created=WHEN)
    assert "spread settings cannot be used" in html and "noise settings cannot be used" in html


@pytest.mark.cli
def test_headless_report_command_includes_both(tmp_path):
    s = replace(demo_session(), extras={"spread": SpreadSettings(trials=2000).to_json()})
    src = tmp_path / "bench.bandsmith.json"
    save_session(s, src)
    # HTML through a real process with no display set (the command sets the offscreen platform
    # itself: a smoke test); the PDF in-process through the entry point (tests/cli_helpers.py)
    env = {k: v for k, v in os.environ.items() if k not in ("QT_QPA_PLATFORM", "DISPLAY", "WAYLAND_DISPLAY")}
    out = tmp_path / "r.html"
    p = subprocess.run([sys.executable, "-m", "bandsmith.app", "report", str(src), "-o", str(out)], cwd=ROOT, env=env, capture_output=True, text=True, timeout=300)
    assert p.returncode == 0, p.stderr
    assert out.is_file()
    out = tmp_path / "r.pdf"
    p = run_command(["report", src, "-o", out], cwd=ROOT)
    assert p.returncode == 0, p.stderr
    assert out.is_file()
    html = (tmp_path / "r.html").read_text(encoding="utf-8")
    assert "Tolerance spread" in html and "Output noise" in html and 'id="spread-hist-mfb"' in html
    from pypdf import PdfReader

    text = " ".join(" ".join(page.extract_text().split()) for page in PdfReader(str(tmp_path / "r.pdf")).pages)
    assert "Tolerance spread" in text and "Output noise" in text
