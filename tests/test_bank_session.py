"""A bank kept in a session (``extras["banks"]``), read back, and its report section. The checks
compare with the bank as designed and with the IEC 61260-1:2014 octave-band nominal labels."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

import bandsmith
from bandsmith.app.report.builder import SECTIONS, build_report_html
from bandsmith.bank.bank_session import banks_in
from bandsmith.bank.response import bank_response

from cli_helpers import run_command

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def report():
    return bandsmith.filter_bank(octave_fraction=1, from_hz=63, to_hz="8k", circuit="mfb", series="E96")


def test_round_trip_through_a_session_file(report, tmp_path):
    path = tmp_path / "bank.bandsmith.json"
    bandsmith.save_session(report.to_session(), path)
    session = bandsmith.open_session(path)
    assert [c.id for c in session.candidates] == [f"ch-{k}" for k in range(1, 9)]
    banks, problems = banks_in(session)
    assert problems == () and len(banks) == 1
    saved = banks[0]
    assert [ch.label_hz for ch in saved.bank.channels] == [63, 125, 250, 500, 1000, 2000, 4000, 8000]
    assert [dict(ch.chosen) for ch in saved.bank.channels] == [dict(ch.chosen) for ch in report.result.channels]
    r = bank_response(saved.bank)
    assert r.sum_ripple_db == pytest.approx(report.response.sum_ripple_db, abs=1e-9)
    assert np.allclose(r.isolation_db, report.response.isolation_db, atol=1e-9)
    assert saved.distinct_values_alone == report.to_json()["distinct_values_alone"]


def test_report_section(report):
    assert "banks" in [n for n, _ in SECTIONS]
    assert [n for n, _ in SECTIONS].index("banks") < [n for n, _ in SECTIONS].index("cautions")
    session = report.to_session()
    html = build_report_html(session, images=False)
    assert "Filter bank bank-1: 8 channels" in html
    assert f"{report.to_json()['distinct_values']} ({report.to_json()['distinct_values_alone']} when each channel is designed alone)" in html
    assert "Filter bank" not in build_report_html(replace(session, extras={}), images=False)
    bad = replace(session, extras={"banks": [{"id": "b", "channels": [{"circuit": "nope"}]}]})
    assert "cannot be read" in build_report_html(bad, images=False)


def test_command_saves_the_bank(tmp_path):
    path = tmp_path / "b.bandsmith.json"
    p = run_command(["bank", "--centres", "697,770,852,941", "--q", "20", "--circuit", "mfb", "--save", str(path), "--json"], cwd=ROOT)
    assert p.returncode == 0, p.stderr
    banks, _ = banks_in(bandsmith.open_session(path))
    assert [ch.target_f0_hz for ch in banks[0].bank.channels] == [697, 770, 852, 941]
