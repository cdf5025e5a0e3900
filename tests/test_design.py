"""Design from a target: published worked examples, the textbook design equations, feasibility.

Sources, named beside each check:
- S. Franco, *Design with Operational Amplifiers and Analog Integrated Circuits*, 3rd ed.,
  McGraw-Hill, ch. 3: Example 3.15 (multiple-feedback band-pass) and Example 3.13(a) (Sallen–Key
  band-pass); the equal-capacitor MFB design equations.
- Parallel resonance, any circuit-theory text: ω0 = 1/√(LC), Q = R·√(C/L).
- The circuits' transfer functions (derived by nodal analysis, checked with sympy), through each module's
  ``formulas``.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from bandsmith.design.candidate import Candidate, Conditions
from bandsmith.circuits import get_topology, topology_ids
from bandsmith.design.compare import compare, compare_json, needs_inductor, part_count
from bandsmith.design.designer import DesignResult, design, design_json
from bandsmith.design.standard import weighted_error
from bandsmith.files.design_session import design_session
from bandsmith.common.errors import InputError
from bandsmith.circuits.synthesis import Infeasible, Spec, search_grid
from bandsmith.solver.stability import hurwitz_stable

REL = 1e-9  # the round-trip bound of the issue


def measured(topology_id, values):
    return Candidate(topology_id, values).analyze().ideal.item()


def assert_meets(result: DesignResult, spec: Spec, rel=REL):
    """The chosen parts, analysed afresh, give the target to ``rel``."""
    f = measured(result.topology_id, result.chosen)
    assert_allclose(f.f0_hz, spec.f0_hz, rtol=rel)
    assert_allclose(f.q, spec.q, rtol=rel)
    assert_allclose(abs(f.gain_center), spec.gain, rtol=rel)


# --------------------------------------------------------------------------- published examples


def test_mfb_franco_example_3_15():
    # Franco 3rd ed., Example 3.15: f0 = 1 kHz, Q = 10, H0 = 20 dB, C = 10 nF →
    # input resistor 15.915 kΩ, shunt resistor 837.66 Ω, feedback resistor 318.31 kΩ (our R1, R2, R3).
    spec = Spec(f0_hz=1e3, q=10.0, gain=10.0)
    r = design("mfb", spec, series="exact", fixed={"C1": "10n", "C2": "10n"})
    assert r.feasible
    assert_allclose(r.exact["R1"], 15.915e3, rtol=5e-5)
    assert_allclose(r.exact["R2"], 837.66, rtol=5e-6)
    assert_allclose(r.exact["R3"], 318.31e3, rtol=5e-5)
    assert_meets(r, spec)
    assert r.ideal.item().gain_center < 0  # inverting


def test_sallen_key_franco_example_3_13a():
    # Franco 3rd ed., Example 3.13(a): f0 = 1 kHz, bandwidth 100 Hz, C = 10 nF, all resistors equal →
    # R = 22.508 kΩ, K = 3.8586, centre gain 27.28. The gain asked is the equal-part one, 2√2·Q − 1.
    q = 1e3 / 100.0
    spec = Spec.from_bandwidth(1e3, 100.0, 2.0 * math.sqrt(2.0) * q - 1.0)
    r = design("sallen-key", spec, series="exact", fixed={"C1": 10e-9, "C2": 10e-9})
    assert r.feasible
    for ref in ("R1", "R2", "R3"):
        assert_allclose(r.exact[ref], 22.508e3, rtol=5e-5)
    k = 1.0 + r.exact["RB"] / r.exact["RA"]
    assert_allclose(k, 3.8586, rtol=5e-5)
    assert_allclose(r.ideal.item().gain_center, 27.28, rtol=2e-4)
    assert_meets(r, spec)


def test_sallen_key_equal_part_design_without_pins():
    # Franco ch. 3, all parts equal: K = 4 − √2/Q and gain K/(4 − K); unpinned, the least-spread
    # choice is that design whenever the gain asked is 2√2·Q − 1.
    for q in (1.0, 3.0, 12.0):
        spec = Spec(f0_hz=750.0, q=q, gain=2 * math.sqrt(2) * q - 1)
        r = design("sallen-key", spec, series="exact")
        assert_allclose([r.exact["R1"] / r.exact["R2"], r.exact["R3"] / r.exact["R2"]], [1.0, 1.0], rtol=1e-7)
        assert_allclose(1 + r.exact["RB"] / r.exact["RA"], 4 - math.sqrt(2) / q, rtol=1e-7)
        assert any("equal-resistor" in n for n in r.notes)


# --------------------------------------------------------------------------- textbook equations


def test_mfb_equal_capacitor_equations():
    # Franco ch. 3: R3 = Q/(π·f0·C), R1 = R3/(2|H0|), R2 = Q/((2Q² − |H0|)·ω0·C).
    rng = np.random.default_rng(3)
    for _ in range(20):
        f0, q = 10 ** rng.uniform(1, 6), 10 ** rng.uniform(0, 1.5)
        h = rng.uniform(0.05, 0.95) * 2 * q * q
        c = 10 ** rng.uniform(-11, -6)
        r = design("mfb", Spec(f0, q, h), series="exact", fixed={"C1": c, "C2": c})
        r3 = q / (math.pi * f0 * c)
        assert_allclose(r.exact["R3"], r3, rtol=1e-12)
        assert_allclose(r.exact["R1"], r3 / (2 * h), rtol=1e-12)
        assert_allclose(r.exact["R2"], q / ((2 * q * q - h) * 2 * math.pi * f0 * c), rtol=1e-12)


def test_mfb_unequal_capacitors_meet_the_transfer_function():
    # The MFB transfer function (derived by nodal analysis): ω0² = (1/R1 + 1/R2)/(R3·C1·C2),
    # Q = ω0·R3·C1·C2/(C1 + C2), H0 = −R3·C1/(R1·(C1 + C2)), via the module's formulas.
    topo = get_topology("mfb")
    spec = Spec(4.2e3, 3.0, 25.0)  # gain above 2Q² = 18: only unequal capacitors reach it
    r = design("mfb", spec, series="exact", fixed={"C1": 47e-9, "C2": 10e-9})
    assert r.feasible
    f = topo.formulas(r.exact)
    assert_allclose([f.f0_hz, f.q, -f.gain], [spec.f0_hz, spec.q, spec.gain], rtol=1e-12)
    assert_meets(r, spec)


def test_tank_parallel_resonance_equations():
    # Parallel resonance (circuit-theory texts): L = 1/(ω0²·C), R2 = Q·√(L/C); gain R2/R1.
    spec = Spec(12e3, 7.0, 3.0)
    r = design("rlc-tank", spec, series="exact", fixed={"C": "22n"})
    w0 = 2 * math.pi * spec.f0_hz
    assert_allclose(r.exact["L"], 1 / (w0 * w0 * 22e-9), rtol=1e-12)
    assert_allclose(r.exact["R2"], 7.0 * math.sqrt(r.exact["L"] / 22e-9), rtol=1e-12)
    assert_allclose(r.exact["R1"], r.exact["R2"] / 3.0, rtol=1e-12)
    assert_meets(r, spec)


def test_sallen_key_any_gain_above_one_is_realisable_for_q_from_one_half():
    # Derived in the module notes: for Q ≥ 0.5 and K > 1 the positive root y exceeds x1 (x2 > 0).
    from bandsmith.circuits.sallen_key import _normalised

    rng = np.random.default_rng(11)
    k = 1 + 10 ** rng.uniform(-2, 2, 5000)
    q = 10 ** rng.uniform(math.log10(0.5), 2, 5000)
    g = 10 ** rng.uniform(-2, 3, 5000)
    r = 10 ** rng.uniform(-2, 2, 5000)
    for i in range(0, 5000, 500):
        x1, x2, x3 = _normalised(Spec(1.0, float(q[i]), float(g[i])), k[i], r[i])
        assert x1 > 0 and x2 > 0 and x3 > 0
        # and they solve the three normalised target equations
        assert_allclose(x3 * (x1 + x2) * r[i], 1.0, rtol=1e-10)
        assert_allclose(x1 + (1 - k[i]) * x2 + (1 + r[i]) * x3, 1 / q[i], rtol=1e-8, atol=1e-12)


def test_tank_winding_resistance_is_made_up_for():
    # The winding lowers Q (common practice, no source); the design raises R2 above the lossless Q·√(L/C).
    spec = Spec(2.0e3, 6.0, 2.0)
    lossless = design("rlc-tank", spec, series="exact", fixed={"C": 100e-9})
    lossy = design("rlc-tank", spec, series="exact", fixed={"C": 100e-9, "RL": 8.0})
    assert lossy.feasible
    assert lossy.chosen["RL"] == 8.0
    assert lossy.exact["R2"] > lossless.exact["R2"]
    # parallel equivalent of the winding ≈ (ω0·L)²/RL: R2 ∥ Rp ≈ Q·√(L/C) (common approximation)
    w0L = 2 * math.pi * spec.f0_hz * lossy.exact["L"]
    rp = w0L**2 / 8.0
    zq = spec.q * math.sqrt(lossy.exact["L"] / 100e-9)
    assert_allclose(1 / (1 / lossy.exact["R2"] + 1 / rp), zq, rtol=0.02)
    assert_meets(lossy, spec)


# --------------------------------------------------------------------------- pins and round trips


@pytest.mark.parametrize(
    "topology_id, pins",
    [
        ("mfb", {}),
        ("mfb", {"R1": 12e3}),
        ("mfb", {"R3": 150e3}),
        ("mfb", {"R2": 820.0}),
        ("mfb", {"C1": 10e-9, "R1": 10e3}),
        ("mfb", {"C1": 22e-9, "C2": 6.8e-9}),
        ("sallen-key", {}),
        ("sallen-key", {"C1": 10e-9}),
        ("sallen-key", {"R1": 47e3}),
        ("sallen-key", {"RA": 10e3}),
        ("sallen-key", {"RA": 10e3, "RB": 15e3}),
        ("sallen-key", {"C1": 10e-9, "C2": 22e-9}),
        ("sallen-key", {"C1": 10e-9, "R2": 8.2e3}),
        ("rlc-tank", {}),
        ("rlc-tank", {"L": 10e-3}),
        ("rlc-tank", {"R1": 2.2e3}),
        ("rlc-tank", {"R2": 10e3, "RL": 5.0}),
        ("rlc-tank", {"RL": 3.3}),
    ],
)
def test_exact_round_trip_with_pins(topology_id, pins):
    # Analysing the designed parts returns the target to 1e-9 (the round trip); pinned parts keep their values.
    spec = Spec(f0_hz=2.7e3, q=4.5, gain=3.0)
    r = design(topology_id, spec, series="exact", fixed=pins)
    assert r.feasible, r.reason
    for ref, v in pins.items():
        assert r.chosen[ref] == v
    assert_meets(r, spec)
    assert max(abs(r.errors["f0_pct"]), abs(r.errors["q_pct"])) < 100 * REL
    assert abs(r.errors["gain_db"]) < 20 * math.log10(1 + REL)
    assert r.chosen == r.exact
    assert r.notes


def test_round_trip_over_random_targets_exact():
    # Property: exact designs over random targets meet them to 1e-9 (seeded; f0 1 Hz–10 MHz,
    # Q 0.5–100, gain 0.1–1000 as the issue asks).
    rng = np.random.default_rng(2024)
    checked = 0
    for _ in range(40):
        spec = Spec(10 ** rng.uniform(0, 7), 10 ** rng.uniform(math.log10(0.5), 2), 10 ** rng.uniform(-1, 3))
        for tid in ("rlc-tank", "mfb", "sallen-key"):
            r = design(tid, spec, series="exact")
            if not r.feasible:
                assert isinstance(r.reason, str) and len(r.reason) > 20
                continue
            assert_meets(r, spec)
            checked += 1
    assert checked > 60


def test_random_targets_never_crash_and_infeasible_says_why():
    # Property over the ranges, with a series and random pins: a result every time, a
    # reason whenever infeasible, stable chosen parts whenever feasible.
    rng = np.random.default_rng(99)
    series = ("E6", "E24", "E96", "exact")
    for _ in range(45):
        spec = Spec(10 ** rng.uniform(0, 7), 10 ** rng.uniform(math.log10(0.5), 2), 10 ** rng.uniform(-1, 3))
        for tid in ("rlc-tank", "mfb", "sallen-key"):
            topo = get_topology(tid)
            pins = {}
            if rng.uniform() < 0.4:
                ref = topo.refs[int(rng.integers(len(topo.refs) - (1 if tid == "rlc-tank" else 0)))]
                kind = topo.component(ref).kind
                pins[ref] = float(10 ** rng.uniform(*{"R": (2, 6), "C": (-10, -6), "L": (-5, 0)}[kind]))
            r = design(tid, spec, series=str(rng.choice(series)), fixed=pins)
            if r.feasible:
                assert r.reason is None
                assert bool(hurwitz_stable(r.analysis.h_ideal.den)[0])
                poles = np.roots(r.analysis.h_ideal.den[0])  # numpy's own root finder agrees
                assert np.all(poles.real < 0)
                json_ok = design_json(r)
                assert json_ok["feasible"] is True
            else:
                assert isinstance(r.reason, str) and r.reason.strip()
                assert r.chosen == {} and r.analysis is None
                assert design_json(r)["ideal"] is None


# --------------------------------------------------------------------------- infeasible and impractical


def test_mfb_gain_beyond_two_q_squared_is_infeasible():
    # Franco ch. 3: the equal-capacitor MFB needs |H0| < 2Q².
    r = design("mfb", Spec(1e3, 2.0, 8.5))
    assert not r.feasible
    assert "2·Q²" in r.reason and "8" in r.reason
    assert r.chosen == {} and r.errors is None
    # ... but unequal capacitors reach it: |H0| < Q²·(1 + C1/C2) (derived from the same equations)
    ok = design("mfb", Spec(1e3, 2.0, 8.5), series="exact", fixed={"C1": 33e-9, "C2": 10e-9})
    assert ok.feasible
    bad = design("mfb", Spec(1e3, 2.0, 8.5), series="exact", fixed={"C1": 10e-9, "C2": 10e-9})
    assert not bad.feasible and "Q²·(1 + C1/C2)" in bad.reason


def test_too_many_pins_are_infeasible_with_a_reason():
    r = design("mfb", Spec(1e3, 5.0, 2.0), fixed={"R1": 1e3, "R2": 1e3, "R3": 1e4})
    assert not r.feasible and "pin at most 2" in r.reason
    r = design("rlc-tank", Spec(1e3, 5.0, 2.0), fixed={"L": 1e-3, "C": 1e-6})
    assert not r.feasible and "one free choice" in r.reason


def test_absurd_inductor_is_infeasible_and_a_large_one_is_a_warning():
    # Common practice, no source: nothing above about 100 H is made; above 1 H is unusual.
    r = design("rlc-tank", Spec(5.0, 5.0, 1.0), fixed={"C": "1n"})
    assert not r.feasible
    assert "inductor" in r.reason and "L would be" in r.reason
    r = design("rlc-tank", Spec(50.0, 5.0, 1.0), fixed={"C": "2u2"})
    assert r.feasible
    assert any(w.startswith("L = ") and "catalogue inductors" in w for w in r.warnings)


def test_winding_resistance_too_large_for_the_q():
    r = design("rlc-tank", Spec(1e3, 20.0, 1.0), fixed={"L": 10e-3, "RL": 10.0})  # ω0L/RL = 6.3
    assert not r.feasible
    assert "own Q" in r.reason


def test_high_q_sallen_key_warns_about_tight_parts():
    # Derived (from Q = √2/(4 − K), Franco 3rd ed. ch. 3): S(Q; K) = 2√2·Q − 1 in the equal-part design — high Q needs tight parts.
    r = design("sallen-key", Spec(1e3, 25.0, 2.0), series="exact")
    assert r.feasible
    assert any("sensitive" in w and "±" in w for w in r.warnings)
    low = design("mfb", Spec(1e3, 2.0, 1.0), series="exact")
    assert not any("sensitive" in w for w in low.warnings)


def test_sallen_key_gain_above_four_stays_stable_with_unequal_resistors():
    # Franco ch. 3: with all parts equal the circuit is unstable for K ≥ 4 (Q = √2/(4 − K)). The
    # unequal-resistor procedure of the module notes keeps every pinned K > 1 stable.
    for rb in (40e3, 100e3):
        r = design("sallen-key", Spec(2e3, 5.0, 4.0), series="exact", fixed={"RA": 10e3, "RB": rb})
        assert r.feasible
        assert 1 + rb / 10e3 >= 4
        assert np.all(np.roots(r.analysis.h_ideal.den[0]).real < 0)
        assert_meets(r, Spec(2e3, 5.0, 4.0))


def test_large_spread_warns():
    # MFB equal C: R3/R2 = 2·(2Q² − |H0|): 3598 at Q = 30, |H0| = 1 (Franco's equations).
    r = design("mfb", Spec(1e3, 30.0, 1.0), series="exact")
    assert_allclose(r.exact["R3"] / r.exact["R2"], 2 * (2 * 900 - 1), rtol=1e-12)
    assert any("resistor spread" in w for w in r.warnings)


def test_errors_beyond_tolerance_with_a_coarse_series_warn():
    r = design("sallen-key", Spec(2.4e3, 8.0, 4.0), series="E6")
    assert r.feasible
    assert any("misses" in w for w in r.warnings)


def test_level_note_says_what_was_chosen():
    for tid in ("rlc-tank", "mfb", "sallen-key"):
        r = design(tid, Spec(2.4e3, 8.0, 4.0))
        assert any(n.startswith("impedance level") for n in r.notes)
        rs = [v for ref, v in r.exact.items() if ref.startswith("R") and ref != "RL"]
        # common practice, no source: resistors roughly 1 kΩ–1 MΩ for an everyday target
        assert min(rs) > 500 and max(rs) < 2e6


# --------------------------------------------------------------------------- input checks


def test_bad_input_raises():
    spec = Spec(1e3, 2.0, 1.0)
    with pytest.raises(InputError, match="C9"):
        design("mfb", spec, fixed={"C9": 1e-9})
    with pytest.raises(InputError, match="R1"):
        design("mfb", spec, fixed={"R1": "4x7"})
    with pytest.raises(InputError, match="R1"):
        design("mfb", spec, fixed={"R1": -1.0})
    with pytest.raises(InputError, match="series"):
        design("mfb", spec, series="E7")
    with pytest.raises(InputError, match="topology"):
        design("twin-t", spec)
    for bad in (0.0, -1.0, float("nan"), float("inf")):
        with pytest.raises(InputError):
            Spec(bad, 1.0, 1.0)
        with pytest.raises(InputError):
            Spec(1.0, bad, 1.0)
        with pytest.raises(InputError):
            Spec(1.0, 1.0, bad)
    with pytest.raises(InputError, match="bw"):
        Spec.from_bandwidth(1e3, 0.0, 1.0)
    assert_allclose(Spec.from_bandwidth(1e3, 250.0, 1.0).q, 4.0)
    r = design("rlc-tank", spec, fixed={"RL": 0.0})  # an optional part may be zero
    assert r.feasible


# --------------------------------------------------------------------------- JSON, compare, sessions


README_DESIGN_KEYS = {"topology", "spec", "feasible", "reason", "exact", "chosen", "series", "ideal", "errors", "netlist", "requirements", "sensitivity"}


def test_design_json_has_the_contract_keys():
    r = design("mfb", Spec(2.4e3, 8.0, 4.0), conditions=Conditions(gbw_hz=2e6))
    j = design_json(r)
    assert README_DESIGN_KEYS <= set(j)
    assert set(j["errors"]) == {"f0_pct", "q_pct", "gain_db"}
    assert set(j["spec"]) >= {"f0_hz", "q", "gain"}
    assert j["actual"] is not None and j["errors_actual"] is not None
    assert j["requirements"]["gbw_hz"] > 0
    assert set(j["sensitivity"]) == {"f0", "q", "gain"}


def test_compare_every_circuit_with_spread_part_count_and_inductor():
    spec = Spec(2.4e3, 8.0, 4.0)
    results = compare(spec)
    assert [r.topology_id for r in results] == list(topology_ids())  # every registered circuit, in listing order
    j = compare_json(spec, results)
    assert set(j) >= {"spec", "candidates"}
    by = {c["topology"]: c for c in j["candidates"]}
    for c in j["candidates"]:
        assert README_DESIGN_KEYS <= set(c)
        assert {"spread", "part_count", "needs_inductor"} <= set(c)
        assert c["spread"]["r"] >= 1.0
    # parts to buy: the tank has R1, R2, L, C and an op-amp; MFB five passives and an op-amp;
    # Sallen–Key seven passives and an op-amp
    assert [by[t]["part_count"] for t in ("rlc-tank", "mfb", "sallen-key")] == [5, 6, 8]
    assert [by[t]["needs_inductor"] for t in ("rlc-tank", "mfb", "sallen-key")] == [True, False, False]
    assert part_count(get_topology("mfb")) == 6 and not needs_inductor(get_topology("mfb"))
    chosen = by["mfb"]["chosen"]
    rs = [chosen[k] for k in ("R1", "R2", "R3")]
    assert_allclose(by["mfb"]["spread"]["r"], max(rs) / min(rs))


def test_compare_reports_infeasible_circuits_too():
    results = compare(Spec(1e3, 1.0, 50.0))
    mfb = next(r for r in results if r.topology_id == "mfb")
    assert not mfb.feasible
    j = compare_json(Spec(1e3, 1.0, 50.0), results)
    c = next(c for c in j["candidates"] if c["topology"] == "mfb")
    assert c["spread"] is None and c["part_count"] == 6


def test_design_session_holds_the_feasible_designs():
    spec = Spec(2.4e3, 8.0, 4.0)
    results = list(compare(spec, series="E12", conditions=Conditions(gbw_hz=3e6, vin_v=0.25)))
    results.append(design("mfb", spec, series="E12", fixed={"C1": "4n7"}))
    results.append(design("mfb", Spec(2.4e3, 1.0, 50.0)))  # infeasible: noted, not a candidate
    s = design_session(spec, results, series="E12", conditions=Conditions(gbw_hz=3e6, vin_v=0.25))
    assert [c.id for c in s.candidates] == [r.topology_id for r in results[:-2] if r.feasible] + ["mfb-2"]
    assert {"rlc-tank", "mfb", "sallen-key"} <= {c.id for c in s.candidates}
    assert s.candidate("mfb-2").fixed == ("C1",)
    assert all(c.snap == "E12" for c in s.candidates)
    assert s.opamp.gbw_hz == 3e6 and s.target.vin_v == 0.25 and s.target.series == "E12"
    assert "not feasible" in s.notes
    for c in s.candidates:
        assert c.values == next(r.chosen for r in results if r.feasible and r.topology_id == c.topology_id and r.fixed == c.fixed)


# --------------------------------------------------------------------------- helpers


def test_hurwitz_test_agrees_with_numpy_roots():
    # Routh's criterion against numpy.roots on random real polynomials of degree 1 to 6.
    rng = np.random.default_rng(5)
    for deg in range(1, 7):
        den = rng.normal(size=(400, deg + 1))
        den[: 200, :] = np.abs(den[:200, :])  # many with all-positive coefficients
        ours = hurwitz_stable(den)
        ref = np.array([np.all(np.roots(d).real < 0) for d in den])
        assert np.array_equal(ours, ref), deg


def test_search_grid_brackets_the_band():
    for q in (0.5, 1.0, 10.0, 100.0):
        g = search_grid(q)
        half = 0.5 / q
        lo, hi = math.sqrt(1 + half * half) - half, math.sqrt(1 + half * half) + half
        assert g[0] < lo < 1 < hi < g[-1]
        assert np.all(np.diff(g) > 0)
        inner = g[(g > lo) & (g < hi)]
        assert np.max(np.diff(np.log(inner))) <= min(0.02, 0.1 / q) + 1e-12


def test_weighted_error_uses_the_tolerances():
    e = {"f0_pct": 1.0, "q_pct": 5.0, "gain_db": 0.5}
    assert_allclose(weighted_error(e), math.sqrt(3.0))
    assert weighted_error({"f0_pct": float("nan"), "q_pct": 0.0, "gain_db": 0.0}) == math.inf


def test_synthesize_is_set_on_every_circuit():
    for tid in ("rlc-tank", "mfb", "sallen-key"):
        topo = get_topology(tid)
        assert topo.synthesize is not None
        ex = topo.synthesize(Spec(1e3, 3.0, 2.0), {})
        assert set(ex) >= {c.ref for c in topo.components if c.required}
    with pytest.raises(Infeasible):
        get_topology("mfb").synthesize(Spec(1e3, 1.0, 3.0), {})


def test_a_shared_design_procedure_runs_once_with_each_circuits_own_values():
    # The two-integrator loops share their design procedure (Topology.procedure): a design of both
    # for one target runs it once, and each gets the exact values and notes its own synthesize
    # gives (with and without a pinned part); a failing run is each circuit's own, naming it.
    # A consistency check of our own two paths (common practice, no source).
    from bandsmith.design.designer import design_many, parse_fixed, prepare_designs

    tt, am = get_topology("tow-thomas"), get_topology("akerberg-mossberg")
    assert tt.procedure is not None and tt.procedure == am.procedure
    assert get_topology("mfb").procedure is None
    for spec, fixed in ((Spec(3.3e3, 4.0, 3.0), None), (Spec(12e3, 9.0, 0.7), {"C1": "4.7n"}), (Spec(250.0, 1.2, 2.0), {"R2": "47k"})):
        prepared = prepare_designs(("tow-thomas", "akerberg-mossberg"), spec, series="E24", fixed=fixed)
        for topo, made in zip((tt, am), prepared.made):
            own = topo.synthesize(spec, parse_fixed(topo, fixed), series="E24")
            assert made.design.exact == topo.values_from(own)
            assert made.design.notes == tuple(own.notes)
    bad = {"R1": "1k", "R2": "47k"}  # (R2/R1 sets the gain: 47, not 3)
    results = design_many(("tow-thomas", "akerberg-mossberg"), Spec(3.3e3, 4.0, 3.0), series="E24", fixed=bad)
    assert not results[0].feasible and not results[1].feasible
    assert "Tow" in results[0].reason and "kerberg" in results[1].reason
