"""The session's verdict limits section and the document's comparison (no Qt).

The verdicts themselves are checked against the core's own comparison
(:func:`bandsmith.verdict.compare_verdicts`): a session made of the core's designs must get the same
verdicts, ranks and recommendation from the document layer.
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from bandsmith.app.document.comparison import (
    LIMITS_KEY,
    ComparisonCache,
    comparison_of,
    judge_session,
    limits_section,
    stored_limits,
)
from bandsmith.app.document.model import Document
from bandsmith.design.candidate import Conditions
from bandsmith.design.designer import Spec
from bandsmith.files.session import CandidateEntry, Session, Target, load_session, save_session
from bandsmith.verdict import VerdictLimits, compare_verdicts

# Invented test target (our own scenario, no source needed): a 1.2 kHz tone filter, Q 4, gain 2.
TARGET = Target(f0_hz=1200.0, q=4.0, gain=2.0, series="E24")
SPEC = Spec(1200.0, 4.0, 2.0)


@pytest.fixture(scope="module")
def core_comparison():
    return compare_verdicts(SPEC, series="E24", conditions=Conditions())


def _session_of(comp, extras=None) -> Session:
    cands = tuple(
        CandidateEntry(r.topology_id, r.topology_id, dict(r.chosen), snap="E24") for r in comp.results if r.feasible
    )
    return Session(target=TARGET, candidates=cands, extras=extras or {})


def test_limits_section_round_trips_through_a_session_file(tmp_path):
    limits = replace(VerdictLimits(), r_spread_marginal=300.0, yield_marginal=0.95, tolerances={"R": 0.005, "C": 0.02})
    s = Session(target=TARGET, candidates=(), extras={LIMITS_KEY: limits_section(limits)})
    path = tmp_path / "s.bandsmith.json"
    save_session(s, path)
    back = stored_limits(load_session(path))
    assert back.saved and back.problem is None
    assert back.settings == limits


def test_default_limits_keep_no_section():
    assert limits_section(VerdictLimits()) is None
    st = stored_limits(Session(target=TARGET, candidates=()))
    assert not st.saved and st.problem is None and st.settings == VerdictLimits()


@pytest.mark.parametrize("bad, word", [
    ({"no_such_limit": 1}, "no_such_limit"),
    ({"yield_min": "half"}, "yield-min"),
    ({"yield_min": 0.95}, "yield-min"),
    ([1, 2, 3], "JSON object"),
])
def test_a_damaged_section_gives_the_defaults_and_a_clear_note(bad, word):
    st = stored_limits(Session(target=TARGET, candidates=(), extras={LIMITS_KEY: bad}))
    assert st.settings == VerdictLimits() and not st.saved
    assert "verdict limits cannot be used" in st.problem and word in st.problem and "defaults apply" in st.problem


def test_session_verdicts_match_the_core_comparison(core_comparison):
    s = _session_of(core_comparison)
    doc = Document(s)
    comp = comparison_of(doc)
    core = {r.topology_id: (v, rank) for r, v, rank in core_comparison.ranked() if r.feasible}
    assert [r.id for r in comp.rows] == [c.id for c in s.candidates]
    for row in comp.rows:
        v, _ = core[row.id]
        assert row.verdict.verdict == v.verdict, row.id
        assert [x.code for x in row.verdict.reasons] == [x.code for x in v.reasons], row.id
        assert row.part_count == v.part_count and row.needs_inductor == v.needs_inductor
    # The order of the judged rows follows the core's ranking (infeasible designs are not in the session).
    core_order = [r.topology_id for r, _, _ in core_comparison.ranked() if r.feasible]
    assert [r.id for r in comp.judged] == core_order
    assert comp.recommended == core_comparison.recommended
    assert sum(r.recommended for r in comp.rows) == (comp.recommended is not None)


def test_limits_in_the_session_change_a_verdict_and_undo_restores_it(core_comparison):
    doc = Document(_session_of(core_comparison))
    before = {r.id: r.verdict.verdict for r in comparison_of(doc).rows}
    mfb = comparison_of(doc).row("mfb")
    assert mfb.r_spread is not None and mfb.r_spread > 2.0
    tight = replace(VerdictLimits(), r_spread_marginal=1.5, r_spread_max=2.0)
    doc.set_extra(LIMITS_KEY, limits_section(tight), "verdict limits")
    after = comparison_of(doc).row("mfb")
    assert after.verdict.verdict == "not buildable"
    assert "r_spread" in [x.code for x in after.verdict.reasons]
    doc.undo()
    assert {r.id: r.verdict.verdict for r in comparison_of(doc).rows} == before


def test_a_switched_off_candidate_is_listed_but_not_judged(core_comparison):
    s = _session_of(core_comparison)
    off = replace(s.candidates[0], enabled=False)
    s = s.with_candidate(off)
    comp = judge_session(s, lambda e: (None, "not analysed"), cache=ComparisonCache())
    row = comp.row(off.id)
    assert row.verdict is None and row.rank is None and not row.recommended


def test_an_unanalysable_candidate_is_not_buildable_with_its_reason(core_comparison):
    s = _session_of(core_comparison)
    comp = judge_session(s, lambda e: (None, "cannot analyse this design: test"))
    for row in comp.rows:
        assert row.verdict.verdict == "not buildable"
        assert row.verdict.reasons[0].code == "infeasible" and "test" in row.verdict.reasons[0].text
    assert comp.recommended is None and "no candidate is buildable" in comp.reason
