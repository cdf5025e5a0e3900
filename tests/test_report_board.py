"""The report's "On the board" section: written only when the session keeps board settings, with
each active candidate's single-supply bias and its trim procedure (the parts bandsmith.api.trim
picks), and the corrected f0 part for a measured f0.

Checks: two equal divider resistors put the reference at half the supply (Ohm's law); the trim
parts and the correction are the core's own (bandsmith.api.trim), formatted."""

from __future__ import annotations

from dataclasses import replace

import pytest

import bandsmith
from bandsmith.app.document.extras_board import BOARD_KEY
from bandsmith.app.report.page import build_report_html
from bandsmith.app.report.sections import SECTIONS
from bandsmith.app.window.demo import demo_session
from bandsmith.common.values import format_value


@pytest.fixture(scope="module")
def session():
    s = demo_session()
    board = {"supply_v": 9.0, "reference": "divider", "measured_f0_hz": {"mfb": 5800.0}}
    return replace(s, extras={**s.extras, BOARD_KEY: board})


def test_registered_before_the_cautions():
    names = [n for n, _ in SECTIONS]
    assert names.index("board") < names.index("cautions")


def test_no_board_settings_no_section():
    assert "On the board" not in build_report_html(demo_session(), images=False)


def test_the_section_has_the_bias_and_the_trim_parts(session):
    html = build_report_html(session, images=False)
    assert "<h2>On the board</h2>" in html
    i = html.index('id="board-mfb"')
    part = html[i : html.find("<h3", i + 1)]
    e = session.candidate("mfb")
    plan = bandsmith.api.trim(e.topology_id, dict(e.values), measured_f0_hz=5800.0)
    for ch in (plan.f0, plan.q, plan.gain):
        assert f">{ch.part}</td>" in part
    # two equal divider resistors put the reference at half the supply (Ohm's law)
    assert format_value(4.5, "V", digits=4) in part
    c = plan.correction
    assert c is not None and c.part == plan.f0.part
    assert format_value(c.new_value, "Ω", digits=4) in part
    for step in plan.procedure:
        assert step.replace("'", "&#x27;") in part
    # every active candidate has its own entry
    for cand in session.candidates:
        if cand.enabled:
            assert f'id="board-{cand.id}"' in html
