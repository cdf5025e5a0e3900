"""Real inductors (bandsmith.analysis.inductor): winding Q, the Q it costs the tank, and the design warning."""

import math

import numpy as np
import pytest
import scipy.signal
from numpy.testing import assert_allclose

from bandsmith.circuits import get_topology
from bandsmith.common.errors import InputError
from bandsmith.analysis.inductor import (
    ORDINARY_INDUCTOR_Q,
    inductor_q,
    inductor_q_needed,
    inductor_q_warning,
    q_with_winding,
    winding_effect,
)
from bandsmith.solver.mna import OpAmpModel


def tank(q_design, q_inductor, *, f0_hz=8e3, l_h=4.7e-3, gain=3.0):
    """Tank with lossless Q ``q_design`` (Q = R2/√(L/C), parallel resonance) and an inductor of Q ``q_inductor`` at f0."""
    c = 1 / ((2 * math.pi * f0_hz) ** 2 * l_h)
    r2 = q_design * math.sqrt(l_h / c)
    rl = 2 * math.pi * f0_hz * l_h / q_inductor
    v = {"R1": r2 / gain, "R2": r2, "L": l_h, "C": c, "RL": rl}
    return get_topology("rlc-tank").netlist(v), v


def test_inductor_q_definition():
    # Q of a series RL: X_L/R = 2π·f·L/RL (circuit-theory definition).
    assert_allclose(inductor_q(10e-3, 20.0, 10e3), 2 * math.pi * 10e3 * 10e-3 / 20.0, rtol=1e-15)
    assert inductor_q(1e-3, 0.0, 1e3) == math.inf
    for args, field in (((0.0, 1.0, 1e3), "L"), ((1e-3, -1.0, 1e3), "RL"), ((1e-3, 1.0, 0.0), "f")):
        with pytest.raises(InputError) as err:
            inductor_q(*args)
        assert err.value.field == field


def _q_by_freqs(v):
    """Q of the tank with winding resistance, read off scipy.signal.freqs on a dense grid.

    Derived: the feedback admittance is 1/R2 + sC + 1/(RL + sL), so
    H(s) = −(sL + RL) / (R1·[LC·s² + (L/R2 + RL·C)·s + 1 + RL/R2]).
    """
    b = [-v["L"] / v["R1"], -v["RL"] / v["R1"]]
    a = [v["L"] * v["C"], v["L"] / v["R2"] + v["RL"] * v["C"], 1 + v["RL"] / v["R2"]]
    w0 = 1 / math.sqrt(v["L"] * v["C"])
    w = np.geomspace(w0 / 3, w0 * 3, 400_001)
    _, h = scipy.signal.freqs(b, a, worN=w)
    mag = np.abs(h)
    k = int(np.argmax(mag))
    level = mag[k] / math.sqrt(2)
    above = np.flatnonzero(mag >= level)
    i, j = above[0], above[-1]  # crossings by linear interpolation between neighbouring points
    w_lo = w[i - 1] + (level - mag[i - 1]) * (w[i] - w[i - 1]) / (mag[i] - mag[i - 1])
    w_hi = w[j] + (level - mag[j]) * (w[j + 1] - w[j]) / (mag[j + 1] - mag[j])
    return w[k] / (w_hi - w_lo), w[k] / (2 * math.pi)


@pytest.mark.parametrize("q_design, q_inductor", [(10.0, 200.0), (10.0, 50.0), (30.0, 120.0), (2.0, 20.0)])
def test_winding_effect_measured(q_design, q_inductor):
    nl, v = tank(q_design, q_inductor)
    (eff,) = winding_effect(nl)
    assert eff.ref == "L" and eff.series_ref == "RL" and eff.rl_ohm == v["RL"]
    # Lossless figures: the textbook Q = R2·√(C/L) (parallel resonance, any circuit-theory text).
    assert_allclose(eff.q_lossless, q_design, rtol=1e-9)
    # With the winding: scipy.signal.freqs on a grid of 5.5e-6 relative steps, the −3 dB crossings
    # interpolated linearly; the peak's grid position limits f0 to half a step.
    q_ref, f0_ref = _q_by_freqs(v)
    assert_allclose(eff.q, q_ref, rtol=1e-5)
    assert_allclose(eff.f0_hz, f0_ref, rtol=3e-6)  # half a grid step
    assert_allclose(eff.inductor_q, 2 * math.pi * eff.f0_hz * v["L"] / v["RL"], rtol=1e-12)
    # The first-order relation 1/Q ≈ 1/Q_d + 1/Q_L (module notes) holds to a few 1/Q_L.
    assert_allclose(eff.q, q_with_winding(q_design, q_inductor), rtol=3.0 / q_inductor)
    assert 0 < eff.q_drop < 1
    assert eff.to_json()["q_drop_pct"] == pytest.approx(100 * eff.q_drop)


def test_winding_effect_with_finite_opamp_and_no_winding():
    nl, _ = tank(10.0, 100.0)
    (eff,) = winding_effect(nl, opamp=OpAmpModel(10e6))
    assert eff.q < eff.q_lossless
    lossless = get_topology("rlc-tank").netlist(dict(get_topology("rlc-tank").example))
    (none,) = winding_effect(lossless)
    assert none.inductor_q == math.inf and none.to_json()["inductor_q"] is None
    assert_allclose(none.q, none.q_lossless, rtol=1e-12)
    assert winding_effect(get_topology("mfb").netlist(get_topology("mfb").example)) == ()


def test_q_needed_keeps_the_loss():
    # Q_L = Q·(1 − x)/x keeps the first-order drop to x; measured on a tank it is close to x.
    q_l = inductor_q_needed(12.0, max_q_loss=0.05)
    assert_allclose(q_l, 12.0 * 19.0, rtol=1e-15)
    nl, _ = tank(12.0, q_l)
    (eff,) = winding_effect(nl)
    assert_allclose(eff.q_drop, 0.05, rtol=0.02)
    with pytest.raises(InputError):
        inductor_q_needed(0.0)
    with pytest.raises(InputError):
        inductor_q_needed(10.0, max_q_loss=1.5)


def test_warning_beyond_ordinary_parts():
    # The 200 limit is common practice, no source (see bandsmith.analysis.inductor).
    assert ORDINARY_INDUCTOR_Q == 200.0
    assert inductor_q_warning(150.0) is None
    assert inductor_q_warning(200.0) is None
    text = inductor_q_warning(250.0)
    assert text and "250" in text and "200" in text
    assert inductor_q_warning(math.inf)
    assert inductor_q_warning(80.0, limit=50.0)
