"""Amplifier needs: required GBW, slew rate for the sine and the step, output peak and current.

Definitions: the README's "Definitions" (required GBW, slew rate, output current). The tolerance
checks below are written here, not taken from ``bandsmith.analysis.analyzer.within_tolerances``.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.signal
from numpy.testing import assert_allclose

from bandsmith.analysis.analyzer import Tolerances, analyze, ideal_figures, required_gbw, transfer_function
from bandsmith.circuits import get_topology
from bandsmith.analysis.figures import measure
from bandsmith.solver.mna import OpAmpModel
from bandsmith.analysis.timeresponse import step_response

TWO_PI = 2.0 * math.pi


def franco_3_15():
    """Franco 3rd ed. Example 3.15's MFB (f0 = 1 kHz, Q = 10, |H0| = 10, C = 10 nF), from the
    published equal-C design equations R3 = Q/(π·f0·C), R1 = R3/(2|H0|), R2 = Q/((2Q² − |H0|)·ω0·C)."""
    q, h0, c, f0 = 10.0, 10.0, 10e-9, 1e3
    r3 = q / (math.pi * f0 * c)
    return {"R1": r3 / (2 * h0), "R2": q / ((2 * q * q - h0) * TWO_PI * f0 * c), "R3": r3, "C1": c, "C2": c}


CASES = {
    "tank-example": ("rlc-tank", dict(get_topology("rlc-tank").example)),
    "tank-lossy": ("rlc-tank", {"R1": 1e3, "R2": 22e3, "L": 10e-3, "C": 10e-9, "RL": 15.0}),
    "mfb-example": ("mfb", dict(get_topology("mfb").example)),
    "mfb-franco-3.15": ("mfb", franco_3_15()),
    "sallen-key-example": ("sallen-key", dict(get_topology("sallen-key").example)),
}
TOLERANCES = [
    Tolerances(),  # the README's defaults ("Definitions"): f0 ±1 %, Q ±5 %, gain ±0.5 dB
    Tolerances(f0=0.001, q=0.01, gain_db=0.1),  # tight
    Tolerances(f0=0.05, q=0.25, gain_db=3.0),  # loose
]


def _meets(netlist, ideal, gbw, a0, tol):
    """Every figure within tolerance of the ideal one (written here, from the README's definition)."""
    fig = measure(transfer_function(netlist, OpAmpModel(gbw, a0))).item()
    if not all(math.isfinite(x) for x in (fig.f0_hz, fig.q, fig.gain_center)):
        return False
    return (
        abs(fig.f0_hz / ideal.f0_hz - 1) <= tol.f0
        and abs(fig.q / ideal.q - 1) <= tol.q
        and abs(20 * math.log10(abs(fig.gain_center / ideal.gain_center))) <= tol.gain_db
        and fig.gain_center * ideal.gain_center > 0
    )


@pytest.mark.parametrize("tol", TOLERANCES, ids=["default", "tight", "loose"])
@pytest.mark.parametrize("case", list(CASES))
def test_required_gbw_is_the_minimum(case, tol):
    # README "Definitions": the smallest GBW at which every figure is within tolerance, within 2 % of the true
    # minimum: so at the reported value (and above) every tolerance holds, at 2 % less one fails.
    topology_id, v = CASES[case]
    nl = get_topology(topology_id).netlist(v)
    ideal = ideal_figures(nl)
    a0 = 1e5
    gbw, reason = required_gbw(nl, ideal, a0=a0, tolerances=tol)
    assert reason is None and gbw is not None and gbw > 0
    one = ideal.item()
    for k in (1.0, 1.3, 3.0, 30.0):
        assert _meets(nl, one, gbw * k, a0, tol), f"tolerances fail at {k}× the reported {gbw:.6g} Hz"
    assert not _meets(nl, one, gbw * 0.98, a0, tol), f"tolerances still hold at 2 % below {gbw:.6g} Hz"


def _random_parts(topology_id, rng):
    """The circuit's example values, each moved by up to a factor two (a seeded draw)."""
    example = dict(get_topology(topology_id).example)
    return {r: (x * math.exp(rng.uniform(-0.7, 0.7)) if x > 0 else x) for r, x in example.items()}


@pytest.mark.parametrize("topology_id", ["rlc-tank", "mfb", "sallen-key"])
def test_required_gbw_is_the_minimum_for_random_parts(topology_id):
    # The same definition as above (README "Definitions") on circuits no one tuned: the search interpolates
    # inside a ladder step, so it is checked away from the examples too.
    rng = np.random.default_rng(20261201)
    for _ in range(6):
        nl = get_topology(topology_id).netlist(_random_parts(topology_id, rng))
        ideal = ideal_figures(nl)
        one = ideal.item()
        for tol in TOLERANCES:
            gbw, reason = required_gbw(nl, ideal, tolerances=tol)
            assert reason is None and gbw is not None
            assert _meets(nl, one, gbw, 1e5, tol) and _meets(nl, one, gbw * 3.0, 1e5, tol)
            assert not _meets(nl, one, gbw * 0.98, 1e5, tol), f"still holds 2 % below {gbw:.6g} Hz"


def test_required_gbw_first_order_estimate_for_franco_3_15():
    # Derived (first order in f0/GBW, A = ωt/s; no published closed form found): MFB equal C, Δf0/f0 ≈ −Q·f0/GBW; with f0 ±1 % the
    # binding need is GBW ≈ Q·f0/0.01 = 10·1 kHz/0.01 = 1 MHz (Q needs only Q·f0/0.05 = 200 kHz).
    # The exact search must land within a few % of it.
    nl = get_topology("mfb").netlist(franco_3_15())
    gbw, _ = required_gbw(nl, ideal_figures(nl), a0=1e5)
    assert_allclose(gbw, 1e6, rtol=0.03)


def test_analyze_reports_the_same_required_gbw():
    # consistency: analyze()'s REQUIREMENTS carry required_gbw's answer and the tolerances used
    topology_id, v = CASES["mfb-example"]
    nl = get_topology(topology_id).netlist(v)
    tol = Tolerances(f0=0.002, q=0.02, gain_db=0.2)
    req = analyze(nl, tolerances=tol, a0=3e4).requirements
    gbw, _ = required_gbw(nl, ideal_figures(nl), a0=3e4, tolerances=tol)
    assert_allclose(req.gbw_hz, gbw, rtol=1e-12)
    j = req.to_json()
    assert_allclose([j["tol_f0"], j["tol_q"], j["tol_gain_db"], j["a0"]], [0.002, 0.02, 0.2, 3e4])


@pytest.mark.parametrize(
    "v",
    [
        # A gain-10 tank (R2/R1 = 10) and Franco 3.15's MFB (|H0| = 10) with A0 = 10: the loop gain
        # is below one, so no GBW brings the gain within 0.5 dB (common practice, no source: the
        # open-loop gain must well exceed the closed-loop gain).
        ("rlc-tank", {"R1": 1e3, "R2": 10e3, "L": 10e-3, "C": 10e-9}),
        ("mfb", franco_3_15()),
    ],
    ids=["tank-gain-10", "mfb-gain-10"],
)
def test_no_gbw_when_a0_is_too_small(v):
    topology_id, parts = v
    nl = get_topology(topology_id).netlist(parts)
    gbw, reason = required_gbw(nl, ideal_figures(nl), a0=10.0)
    assert gbw is None
    assert isinstance(reason, str) and reason
    assert "open-loop gain" in reason or "A0" in reason
    req = analyze(nl, a0=10.0).requirements.to_json()
    assert req["gbw_hz"] is None and req["gbw_reason"]


# ------------------------------------------------------------------ slew rate for the step
#
# Step slope of an ideal band-pass (derived here):
#   H(s) = G·(ω0/Q)·s / (s² + (ω0/Q)·s + ω0²).
#   The slope of the unit-step response is the impulse response h(t) = L⁻¹{H}, and by the
#   initial-value theorem h(0+) = lim_{s→∞} s·H(s) = G·ω0/Q = G·2π·(f0/Q) = 2π·BW·G (BW in Hz).
#   It is the largest |slope|: for t > 0, h'' + (ω0/Q)·h' + ω0²·h = 0 (the poles of H), and
#   V = h'² + (ω0/Q)·h·h' + ω0²·h² obeys dV/dt = −(ω0/Q)·V, so V(t) = V(0+)·e^{−ω0t/Q} with
#   V(0+) = ω0²·h(0+)² (h'(0+) = lim s·(s·H − h(0+)) = −(ω0/Q)·h(0+), the cross terms cancel).
#   At any extremum of h (h' = 0) V = ω0²·h², hence |h| = |h(0+)|·e^{−ω0t/(2Q)} < |h(0+)|; and
#   h → 0 as t → ∞, so max |h| = |h(0+)|. A step of height vin then needs 2π·BW·|G|·vin.


# the lossy tank is left out: its winding resistance adds a zero, so it is not the pure biquad
@pytest.mark.parametrize("case", [k for k, (_, v) in CASES.items() if not v.get("RL")])
def test_step_slew_is_2pi_bandwidth_gain_vin(case):
    topology_id, v = CASES[case]
    nl = get_topology(topology_id).netlist(v)
    vin = 2.5
    res = analyze(nl, vin_v=vin)
    fig = res.ideal.item()
    want = TWO_PI * fig.bw_hz * abs(fig.gain_center) * vin  # V/s, derived above
    assert_allclose(res.requirements.slew_step_v_per_us, want * 1e-6, rtol=1e-6)
    assert_allclose(res.requirements.to_json()["slew_step_v_per_us"], want * 1e-6, rtol=1e-6)
    # the step response's own slope starts there and never exceeds it
    step = res.step
    assert_allclose(abs(step.slope_per_s[0]) * vin, want, rtol=1e-6)
    assert np.max(np.abs(step.slope_per_s)) * vin <= want * (1 + 1e-9)


@pytest.mark.parametrize("case", ["tank-example", "mfb-franco-3.15", "sallen-key-example"])
def test_step_response_matches_scipy_and_closed_form(case):
    # scipy.signal.step on the (b, a) of the core's transfer function, and the closed form
    # y(t) = G·(ω0/Q)·e^{−αt}·sin(ωd·t)/ωd, α = ω0/(2Q), ωd = ω0·√(1 − 1/(4Q²)) (derived:
    # Y = H/s = G·(ω0/Q)/((s + α)² + ωd²)).
    topology_id, v = CASES[case]
    h = transfer_function(get_topology(topology_id).netlist(v))
    fig = measure(h).item()
    w0, q, g = TWO_PI * fig.f0_hz, fig.q, fig.gain_center
    t = np.linspace(0, 20 * q / w0, 2001)
    sr = step_response(h, t)
    alpha, wd = w0 / (2 * q), w0 * math.sqrt(1 - 1 / (4 * q * q))
    closed = g * (w0 / q) * np.exp(-alpha * t) * np.sin(wd * t) / wd
    scale = np.max(np.abs(closed))
    assert_allclose(sr.y, closed, atol=1e-9 * scale)
    _, y_scipy = scipy.signal.step(scipy.signal.lti(*h.to_s()), T=t)
    assert_allclose(sr.y, y_scipy, atol=1e-6 * scale)
    slope = g * (w0 / q) * np.exp(-alpha * t) * (np.cos(wd * t) - alpha / wd * np.sin(wd * t))
    assert_allclose(sr.slope_per_s, slope, atol=1e-9 * abs(g) * w0 / q)


# ------------------------------------------------------------------ slew for the sine, output peak


@pytest.mark.parametrize("case", list(CASES))
def test_sine_slew_and_output_peak(case):
    # README "Definitions": for a sine of peak vin at f0 the output is |gain|·vin and its largest slope is
    # 2π·f0·|gain|·vin (d/dt of A·sin(ωt) peaks at ω·A; Franco 3rd ed. ch. 6: SR ≥ 2π·f·Vpeak).
    topology_id, v = CASES[case]
    vin = 0.3
    res = analyze(get_topology(topology_id).netlist(v), vin_v=vin)
    fig = res.ideal.item()
    req = res.requirements
    assert_allclose(req.vout_peak_v, abs(fig.gain_center) * vin, rtol=1e-12)
    assert_allclose(req.slew_sine_v_per_us, TWO_PI * fig.f0_hz * abs(fig.gain_center) * vin * 1e-6, rtol=1e-12)


def test_sine_slew_franco_example_6_8():
    # Franco 3rd ed. Example 6.8 [published]: SR = 0.5 V/µs and Vpeak = 5 V give a full-power
    # bandwidth of 15.92 kHz. A tank of 10 mH and 10 nF sits at 15.92 kHz (1/(2π·10 µs)); with
    # gain −5 and 1 V in, its output is 5 V peak at f0, so it needs 0.5 V/µs.
    nl = get_topology("rlc-tank").netlist({"R1": 940.0, "R2": 4.7e3, "L": 10e-3, "C": 10e-9})
    req = analyze(nl, vin_v=1.0).requirements
    assert_allclose(req.vout_peak_v, 5.0, rtol=1e-9)
    assert_allclose(req.slew_sine_v_per_us, 0.5, rtol=5e-4)  # 15.92 kHz given to 4 digits


# ------------------------------------------------------------------ output current at f0


@pytest.mark.parametrize("rload", [None, 2e3, 600.0])
def test_tank_output_current(rload):
    # derived: the inverting input is a virtual ground and draws nothing, so the current vin/R1
    # through R1 flows on into the feedback network; at f0 the tank's L and C branches cancel
    # (1/(jω0L) + jω0C = 0), the network is R2 alone, and the current reaches the output node
    # through R2 and is sunk by the op-amp: |I| = vin/R1 (+ 0 from L and C). With Vout = −(R2/R1)·vin
    # (real at f0) a load adds Vout/rload in phase: |I| = vin/R1 + |vout|/rload.
    v = {"R1": 3.3e3, "R2": 6.8e3, "L": 10e-3, "C": 22e-9}
    vin = 1.5
    res = analyze(get_topology("rlc-tank").netlist(v), vin_v=vin, rload_ohm=rload)
    want = vin / v["R1"] + (0.0 if rload is None else vin * v["R2"] / v["R1"] / rload)
    assert_allclose(res.requirements.iout_peak_ma, want * 1e3, rtol=1e-9)


@pytest.mark.parametrize("rload", [None, 1e3])
def test_mfb_and_sallen_key_output_current(rload):
    # derived from the nodal equations at f0 (ideal op-amp, s = jω0, Vout = H0·vin):
    # MFB: Vm = 0, KCL at m gives Va·sC1 = −Vout/R3; the output feeds R3 (Vout/R3), C2
    #   ((Vout − Va)·sC2) and the load: I = Vout/R3 + (Vout − Va)·sC2 + Vout/rload.
    # Sallen–Key: Vb = Vm = Vout/K; KCL at b gives Va = Vb·(1 + 1/(sC2·R3)); the output feeds R2
    #   ((Vout − Va)/R2), RB + RA (Vout/(RA + RB)) and the load.
    vin = 1.0
    gl = 0.0 if rload is None else 1.0 / rload
    v = franco_3_15()
    res = analyze(get_topology("mfb").netlist(v), vin_v=vin, rload_ohm=rload)
    s = 1j * TWO_PI * res.ideal.item().f0_hz
    vout = -v["R3"] * v["C1"] / (v["R1"] * (v["C1"] + v["C2"])) * vin
    va = -vout / (s * v["C1"] * v["R3"])
    i = vout / v["R3"] + (vout - va) * s * v["C2"] + vout * gl
    assert_allclose(res.requirements.iout_peak_ma, abs(i) * 1e3, rtol=1e-8)

    v = dict(get_topology("sallen-key").example)
    res = analyze(get_topology("sallen-key").netlist(v), vin_v=vin, rload_ohm=rload)
    fig = res.ideal.item()
    s = 1j * TWO_PI * fig.f0_hz
    vout = fig.gain_center * vin
    k = 1 + v["RB"] / v["RA"]
    vb = vout / k
    va = vb * (1 + 1 / (s * v["C2"] * v["R3"]))
    i = (vout - va) / v["R2"] + vout / (v["RA"] + v["RB"]) + vout * gl
    assert_allclose(res.requirements.iout_peak_ma, abs(i) * 1e3, rtol=1e-8)


def test_requirements_json_has_contract_keys():
    # README (`bandsmith analyze`): REQUIREMENTS keys
    req = analyze(get_topology("mfb").netlist(get_topology("mfb").example)).requirements.to_json()
    keys = {"gbw_hz", "gbw_reason", "tol_f0", "tol_q", "tol_gain_db", "a0", "vin_v", "vout_peak_v",
            "slew_sine_v_per_us", "slew_step_v_per_us", "iout_peak_ma"}
    assert set(req) >= keys
    assert_allclose([req["tol_f0"], req["tol_q"], req["tol_gain_db"], req["a0"], req["vin_v"]], [0.01, 0.05, 0.5, 1e5, 1.0])


def test_unstable_sallen_key_is_flagged():
    # Equal-part Sallen–Key band-pass: Q = √2/(4 − K), unstable for K ≥ 4 (Franco 3rd ed. ch. 3);
    # RB/RA = 4 gives K = 5, so a pole pair lies in the right half-plane.
    from bandsmith.design.candidate import Candidate

    values = {"R1": 10e3, "R2": 10e3, "R3": 10e3, "C1": 10e-9, "C2": 10e-9, "RA": 10e3, "RB": 40e3}
    a = Candidate("sallen-key", values).analyze()
    assert a.stable_ideal is False
    assert any("unstable" in w for w in a.warnings)
    stable = Candidate("sallen-key", dict(values, RB=20e3)).analyze()  # K = 3 < 4
    assert stable.stable_ideal and not stable.warnings


def test_stability_of_a_second_order_denominator_matches_its_numpy_roots():
    # is_stable's closed form for a quadratic denominator against the poles numpy.roots finds
    # (the test it applies to any other degree): random quadratics over six decades, with
    # a zero middle or constant coefficient and near-marginal pairs among them.
    from bandsmith.analysis.analyzer import is_stable
    from bandsmith.solver.rational import Rational

    rng = np.random.default_rng(5)
    for k in range(3000):
        den = rng.normal(size=3) * 10 ** rng.uniform(-3, 3, 3)
        if k % 5 == 0:
            den[1] = 0.0
        if k % 7 == 0:
            den[2] = 0.0
        if k % 11 == 0:
            den[1] *= 1e-12
        h = Rational(np.array([[1.0, 0.0]]), den[None, :], np.array([2e3]))
        p = np.roots(den)
        assert is_stable(h) == bool(np.all(p.real < 1e-9 * np.abs(p))), den


def test_stability_beyond_second_order_matches_its_numpy_roots():
    # is_stable tries Routh-Hurwitz first beyond second order; its answer against the poles
    # numpy.roots finds: random denominators of degree 3 to 6 built from their roots, with pairs
    # near the axis (real parts from -1 to +1e-8 of their size), some of them repeated, and poles
    # at or near zero.
    from bandsmith.analysis.analyzer import is_stable
    from bandsmith.solver.rational import Rational

    rng = np.random.default_rng(8)
    for k in range(4000):
        n = int(rng.integers(3, 9))
        roots = []
        while len(roots) < n:
            if len(roots) < n - 1 and rng.random() < 0.5:
                re = -abs(rng.normal()) * rng.choice([1.0, 1e-3, 1e-9, 0.0, -1e-8])
                im = abs(rng.normal())
                pair = [complex(re, im), complex(re, -im)]
                roots += pair * (2 if len(roots) < n - 3 and rng.random() < 0.3 else 1)  # a repeated pair
            else:
                roots.append(complex(-rng.normal() * rng.choice([1.0, 1e-10, 0.0]), 0.0))
        den = np.real(np.poly(roots)) * rng.choice([1.0, -1.0]) * 10 ** rng.uniform(-3, 3)
        h = Rational(np.array([[1.0]]), den[None, :], np.array([2e3]))
        p = np.roots(den)
        assert is_stable(h) == bool(np.all(p.real < 1e-9 * np.abs(p))), den


@pytest.mark.parametrize("den", [
    # A repeated complex pair just right of the axis: rounding in the Routh rows leaves the first
    # column positive, though the exact roots of these coefficients (60-digit mpmath) have a largest
    # Re/|p| of +3.06e-9 and +2.9e-9, beyond is_stable's 1e-9 (numpy.roots: +1.24e-8 for the first).
    [1.0, 2.61874088146642e-09, 0.2143063688832351, 2.8060642467657546e-10, 0.01148180493597931],
    [1.0, 5.039666739490694e-09, 0.7936950264102738, 1.9999792129495225e-09, 0.1574879487371013],
])
def test_a_repeated_pair_just_beyond_the_axis_is_not_stable(den):
    from bandsmith.analysis.analyzer import is_stable
    from bandsmith.solver.rational import Rational

    assert not is_stable(Rational(np.array([[1.0]]), np.array([den]), np.array([1.0])))


def test_routh_stable_settles_only_what_the_roots_confirm():
    # routh_stable (one polynomial, first column clear of cancellation) against numpy.roots
    # (numpy's companion-matrix eigenvalues, the reference): "stable" only where every root lies
    # left of the axis, and for roots kept well clear of the axis it settles every stable one.
    from bandsmith.solver.stability import routh_stable

    rng = np.random.default_rng(17)
    settled = 0
    for _ in range(3000):
        n = int(rng.integers(1, 7))
        roots = rng.normal(size=n) * 10 ** rng.uniform(-1, 1, n) + 1j * rng.normal(size=n) * rng.integers(0, 2, n)
        roots = np.concatenate([roots, np.conj(roots[roots.imag != 0])])  # a real polynomial
        roots.real = np.where(np.abs(roots.real) < 0.05, 0.05 * np.sign(roots.real + 1e-300), roots.real)
        den = np.real(np.poly(roots)) * 10 ** rng.uniform(-3, 3)
        stable = bool(np.all(np.roots(den).real < 0))
        got = routh_stable(den.tolist())
        assert not got or stable
        if stable and np.all(roots.real < -0.05 * np.abs(roots)):
            settled += 1
            assert got
    assert settled > 100


def test_loaded_output_current_by_superposition_equals_the_joined_solve():
    """opamp_output_current with a next stage as its load: where an op-amp drives the output the
    load is superposed (an ideal op-amp's output is a voltage source, so the load draws its own
    input current at the output's voltage and changes nothing else: Kirchhoff's laws, derived);
    against one MNA solve of the two netlists joined (bandsmith.solver.mna.solve_at of
    Netlist.driving), every pair of circuits, with and without a load resistor: the same peak
    current to 1e-12."""
    from bandsmith.analysis.analyzer import opamp_output_current
    from bandsmith.circuits import all_topologies
    from bandsmith.solver.mna import solve_at
    from bandsmith.solver.netlist import Element

    rng = np.random.default_rng(5)
    nets = [t.build(t.values_from(dict(t.example))) for t in all_topologies()]
    for a in nets:
        for b in nets:
            f = float(10 ** rng.uniform(2, 5))
            for rload in (None, 2.2e3):
                own = a if rload is None else a.with_element(Element("RLOAD", "R", (a.output, a.ground), rload))
                x, layout = solve_at(own.driving(b), TWO_PI * f * 1j)
                joined = max(abs(x[layout.opamp_row[e.ref]]) for e in a.opamps)
                assert opamp_output_current(a, f, rload_ohm=rload, load=b) == pytest.approx(joined, rel=1e-12)
