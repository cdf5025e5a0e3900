"""Every registered circuit, whatever its number of op-amps, against checks from outside the core.

Sources:
- sympy: each netlist's nodal equations (KCL at every node, a nullor or the single-pole op-amp
  A(s) = A0/(1 + s·A0/(2π·GBW)) for every amplifier) written here from the netlist's elements,
  solved exactly over the rationals (``DomainMatrix`` determinants, Cramer's rule);
- scipy.optimize: the peak and the −3 dB points of that solution, found numerically;
- bisection: the smallest passing GBW, for the required-GBW search;
- the published (or recalled) design equations of each multi-amplifier circuit, named beside
  each check;
- SPICE: the exported netlist read back and solved by the small reader of tests/test_exports.py.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.optimize
import sympy as sp
from numpy.testing import assert_allclose
from sympy.polys.matrices import DomainMatrix

from bandsmith.analysis.analyzer import Tolerances, analyze, transfer_function, within_tolerances
from bandsmith.analysis.figures import measure
from bandsmith.analysis.noise import output_noise
from bandsmith.chain.cascade import ChainSettings, design_cascade
from bandsmith.circuits import all_topologies, get_topology
from bandsmith.circuits.synthesis import Spec
from bandsmith.design.candidate import Candidate
from bandsmith.design.compare import compare, compare_json
from bandsmith.design.designer import design
from bandsmith.files.exports import spice_netlist
from bandsmith.solver.mna import OpAmpModel, build_system
from bandsmith.solver.rational import rational_from_system
from bandsmith.spread.tolerance import SpreadSettings, run_spread
from spice_helpers import parse_spice, solve_spice

TOPOLOGIES = all_topologies()
MULTI = ("dabp", "state-variable", "tow-thomas", "akerberg-mossberg")
S = sp.Symbol("s")
QQ_S = sp.QQ.frac_field(S)


@pytest.fixture(params=TOPOLOGIES, ids=lambda t: t.id)
def topo(request):
    return request.param


# ------------------------------------------------------------------ an independent nodal solve


def sympy_transfer(netlist, gbw_hz=None, a0=1e5):
    """Vout/Vin of a netlist as an exact rational function of s (sympy), every op-amp alike."""
    nodes = list(netlist.nodes)
    idx = {n: i for i, n in enumerate(nodes)}
    amps = netlist.opamps
    size = len(nodes) + len(amps)
    a = sp.zeros(size, size)
    b = sp.zeros(size, 1)

    def at(n):
        return None if n == netlist.ground else ("in" if n == netlist.input else idx[n])

    def add_y(n1, n2, y):  # KCL rows of n1 and n2; the input's known V = 1 moves to the right side
        for p, q, sign in ((n1, n1, 1), (n2, n2, 1), (n1, n2, -1), (n2, n1, -1)):
            r, c = at(p), at(q)
            if r is None or r == "in" or c is None:
                continue
            if c == "in":
                b[r] -= sign * y
            else:
                a[r, c] += sign * y

    for e in netlist.passives:
        v = sp.Rational(repr(e.value))
        y = {"R": 1 / v, "C": S * v, "L": 1 / (S * v + sp.Rational(repr(e.series_resistance)))}[e.kind]
        add_y(e.nodes[0], e.nodes[1], y)
    for k, e in enumerate(amps):
        row = len(nodes) + k
        plus, minus, out = e.nodes
        a[idx[out], row] += 1  # the output current enters the output node
        for n, sign in ((plus, 1), (minus, -1)):  # V+ − V− ...
            c = at(n)
            if c == "in":
                b[row] -= sign
            elif c is not None:
                a[row, c] += sign
        if gbw_hz is not None:  # ... = Vout/A(s) = Vout·(1/A0 + s/(2π·GBW))
            a[row, idx[out]] -= 1 / sp.Rational(repr(float(a0))) + S / sp.Rational(repr(2 * math.pi * gbw_hz))
    cramer = a.copy()
    cramer[:, idx[netlist.output]] = b

    def det(m):
        return QQ_S.to_sympy(DomainMatrix.from_Matrix(m).convert_to(QQ_S).det())

    return sp.cancel(det(cramer) / det(a))


def biquad_figures(h):
    """f0 (Hz), Q and signed centre gain of an exact band-pass biquad ``b1·s/(a2·s² + a1·s + a0)``."""
    num, den = sp.fraction(sp.cancel(h))
    n = sp.Poly(num, S).all_coeffs()
    d = sp.Poly(den, S).all_coeffs()
    assert len(d) == 3 and len(n) == 2 and n[1] == 0, (n, d)
    a2, a1, a0 = (float(x) for x in d)
    w0 = math.sqrt(a0 / a2)
    return w0 / (2 * math.pi), math.sqrt(a0 * a2) / abs(a1), float(n[0]) / a1


def numeric_figures(h, f_guess):
    """f0, Q, |gain| of any response: its magnitude peak and −3 dB points (scipy.optimize)."""
    fn = sp.lambdify(S, h, "numpy")

    def mag(f):
        return abs(complex(fn(2j * math.pi * f)))

    r = scipy.optimize.minimize_scalar(lambda lf: -mag(math.exp(lf)), bracket=(math.log(f_guess * 0.98), math.log(f_guess * 1.02)), tol=1e-14)
    f0 = math.exp(r.x)
    peak = mag(f0)
    lo = scipy.optimize.brentq(lambda f: mag(f) - peak / math.sqrt(2), f0 / 10, f0, xtol=1e-14 * f0, rtol=1e-15)
    hi = scipy.optimize.brentq(lambda f: mag(f) - peak / math.sqrt(2), f0, f0 * 10, xtol=1e-14 * f0, rtol=1e-15)
    return f0, f0 / (hi - lo), peak


# ------------------------------------------------------------------ shared properties


def test_ideal_figures_equal_a_sympy_nodal_derivation(topo):
    # sympy (exact nodal solve, module notes): the ideal circuit is a band-pass biquad whose
    # figures the core measures to 1e-9.
    nl = topo.netlist(topo.example)
    f0, q, gain = biquad_figures(sympy_transfer(nl))
    fig = analyze(nl).ideal.item()
    assert_allclose([fig.f0_hz, fig.q, fig.gain_center], [f0, q, gain], rtol=1e-9)


def test_finite_opamps_on_every_amplifier_match_sympy(topo):
    # sympy with the single-pole model on every op-amp, 10 MHz: the core's response to 1e-9 at
    # check frequencies around f0 and decades away, its figures to 1e-6 (scipy.optimize on sympy's).
    nl = topo.netlist(topo.example)
    h = sympy_transfer(nl, gbw_hz=10e6, a0=1e5)
    fn = sp.lambdify(S, h, "numpy")
    f0 = analyze(nl).ideal.item().f0_hz
    f = f0 * np.array([1e-3, 0.01, 0.1, 0.5, 0.9, 0.99, 1.0, 1.01, 1.1, 2.0, 10.0, 100.0, 1000.0])
    core = transfer_function(nl, OpAmpModel(10e6, 1e5))
    want = np.array([complex(fn(2j * math.pi * x)) for x in f])
    assert_allclose(core.at_f(f)[0], want, rtol=1e-9)
    # and the direct solve of the same pencil agrees with the polynomials
    direct = build_system(nl, OpAmpModel(10e6, 1e5)).transfer(2j * math.pi * f)[0]
    assert_allclose(core.at_f(f)[0], direct, rtol=1e-9)
    got = measure(core).item()
    nf0, nq, ng = numeric_figures(h, got.f0_hz)
    assert_allclose([got.f0_hz, got.q, abs(got.gain_center)], [nf0, nq, ng], rtol=1e-6)


@pytest.mark.parametrize("gbw", [1e6, 1e8, 1e9])
def test_polynomials_hold_against_the_direct_solve(topo, gbw):
    # The interpolated transfer function against the MNA solve at the same frequencies, every
    # op-amp finite: 1e-9 relative (far op-amp poles included).
    nl = topo.netlist(topo.example)
    f0 = analyze(nl).ideal.item().f0_hz
    f = f0 * np.geomspace(1e-3, 1e4, 29)
    op = OpAmpModel(gbw, 1e5)
    direct = build_system(nl, op).transfer(2j * math.pi * f)[0]
    assert_allclose(transfer_function(nl, op).at_f(f)[0], direct, rtol=1e-9)
    # the same through a batched pencil (as Monte Carlo trials are) and straight from the pencil
    ref0 = nl.passives[0].ref
    over = {ref0: np.array([nl.passives[0].value, nl.passives[0].value * 1.01])}
    assert_allclose(transfer_function(nl, op, overrides=over).at_f(f)[0], direct, rtol=1e-9)
    assert_allclose(rational_from_system(build_system(nl, op)).at_f(f)[0], direct, rtol=1e-9)


def test_required_gbw_is_within_two_percent_above_bisection(topo):
    # Bisection on the GBW (A0 = 1e5, the default tolerances) brackets the true minimum to 1e-9.
    nl = topo.netlist(topo.example)
    a = analyze(nl)
    ref, tol = a.ideal.item(), Tolerances()

    def ok(g):  # straight from the pencil with this op-amp (no op-amp family)
        h = rational_from_system(build_system(nl, OpAmpModel(g, 1e5)), 2 * math.pi * ref.f0_hz)
        return bool(within_tolerances(measure(h), ref, tol)[0])

    got = a.requirements.gbw_hz
    lo, hi = got / 4, got * 1.0001
    assert ok(hi) and not ok(lo)
    while hi / lo > 1 + 1e-9:
        mid = math.sqrt(lo * hi)
        lo, hi = (lo, mid) if ok(mid) else (mid, hi)
    assert hi <= got <= hi * 1.02


def test_design_round_trip_at_exact_values(topo):
    # Parts from the design procedure, analysed again: the target to 1e-9.
    spec = Spec(5e3, 10.0, 2.0)
    r = design(topo.id, spec, series="exact")
    assert r.feasible, r.reason
    fig = r.ideal.item()
    assert_allclose([fig.f0_hz, fig.q, abs(fig.gain_center)], [5e3, 10.0, 2.0], rtol=1e-9)


def test_exported_netlist_has_one_instance_per_amplifier_and_the_same_response(topo):
    cand = Candidate(topo.id, dict(topo.example))
    p = parse_spice(spice_netlist(cand, gbw_hz=3e6, a0=2e5))
    xs = sorted(n for n in p["elements"] if n.upper().startswith("X"))
    assert xs == sorted(f"X{u.ref}" for u in cand.netlist.opamps)
    f0 = analyze(cand.netlist).ideal.item().f0_hz
    f = f0 * np.geomspace(0.05, 20.0, 41)
    want = transfer_function(cand.netlist, OpAmpModel(3e6, 2e5)).at_f(f)[0]
    assert_allclose(solve_spice(p, f), want, rtol=1e-9)


def test_monte_carlo_and_noise_run(topo):
    nl = topo.netlist(topo.example)
    spread = run_spread(nl, SpreadSettings(trials=200, seed=7), opamp=OpAmpModel(20e6, 1e5))
    assert 0.0 <= spread.yield_fraction <= 1.0
    assert spread.measured.mean() > 0.9
    n = output_noise(nl)
    assert math.isfinite(n.total_v_rms) and n.total_v_rms > 0
    # every amplifier's en and in are sources with an output density of their own
    names = {src.name for src in n.sources}
    for u in nl.opamps:
        pre = f"{u.ref}." if len(nl.opamps) > 1 else ""
        assert {pre + "en", pre + "in+", pre + "in-"} <= names
        assert n.at_f0_v_rthz[pre + "en"] > 0


def test_every_amplifier_is_reported_and_the_worst_leads(topo):
    # Per-amplifier output swing, slew and current; the headline keys hold the largest.
    nl = topo.netlist(topo.example)
    req = analyze(nl, vin_v=0.5).requirements
    amps = req.amplifiers
    assert [a.ref for a in amps] == [u.ref for u in nl.opamps]
    assert_allclose(req.iout_peak_a, max(a.iout_peak_a for a in amps), rtol=1e-12)
    assert_allclose(req.slew_sine_v_per_s, max(a.slew_sine_v_per_s for a in amps), rtol=1e-12)
    assert req.vout_peak_v >= max(a.vout_peak_v for a in amps) * (1 - 1e-12)
    # the amplifier driving the output swings |gain|·vin (the definition of the centre gain)
    drv = next(a for a in amps if a.node == nl.output)
    assert_allclose(drv.vout_peak_v, abs(analyze(nl).ideal.item().gain_center) * 0.5, rtol=1e-9)
    j = req.to_json()
    assert len(j["amplifiers"]) == len(nl.opamps) and {"ref", "vout_peak_v", "iout_peak_ma"} <= set(j["amplifiers"][0])


# ------------------------------------------------------------------ the multi-amplifier circuits


@pytest.mark.parametrize("tid", MULTI)
def test_ideal_figures_equal_the_closed_form_on_random_parts(tid):
    # The module's closed form (its Notes, derived and checked by sympy above) against the
    # measured figures on 200 seeded random part sets (each part ×/÷ 3 around the example).
    t = get_topology(tid)
    rng = np.random.default_rng(21)
    refs = [c.ref for c in t.components]
    base = t.values_from(t.example)
    draws = {r: base[r] * np.exp(rng.uniform(-math.log(3), math.log(3), 200)) for r in refs}
    fig = measure(transfer_function(t.netlist(t.example), overrides=draws))
    want = [t.formulas({r: float(draws[r][i]) for r in refs}) for i in range(200)]
    assert_allclose(fig.f0_hz, [w.f0_hz for w in want], rtol=1e-9)
    assert_allclose(fig.q, [w.q for w in want], rtol=1e-9)
    assert_allclose(fig.gain_center, [w.gain for w in want], rtol=1e-9)


@pytest.mark.parametrize("tid", ["tow-thomas", "akerberg-mossberg"])
def test_loop_design_follows_the_published_equal_part_design(tid):
    # Two-integrator loop, equal-capacitor design (Tow 1968, Thomas 1971; from memory):
    # R3 = R4 = R5 = R6 = R = 1/(ω0·C), Q resistor R2 = Q·R, input resistor R1 = R2/|H0|.
    spec = Spec(12e3, 30.0, 5.0)
    v = get_topology(tid).synthesize(spec, None, series="E24")
    r = v["R3"]
    assert_allclose([v["R4"], v["R5"], v["R6"], v["C2"]], [r, r, r, v["C1"]], rtol=1e-12)
    assert_allclose(1 / (2 * math.pi * r * v["C1"]), 12e3, rtol=1e-12)
    assert_allclose(v["R2"] / r, 30.0, rtol=1e-12)
    assert_allclose(v["R2"] / v["R1"], 5.0, rtol=1e-12)


def test_state_variable_classic_gain_is_tied_to_q():
    # KHN with equal parts and no resistor from the summer's + input to ground: centre gain
    # 2Q − 1 (Kerwin, Huelsman and Newcomb 1967; from memory). R7 → ∞ stands for "absent".
    t = get_topology("state-variable")
    v = dict(t.example, R3=10e3, R4=10e3, R5=10e3, R6=10e3, C1=10e-9, C2=10e-9, R1=10e3, R2=59e3, R7=1e15)
    fig = analyze(t.netlist(v)).ideal.item()
    q = (1 + 59e3 / 10e3) / 2
    assert_allclose([fig.f0_hz, fig.q, fig.gain_center], [1 / (2 * math.pi * 1e-4), q, -(2 * q - 1)], rtol=1e-9)
    r = design("state-variable", Spec(1e3, 5.0, 12.0))
    assert not r.feasible and "tied to Q" in r.reason and "gain stage" in r.reason


def test_dabp_classic_gain_of_two():
    # Dual-amplifier band-pass with the input divider's lower leg absent and R5 = R6: centre gain
    # 2, Q = R1/R, ω0 = 1/(R·C) with R3 = R4 = R and equal capacitors (Sedra and Espinoza 1975;
    # from memory).
    t = get_topology("dabp")
    v = dict(R1=250e3, R2=1e15, C1=10e-9, R3=10e3, C2=10e-9, R4=10e3, R5=7.5e3, R6=7.5e3)
    fig = analyze(t.netlist(v)).ideal.item()
    assert_allclose([fig.f0_hz, fig.q, fig.gain_center], [1 / (2 * math.pi * 1e-4), 25.0, 2.0], rtol=1e-9)


@pytest.mark.parametrize("tid", MULTI)
def test_pinned_parts_round_trip(tid):
    spec = Spec(3e3, 12.0, 3.0)
    for fixed in ({"C1": "4n7"}, {"R2": "150k"}, {"R5": "22k"}):
        r = design(tid, spec, series="exact", fixed=fixed)
        assert r.feasible, (fixed, r.reason)
        fig = r.ideal.item()
        assert_allclose([fig.f0_hz, fig.q, abs(fig.gain_center)], [3e3, 12.0, 3.0], rtol=1e-9)
        (ref, text), = fixed.items()
        assert r.chosen[ref] == pytest.approx({"4n7": 4.7e-9, "150k": 150e3, "22k": 22e3}[text], rel=1e-12)


def test_compare_at_high_q_uses_buildable_parts_and_less_gbw():
    # The selective target of the issue: 20 kHz, Q 50, gain 10 (E24).
    spec = Spec(20e3, 50.0, 10.0)
    results = compare(spec)
    j = {c["topology"]: c for c in compare_json(spec, results)["candidates"]}
    mfb_gbw = j["mfb"]["requirements"]["gbw_hz"]
    for tid in MULTI:
        c = j[tid]
        assert c["feasible"], c["reason"]
        rs = [v for k, v in c["chosen"].items() if k.startswith("R")]
        cs = [v for k, v in c["chosen"].items() if k.startswith("C")]
        assert 100.0 <= min(rs) and max(rs) <= 1e6
        assert min(cs) >= 100e-12
        assert c["spread"]["r"] < 200.0
        assert c["requirements"]["gbw_hz"] < mfb_gbw
    # the Åkerberg–Mossberg loop cancels most of the phase error: about half the Tow–Thomas GBW
    ratio = j["akerberg-mossberg"]["requirements"]["gbw_hz"] / j["tow-thomas"]["requirements"]["gbw_hz"]
    assert 0.35 < ratio < 0.65


def test_cascade_auto_picks_multi_amplifier_circuits_for_sharp_stages():
    # Order-8 Butterworth at Q_bp 10 in E24: the sharpest stages (Q 51) are out of reach of the
    # one-amplifier circuits (tests/test_cascade.py) and built by the low-sensitivity ones.
    s = ChainSettings.from_request("butterworth", 8, f0_hz=40e3, bw_hz=4e3, gain=4.0, series="E24")
    r = design_cascade(s)
    assert r.feasible, r.reason
    sharp = [st for st in r.stages if st.plan.q > 40]
    assert sharp and all(st.result.topology_id in MULTI for st in sharp)


@pytest.mark.parametrize("gbw, pole2", [(1e7, 3e7), (1e9, 5e9)])
def test_two_pole_opamps_hold_against_the_direct_solve(topo, gbw, pole2):
    # The two-pole op-amp model (a second pole per amplifier): polynomials against the direct
    # solve of the same pencil, 1e-9 relative from f0/1000 to 1000·f0.
    from bandsmith.solver.ampmodel import amp_system, amp_transfer_function

    nl = topo.netlist(topo.example)
    f0 = analyze(nl).ideal.item().f0_hz
    f = f0 * np.geomspace(1e-3, 1e3, 25)
    h = amp_transfer_function(nl, gbw_hz=gbw, a0=1e5, f_p2_hz=pole2)
    direct = amp_system(nl, gbw_hz=gbw, a0=1e5, f_p2_hz=pole2).transfer(2j * math.pi * f)[0]
    assert_allclose(h.at_f(f)[0], direct, rtol=1e-9)
