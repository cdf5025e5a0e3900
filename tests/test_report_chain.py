"""The report's "Stage chains" section: request, the chain as built, stages, needs, parts and the
plot image, registered for headless reports too (``bandsmith report``)."""

from __future__ import annotations

import base64
import re
import subprocess
import sys
from dataclasses import replace
from pathlib import Path

import pytest

from bandsmith.app.report.builder import SECTIONS, build_report_html
from bandsmith.design.candidate import Conditions
from bandsmith.chain.cascade import ChainSettings, cascade_session, chain_cascade, design_cascade
from bandsmith.circuits import get_topology
from bandsmith.files.session import save_session
from bandsmith.common.values import format_rkm
from cli_helpers import run_command

REPO = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def session():
    s = ChainSettings.from_request("butterworth", 3, f0_hz=10e3, bw_hz=3e3, gain=2.0, series="E24")
    r = design_cascade(s, conditions=Conditions(gbw_hz=10e6))
    assert r.feasible
    return cascade_session(r, chain_id="band-a", notes="Front end of the 10 kHz pilot-tone receiver.")


def chain_part(html: str) -> str:
    """The chain's part of the page: from its heading to the next section heading."""
    start = html.index('id="chain-band-a"')
    end = html.find("<h2", start)
    return html[start : end if end >= 0 else len(html)]


def test_the_section_is_registered_before_the_cautions():
    names = [n for n, _ in SECTIONS]
    assert "chains" in names and names.index("chains") < names.index("cautions")


def test_the_section_shows_request_figures_stages_and_parts(session):
    html = build_report_html(session, images=False)
    assert html.index('id="chain-band-a"') < html.index("Cautions")
    part = chain_part(html)
    assert "Butterworth" in part and "Front end of the 10 kHz pilot-tone receiver." in part
    for heading in ("Request", "As built", "Stages", "Amplifier needs per stage", "Parts"):
        assert f"<h3>{heading}</h3>" in part
    # The deviation from the ideal response is the core's, as measured from the saved parts.
    from bandsmith.chain.cascade import chains_in

    from bandsmith.app.document.extras_chains import chain_conditions

    (chain,) = chains_in(session)
    result = chain_cascade(chain, conditions=chain_conditions(session))
    assert f"{result.passband_max_dev_db:.3g} dB in the band" in part
    # Every part of every stage with its IEC 60062 RKM code.
    for st in chain.stages:
        for c in get_topology(st.topology_id).components:
            v = st.values[c.ref]
            if v > 0:
                assert f"<td align=\"right\" style=\"white-space: nowrap\">{format_rkm(v, c.kind)}</td>" in part
        assert f"<td align=\"left\" style=\"white-space: nowrap\">{st.topology_id}</td>" in part
    assert "plot-chain-band-a" not in part  # no images asked for


def test_the_plot_image_is_embedded_when_the_report_has_images(session):
    from PySide6 import QtGui

    html = build_report_html(session, images=True, image_width=700)
    m = re.search(r'<img src="data:image/png;base64,([^"]+)" width="700" [^>]*id="plot-chain-band-a"', html)
    assert m is not None
    img = QtGui.QImage.fromData(base64.b64decode(m.group(1)), "PNG")
    assert img.width() == 1400 and img.height() > 900  # drawn at twice the size shown, so it prints sharp


def test_a_session_without_chains_has_no_such_section(session):
    html = build_report_html(replace(session, extras={}), images=False)
    assert 'class="chain"' not in html


def test_a_damaged_chain_is_said_not_raised(session):
    bad = replace(session, extras={"chains": [{"id": "x", "settings": {"response": "elliptic"}, "stages": []}]})
    html = build_report_html(bad, images=False)
    assert "cannot be read" in html and "Cautions" in html


def test_bandsmith_report_headless_includes_the_chain(session, tmp_path):
    path = tmp_path / "chain.bandsmith.json"
    save_session(session, path)
    out = tmp_path / "report.html"
    proc = run_command(["report", path, "-o", out], cwd=REPO)  # in-process through the entry point
    assert proc.returncode == 0, proc.stderr
    html = out.read_text(encoding="utf-8")
    assert 'id="chain-band-a"' in html and 'id="plot-chain-band-a"' in html


def test_the_chains_a_session_keeps_are_read_without_qt(session):
    """The chains and the shelf a session keeps are read by Qt-free modules (app/document), so the
    headless report and the window agree on them; checked in a fresh interpreter."""
    code = (
        "import sys\n"
        "import bandsmith.app.document.extras_chains as c, bandsmith.app.document.extras_shelf as s\n"
        "assert not [m for m in sys.modules if m.startswith(('PySide6', 'pyqtgraph'))], 'Qt was imported'\n"
    )
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert proc.returncode == 0, proc.stderr
    from bandsmith.app.document.extras_chains import saved_chains

    chains, problems = saved_chains(session)
    assert [c.id for c in chains] == ["band-a"] and problems == []
    bad = replace(session, extras={"chains": session.extras["chains"] + ["not a chain"]})
    chains, problems = saved_chains(bad)
    assert [c.id for c in chains] == ["band-a"] and len(problems) == 1 and "chain 2" in problems[0]
    chains, problems = saved_chains(replace(session, extras={"chains": {"id": "x"}}))
    assert chains == [] and "is not a list" in problems[0]
