"""Fit check: verdicts flip exactly where a margin crosses 1 (and the comfort factor); needs and
actual figures checked against computations written here."""

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from bandsmith.analysis.analyzer import Tolerances
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.bench.fitcheck import DOES_NOT_FIT, FITS, MARGINAL, MARGINAL_FACTORS, check_amp, fit_check
from bandsmith.bench.shelf import ARCHETYPES, OpAmp
from test_ampmodel import sk_finite, two_pole_gain
from test_headroom import sallen_key_nodes

SUPPLY = 12.0
VIN = 0.8
RLOAD = 2e3
EPS = 1e-6


def sk():
    topo = get_topology("sallen-key")
    return topo.values_from(topo.example), topo.netlist(topo.example)


def make(**over):
    base = dict(
        name="probe", gbw_hz=50e6, a0=1e5, slew_v_per_us=1e3, iout_max_ma=1e3, supply_min_v=2.0,
        supply_max_v=40.0, swing_neg_v=0.0, swing_pos_v=0.0, cm_neg_v=0.0, cm_pos_v=0.0,
    )
    base.update(over)
    return OpAmp(**base)


def check(amp):
    return check_amp(sk()[1], amp, supply_v=SUPPLY, vin_v=VIN, rload_ohm=RLOAD)


@pytest.fixture(scope="module")
def base():
    return check(make())


def expected(r, key):
    if r < 1:
        return DOES_NOT_FIT
    return MARGINAL if r < MARGINAL_FACTORS[key] else FITS


def test_generous_amp_fits(base):
    assert base.verdict == FITS, base.reasons
    assert base.response_ok and base.supply_ok
    assert len(base.reasons) == 1 and "comfortable" in base.reasons[0]


def test_needs_against_independent_computations(base):
    v, net = sk()
    k = 1 + v["RB"] / v["RA"]
    # Sine slew at f0: 2π·f0·|gain|·vin (the README's definition; SR = 2π·f·Vpeak, Franco 3rd ed. Ex. 6.8).
    f0 = base.actual.item().f0_hz  # probe's GBW is 50 MHz: the figures are within 1e-4 of ideal
    r1, r2, r3, c1, c2 = (v[x] for x in ("R1", "R2", "R3", "C1", "C2"))
    w0 = math.sqrt((r1 + r2) / (r1 * r2 * r3 * c1 * c2))  # ideal ω0 of this band-pass (Franco, ch. 3)
    a1 = 1 / (r1 * c1) + (1 - k) / (r2 * c1) + 1 / (r3 * c1) + 1 / (r3 * c2)
    gain = (k / (r1 * c1)) / a1
    assert_allclose(base.needs.slew_sine_v_per_us, w0 * gain * VIN * 1e-6, rtol=1e-9)
    assert_allclose(f0, w0 / (2 * math.pi), rtol=1e-3)
    # Output current at f0 from the ideal nodal solution: into R2 (to node a), RA+RB, and the load.
    n = sallen_key_nodes(v, np.array([w0 / (2 * math.pi)]))
    vout, va = n["out"][0], n["a"][0]
    i = VIN * abs((vout - va) / r2 + vout / (v["RA"] + v["RB"]) + vout / RLOAD)
    assert_allclose(base.needs.iout_ma, i * 1e3, rtol=1e-9)
    # Step slew of a second-order band-pass: G·ω0/Q·vin = the initial slope (derived by the initial-value theorem, see test_requirements.py).
    assert_allclose(base.needs.slew_step_v_per_us, gain * a1 * VIN * 1e-6, rtol=1e-3)


@pytest.mark.parametrize("key", ["gbw", "slew", "iout", "swing", "cm"])
@pytest.mark.parametrize("where", ["one", "factor"])
def test_verdict_flips_exactly_where_the_margin_crosses(base, key, where):
    n = base.needs
    point = 1.0 if where == "one" else MARGINAL_FACTORS[key]
    for r in (point * (1 - EPS), point * (1 + EPS)):
        if key == "gbw":
            amp = make(gbw_hz=r * n.gbw_hz)
        elif key == "slew":
            amp = make(slew_v_per_us=r * n.slew_v_per_us)
        elif key == "iout":
            amp = make(iout_max_ma=r * n.iout_ma)
        elif key == "swing":
            room = SUPPLY - r * n.vout_peak_v
            amp = make(swing_neg_v=room, swing_pos_v=room)
        else:
            room = SUPPLY - r * n.cm_peak_v
            amp = make(cm_neg_v=room, cm_pos_v=room)
        got = check(amp)
        margin = getattr(got.margins, key)
        assert_allclose(margin, r, rtol=1e-9, err_msg=key)
        assert got.verdict == expected(r, key), (key, r, got.reasons)
        if got.verdict != FITS:
            assert any(_word(key) in reason for reason in got.reasons), got.reasons


def _word(key):
    return {"gbw": "GBW", "slew": "slew", "iout": "output current", "swing": "output", "cm": "common-mode"}[key]


def test_swing_and_cm_volts_to_spare(base):
    room = SUPPLY - 1.1 * base.needs.vout_peak_v
    got = check(make(swing_neg_v=room, swing_pos_v=room + 0.5))  # the nearer rail counts
    assert_allclose(got.needs.out_allowed_v, SUPPLY - room - 0.5, rtol=1e-12)
    assert_allclose(got.margins.swing_v, got.needs.out_allowed_v - got.needs.vout_peak_v, rtol=1e-12)
    assert got.margins.swing < 1.1 and got.verdict == DOES_NOT_FIT


@pytest.mark.parametrize("total,ok", [(24.0 * (1 - EPS), False), (24.0, True), (24.0 * (1 + EPS), True)])
def test_supply_range_edges(total, ok):
    got = check(make(supply_max_v=total))
    assert got.supply_ok is ok
    assert (got.verdict == DOES_NOT_FIT) is (not ok)
    low = check(make(supply_min_v=total, supply_max_v=40.0))
    assert low.supply_ok is (total <= 24.0)
    if not ok:
        assert any("supply" in r for r in got.reasons)


def test_second_pole_pulls_response_out_of_tolerance(base):
    v, net = sk()
    gbw = 1.6 * base.needs.gbw_hz  # a comfortable single-pole margin …
    f0 = base.actual.item().f0_hz
    amp = make(gbw_hz=gbw, f_p2_hz=f0 / 5)  # … and a second pole low enough to lift Q and gain
    got = check(amp)
    assert got.margins.gbw > MARGINAL_FACTORS["gbw"]
    assert not got.response_ok and got.verdict == DOES_NOT_FIT
    assert any("second pole" in r for r in got.reasons)
    # The actual figures are those of the two-pole circuit: the peak of the independent nodal
    # solution (test_ampmodel.sk_finite with the textbook two-pole A(s)) on a dense grid.
    f = np.geomspace(f0 / 4, f0 * 4, 200001)
    h = sk_finite(v, f, two_pole_gain(f, gbw, amp.a0, amp.f_p2_hz))
    i = int(np.argmax(np.abs(h)))
    assert_allclose(got.actual.item().f0_hz, f[i], rtol=2e-5)  # grid step 1.4e-5
    assert_allclose(got.actual.item().gain_center, abs(h[i]), rtol=1e-8)


def test_unstable_with_a_second_pole():
    # MFB example with GBW 1 MHz and a second pole at 100 Hz: the loop's phase passes −180° with
    # gain above 1 (a closed-loop pole in the right half-plane; seen in the poles of the rational form).
    topo = get_topology("mfb")
    got = check_amp(topo.netlist(topo.example), make(gbw_hz=1e6, f_p2_hz=100.0), supply_v=SUPPLY, vin_v=VIN)
    assert not got.stable and not got.response_ok and got.verdict == DOES_NOT_FIT
    assert "unstable" in got.reasons[0]
    assert got.to_json()["stable"] is False
    # Independently (sympy): the MFB nodal equations with A(s) = A0/((1 + s/ωp1)(1 + s/ωp2)),
    # cleared of fractions, have a root with a positive real part.
    import sympy as sp

    s = sp.symbols("s")
    v = {k: sp.nsimplify(x) for k, x in topo.example.items()}
    a0, wp1, wp2 = sp.Integer(10**5), 2 * sp.pi * sp.Integer(10**6) / 10**5, 2 * sp.pi * 100
    va, vm, vo = sp.symbols("va vm vo")
    eqs = [
        (va - 1) / v["R1"] + va / v["R2"] + s * v["C1"] * (va - vm) + s * v["C2"] * (va - vo),
        s * v["C1"] * (vm - va) + (vm - vo) / v["R3"],
        vo * (1 + s / wp1) * (1 + s / wp2) + a0 * vm,
    ]
    sol = sp.solve(eqs, [va, vm, vo], dict=True)[0]
    den = sp.denom(sp.together(sol[vo]))
    roots = sp.Poly(sp.expand(den), s).nroots()
    assert max(complex(r).real for r in roots) > 0


def test_circuit_unstable_with_an_ideal_op_amp():
    # Equal-part Sallen–Key with K = 5 ≥ 4: the ideal denominator s² + (4 − K)/(RC)·s + 2/(RC)²
    # has a negative middle coefficient, so its poles lie in the right half-plane (Franco, ch. 3).
    topo = get_topology("sallen-key")
    v = {"R1": 10e3, "R2": 10e3, "R3": 10e3, "C1": 10e-9, "C2": 10e-9, "RA": 10e3, "RB": 40e3}
    got = check_amp(topo.netlist(v), make(), supply_v=SUPPLY, vin_v=VIN)
    assert not got.stable and got.verdict == DOES_NOT_FIT
    assert got.reasons[0].startswith("even with an ideal op-amp the circuit is unstable")
    # The poles' magnitude is ω0 = √2/(RC): the message names that frequency.
    assert "2.25 kHz" in got.reasons[0]


def test_a0_too_small_does_not_fit():
    got = check(make(a0=3.0, gbw_hz=1e9))
    assert got.verdict == DOES_NOT_FIT and got.needs.gbw_hz is None
    assert any("A0" in r for r in got.reasons)


def test_cm_range_that_misses_zero():
    got = check(make(cm_neg_v=SUPPLY + 1.0, cm_pos_v=-2.0))
    assert got.verdict == DOES_NOT_FIT
    assert any("common-mode" in r for r in got.reasons)


def test_inverting_circuit_common_mode_is_the_virtual_ground():
    topo = get_topology("mfb")
    got = check_amp(topo.netlist(topo.example), make(gbw_hz=1e6), supply_v=SUPPLY, vin_v=VIN)
    assert got.needs.cm_node == "m"
    assert 0 < got.needs.cm_peak_v < 0.05 * VIN  # the finite op-amp's small error voltage


def test_fit_check_every_archetype_and_the_report():
    v, net = sk()
    rep = fit_check(net, ARCHETYPES, supply_v=15.0, vin_v=1.0, tolerances=Tolerances())
    assert [x.amp for x in rep.verdicts] == list(ARCHETYPES)
    for x in rep.verdicts:
        assert x.verdict in (FITS, MARGINAL, DOES_NOT_FIT) and x.reasons
        obj = x.to_json()
        assert set(obj["margins"]) >= {"gbw", "slew", "iout", "swing_v"}
        assert set(obj["actual"]) == {"f0_hz", "q", "bw_hz", "f_low_hz", "f_high_hz", "gain_center", "gain_center_db", "phase_center_deg"}
    # ±15 V (30 V total) is beyond the low-voltage CMOS archetypes' range.
    assert rep.verdict("generic 10 MHz CMOS rail-to-rail").verdict == DOES_NOT_FIT
    # The report's own headroom is the ideal op-amp's, rails only.
    assert rep.headroom.amp is None and rep.headroom.limiting_node == "out"
    # Same result one amp at a time (the shared GBW search gives the same needs).
    one = check_amp(net, ARCHETYPES[0], supply_v=15.0, vin_v=1.0)
    assert one.verdict == rep.verdicts[0].verdict
    assert_allclose(one.margins.gbw, rep.verdicts[0].margins.gbw, rtol=1e-12)


def test_bad_input():
    v, net = sk()
    with pytest.raises(InputError):
        check_amp(net, make(), supply_v=0.0)
    with pytest.raises(InputError):
        check_amp(net, make(), vin_v=-1.0)
