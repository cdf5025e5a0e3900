"""Diagnosis (bandsmith.bench.diagnose): which parts explain a measured response.

The "board" is a circuit's example design with one or two parts moved by a known amount; its
response comes from scipy.signal.freqs on the textbook biquad (tests/measured_helpers.py), with
seeded scatter of 0.05 dB and 0.5° at 201 log points. "Within the noise's effect" is computed
here, independently of the module: the standard error of a least-squares estimate linearised at
the truth, cov = (JᵀJ)⁻¹ JᵀΣJ (JᵀJ)⁻¹, with J the derivative of the residuals (dB; phase in
dB-equivalent, radians × 20/ln 10, as the module weighs it) by ln(part), from scipy.signal.freqs,
and Σ the scatter put in. Estimates must lie within four standard errors.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.signal

from bandsmith.design.candidate import Candidate
from bandsmith.bench.diagnose import DEFAULT_TOLERANCES, diagnose
from bandsmith.common.errors import InputError
from bandsmith.bench.measured import Measurement
from bandsmith.solver.mna import OpAmpModel
from bandsmith.analysis.analyzer import transfer_function

from measured_helpers import MFB, NOISE_DB, NOISE_DEG, TANK, biquad, moved, sweep

DB = 20.0 / math.log(10.0)


def measurement(topology, design, moves, *, phase=True, seed=7, noise=True):
    f, mag, ph = sweep(topology, design, moves, seed=seed, noise=noise)
    return Measurement(f, mag, ph if phase else None, "synthetic", "0" * 64)


def standard_errors(topology, design, moves, parts, *, phase):
    """Linearised standard errors (in % of each part) of a fit of ``parts`` with the scatter put in."""
    f, _, _ = sweep(topology, design, moves, noise=False)
    w = 2 * np.pi * f
    truth = moved(design, moves)

    def resp(v):
        b, a = biquad(topology, v)
        return scipy.signal.freqs(b, a, worN=w)[1]

    cols_m, cols_p = [], []
    for p in parts:
        up, dn = dict(truth), dict(truth)
        up[p] *= math.exp(1e-6)
        dn[p] *= math.exp(-1e-6)
        r = resp(up) / resp(dn)
        cols_m.append(DB * np.log(np.abs(r)) / 2e-6)
        cols_p.append(DB * np.angle(r) / 2e-6)
    Jm = np.array(cols_m).T
    if phase:
        J = np.vstack([Jm, np.array(cols_p).T])
        var = np.concatenate([np.full(f.size, NOISE_DB**2), np.full(f.size, (DB * math.radians(NOISE_DEG)) ** 2)])
    else:
        J, var = Jm, np.full(f.size, NOISE_DB**2)
    A = np.linalg.inv(J.T @ J)
    cov = A @ (J.T * var) @ J @ A
    return {p: 100 * math.sqrt(cov[k, k]) for k, p in enumerate(parts)}


# --------------------------------------------------------------------------- one part moved


@pytest.mark.parametrize("phase", [True, False])
@pytest.mark.parametrize("topology, design, part", [("mfb", MFB, "C2"), ("mfb", MFB, "R3"), ("rlc-tank", TANK, "C"), ("rlc-tank", TANK, "L")])
def test_one_moved_part_is_found_first(topology, design, part, phase):
    shift = 0.06 if part[0] in "CL" else -0.02
    d = diagnose(Candidate(topology, design), measurement(topology, design, {part: shift}, phase=phase))
    assert d.mode == ("complex" if phase else "magnitude")
    assert d.alone[0].part == part
    assert d.verdict == "one-part"
    se = standard_errors(topology, design, {part: shift}, [part], phase=phase)[part]
    assert se < 0.1  # the scatter moves a one-part estimate by well under 0.1 %
    assert abs(d.alone[0].change_pct - 100 * shift) < 4 * se
    # The module's own standard error agrees with the independent one.
    assert 0.5 * se < d.alone[0].change_se_pct < 2 * se
    # What is left is the scatter itself (0.05 dB rms put in).
    assert d.alone[0].residual_db_rms == pytest.approx(NOISE_DB, rel=0.2)
    assert d.residual_db_rms == pytest.approx(NOISE_DB, rel=0.2)
    assert d.summary.startswith(f"{part} about {abs(round(100 * shift)):g} % {'high' if shift > 0 else 'low'} explains it")


def test_noiseless_one_part_is_recovered_exactly():
    d = diagnose(Candidate("mfb", MFB), measurement("mfb", MFB, {"C2": 0.06}, noise=False))
    assert d.alone[0].part == "C2"
    assert d.alone[0].change_pct == pytest.approx(6.0, abs=1e-5)
    assert d.alone[0].residual_db_rms < 1e-6


def test_the_summary_says_it_in_plain_words():
    d = diagnose(Candidate("mfb", MFB), measurement("mfb", MFB, {"C2": 0.06}))
    assert "C2 about 6 % high explains it" in d.summary
    assert d.explanation.keys() == {"C2"}
    # The measured read-off rides along (the same definitions as the design's figures).
    assert d.measured.points == 201
    assert d.measured.f0_hz == pytest.approx(d.fitted_figures["f0_hz"], rel=0.005)


# --------------------------------------------------------------------------- two parts moved


@pytest.mark.parametrize("phase", [True, False])
def test_two_moved_parts_are_found_together(phase):
    moves = {"R2": -0.025, "C": 0.06}
    d = diagnose(Candidate("rlc-tank", TANK), measurement("rlc-tank", TANK, moves, phase=phase))
    assert d.verdict == "two-parts"
    assert {a.part for a in d.pair} == {"R2", "C"}
    se = standard_errors("rlc-tank", TANK, moves, ["R2", "C"], phase=phase)
    for a in d.pair:
        assert abs(a.change_pct - 100 * moves[a.part]) < 4 * se[a.part]
    assert d.alone[0].part == "C"  # the larger move still ranks first alone
    assert "no single part does" in d.summary


def test_an_identifiable_set_is_recovered_by_the_full_fit():
    # The tank's response fixes R1·C, R2·C and L·C (derived from the tank's biquad): with R1 held, R2, L
    # and C are each fixed, so the all-parts fit recovers the moves themselves.
    moves = {"R2": -0.025, "C": 0.06}
    parts = ["R2", "L", "C"]
    d = diagnose(Candidate("rlc-tank", TANK), measurement("rlc-tank", TANK, moves), parts=parts)
    assert d.confounded == ()
    se = standard_errors("rlc-tank", TANK, moves, parts, phase=True)
    for p in parts:
        assert abs(d.change_pct[p] - 100 * moves.get(p, 0.0)) < 4 * se[p]


# --------------------------------------------------------------------------- what cannot be told


def test_parts_that_cannot_be_told_apart_are_named():
    # Tank: raising C while lowering R1, R2 and L by the same factor leaves
    # -(s/(R1·C)) / (s² + s/(R2·C) + 1/(L·C)) unchanged (derived from the parallel-tank biquad).
    d = diagnose(Candidate("rlc-tank", TANK), measurement("rlc-tank", TANK, {"C": 0.06}))
    assert d.confounded == (("R1", "R2", "L", "C"),)
    assert "not separately identifiable" in d.summary
    assert "raising C and lowering R1, R2 and L by the same factor" in d.summary
    # An ideal second-order band-pass has three free figures (f0, Q, gain): five MFB parts leave two
    # directions the data cannot see (common practice, no source: k·s/(s² + a·s + b) has three).
    d = diagnose(Candidate("mfb", MFB), measurement("mfb", MFB, {"C2": 0.06}))
    assert d.confounded == (("R1", "R2", "R3", "C1", "C2"),)


def test_a_design_that_matches_blames_nothing():
    d = diagnose(Candidate("mfb", MFB), measurement("mfb", MFB, {}))
    assert d.verdict == "matches"
    assert "matches the design" in d.summary
    assert d.explanation == {}


def test_a_part_beyond_its_range_ends_at_the_edge():
    # C2 25 % high, beyond the default ±15 % (3 × 5 %).
    d = diagnose(Candidate("mfb", MFB), measurement("mfb", MFB, {"C2": 0.25}))
    assert d.ranges["C2"] == pytest.approx(3 * DEFAULT_TOLERANCES["C"])
    assert "C2" in d.at_bound and "edge of" in d.summary
    # A wider range finds it.
    d = diagnose(Candidate("mfb", MFB), measurement("mfb", MFB, {"C2": 0.25}), ranges={"C2": 0.4})
    assert d.alone[0].part == "C2" and d.alone[0].change_pct == pytest.approx(25.0, abs=0.3)


def test_a_finite_op_amp_is_part_of_the_model():
    # The board has a 200 kHz op-amp (its response from the project's own MNA model; derived).
    cand = Candidate("mfb", MFB)
    amp = OpAmpModel(200e3, 1e5)
    f, _, _ = sweep("mfb", MFB, {}, noise=False)
    h = transfer_function(cand.netlist, amp).at_f(f)[0]
    rng = np.random.default_rng(3)
    m = Measurement(f, 20 * np.log10(np.abs(h)) + rng.normal(0, NOISE_DB, f.size), np.degrees(np.angle(h)) + rng.normal(0, NOISE_DEG, f.size), "amp", "0" * 64)
    assert diagnose(cand, m, opamp=amp).verdict == "matches"
    assert diagnose(cand, m).verdict != "matches"  # with an ideal op-amp the parts get the blame


def test_a_phase_reference_off_by_half_a_turn_falls_back_to_magnitude():
    f, mag, ph = sweep("mfb", MFB, {"C2": 0.06})
    m = Measurement(f, mag, ph + 180.0, "flipped", "0" * 64)
    d = diagnose(Candidate("mfb", MFB), m)
    assert d.mode == "magnitude" and "phase" in d.notes[0]
    assert d.alone[0].part == "C2"


def test_bad_requests_are_bad_input():
    cand = Candidate("rlc-tank", TANK)
    m = measurement("rlc-tank", TANK, {})
    with pytest.raises(InputError, match="R9"):
        diagnose(cand, m, parts=["R9"])
    with pytest.raises(InputError, match="RL is zero"):
        diagnose(cand, m, parts=["RL"])
    with pytest.raises(InputError, match="range"):
        diagnose(cand, m, ranges=1.5)
    with pytest.raises(InputError, match="range"):
        diagnose(cand, m, ranges=0.0)
    d = diagnose(cand, m)
    assert "RL" not in d.parts and "RL is zero" in d.notes[0]
