"""A chain's stages designed together give what each stage designed alone gives.

The reference is :func:`bandsmith.design.designer.designs_or_errors` of one stage's circuits under
that stage's own conditions (its amplitude, stage tolerances and source), the way a chain built
its stages one after the other; :func:`bandsmith.chain.stage_designs.prepare_stages` makes every
stage's designs first, with the chain's input amplitude standing in for each stage's own, and
:meth:`PendingStage.results` concludes them under the stage's conditions. Bit for bit: the same
parts, figures, required GBW and amplifier needs. Scenarios are our own.
"""

import pytest
from bandsmith.chain.bandpass import plan_cascade
from bandsmith.chain.cascade import (
    ChainSettings,
    _stage_circuits,
    _stage_conditions,
    design_cascade,
)
from bandsmith.chain.stage_designs import prepare_stages
from bandsmith.common.errors import InputError
from bandsmith.design.candidate import Conditions
from bandsmith.design.designer import Spec, designs_or_errors


def _same(a, b):
    """Two designs (or errors) of one circuit alike in everything a chain reads."""
    assert type(a) is type(b)
    if isinstance(a, InputError):
        assert (a.field, a.reason) == (b.field, b.reason)
        return
    assert (a.feasible, a.reason, a.chosen, a.exact, a.errors, a.warnings, a.notes, a.conditions) == (
        b.feasible, b.reason, b.chosen, b.exact, b.errors, b.warnings, b.notes, b.conditions)
    if a.analysis is None:
        assert b.analysis is None
        return
    assert a.analysis.required_gbw == b.analysis.required_gbw
    assert a.analysis.ideal.to_json() == b.analysis.ideal.to_json()
    assert (a.analysis.actual is None) == (b.analysis.actual is None)
    if a.analysis.actual is not None:
        assert a.analysis.actual.to_json() == b.analysis.actual.to_json()
    assert a.analysis.drive == b.analysis.drive
    assert a.analysis.requirements.to_json() == b.analysis.requirements.to_json()


CASES = [
    # (family, order, band, gain, series, circuit, conditions)
    ("butterworth", 4, {"f0_hz": 40e3, "bw_hz": 16e3}, 10.0, "E24", "auto", Conditions(gbw_hz=20e6)),
    ("chebyshev", 3, {"f0_hz": 2e3, "bw_hz": 500.0}, 2.0, "E12", "auto", Conditions(gbw_hz=1e6, rsource_ohm=600.0, vin_v=0.3)),
    ("bessel", 4, {"f0_hz": 10e3, "bw_hz": 4e3}, 1.0, "E96", "tow-thomas", Conditions()),
    ("butterworth", 3, {"f0_hz": 5e3, "bw_hz": 1e3}, 4.0, "E24", "auto", Conditions(gbw_hz=5e6, cload_f=1e-9, rload_ohm=10e3)),
]


@pytest.mark.parametrize("case", CASES, ids=lambda c: f"{c[0]}-{c[1]}-{c[5]}")
def test_stages_designed_together_match_each_alone(case):
    family, order, band, gain, series, circuit, cond = case
    s = ChainSettings.from_request(family, order, gain=gain, series=series, circuit=circuit, **band)
    plan = plan_cascade(s.prototype(), s.band, s.gain)
    ids = _stage_circuits(s)
    pending = prepare_stages([(ids, Spec(sec.f0_hz, sec.q, sec.gain), _stage_conditions(cond, sec, cond.vin_v)) for sec in plan.sections], series)
    # each stage under an amplitude of its own (not the stand-in), as a chain gives it
    for k, (sec, p) in enumerate(zip(plan.sections, pending)):
        vin = cond.vin_v * (1.0 + 0.7 * k)
        own = _stage_conditions(cond, sec, vin)
        got, together = p.results(vin)
        assert got == own
        alone = designs_or_errors(ids, Spec(sec.f0_hz, sec.q, sec.gain), series=series, conditions=own)
        assert len(together) == len(alone) == len(ids)
        for a, b in zip(alone, together):
            _same(a, b)


def test_design_cascade_stages_match_stage_by_stage():
    # The chain as built before its designs were batched: each stage designed once the stages
    # before it were built, the amplitude reaching it read off the partial chain's response at
    # its f0 (Cascade.response, ideal op-amp).
    import numpy as np
    from bandsmith.chain.cascade import Cascade, _build_stage

    s = ChainSettings.from_request("chebyshev", 4, f0_hz=12e3, bw_hz=3e3, gain=5.0, series="E24")
    cond = Conditions(gbw_hz=10e6, vin_v=0.5, rsource_ohm=1e3)
    r = design_cascade(s, conditions=cond)
    built = []
    for sec in r.plan.sections:
        partial = Cascade(s, cond, r.plan, tuple(built), False, None, None, None, None, None, None, np.empty(0))
        vin = cond.vin_v * float(abs(partial.response(np.array([sec.f0_hz]))[0])) if built else cond.vin_v
        built.append(_build_stage(sec, vin, s, cond))
    for st, ref in zip(r.stages, built):
        assert st.vin_v == ref.vin_v
        assert [a.to_json() for a in st.attempts] == [a.to_json() for a in ref.attempts]
        assert st.circuit == ref.circuit and st.chosen == ref.chosen and st.warnings == ref.warnings
    _same(r.stages[-1].result, built[-1].result)  # the earlier ones' output currents include the next stage's input


def test_an_analysis_at_another_amplitude_has_that_amplitudes_requirements():
    # Analysis.with_vin: the requirements worked out afresh for the new amplitude, equal to an
    # analysis made at it (the output swing and slew scale with the input), the rest untouched.
    from bandsmith.design.candidate import Candidate

    values = {"R1": 16e3, "R2": 1.1e3, "R3": 91e3, "C1": 10e-9, "C2": 10e-9}  # an MFB of our own
    one = Candidate("mfb", values).analyze(Conditions(gbw_hz=5e6, vin_v=0.5))
    one.requirements  # found for 0.5 V first
    moved = one.with_vin(2.0)
    fresh = Candidate("mfb", values).analyze(Conditions(gbw_hz=5e6, vin_v=2.0))
    assert moved.requirements.to_json() == fresh.requirements.to_json()
    assert moved.requirements.vout_peak_v == pytest.approx(4.0 * one.requirements.vout_peak_v, rel=1e-12)
    assert moved.ideal is one.ideal and moved.required_gbw == one.required_gbw
    assert one.with_vin(0.5) is one
