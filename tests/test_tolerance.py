"""Tolerance spread: sampling, Monte Carlo figures, yield, worst case, settings (bandsmith.spread.tolerance)."""

import math

import numpy as np
import pytest
import scipy.stats
from numpy.testing import assert_allclose, assert_array_equal

from bandsmith.analysis.analyzer import sensitivities, transfer_function
from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.solver.expansion import Expansion, circuit_variables
from bandsmith.analysis.figures import measure
from bandsmith.solver.mna import IDEAL, OpAmpModel, build_system
from bandsmith.solver.rational import reference_w
from bandsmith.spread.evaluator import solver_values
from bandsmith.spread.tolerance import (
    DEFAULT_TOLERANCES,
    STAT_KEYS,
    SpreadCancelled,
    SpreadSettings,
    hurwitz_stable,
    magnitude_envelope,
    part_tolerances,
    run_spread,
    sample_parts,
    stats,
    worst_case,
)

CIRCUITS = ("rlc-tank", "mfb", "sallen-key")


def example(topology_id, **changes):
    topo = get_topology(topology_id)
    values = dict(topo.example)
    values.update(changes)
    return topo.netlist(values)


def tank(f0_hz, q, gain, *, l_h=1e-3, rl_ohm=0.0):
    """Tank band-pass from the parallel-resonance relations (any circuit-theory text): f0 = 1/(2π√(LC)), Q = R2/√(L/C), gain −R2/R1."""
    c = 1.0 / ((2 * math.pi * f0_hz) ** 2 * l_h)
    r2 = q * math.sqrt(l_h / c)
    return get_topology("rlc-tank").netlist({"R1": r2 / gain, "R2": r2, "L": l_h, "C": c, "RL": rl_ohm})


# -- settings ----------------------------------------------------------------------------------


def test_settings_defaults_and_overrides():
    s = SpreadSettings(tolerances={"C2": 0.02})
    assert dict(s.tolerances) == {"C": 0.05, "C2": 0.02, "L": 0.10, "R": 0.01}
    assert dict(SpreadSettings().tolerances) == dict(DEFAULT_TOLERANCES)
    tol = part_tolerances(example("mfb"), s)
    assert tol == {"R1": 0.01, "R2": 0.01, "C1": 0.05, "C2": 0.02, "R3": 0.01}


def test_winding_resistance_is_a_resistor():
    nl = example("rlc-tank", RL=15.0)
    assert part_tolerances(nl, SpreadSettings())["RL"] == 0.01
    assert part_tolerances(nl, SpreadSettings(tolerances={"R": 0.0}))["RL"] == 0.0
    assert part_tolerances(nl, SpreadSettings(tolerances={"R": 0.0, "RL": 0.2}))["RL"] == 0.2


@pytest.mark.parametrize(
    "kwargs, field",
    [
        ({"tolerances": {"R": 0.6}}, "tol R"),
        ({"tolerances": {"R": -0.01}}, "tol R"),
        ({"tolerances": {"R": math.nan}}, "tol R"),
        ({"tolerances": {"C": "5%"}}, "tol C"),
        ({"dist": "gauss"}, "dist"),
        ({"trials": 0}, "trials"),
        ({"trials": 2.5}, "trials"),
        ({"trials": True}, "trials"),
        ({"seed": -1}, "seed"),
        ({"gbw_tol": 0.7}, "gbw-tol"),
        ({"window_f0": 0.0}, "window-f0"),
        ({"window_q": -1.0}, "window-q"),
        ({"window_gain_db": math.inf}, "window-gain-db"),
    ],
)
def test_settings_reject_bad_values(kwargs, field):
    with pytest.raises(InputError) as err:
        SpreadSettings(**kwargs)
    assert err.value.field == field


def test_settings_json_round_trip():
    s = SpreadSettings(tolerances={"C2": 0.02, "R": 0.005}, gbw_tol=0.3, dist="normal", trials=1234, seed=99, window_f0=0.02, window_q=0.04, window_gain_db=0.25)
    obj = s.to_json()
    assert obj["window"] == {"f0": 0.02, "q": 0.04, "gain_db": 0.25}
    back = SpreadSettings.from_json(obj)
    assert back.to_json() == obj
    assert back == s
    assert SpreadSettings.from_json({}) == SpreadSettings()


@pytest.mark.parametrize(
    "obj",
    [[1, 2], {"colour": "red"}, {"tolerances": [1]}, {"window": {"f0": 0.1, "x": 1}}, {"dist": 3}, {"trials": "10"}, {"seed": 1.5}],
)
def test_settings_from_bad_json(obj):
    with pytest.raises(InputError):
        SpreadSettings.from_json(obj)


def test_unknown_tolerance_key_and_gbw_spread_without_opamp():
    with pytest.raises(InputError) as err:
        run_spread(example("mfb"), SpreadSettings(tolerances={"C9": 0.01}, trials=10))
    assert err.value.field == "tol" and "C9" in str(err.value)
    with pytest.raises(InputError) as err:
        run_spread(example("mfb"), SpreadSettings(gbw_tol=0.1, trials=10))
    assert err.value.field == "gbw-tol"


# -- sampling ----------------------------------------------------------------------------------


def test_same_seed_same_output_other_seed_other_output():
    # Determinism is a bit-for-bit property, so exact equality is the right check here.
    nl = example("sallen-key")
    s = SpreadSettings(trials=30_000, seed=42, gbw_tol=0.2)
    op = OpAmpModel(2e6)
    a, b = run_spread(nl, s, opamp=op), run_spread(nl, s, opamp=op)
    for name in ("f0_hz", "q", "gain_center_db", "passed"):
        assert_array_equal(getattr(a, name), getattr(b, name))
    assert a.to_json() == b.to_json()
    c = run_spread(nl, SpreadSettings(trials=30_000, seed=43, gbw_tol=0.2), opamp=op)
    assert not np.array_equal(a.f0_hz, c.f0_hz)


def test_part_draws_do_not_depend_on_the_opamp():
    nl = example("mfb")
    s = SpreadSettings(trials=500, seed=5)
    ideal = sample_parts(nl, s)
    finite = sample_parts(nl, s, opamp=OpAmpModel(1e6))
    for ref in ideal:
        assert_array_equal(ideal[ref], finite[ref])
    assert "gbw" in finite and "gbw" not in ideal


@pytest.mark.parametrize("dist", ["uniform", "normal"])
def test_sampled_values_follow_the_stated_distribution(dist):
    # Kolmogorov–Smirnov one-sample test (scipy.stats.kstest) of the relative deviations against
    # U(−p, p) (scipy's uniform(loc=−p, scale=2p)) or N(0, p/3); a 1 % significance level, the
    # seed fixed so the verdict is reproducible.
    nl = example("rlc-tank", RL=12.0)
    s = SpreadSettings(tolerances={"C": 0.02, "RL": 0.2}, trials=20_000, seed=2026, dist=dist, gbw_tol=0.3)
    values = sample_parts(nl, s, opamp=OpAmpModel(1e6))
    nominal = {**nl.values(), "gbw": 1e6}
    tol = {**part_tolerances(nl, s), "gbw": 0.3}
    assert set(values) == set(tol)
    for ref, v in values.items():
        dev = v / nominal[ref] - 1.0
        p = tol[ref]
        if dist == "uniform":
            res = scipy.stats.kstest(dev, "uniform", args=(-p, 2 * p))
            assert np.all(np.abs(dev) <= p * (1 + 1e-12))
            wrong = scipy.stats.kstest(dev, "norm", args=(0.0, p / 3))
        else:
            res = scipy.stats.kstest(dev, "norm", args=(0.0, p / 3))
            wrong = scipy.stats.kstest(dev, "uniform", args=(-p, 2 * p))
        assert res.pvalue > 0.01, (ref, res)
        assert wrong.pvalue < 1e-6, (ref, wrong)  # the test can tell the two apart


def test_zero_tolerance_holds_parts_exact():
    nl = example("rlc-tank", RL=15.0)
    s = SpreadSettings(tolerances={"R": 0.0}, trials=2000)
    values = sample_parts(nl, s)
    for ref in ("R1", "R2", "RL"):
        assert_allclose(values[ref], nl.values()[ref], rtol=0, atol=0)
    assert np.std(values["C"]) > 0
    # The tank's centre gain is −R2/R1 (parallel tank, derived by nodal analysis) — with the resistors exact
    # and no winding loss it does not move at all.
    sp = run_spread(example("rlc-tank"), s)
    assert_allclose(sp.gain_center, -example("rlc-tank").element("R2").value / example("rlc-tank").element("R1").value, rtol=1e-12)


# -- Monte Carlo figures -----------------------------------------------------------------------


def test_trial_figures_are_the_tank_formulas_and_yield_follows():
    # Parallel resonance (any circuit-theory text): f0 = 1/(2π√(LC)), Q = R2·√(C/L), gain −R2/R1, applied to
    # the sampled part values of each trial; the yield is then counted from those formulas alone.
    nl = example("rlc-tank")
    s = SpreadSettings(trials=40_000, seed=3, window_f0=0.04, window_q=0.05, window_gain_db=0.15)
    sp = run_spread(nl, s, keep_values=True)
    v = sp.values
    f0 = 1 / (2 * math.pi * np.sqrt(v["L"] * v["C"]))
    q = v["R2"] * np.sqrt(v["C"] / v["L"])
    gain = -v["R2"] / v["R1"]
    assert_allclose(sp.f0_hz, f0, rtol=1e-11)
    assert_allclose(sp.q, q, rtol=1e-11)
    assert_allclose(sp.gain_center, gain, rtol=1e-11)
    n = sp.nominal.item()
    ok = (np.abs(f0 / n.f0_hz - 1) <= 0.04) & (np.abs(q / n.q - 1) <= 0.05) & (np.abs(20 * np.log10(np.abs(gain / n.gain_center))) <= 0.15)
    assert np.count_nonzero(sp.passed) == np.count_nonzero(ok)
    assert 0.05 < sp.yield_fraction < 0.95
    assert sp.yield_fraction == np.count_nonzero(ok) / s.trials


@pytest.mark.parametrize("topology_id", CIRCUITS)
@pytest.mark.parametrize("dist", ["uniform", "normal"])
def test_monte_carlo_spread_matches_first_order_prediction(topology_id, dist):
    # First-order propagation (derived): with x_i = x_i0·(1 + u_i), independent u_i of zero mean,
    #   ln y = ln y0 + Σ S_i·ln(1 + u_i) + O(u²) ≈ ln y0 + Σ S_i·u_i,  S_i = ∂ln y/∂ln x_i,
    # so Var(ln y) ≈ Σ S_i²·Var(u_i) and σ_y/y ≈ σ(ln y) = √Σ (S_i·σ_i)². For U(−p, p) the variance
    # is (2p)²/12 = p²/3, σ_i = p/√3; for N(0, p/3), σ_i = p/3. The gain in dB is
    # 20·log10|g| = (20/ln 10)·ln|g|, so σ(dB) = (20/ln 10)·σ(ln|g|). The sensitivities come from
    # bandsmith.analysis.analyzer.sensitivities (central differences on the solver), not from the spread module.
    # Tolerance 3 %: the sampling error of a standard deviation from N = 40 000 trials is
    # 1/√(2N) ≈ 0.35 %, and the second-order terms at p = 0.2 % are of order p.
    nl = example(topology_id)
    p = 0.002
    s = SpreadSettings(tolerances={"R": p, "C": p, "L": p}, trials=40_000, seed=11, dist=dist)
    sp = run_spread(nl, s)
    sens = sensitivities(nl)
    sigma = p / math.sqrt(3) if dist == "uniform" else p / 3
    refs = [r for r in sens["f0"] if nl.values()[r] > 0]
    pred = {key: math.sqrt(sum((sens[key][r] * sigma) ** 2 for r in refs)) for key in ("f0", "q", "gain")}
    n = sp.nominal.item()
    assert_allclose(np.std(sp.f0_hz) / n.f0_hz, pred["f0"], rtol=0.03)
    assert_allclose(np.std(sp.q) / n.q, pred["q"], rtol=0.03)
    assert_allclose(np.std(sp.gain_center_db), 20 / math.log(10) * pred["gain"], rtol=0.03)
    assert sp.failed_trials == 0 and sp.yield_fraction == 1.0


def test_stats_keys_and_values():
    # numpy's percentile (linear interpolation) and sample standard deviation are the reference.
    x = np.random.default_rng(0).normal(5.0, 2.0, 1001)
    x[3] = np.nan
    st = stats(x)
    assert tuple(st) == STAT_KEYS
    f = x[np.isfinite(x)]
    assert_allclose([st["p1"], st["p5"], st["p50"], st["p95"], st["p99"]], np.percentile(f, [1, 5, 50, 95, 99]), rtol=1e-15)
    assert_allclose(st["std"], np.std(f, ddof=1), rtol=1e-14)
    assert_allclose([st["min"], st["mean"], st["max"]], [f.min(), f.mean(), f.max()], rtol=1e-15)
    assert all(math.isnan(v) for v in stats(np.array([np.nan])).values())


@pytest.mark.parametrize("q", [0.5, 0.7, 2.0, 10.0, 50.0, 100.0])
@pytest.mark.parametrize("rl_frac", [0.0, 0.05])
def test_finite_opamp_trials_match_exact_measure_for_any_q(q, rl_frac):
    # The spread measures finite-op-amp trials on a short search grid of each trial's own; the
    # reference is bandsmith.analysis.figures.measure's global search on the solver's transfer function for
    # the same sampled values. Q from 0.5 (a double real pole) to 100, with and without a winding
    # resistance (RL = rl_frac·√(L/C)/Q: an inductor Q of ω0·L/RL = Q/rl_frac, 20 times the circuit's).
    l_h = 1e-3
    c = 1.0 / ((2 * math.pi * 20e3) ** 2 * l_h)
    z = math.sqrt(l_h / c)
    nl = get_topology("rlc-tank").netlist({"R1": z * q / 3, "R2": z * q, "L": l_h, "C": c, "RL": rl_frac * z / q})
    op = OpAmpModel(20e6)
    sp = run_spread(nl, SpreadSettings(trials=4000, seed=8, gbw_tol=0.25), opamp=op, keep_values=True)
    assert sp.failed_trials == 0
    idx = np.arange(0, 4000, 16)
    overrides = {k: v[idx] for k, v in sp.values.items() if k != "gbw"}
    h = transfer_function(nl, op, overrides=overrides, gbw_hz=sp.values["gbw"][idx], a0=np.full(idx.size, op.a0), w_ref=reference_w(build_system(nl)))
    ref = measure(h)
    assert_allclose(sp.f0_hz[idx], ref.f0_hz, rtol=1e-9)
    assert_allclose(sp.q[idx], ref.q, rtol=1e-8)
    assert_allclose(sp.gain_center[idx], ref.gain_center, rtol=1e-9)


@pytest.mark.parametrize("topology_id, changes", [("mfb", {}), ("sallen-key", {}), ("rlc-tank", {"RL": 25.0})])
def test_expansion_and_solver_engines_agree(topology_id, changes):
    nl = example(topology_id, **changes)
    s = SpreadSettings(trials=3000, seed=4, gbw_tol=0.2)
    op = OpAmpModel(1e6)
    fast = run_spread(nl, s, opamp=op, engine="expansion")
    slow = run_spread(nl, s, opamp=op, engine="solver")
    assert (fast.method, slow.method) == ("expansion", "solver")
    for name in ("f0_hz", "q", "gain_center"):
        assert_allclose(getattr(fast, name), getattr(slow, name), rtol=1e-9)
    assert_array_equal(fast.passed, slow.passed)


@pytest.mark.parametrize("topology_id", CIRCUITS)
@pytest.mark.parametrize("gbw", [None, 1e6])
def test_expansion_equals_solver_transfer_function(topology_id, gbw):
    # The expansion's polynomials against the MNA solver (bandsmith.solver.rational), at random part values.
    nl = example(topology_id, **({"RL": 30.0} if topology_id == "rlc-tank" else {}))
    op = IDEAL if gbw is None else OpAmpModel(gbw)
    w = reference_w(build_system(nl))
    exp = Expansion(nl, op, w_ref=w)
    variables = circuit_variables(nl, op)
    rng = np.random.default_rng(1)
    ratios = np.exp(rng.uniform(-0.3, 0.3, (64, len(variables))))
    overrides, g, a0 = solver_values(variables, ratios)
    ref = transfer_function(nl, op, overrides=overrides, gbw_hz=g, a0=a0, w_ref=w)
    f = np.geomspace(w / 50, w * 50, 40) / (2 * math.pi)
    assert_allclose(exp.rational(ratios).at_f(f), ref.at_f(f), rtol=1e-10, atol=1e-12 * np.max(np.abs(ref.at_f(f))))
    assert exp.pure_bandpass == (gbw is None and topology_id != "rlc-tank")


def test_unstable_trials_are_failures_not_errors():
    # Sallen–Key variant A with all parts equal: Q = √2/(4 − K) (Franco, 3rd ed., ch. 3). At Q = 20
    # the gain K = 3.929 sits 0.07 below the oscillation limit and 1 % resistors push some trials
    # past it. Unstable exactly when the s-coefficient of the denominator (derived by nodal
    # analysis, variant A) is not positive: a1 = 1/(R1·C1) + (1−K)/(R2·C1) + 1/(R3·C1) + 1/(R3·C2).
    k = 4 - math.sqrt(2) / 20
    nl = get_topology("sallen-key").netlist({"R1": 10e3, "R2": 10e3, "R3": 10e3, "C1": 10e-9, "C2": 10e-9, "RA": 10e3, "RB": 10e3 * (k - 1)})
    sp = run_spread(nl, SpreadSettings(trials=20_000, seed=9), keep_values=True)
    v = sp.values
    kk = 1 + v["RB"] / v["RA"]
    a1 = 1 / (v["R1"] * v["C1"]) + (1 - kk) / (v["R2"] * v["C1"]) + 1 / (v["R3"] * v["C1"]) + 1 / (v["R3"] * v["C2"])
    assert_array_equal(~sp.measured, a1 <= 0)
    assert 0 < sp.failed_trials < 20_000
    assert not sp.passed[~sp.measured].any()
    assert sp.yield_fraction <= 1 - sp.failed_trials / 20_000
    assert sp.worst.unstable_corners > 0
    st = sp.to_json()["q"]
    assert all(math.isfinite(st[k]) for k in STAT_KEYS)


def test_hurwitz_agrees_with_roots():
    # Polynomials built from known roots (numpy.poly), half of them with one root pair or real
    # root moved into the right half-plane; numpy.roots confirms the reference verdict.
    rng = np.random.default_rng(7)
    for degree in range(1, 7):
        dens, want = [], []
        for i in range(300):
            roots = []
            while len(roots) < degree:
                re_part = -rng.uniform(0.05, 3.0)
                if degree - len(roots) >= 2 and rng.random() < 0.6:
                    im = rng.uniform(0.1, 5.0)
                    roots += [complex(re_part, im), complex(re_part, -im)]
                else:
                    roots.append(complex(re_part, 0.0))
            unstable = i % 2 == 1
            if unstable:
                j = int(rng.integers(len(roots)))
                r = roots[j]
                roots = [complex(-x.real, x.imag) if x in (r, r.conjugate()) else x for x in roots]
            c = np.real(np.poly(roots)) * rng.uniform(0.5, 2.0) * (1 if rng.random() < 0.5 else -1)
            assert np.all(np.roots(c).real < 0) != unstable
            dens.append(c)
            want.append(not unstable)
        assert_array_equal(hurwitz_stable(np.array(dens)), np.array(want))


# -- worst case --------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "topology_id, changes, gbw",
    [("rlc-tank", {}, None), ("rlc-tank", {"RL": 20.0}, 1e6), ("mfb", {}, None), ("mfb", {}, 1e6), ("sallen-key", {}, None)],
)
def test_worst_case_bounds_every_uniform_trial(topology_id, changes, gbw):
    # Holds when every figure is monotone in each part over the tolerance box (so its extremes sit
    # on corners) and the box stays clear of the oscillation limit: exactly so for the ideal tank,
    # whose f0, Q and gain are products of powers of the part values (parallel resonance,
    # any circuit-theory text), and checked here for the other examples. A part that enters through a ratio
    # with an interior optimum (the MFB's Q peaks at C1 = C2) can break it when the two
    # tolerances differ; the normal distribution is not bounded at all.
    nl = example(topology_id, **changes)
    op = IDEAL if gbw is None else OpAmpModel(gbw)
    s = SpreadSettings(trials=20_000, seed=12, gbw_tol=0.2 if gbw else 0.0)
    sp = run_spread(nl, s, opamp=op)
    wc = sp.worst
    assert wc.method == "all corners" and wc.unstable_corners == 0
    n_vary = len([p for p in sp.tolerances.values() if p > 0]) + (1 if gbw else 0)
    assert wc.corner_count == 2**n_vary
    slack = 1e-12
    for name in ("f0_hz", "q", "gain_center_db"):
        lo, hi = getattr(wc, name)
        y = getattr(sp, name)
        assert np.all(y >= lo - slack * abs(lo)) and np.all(y <= hi + slack * abs(hi)), name
        clo, chi = wc.corners[name]
        assert set(clo) == set(chi) and len(clo) == n_vary
    # The tank's f0 = 1/(2π√(LC)) is lowest with L and C both high (parallel resonance).
    if topology_id == "rlc-tank" and gbw is None:
        lo_corner = wc.corners["f0_hz"][0]
        assert lo_corner["L"] == pytest.approx(0.10) and lo_corner["C"] == pytest.approx(0.05)
        v = nl.values()
        assert_allclose(wc.f0_hz[0], 1 / (2 * math.pi * math.sqrt(v["L"] * 1.10 * v["C"] * 1.05)), rtol=1e-12)


def test_sensitivity_corners_beyond_twelve_parts(monkeypatch):
    # With more varying quantities than MAX_CORNER_PARTS the worst case uses the corners the
    # sensitivities point to; the ideal tank's figures are monomials (parallel resonance), so those
    # corners are the true extremes and agree with the full enumeration.
    import bandsmith.spread.worst as worst

    nl = example("rlc-tank", RL=20.0)
    full = worst_case(nl, SpreadSettings())
    monkeypatch.setattr(worst, "MAX_CORNER_PARTS", 2)
    quick = worst_case(nl, SpreadSettings())
    assert quick.method == "sensitivity corners" and quick.corner_count == 6
    assert full.method == "all corners" and full.corner_count == 32
    for name in ("f0_hz", "q", "gain_center_db"):
        assert_allclose(getattr(quick, name), getattr(full, name), rtol=1e-9)


def test_nothing_varies():
    sp = run_spread(example("mfb"), SpreadSettings(tolerances={"R": 0, "C": 0}, trials=100))
    assert sp.worst.method == "nominal"
    assert sp.yield_fraction == 1.0
    assert_allclose(sp.f0_hz, sp.nominal.f0_hz[0], rtol=1e-12)


# -- progress, cancel, envelope, JSON -----------------------------------------------------------


def test_progress_and_cancel():
    seen = []
    run_spread(example("mfb"), SpreadSettings(trials=45_000), progress=lambda done, total: seen.append((done, total)))
    assert seen == [(20_000, 45_000), (40_000, 45_000), (45_000, 45_000)]
    calls = []

    def cancel():
        calls.append(1)
        return len(calls) > 1

    with pytest.raises(SpreadCancelled):
        run_spread(example("mfb"), SpreadSettings(trials=45_000), cancel=cancel)
    assert len(calls) == 2


def test_envelope_orders_percentiles():
    nl = example("mfb")
    s = SpreadSettings(trials=5000, seed=3)
    f = np.geomspace(500, 8000, 200)
    env = magnitude_envelope(nl, s, f, trials=1500)
    assert env.magnitude_db.shape == (3, 200) and env.trials == 1500
    assert np.all(env.magnitude_db[0] <= env.magnitude_db[1] + 1e-12)
    assert np.all(env.magnitude_db[1] <= env.magnitude_db[2] + 1e-12)
    nominal = 20 * np.log10(np.abs(transfer_function(nl).at_f(f)[0]))
    assert np.all(nominal >= env.magnitude_db[0] - 1e-9) and np.all(nominal <= env.magnitude_db[2] + 1e-9)


def test_json_has_the_contract_keys():
    sp = run_spread(example("mfb"), SpreadSettings(trials=1000, gbw_tol=0.1), opamp=OpAmpModel(3e6))
    obj = sp.to_json()
    for key in ("trials", "seed", "dist", "tolerances", "nominal", "f0_hz", "q", "gain_center_db", "window", "yield", "worst_case"):
        assert key in obj
    for key in ("f0_hz", "q", "gain_center_db"):
        assert tuple(obj[key]) == STAT_KEYS
        assert len(obj["worst_case"][key]) == 2
    assert set(obj["window"]) == {"f0", "q", "gain_db"}
    assert set(obj["worst_case"]["corners"]) == {"f0_hz", "q", "gain_center_db"}
    assert obj["worst_case"]["corners"]["f0_hz"][0]["gbw"] in (-0.1, 0.1)
    assert set(obj["nominal"]) == {"f0_hz", "q", "bw_hz", "f_low_hz", "f_high_hz", "gain_center", "gain_center_db", "phase_center_deg"}


def test_settings_survive_a_session_round_trip():
    # The window keeps both settings under the session's extras (bandsmith.files.session keeps them verbatim).
    from bandsmith.analysis.noise import NoiseSettings
    from bandsmith.files.session import CandidateEntry, Session, Target, dumps_session, loads_session

    spread = SpreadSettings(tolerances={"C2": 0.02}, dist="normal", trials=25_000, seed=3, gbw_tol=0.1)
    noise = NoiseSettings(en_v_per_rthz=3e-9, band_hz=(200.0, 20e3))
    s = Session(
        target=Target(f0_hz=2e3, q=5.0, gain=4.0),
        candidates=(CandidateEntry("mfb", "mfb", get_topology("mfb").example),),
        extras={"spread": spread.to_json(), "noise": noise.to_json()},
    )
    back = loads_session(dumps_session(s))
    assert SpreadSettings.from_json(back.extras["spread"]) == spread
    assert NoiseSettings.from_json(back.extras["noise"]) == noise
