"""Part physics: the inductor's self-resonance, dielectric advice, temperature drift.

Checks: the self-resonance against a sympy solve of Im Z = 0 for the same model (L with its winding
resistance in series, Cp across both) and against a brute-force scan of |Z| with numpy; X7R's
±15 % (EIA-198 code X7R) applied to the MFB's textbook f0 (S. Franco, *Design with Operational
Amplifiers and Analog Integrated Circuits*, 3rd ed., ch. 3); drift by the same formula with
each part's value x·(1 + α·ΔT).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
import sympy as sp

from bandsmith import api
from bandsmith.app.cli import main as cli_main
from bandsmith.board.physics import capacitor_advice, inductor_resonance, self_resonance_hz, temperature_drift

MFB = {"R1": 10e3, "R2": 866.0, "R3": 82e3, "C1": 10e-9, "C2": 10e-9}
TANK = {"R1": 3.3e3, "R2": 6.8e3, "L": 10e-3, "C": 22e-9, "RL": 5.0}


def _mfb_f0(r1, r2, r3, c1, c2):
    return math.sqrt((1 / r1 + 1 / r2) / (r3 * c1 * c2)) / (2 * math.pi)


def test_self_resonance_matches_a_sympy_solve_of_the_same_model():
    l, r, cp = 10e-3, 5.0, 200e-12
    w = sp.symbols("w", positive=True)
    z = (r + sp.I * w * l) / (1 - w**2 * l * cp + sp.I * w * r * cp)
    roots = sp.solve(sp.Eq(sp.im(sp.simplify(z)), 0), w)
    w_srf = max(float(x) for x in roots)
    assert self_resonance_hz(l, cp, r) == pytest.approx(w_srf / (2 * math.pi), rel=1e-9)
    # and the |Z| peak of a dense numpy scan sits there (high-Q coil: peak ≈ zero-phase point)
    f = np.linspace(0.9, 1.1, 200001) * w_srf / (2 * math.pi)
    s = 2j * np.pi * f
    zz = (r + s * l) / (1 + s * cp * (r + s * l))
    assert f[np.argmax(np.abs(zz))] == pytest.approx(w_srf / (2 * math.pi), rel=1e-5)


def test_warning_when_the_self_resonance_is_within_a_decade_of_f0():
    net = api.candidate_of("rlc-tank", TANK).netlist
    f0 = float(api.analyze("rlc-tank", TANK).to_json()["ideal"]["f0_hz"])
    near = 1 / ((2 * math.pi * 5 * f0) ** 2 * TANK["L"])  # Cp putting the SRF at 5·f0
    far = 1 / ((2 * math.pi * 30 * f0) ** 2 * TANK["L"])  # at 30·f0
    (n,) = inductor_resonance(net, near)
    (fr,) = inductor_resonance(net, far)
    assert n.warning is not None and "within a decade" in n.warning
    assert n.ratio == pytest.approx(5.0, rel=1e-3)
    assert fr.warning is None
    # the parallel capacitance adds to the tank's C: f0 falls by √(C/(C + Cp)) to first order
    assert n.change["f0_pct"] == pytest.approx(100 * (math.sqrt(TANK["C"] / (TANK["C"] + near)) - 1), abs=0.05)


def test_capacitor_advice_names_the_parts_that_set_f0_and_the_x7r_spread():
    net = api.candidate_of("mfb", MFB).netlist
    advice = {a.ref: a for a in capacitor_advice(net)}
    for ref in ("C1", "C2"):
        assert "f0" in advice[ref].sets and advice[ref].dielectric.startswith("C0G/NP0")
    lo = _mfb_f0(MFB["R1"], MFB["R2"], MFB["R3"], MFB["C1"] * 0.85, MFB["C2"])
    nominal = _mfb_f0(*MFB.values())
    assert advice["C1"].spread_low["f0_pct"] == pytest.approx(100 * (lo / nominal - 1), rel=1e-6)
    # split supply: no DC across the capacitors, so no DC-bias shift
    assert advice["C1"].shift["f0_pct"] == 0.0


def test_temperature_drift_follows_the_formula():
    net = api.candidate_of("mfb", MFB).netlist
    d = temperature_drift(net, -20.0, 70.0, {"R": 100e-6, "C": -750e-6})
    k_r, k_c = 1 + 100e-6 * 45, 1 - 750e-6 * 45  # at 70 °C, 45 K above 25 °C
    hot = _mfb_f0(*(MFB[k] * (k_r if k.startswith("R") else k_c) for k in ("R1", "R2", "R3", "C1", "C2")))
    assert d.high["f0_pct"] == pytest.approx(100 * (hot / _mfb_f0(*MFB.values()) - 1), rel=1e-6)


def test_bias_command_carries_the_physics(capsys):
    code = cli_main(["bias", "rlc-tank", "R1=3k3", "R2=6k8", "L=10m", "C=22n", "RL=5", "--supply", "5",
                     "--cp", "2n", "--temp-range", "-20", "70", "--json"])
    out = json.loads(capsys.readouterr().out)
    assert code == 0
    ph = out["physics"]
    assert ph["inductors"][0]["warning"] and ph["warnings"]
    assert ph["drift"]["t_low_c"] == -20 and ph["drift"]["t_high_c"] == 70
    # coupling capacitors see half the supply: an X7R's loss raises the corner by 1/(1 − 0.3·2.5/50)
    cin = ph["coupling_if_x7r"][0]
    assert cin["corner_hz_x7r_biased"] == pytest.approx(cin["corner_hz"] / (1 - 0.3 * 2.5 / 50), rel=1e-9)


def test_core_tolerance_moves_f0_as_one_over_root_l():
    # the tank's f0 = 1/(2π√(LC)): L at −10 % and +10 % moves f0 by 1/√0.9 − 1 and 1/√1.1 − 1
    net = api.candidate_of("rlc-tank", dict(TANK, RL=0.0)).netlist
    (i,) = inductor_resonance(net, None, core_tolerance=0.10)
    assert i.srf_hz is None and i.warning is None
    assert i.core_low["f0_pct"] == pytest.approx(100 * (1 / math.sqrt(0.9) - 1), rel=1e-6)
    assert i.core_high["f0_pct"] == pytest.approx(100 * (1 / math.sqrt(1.1) - 1), rel=1e-6)
