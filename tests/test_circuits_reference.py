"""The circuits against references outside the project.

Sources, named beside each check:
- scipy.signal.freqs (a general-purpose reference library) on each circuit's closed-form biquad;
- textbook formulas: S. Franco, *Design with Operational Amplifiers and Analog Integrated
  Circuits*, 3rd ed., McGraw-Hill, ch. 3 (multiple-feedback and Sallen–Key band-pass, Examples
  3.13(a) and 3.15), and the parallel-resonance relations of circuit theory for the tank;
- facts of the trade (marked "common practice, no source");
- values derived by algebra here or with sympy (test_circuits_sympy.py) (marked "derived", with
  the derivation).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.signal
from numpy.testing import assert_allclose

from bandsmith.analysis.analyzer import ideal_figures, sensitivities, sweep, transfer_function
from bandsmith.circuits import get_topology
from bandsmith.analysis.figures import measure
from bandsmith.solver.mna import OpAmpModel

TWO_PI = 2.0 * math.pi


# ------------------------------------------------------------------ closed-form biquads (derived by nodal
# analysis; the sympy solution in test_circuits_sympy.py reduces to each of them)


def tank_biquad(v):
    """H = −(s/(R1·C)) / (s² + s/(R2·C) + 1/(L·C)) (parallel-tank band-pass, derived; RL = 0)."""
    return [-1.0 / (v["R1"] * v["C"]), 0.0], [1.0, 1.0 / (v["R2"] * v["C"]), 1.0 / (v["L"] * v["C"])]


def mfb_biquad(v):
    """H = −(s/(R1·C2)) / (s² + s·(C1+C2)/(R3·C1·C2) + (1/R1 + 1/R2)/(R3·C1·C2)) (derived; Franco 3rd ed. ch. 3)."""
    r1, r2, r3, c1, c2 = (v[k] for k in ("R1", "R2", "R3", "C1", "C2"))
    return [-1.0 / (r1 * c2), 0.0], [1.0, (c1 + c2) / (r3 * c1 * c2), (1 / r1 + 1 / r2) / (r3 * c1 * c2)]


def sallen_key_biquad(v):
    """Variant A: H = (K·s/(R1·Ca)) / (s² + s·[1/(R1·Ca) + (1−K)/(R2·Ca) + 1/(R3·Ca) + 1/(R3·Cb)]
    + (R1+R2)/(R1·R2·R3·Ca·Cb)), K = 1 + RB/RA (derived by nodal analysis); our C1 is Ca, C2 is Cb."""
    r1, r2, r3, ca, cb = (v[k] for k in ("R1", "R2", "R3", "C1", "C2"))
    k = 1.0 + v["RB"] / v["RA"]
    a1 = 1 / (r1 * ca) + (1 - k) / (r2 * ca) + 1 / (r3 * ca) + 1 / (r3 * cb)
    return [k / (r1 * ca), 0.0], [1.0, a1, (r1 + r2) / (r1 * r2 * r3 * ca * cb)]


BIQUADS = {"rlc-tank": tank_biquad, "mfb": mfb_biquad, "sallen-key": sallen_key_biquad}

# Designs of our own (not any published example), one ordinary and one awkward each.
DESIGNS = {
    "rlc-tank": [
        {"R1": 3300.0, "R2": 6800.0, "L": 0.01, "C": 22e-9, "RL": 0.0},
        {"R1": 120.0, "R2": 1.5e3, "L": 2.2e-3, "C": 4.7e-6, "RL": 0.0},  # Q ≈ 69, gain −12.5
    ],
    "mfb": [
        {"R1": 10e3, "R2": 866.0, "R3": 82e3, "C1": 10e-9, "C2": 10e-9},
        {"R1": 68e3, "R2": 330.0, "R3": 1.2e6, "C1": 1e-9, "C2": 4.7e-9},  # unequal capacitors
    ],
    "sallen-key": [
        {"R1": 4530.0, "R2": 4530.0, "R3": 4530.0, "C1": 100e-9, "C2": 100e-9, "RA": 10e3, "RB": 22.1e3},
        {"R1": 1e3, "R2": 22e3, "R3": 47e3, "C1": 2.2e-9, "C2": 15e-9, "RA": 4.7e3, "RB": 1e3},
    ],
}
CASES = [(tid, i) for tid in DESIGNS for i in range(len(DESIGNS[tid]))]


def biquad_figures(b, a):
    """f0, Q and centre gain of K·s/(s² + a1·s + a0): ω0 = √a0, Q = ω0/a1, H(jω0) = K/a1 (derived)."""
    w0 = math.sqrt(a[2])
    return w0 / TWO_PI, w0 / a[1], b[0] / a[1]


# ------------------------------------------------------------------ scipy.signal.freqs


@pytest.mark.parametrize(("topology_id", "k"), CASES)
def test_sweep_matches_scipy_freqs_on_the_closed_form_biquad(topology_id, k):
    # scipy.signal.freqs on the closed-form biquad above vs the core's sweep, 4 decades
    v = DESIGNS[topology_id][k]
    b, a = BIQUADS[topology_id](v)
    f0 = biquad_figures(b, a)[0]
    f = np.geomspace(f0 / 100, f0 * 100, 1001)
    _, want = scipy.signal.freqs(b, a, worN=TWO_PI * f)
    r = sweep(transfer_function(get_topology(topology_id).netlist(v)), f)
    assert_allclose(r.h, want, rtol=1e-9)
    assert_allclose(r.magnitude_db, 20 * np.log10(np.abs(want)), atol=1e-8)
    # phase unwrapped (README, `bandsmith sweep`: continuous over the sweep): equal to numpy.unwrap of scipy's
    # angle up to one constant multiple of 360°, and a band-pass turns by less than 180° in all
    # (derived: from +90° (the s of the numerator) far below f0 to −90° (1/s) far above).
    ref = np.degrees(np.unwrap(np.angle(want)))
    turns = np.round((r.phase_deg[0] - ref[0]) / 360.0)
    assert_allclose(r.phase_deg, ref + 360.0 * turns, atol=1e-7)
    assert np.max(np.abs(np.diff(r.phase_deg))) < 180.0
    assert 0.0 < r.phase_deg[0] - r.phase_deg[-1] < 180.0


@pytest.mark.parametrize(("topology_id", "k"), CASES)
def test_group_delay_matches_the_biquad_derivative(topology_id, k):
    # derived: for H = K·s/(s² + a1·s + a0), arg H(jω) = const − atan2(a1·ω, a0 − ω²), so
    # τ = −d arg H/dω = a1·(a0 + ω²) / ((a0 − ω²)² + (a1·ω)²).
    # Checked also against a central difference of scipy.signal.freqs' phase (scipy reference).
    v = DESIGNS[topology_id][k]
    b, a = BIQUADS[topology_id](v)
    f0 = biquad_figures(b, a)[0]
    f = np.geomspace(f0 / 30, f0 * 30, 301)
    w = TWO_PI * f
    tau = a[1] * (a[2] + w**2) / ((a[2] - w**2) ** 2 + (a[1] * w) ** 2)
    got = sweep(transfer_function(get_topology(topology_id).netlist(v)), f).group_delay_s
    assert_allclose(got, tau, rtol=1e-8)
    dw = w * 1e-6
    _, hp = scipy.signal.freqs(b, a, worN=w + dw)
    _, hm = scipy.signal.freqs(b, a, worN=w - dw)
    numeric = -np.angle(hp / hm) / (2 * dw)
    assert_allclose(got, numeric, rtol=1e-5)


@pytest.mark.parametrize("topology_id", list(BIQUADS))
def test_rational_coefficients_are_the_biquad(topology_id):
    # scipy.signal's (b, a) convention: Rational.to_s gives the closed-form biquad's coefficients
    v = DESIGNS[topology_id][0]
    b, a = BIQUADS[topology_id](v)
    got_b, got_a = transfer_function(get_topology(topology_id).netlist(v)).to_s()
    assert got_a.size == 3
    assert_allclose(got_a, a, rtol=1e-10)
    assert got_b.size == 2  # K·s: one zero, at DC
    assert_allclose(got_b, b, rtol=1e-10, atol=1e-12 * abs(b[0]))
    # poles of the biquad (numpy.roots as the reference root finder)
    assert_allclose(np.sort_complex(transfer_function(get_topology(topology_id).netlist(v)).poles()),
                    np.sort_complex(np.roots(a)), rtol=1e-9)


# ------------------------------------------------------------------ textbook formulas vs measured figures


@pytest.mark.parametrize(("topology_id", "k"), CASES)
def test_textbook_formulas_match_measured_figures(topology_id, k):
    # Tank: parallel resonance, ω0 = 1/√(LC), Q = R2·√(C/L), H(jω0) = −R2/R1 (circuit theory).
    # MFB: Franco 3rd ed. ch. 3, ω0 = √((1/R1 + 1/R2)/(R3·C1·C2)), Q = ω0·R3·C1C2/(C1+C2),
    #      H0 = −R3·C1/(R1·(C1+C2)) (Franco's labels mapped to ours: R1 input, R2 shunt, R3 feedback).
    # Sallen–Key variant A: Franco 3rd ed. ch. 3; H(s) above (derived for unequal parts).
    # Written out here independently of the circuit modules' own `formulas`.
    v = DESIGNS[topology_id][k]
    if topology_id == "rlc-tank":
        f0 = 1 / (TWO_PI * math.sqrt(v["L"] * v["C"]))
        q = v["R2"] * math.sqrt(v["C"] / v["L"])
        gain = -v["R2"] / v["R1"]
    elif topology_id == "mfb":
        r1, r2, r3, c1, c2 = (v[x] for x in ("R1", "R2", "R3", "C1", "C2"))
        w0 = math.sqrt((1 / r1 + 1 / r2) / (r3 * c1 * c2))
        f0, q, gain = w0 / TWO_PI, w0 * r3 * c1 * c2 / (c1 + c2), -r3 * c1 / (r1 * (c1 + c2))
    else:
        f0, q, gain = biquad_figures(*sallen_key_biquad(v))
    fig = ideal_figures(get_topology(topology_id).netlist(v)).item()
    assert_allclose([fig.f0_hz, fig.q, fig.gain_center], [f0, q, gain], rtol=1e-9)
    # and the circuit module's own textbook cross-check agrees
    ff = get_topology(topology_id).formulas(v)
    assert_allclose([ff.f0_hz, ff.q, ff.gain], [f0, q, gain], rtol=1e-12)


def test_mfb_equal_capacitor_relations():
    # Franco 3rd ed. ch. 3 (equal capacitors): Q = π·f0·R3·C, bandwidth 1/(π·R3·C), H0 = −R3/(2·R1)
    v = DESIGNS["mfb"][0]
    c = v["C1"]
    fig = ideal_figures(get_topology("mfb").netlist(v)).item()
    assert_allclose(fig.q, math.pi * fig.f0_hz * v["R3"] * c, rtol=1e-9)
    assert_allclose(fig.bw_hz, 1 / (math.pi * v["R3"] * c), rtol=1e-9)
    assert_allclose(fig.gain_center, -v["R3"] / (2 * v["R1"]), rtol=1e-9)


def test_tank_trade_facts_10mH_10nF():
    # Common practice, no source: a tank's natural time constant is
    # √(LC) and its characteristic resistance √(L/C). 10 mH with 10 nF: √(LC) = √(1e-10) = 10 µs,
    # √(L/C) = √(1e6) = 1 kΩ; so 4.7 kΩ across the tank gives Q = 4.7 kΩ/1 kΩ = 4.7 and
    # f0 = 1/(2π·10 µs) ≈ 15.92 kHz.
    L, C, R2 = 10e-3, 10e-9, 4.7e3
    assert_allclose(math.sqrt(L * C), 10e-6, rtol=1e-12)
    assert_allclose(math.sqrt(L / C), 1e3, rtol=1e-12)
    fig = ideal_figures(get_topology("rlc-tank").netlist({"R1": 4.7e3, "R2": R2, "L": L, "C": C})).item()
    assert_allclose(1 / (TWO_PI * fig.f0_hz), 10e-6, rtol=1e-9)  # the time constant, measured
    assert_allclose(fig.f0_hz, 15.92e3, rtol=5e-4)  # "≈ 15.92 kHz" (4 digits)
    assert_allclose(fig.f0_hz, 1e5 / TWO_PI, rtol=1e-9)
    assert_allclose(fig.q, 4.7, rtol=1e-9)
    assert_allclose(R2 / fig.q, 1e3, rtol=1e-9)  # the characteristic resistance, measured
    assert_allclose(fig.gain_center, -1.0, rtol=1e-9)  # −R2/R1


@pytest.mark.parametrize(("topology_id", "k"), CASES)
def test_inverting_band_pass_has_180_degrees_at_centre(topology_id, k):
    # Common practice, no source: an inverting band-pass has a phase of 180° at its centre
    # frequency (the non-inverting Sallen–Key has 0°); README "Definitions": phase in (−180, 180].
    fig = ideal_figures(get_topology(topology_id).netlist(DESIGNS[topology_id][k])).item()
    inverting = get_topology(topology_id).inverting
    assert_allclose(fig.phase_center_deg, 180.0 if inverting else 0.0, atol=1e-6)
    assert -180.0 < fig.phase_center_deg <= 180.0
    assert (fig.gain_center < 0) == inverting


# ------------------------------------------------------------------ Franco's worked examples


def franco_3_15_parts():
    """Franco 3rd ed. Example 3.15's MFB from the published equal-C design equations (ch. 3):
    R3 = Q/(π·f0·C), R1 = R3/(2|H0|), R2 = Q/((2Q² − |H0|)·ω0·C); f0 = 1 kHz, Q = 10,
    H0 = 20 dB (|H0| = 10), C = 10 nF."""
    f0, q, h0, c = 1e3, 10.0, 10.0, 10e-9
    r3 = q / (math.pi * f0 * c)
    r1 = r3 / (2 * h0)
    r2 = q / ((2 * q * q - h0) * TWO_PI * f0 * c)
    return {"R1": r1, "R2": r2, "R3": r3, "C1": c, "C2": c}


def test_franco_example_3_15_mfb():
    # Franco 3rd ed. Example 3.15 [published]: 15.915 kΩ, 837.66 Ω, 318.31 kΩ (unrounded), and the
    # circuit meets f0 = 1 kHz, Q = 10, H0 = −10 (20 dB) with an ideal op-amp.
    v = franco_3_15_parts()
    assert_allclose([v["R1"], v["R2"], v["R3"]], [15.915e3, 837.66, 318.31e3], rtol=5e-5)
    fig = ideal_figures(get_topology("mfb").netlist(v)).item()
    assert_allclose([fig.f0_hz, fig.q, fig.gain_center], [1e3, 10.0, -10.0], rtol=1e-9)
    assert_allclose(fig.gain_center_db, 20.0, atol=1e-8)


# Derived (exact single-pole analysis, no published figure): on Franco 3rd ed. Example 3.15's circuit, GBW 1 MHz → f0 = 990.147 Hz,
# Q = 10.0975; 10 MHz → 999.001 Hz, 10.0100. What we found: these are the values of the
# integrator op-amp A(s) = ωt/s, i.e. the single-pole model with A0 → ∞ (A0 = 1e12 here, any
# A0 ≥ 1e9 gives the same 5–6 digits). With A0 = 1e5 f0 still agrees (990.147 Hz to 6 digits, the
# DC gain barely moves the pole frequency) but Q drops to about 10.077 (A0 = 1e5 adds damping):
# so A0 = 1e5 does NOT reproduce Q = 10.0975.
@pytest.mark.parametrize(("gbw", "f0", "q"), [(1e6, 990.147, 10.0975), (10e6, 999.001, 10.0100)])
def test_franco_3_15_with_finite_gbw(gbw, f0, q):
    nl = get_topology("mfb").netlist(franco_3_15_parts())
    fig = measure(transfer_function(nl, OpAmpModel(gbw, 1e12))).item()
    assert_allclose(fig.f0_hz, f0, rtol=1e-6)  # 6 significant digits given
    assert_allclose(fig.q, q, rtol=1e-5)  # 5–6 significant digits given
    fig5 = measure(transfer_function(nl, OpAmpModel(gbw, 1e5))).item()
    assert_allclose(fig5.f0_hz, f0, rtol=2e-6)  # f0: A0 = 1e5 also gives 990.147 / 999.001
    assert abs(fig5.q / q - 1) > 1e-3  # Q: A0 = 1e5 does not give the A0 → ∞ value …
    assert abs(fig5.q / q - 1) < 1e-2  # … but stays within 1 % of it


def test_franco_example_3_13a_sallen_key():
    # Franco 3rd ed. Example 3.13(a) [published]: f0 = 1 kHz, bandwidth 100 Hz, C = 10 nF, all R and
    # all C equal → R = √2/(ω0·C) = 22.508 kΩ, K = 4 − √2/Q = 3.8586, RA = 10 kΩ, RB = 28.586 kΩ,
    # centre gain K/(4 − K) = 27.28.
    f0, q, c = 1e3, 1e3 / 100.0, 10e-9
    r = math.sqrt(2) / (TWO_PI * f0 * c)
    k = 4 - math.sqrt(2) / q
    ra, rb = 10e3, (k - 1) * 10e3
    assert_allclose([r, k, rb], [22.508e3, 3.8586, 28.586e3], rtol=5e-5)
    v = {"R1": r, "R2": r, "R3": r, "C1": c, "C2": c, "RA": ra, "RB": rb}
    fig = ideal_figures(get_topology("sallen-key").netlist(v)).item()
    assert_allclose([fig.f0_hz, fig.q, fig.bw_hz], [1e3, 10.0, 100.0], rtol=1e-9)
    assert_allclose(fig.gain_center, 27.28, rtol=2e-4)  # 4 digits given
    assert_allclose(fig.gain_center, k / (4 - k), rtol=1e-9)


@pytest.mark.parametrize("gbw", [1e8, 1e9])
def test_first_order_gbw_shift(gbw):
    # Derived (first order in f0/GBW with A = ωt/s; no published closed form found): MFB equal C,
    # Δf0/f0 ≈ −Q·f0/GBW and ΔQ/Q ≈ +Q·f0/GBW; Sallen–Key variant A equal parts,
    # Δf0/f0 ≈ −K²·f0/(2√2·GBW), ΔQ/Q ≈ +K²·f0/(2√2·GBW). The ratio to the exact shift tends to 1
    # (the second-order remainder is of relative size f0·Q/GBW, hence the 1e-2·… tolerance).
    mfb = get_topology("mfb").netlist(franco_3_15_parts())
    fig = measure(transfer_function(mfb, OpAmpModel(gbw, 1e15))).item()
    x = 10.0 * 1e3 / gbw
    assert_allclose([(fig.f0_hz / 1e3 - 1) / -x, (fig.q / 10 - 1) / x], [1.0, 1.0], rtol=30 * x)
    c, r = 10e-9, math.sqrt(2) / (TWO_PI * 1e3 * 10e-9)
    k = 4 - math.sqrt(2) / 10
    sk = get_topology("sallen-key").netlist({"R1": r, "R2": r, "R3": r, "C1": c, "C2": c, "RA": 10e3, "RB": (k - 1) * 10e3})
    fig = measure(transfer_function(sk, OpAmpModel(gbw, 1e15))).item()
    y = k * k * 1e3 / (2 * math.sqrt(2) * gbw)
    assert_allclose([(fig.f0_hz / 1e3 - 1) / -y, (fig.q / 10 - 1) / y], [1.0, 1.0], rtol=30 * y * 10)


# ------------------------------------------------------------------ sensitivities (derived by hand)

SENS_ATOL = 1e-6  # central differences with step 1e-4 in ln x: error of order 1e-8


def test_tank_sensitivities():
    # derived (differentiating the parallel-resonance relations): ω0 = 1/√(LC) → S(ω0;L) = S(ω0;C) = −½, S(ω0;R1) = S(ω0;R2) = 0;
    # Q = R2·√(C/L) → S(Q;R2) = 1, S(Q;C) = ½, S(Q;L) = −½, S(Q;R1) = 0;
    # H0 = −R2/R1 → S(gain;R1) = −1, S(gain;R2) = 1, S(gain;L) = S(gain;C) = 0.
    v = {"R1": 3300.0, "R2": 6800.0, "L": 0.01, "C": 22e-9, "RL": 0.0}
    s = sensitivities(get_topology("rlc-tank").netlist(v), v)
    want = {
        "f0": {"R1": 0, "R2": 0, "L": -0.5, "C": -0.5, "RL": 0},
        "q": {"R1": 0, "R2": 1, "L": -0.5, "C": 0.5, "RL": 0},
        "gain": {"R1": -1, "R2": 1, "L": 0, "C": 0, "RL": 0},
    }
    for key in want:
        assert set(s[key]) == set(want[key])
        for ref, w in want[key].items():
            assert_allclose(s[key][ref], w, atol=SENS_ATOL, err_msg=f"S({key};{ref})")


def test_tank_winding_resistance_sensitivity_sign():
    # derived: a series RL in the inductor branch adds loss, so Q falls as RL rises: S(Q;RL) < 0.
    # For RL ≪ Z = √(L/C) = ω0·L the branch RL + sL is, near ω0, L in parallel with
    # R_p = (ω0·L)²/RL = Z²/RL (1/(RL + jωL) = (RL − jωL)/(RL² + ω²L²)); so
    # Q = (R2 ∥ R_p)/Z and ln Q = −ln(1/R2 + RL/Z²) − ln Z, giving
    # S(Q;RL) = −x/(1 + x) with x = RL·R2/Z² (error of order RL/Z).
    v = {"R1": 3300.0, "R2": 6800.0, "L": 0.01, "C": 22e-9, "RL": 2.0}
    z = math.sqrt(v["L"] / v["C"])
    s = sensitivities(get_topology("rlc-tank").netlist(v), v)
    x = v["RL"] * v["R2"] / z**2
    assert s["q"]["RL"] < 0
    assert_allclose(s["q"]["RL"], -x / (1 + x), rtol=1e-2)


def test_mfb_equal_c_sensitivities():
    # derived (from the MFB biquad above), equal C: ω0² = (1/R1 + 1/R2)/(R3·C1·C2) →
    #   S(ω0;R3) = S(ω0;C1) = S(ω0;C2) = −½, S(ω0;R1) = −R2/(2(R1+R2)), S(ω0;R2) = −R1/(2(R1+R2));
    # Q = ω0·R3·C1·C2/(C1+C2) → S(Q;R3) = −½ + 1 = ½, S(Q;C1) = −½ + 1 − C1/(C1+C2) = 0 (and C2),
    #   S(Q;R1) = S(ω0;R1), S(Q;R2) = S(ω0;R2);
    # H0 = −R3·C1/(R1·(C1+C2)) → S(gain;R1) = −1, S(gain;R3) = 1, S(gain;R2) = 0,
    #   S(gain;C1) = 1 − C1/(C1+C2) = ½, S(gain;C2) = −½.
    v = DESIGNS["mfb"][0]
    r1, r2 = v["R1"], v["R2"]
    s = sensitivities(get_topology("mfb").netlist(v), v)
    want = {
        "f0": {"R1": -r2 / (2 * (r1 + r2)), "R2": -r1 / (2 * (r1 + r2)), "R3": -0.5, "C1": -0.5, "C2": -0.5},
        "q": {"R1": -r2 / (2 * (r1 + r2)), "R2": -r1 / (2 * (r1 + r2)), "R3": 0.5, "C1": 0.0, "C2": 0.0},
        "gain": {"R1": -1.0, "R2": 0.0, "R3": 1.0, "C1": 0.5, "C2": -0.5},
    }
    for key in want:
        for ref, w in want[key].items():
            assert_allclose(s[key][ref], w, atol=SENS_ATOL, err_msg=f"S({key};{ref})")


def test_sallen_key_equal_parts_sensitivities():
    # derived (from the Sallen–Key biquad above), variant A, all R and all C equal: Q = √2/(4 − K) →
    #   S(Q;K) = K/(4 − K) = 2√2·Q − 1; K = 1 + RB/RA → S(K;RB) = −S(K;RA) = (K−1)/K, so
    #   S(Q;RB) = −S(Q;RA) = (K−1)/K·S(Q;K); RA and RB do not move ω0: S(ω0;RA) = S(ω0;RB) = 0;
    # ω0² = (R1+R2)/(R1·R2·R3·C1·C2) → S(ω0;R1) = S(ω0;R2) = −¼ (equal R), S(ω0;R3) = S(ω0;C) = −½.
    c, q = 100e-9, 4.0
    r = math.sqrt(2) / (TWO_PI * 500.0 * c)
    k = 4 - math.sqrt(2) / q
    v = {"R1": r, "R2": r, "R3": r, "C1": c, "C2": c, "RA": 10e3, "RB": (k - 1) * 10e3}
    s = sensitivities(get_topology("sallen-key").netlist(v), v)
    s_qk = k / (4 - k)
    assert_allclose(s_qk, 2 * math.sqrt(2) * q - 1, rtol=1e-12)
    assert_allclose(s["q"]["RB"], (k - 1) / k * s_qk, atol=SENS_ATOL * s_qk)
    assert_allclose(s["q"]["RA"], -(k - 1) / k * s_qk, atol=SENS_ATOL * s_qk)
    want_f0 = {"R1": -0.25, "R2": -0.25, "R3": -0.5, "C1": -0.5, "C2": -0.5, "RA": 0.0, "RB": 0.0}
    for ref, w in want_f0.items():
        assert_allclose(s["f0"][ref], w, atol=SENS_ATOL, err_msg=f"S(f0;{ref})")
