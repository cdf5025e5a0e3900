"""The report's "Op-amps from the shelf" section: the session's models against every active candidate.

The models straddle the candidate's required GBW (bandsmith.bench.fitcheck's own need) by ±0.1 %, every
other margin far above its comfort factor, so the verdict words are known; the headroom printed is
bandsmith.bench.headroom's for the chosen model.
"""

from __future__ import annotations

import re
from dataclasses import replace

from bandsmith.design.candidate import Candidate
from bandsmith.bench.fitcheck import check_amp
from bandsmith.bench.headroom import headroom
from bandsmith.files.session import CandidateEntry, OpAmpSpec, Session, Target
from bandsmith.bench.shelf import OpAmp
from bandsmith.common.values import format_value
from report_helpers import visible_text

MFB = {"R1": 10e3, "R2": 866.0, "R3": 82e3, "C1": 10e-9, "C2": 10e-9}  # the MFB example (core/circuits/mfb.py)


def bench(name, gbw_hz):
    return OpAmp(
        name=name, gbw_hz=gbw_hz, a0=1e5, slew_v_per_us=1e3, iout_max_ma=500.0, supply_min_v=2.0,
        supply_max_v=40.0, swing_neg_v=0.5, swing_pos_v=0.5, cm_neg_v=0.5, cm_pos_v=0.5,
    )



def _session():
    s = Session(
        target=Target(2000.0, 5.0, 4.0, vin_v=0.5, series="exact"),
        candidates=(CandidateEntry("mfb", "mfb", MFB, snap=None), CandidateEntry("off", "mfb", MFB, snap=None, enabled=False)),
        opamp=OpAmpSpec(gbw_hz=1e6),
    )
    net = Candidate("mfb", MFB).netlist
    need = check_amp(net, bench("probe", 1e9), vin_v=0.5, tolerances=s.tolerances).needs.gbw_hz
    amps = [bench("just below", need * 0.999), bench("just above", need * 1.001), bench("plenty", 100 * need)]
    shelf = {"supply_v": 12.0, "amps": [a.to_json() for a in amps], "chosen": {"mfb": "plenty"}}
    return replace(s, extras={"shelf": shelf}), amps


def test_verdict_table_reasons_and_chosen_headroom(qapp):
    from bandsmith.app.report.builder import build_report_html

    s, amps = _session()
    page = build_report_html(s, images=False)
    start = page.index('<h2 class="shelf"')
    sec = page[start:page.index("<h2", start + 5)]
    text = visible_text(sec)
    table = re.search(r'<table class="shelf".*?</table>', sec, flags=re.S).group(0)
    heads = re.findall(r"<th>(.*?)</th>", table)
    assert heads[-1] == "mfb" and "off" not in heads  # active candidates only
    rows = {re.search(r"<b>(.*?)</b>", r).group(1): visible_text(r) for r in re.findall(r"<tr>(.*?)</tr>", table, flags=re.S)[1:]}
    assert "✗ does not fit" in rows["just below"]
    assert "◐ marginal" in rows["just above"]
    assert "✓ fits" in rows["plenty"] and "chosen" in rows["plenty"]
    assert "±12 V" in text  # the session's supply
    assert "is below the" in text  # the reason of the failing model
    room = headroom(Candidate("mfb", MFB).netlist, vin_v=0.5, supply_v=12.0, amp=amps[2])
    assert "Headroom with the chosen plenty" in text
    assert f"node {room.limiting_node} reaches its limit: {format_value(room.max_vin_v, 'V', digits=4)} peak" in text
    assert page.index('<h2 class="shelf"') < page.index(">Cautions<")


def test_no_models_in_the_session_no_section(qapp):
    from bandsmith.app.report.builder import build_report_html

    s, _ = _session()
    assert 'class="shelf"' not in build_report_html(replace(s, extras={}), images=False)


def test_pdf_of_the_demo_with_the_generic_models(qapp, tmp_path):
    """The demo session with every shipped generic model kept in it: a page for a person to look at."""
    from pathlib import Path

    from bandsmith.app.window.demo import demo_session
    from bandsmith.app.report.builder import write_report
    from bandsmith.bench.shelf import ARCHETYPES

    s = demo_session()
    first = s.candidates[0].id
    s = replace(s, extras=dict(s.extras, shelf={"amps": [a.to_json() for a in ARCHETYPES], "chosen": {first: ARCHETYPES[1].name}}))
    out = Path(__file__).parent / "_artifacts" / "report"
    out.mkdir(parents=True, exist_ok=True)
    pdf = write_report(s, out / "report_shelf.pdf")
    assert pdf.read_bytes()[:5] == b"%PDF-"
