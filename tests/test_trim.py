"""The trim plan: the part chosen from the sensitivities, the trimmer's range, the correction, and a
Monte Carlo of the trimmed stage.

References: the MFB band-pass is tuned at constant bandwidth and gain by its shunt resistor to
ground (A. B. Williams and F. J. Taylor, *Electronic Filter Design Handbook*, 4th ed., 2006, the
band-pass chapter; from memory — and visible in the formulas below: R2 appears only in ω0); the MFB's ideal f0, Q and gain (S. Franco, *Design with Operational Amplifiers and Analog
Integrated Circuits*, 3rd ed., ch. 3), differentiated here with sympy; the variance of a uniform
draw on ±p is p²/3.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
import sympy as sp

from bandsmith import api
from bandsmith.app.cli import main as cli_main
from bandsmith.board.trim import TRIMMER_TOLERANCE, trimmed_trials

MFB = {"R1": 10e3, "R2": 866.0, "R3": 82e3, "C1": 10e-9, "C2": 10e-9}
R1, R2, R3, C1, C2 = sp.symbols("R1 R2 R3 C1 C2", positive=True)
W0 = sp.sqrt((1 / R1 + 1 / R2) / (R3 * C1 * C2))
FIG = {"f0": W0, "q": W0 * R3 * C1 * C2 / (C1 + C2), "gain": R3 * C1 / (R1 * (C1 + C2))}
FIG["bw"] = FIG["f0"] / FIG["q"]


def _s(figure: str, part: sp.Symbol) -> float:
    """S = ∂ln y/∂ln x at the example values (sympy)."""
    expr = sp.diff(sp.log(FIG[figure]), part) * part
    return float(expr.subs({sp.Symbol(k, positive=True): v for k, v in MFB.items()}))


def test_mfb_f0_trim_is_r2_leaving_gain_and_bandwidth_alone():
    plan = api.trim("mfb", MFB)
    assert plan.f0.part == "R2"
    assert plan.f0.sensitivity == pytest.approx(_s("f0", R2), abs=1e-6)
    assert _s("gain", R2) == 0 and abs(_s("bw", R2)) < 1e-12  # the reason it is the classic choice
    assert plan.f0.interaction < 1e-6
    assert plan.gain.part == "R1"  # gain ∝ 1/R1, f0 barely moves (S = −R2/(2(R1+R2)))
    assert plan.gain.interaction == pytest.approx(abs(_s("f0", R1)), rel=1e-5)
    assert plan.q.part == "R3"  # R2 already trims f0; R3 sets the bandwidth


def test_trim_range_covers_three_sigma_of_the_tolerance_spread():
    plan = api.trim("mfb", MFB, tolerances={"R": "1%", "C": "5%"})
    sym = {"R1": R1, "R2": R2, "R3": R3, "C1": C1, "C2": C2}
    tol = {"R1": 0.01, "R2": 0.01, "R3": 0.01, "C1": 0.05, "C2": 0.05}
    sigma = math.sqrt(sum((_s("f0", sym[k]) * p / math.sqrt(3)) ** 2 for k, p in tol.items()))
    assert plan.f0.spread_3sigma_pct == pytest.approx(300 * sigma, rel=1e-5)
    c = plan.f0
    assert c.range_pct >= c.spread_3sigma_pct
    # worst case: fixed at +1 %, trimmer at −10 %, both ends of the needed move reached
    r, s = c.nominal_ohm, abs(c.sensitivity)
    assert c.fixed_ohm * 1.01 <= r * (1 - 3 * sigma / s) * (1 + 1e-9)
    assert c.fixed_ohm * 0.99 + c.trimmer_ohm * (1 - TRIMMER_TOLERANCE) >= r * (1 + 3 * sigma / s)
    assert c.resolution_pct == pytest.approx(100 * s * 1e-3 * c.trimmer_ohm / r)


def test_correction_for_a_measured_f0_solves_the_textbook_formula():
    measured = 1930.0
    plan = api.trim("mfb", MFB, measured_f0_hz=measured)
    nominal = float(plan.nominal.f0_hz)
    # the built stage runs at measured/nominal of the model: aim the model at nominal²/measured
    goal = nominal**2 / measured
    r2 = sp.solve(sp.Eq(W0.subs({R1: MFB["R1"], R3: MFB["R3"], C1: MFB["C1"], C2: MFB["C2"]}), 2 * sp.pi * goal), R2)[0]
    assert plan.correction.part == "R2"
    assert plan.correction.new_value == pytest.approx(float(r2), rel=1e-7)
    assert plan.correction.in_range


def test_after_trimming_99_percent_of_trials_are_within_half_a_percent():
    plan = api.trim("mfb", MFB)
    net = api.candidate_of("mfb", MFB).netlist
    before, after = trimmed_trials(net, plan, trials=4000, seed=7)
    f0 = float(plan.nominal.f0_hz)
    inside = np.mean(np.abs(after / f0 - 1) <= 0.005)
    assert inside >= 0.99
    assert np.mean(np.abs(before / f0 - 1) <= 0.005) < 0.5  # the untrimmed stage mostly misses


def test_tank_f0_has_no_resistor_to_trim():
    plan = api.trim("rlc-tank", {"R1": 3.3e3, "R2": 6.8e3, "L": 10e-3, "C": 22e-9})
    assert plan.f0.part in ("L", "C") and math.isnan(plan.f0.trimmer_ohm)
    assert "adjustable" in plan.procedure[0]


def test_command_prints_the_contract_keys(capsys):
    code = cli_main(["trim", "mfb", "R1=10k", "R2=866", "R3=82k", "C1=10n", "C2=10n", "--measured-f0", "1.93k", "--json"])
    out = json.loads(capsys.readouterr().out)
    assert code == 0
    for fig in ("f0", "q", "gain"):
        assert {"part", "interaction", "trimmer_ohm", "fixed_ohm", "range_pct", "resolution_pct"} <= set(out[fig])
    assert out["correction"]["part"] == "R2" and out["correction"]["new_value"] < 866


def test_bad_measurement_exits_2(capsys):
    code = cli_main(["trim", "mfb", "R1=10k", "R2=866", "R3=82k", "C1=10n", "C2=10n", "--measured-f0", "-5"])
    assert code == 2 and "measured-f0" in capsys.readouterr().err


def test_correction_from_a_measured_sweep_through_the_fit(tmp_path):
    # the board: the MFB with C2 6 % high, its sweep from the textbook biquad (scipy.signal.freqs)
    from measured_helpers import sweep, write_layouts

    f, mag, ph = sweep("mfb", MFB, {"C2": 0.06})
    path = write_layouts(tmp_path, f, mag, ph)["csv_khz"]
    plan = api.trim("mfb", MFB, measured=str(path))
    c = plan.correction
    assert c.part == "R2"
    built = dict(MFB, C2=MFB["C2"] * 1.06)
    assert c.measured_f0_hz == pytest.approx(float(sp.N(W0.subs({sp.Symbol(k, positive=True): v for k, v in built.items()}))) / (2 * math.pi), rel=2e-3)
    # the built board with R2 set to the new value: back on the nominal f0 (Franco's formula)
    trimmed = dict(built, R2=c.new_value)
    f0 = float(sp.N(W0.subs({sp.Symbol(k, positive=True): v for k, v in trimmed.items()}))) / (2 * math.pi)
    assert f0 == pytest.approx(float(plan.nominal.f0_hz), rel=3e-3)


def test_command_reports_the_trimmed_monte_carlo(capsys):
    code = cli_main(["trim", "mfb", "R1=10k", "R2=866", "R3=82k", "C1=10n", "C2=10n", "--trials", "3000", "--json"])
    out = json.loads(capsys.readouterr().out)
    assert code == 0
    mc = out["monte_carlo"]
    assert mc["trials"] == 3000 and mc["window_pct"] == pytest.approx(0.5)
    assert mc["within_after"] >= 0.99 > mc["within_before"]


def test_temperature_as_a_spread_source_stays_within_the_formula_bounds():
    # capacitors only, ±300 ppm/K, all trials at 70 °C: f0 ∝ 1/√(C1·C2) (Franco), so each trial's f0
    # moves by at most the factor 1/(1 − 300e-6·45) either way and at 25 °C not at all
    from bandsmith.board.trim import over_temperature

    plan = api.trim("mfb", MFB)
    net = api.candidate_of("mfb", MFB).netlist
    _, after, values = trimmed_trials(net, plan, trials=2000, seed=3, keep_values=True)
    rng = np.random.default_rng(5)
    same = over_temperature(net, values, (25.0, 25.0), {"C": 300e-6}, rng)
    np.testing.assert_allclose(same, after, rtol=1e-9)
    hot = over_temperature(net, values, (70.0, 70.0), {"C": 300e-6}, rng)
    ratio = hot / after
    bound = 1 / (1 - 300e-6 * 45)
    assert np.all(ratio <= bound * (1 + 1e-9)) and np.all(ratio >= 1 / bound * (1 - 1e-9))
    assert np.max(np.abs(ratio - 1)) > 0.5 * (bound - 1)
