"""The report's verdict section: the recommendation and every verdict, on the first page, before the plots.

The verdicts are checked against the core's own comparison (:func:`bandsmith.verdict.compare_verdicts`)
on a session made of the core's designs.
"""

from __future__ import annotations

import re
from dataclasses import replace

import pytest

from bandsmith.design.candidate import Conditions
from bandsmith.design.designer import Spec
from bandsmith.files.session import CandidateEntry, Session, Target
from bandsmith.verdict import VerdictLimits, compare_verdicts

from bandsmith.app.document.comparison import LIMITS_KEY, limits_section
from report_helpers import visible_text

# Invented test target (our own scenario, no source needed): a 1.2 kHz tone filter, Q 4, gain 2.
SPEC = Spec(1200.0, 4.0, 2.0)



@pytest.fixture(scope="module")
def core():
    return compare_verdicts(SPEC, series="E24", conditions=Conditions())


def _session(core, **extras) -> Session:
    cands = tuple(CandidateEntry(r.topology_id, r.topology_id, dict(r.chosen), snap="E24") for r in core.results if r.feasible)
    return Session(target=Target(1200.0, 4.0, 2.0), candidates=cands, extras=extras)


def test_verdict_section_comes_before_the_plots_with_the_core_verdicts(qapp, core):
    from bandsmith.app.report.builder import SECTIONS, build_report_html

    names = [n for n, _ in SECTIONS]
    assert names.index("target") < names.index("verdicts") < names.index("plots") < names.index("candidates")
    page = build_report_html(_session(core), images=True)
    assert page.index(">Target<") < page.index(">Which to build<") < page.index('<h2 class="plots">') < page.index('<h2 class="candidate"')
    text = visible_text(page)
    section = text[text.index("Which to build"):]
    assert f"Recommended: {core.recommended}" in section
    for r, v, rank in core.ranked():
        if r.feasible:
            assert re.search(rf"\b{rank} {re.escape(r.topology_id)}\b.{{0,4}}\S {re.escape(v.verdict)}", section), (r.topology_id, v.verdict)
            for reason in v.reasons:
                assert reason.text in section
    assert "the default verdict limits" in section


def test_changed_limits_are_named_and_change_the_verdicts(qapp, core):
    from bandsmith.app.report.builder import build_report_html

    tight = replace(VerdictLimits(), r_spread_marginal=1.5, r_spread_max=2.0)
    text = visible_text(build_report_html(_session(core, **{LIMITS_KEY: limits_section(tight)}), images=False))
    section = text[text.index("Which to build"):]
    assert "r spread marginal 1.5" in section and "r spread max 2.0" in section
    assert "resistor spread" in section


def test_a_damaged_limits_section_is_reported_and_the_defaults_used(qapp, core):
    from bandsmith.app.report.builder import build_report_html

    text = visible_text(build_report_html(_session(core, **{LIMITS_KEY: {"bogus": 1}}), images=False))
    assert "verdict limits cannot be used" in text and "the default verdict limits" in text


def test_pdf_first_page_has_the_recommendation(qapp, core, tmp_path):
    pypdf = pytest.importorskip("pypdf")
    from bandsmith.app.report.builder import write_report

    out = tmp_path / "r.pdf"
    write_report(_session(core), out)
    first = re.sub(r"\s+", " ", pypdf.PdfReader(str(out)).pages[0].extract_text())
    assert "Which to build" in first and f"Recommended: {core.recommended}" in first
