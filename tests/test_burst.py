"""Tone bursts against scipy.signal.lsim and the biquad's closed-form envelope time constant."""

import json
import math
import subprocess
import sys

import numpy as np
import pytest
import scipy.signal

from bandsmith import api
from bandsmith.analysis.burst import Zpk, burst_response
from bandsmith.common.errors import InputError


def _biquad(f0, q, gain=1.0):
    # H(s) = gain·(ω0/Q)s / (s² + (ω0/Q)s + ω0²): the second-order band-pass (any filter text)
    w0 = 2 * math.pi * f0
    b, a = [gain * w0 / q, 0.0], [1.0, w0 / q, w0 * w0]
    z, p, k = scipy.signal.tf2zpk(b, a)
    return b, a, Zpk(z, p, k)


def _lsim(b, a, res):
    u = np.where(res.t_s < res.duration_s, np.sin(2 * math.pi * res.freq_hz * res.t_s), 0.0)
    return scipy.signal.lsim((b, a), u, res.t_s)[1]


@pytest.mark.parametrize("q", [2, 3.3, 5, 10, 20, 50, 100])
def test_envelope_tau_is_q_over_pi_f0(q):
    # Derived: the poles of the biquad are −ω0/(2Q) ± jω_d, so its free ring decays as
    # e^(−t·ω0/(2Q)): τ = 2Q/ω0 = Q/(π·f0) = 1/(π·BW).
    f0 = 1e3
    b, a, z = _biquad(f0, q)
    res = burst_response(z, f0, 3 * q / (math.pi * f0) * 8)
    assert res.envelope_tau_s == pytest.approx(q / (math.pi * f0), rel=0.01)


@pytest.mark.parametrize("q,cycles,f", [(2, 5, 1e3), (10, 30, 1e3), (10, 12, 1.07e3), (50, 200, 1e3)])
def test_waveform_matches_lsim(q, cycles, f):
    # scipy.signal.lsim of the same transfer function and the same sampled input
    b, a, z = _biquad(1e3, q)
    res = burst_response(z, f, cycles / f)
    ref = _lsim(b, a, res)
    assert np.max(np.abs(res.y - ref)) < 2e-3 * max(np.max(np.abs(ref)), 1e-12)


def test_envelope_bounds_the_lsim_output_and_meets_its_peaks():
    # the envelope lies on or above |y| (y is its imaginary part) and meets y's peaks in steady state
    b, a, z = _biquad(1e3, 10)
    res = burst_response(z, 1e3, 40e-3)
    ref = _lsim(b, a, res)
    assert np.all(np.abs(ref) <= res.envelope * (1 + 2e-3) + 1e-6)
    late = (res.t_s > 30e-3) & (res.t_s < 40e-3)
    assert np.max(np.abs(ref[late])) == pytest.approx(res.steady_amplitude, rel=2e-3)


def test_ringdown_and_settling_against_lsim():
    b, a, z = _biquad(1e3, 10)
    res = burst_response(z, 1e3, 50e-3)
    ref = _lsim(b, a, res)
    period = 1e-3
    after = res.t_s >= res.duration_s
    above = np.flatnonzero(np.abs(ref[after]) > 0.01 * res.steady_amplitude)
    last_peak = res.t_s[after][above[-1]] - res.duration_s
    assert abs(res.ringdown_time_s - last_peak) < period  # the peaks of y sample the envelope once a half-cycle
    # closed form at resonance: envelope ≈ A(1 − e^(−t/τ)), within 1 % after τ·ln(100) (derived)
    tau = 10 / (math.pi * 1e3)
    assert res.settle_time_s == pytest.approx(tau * math.log(100), rel=0.05)
    assert res.ringdown_time_s == pytest.approx(tau * math.log(100), rel=0.05)


def test_candidate_burst_equals_its_own_transfer_function():
    mfb = ["R1=16k", "R2=1.1k", "R3=150k", "C1=2.4n", "C2=2.2n"]
    rep = api.burst("mfb", mfb, freq_hz="12k", cycles=50)
    h = api.analyze("mfb", mfb)
    fig = h.to_json()["ideal"]
    assert rep.to_json()["envelope_tau_s"] == pytest.approx(fig["q"] / (math.pi * fig["f0_hz"]), rel=0.01)
    assert rep.to_json()["steady_amplitude"] == pytest.approx(abs(h.analysis.h_ideal.at_f(np.array([12e3]))[0, 0]), rel=1e-9)


def test_chain_burst_against_lsim():
    rep = api.cascade(response="butterworth", order=3, f0_hz=1e3, bw_hz=200, series="exact")
    out = api.burst_cascade(rep, freq_hz=1e3, cycles=40)
    z, p, k = [], [], 1.0
    for st in rep.result.stages:
        b, a = st.h_ideal.to_s(0)
        zz, pp, kk = scipy.signal.tf2zpk(b, a)
        z += list(zz); p += list(pp); k *= kk
    res = out.result
    u = np.where(res.t_s < res.duration_s, np.sin(2 * math.pi * 1e3 * res.t_s), 0.0)
    ref = scipy.signal.lsim(scipy.signal.ZerosPolesGain(z, p, k), u, res.t_s)[1]
    assert np.max(np.abs(res.y - ref)) < 3e-3


def test_bad_input():
    _, _, z = _biquad(1e3, 5)
    with pytest.raises(InputError):
        burst_response(z, -1.0, 1e-3)
    with pytest.raises(InputError) as e:
        api.burst("mfb", ["R1=16k", "R2=1.1k", "R3=150k", "C1=2.4n", "C2=2.2n"], freq_hz="1k")
    assert e.value.field == "cycles"


def test_cli_keys():
    p = subprocess.run([sys.executable, "-m", "bandsmith.app.cli", "burst", "mfb", "R1=16k", "R2=1.1k", "R3=150k", "C1=2.4n",
                        "C2=2.2n", "--freq", "12k", "--cycles", "30", "--within", "2%", "--json"], capture_output=True, text=True)
    assert p.returncode == 0, p.stderr
    out = json.loads(p.stdout)
    for key in ("envelope_tau_s", "settle_time_s", "ringdown_time_s", "waveform"):
        assert key in out
    assert len(out["waveform"]["t_s"]) == len(out["waveform"]["y"]) == len(out["waveform"]["envelope"]) <= 4000
    assert out["within"] == pytest.approx(0.02)


def test_cli_chain_burst_from_a_session(tmp_path):
    rep = api.cascade(response="butterworth", order=3, f0_hz=1e3, bw_hz=200, series="exact")
    path = tmp_path / "c.bandsmith.json"
    api.save_session(rep.to_session(), path)
    p = subprocess.run([sys.executable, "-m", "bandsmith.app.cli", "burst", "--session", str(path), "--chain", "chain-1",
                        "--freq", "1k", "--cycles", "40", "--json"], capture_output=True, text=True)
    assert p.returncode == 0, p.stderr
    out = json.loads(p.stdout)
    want = api.burst_cascade(rep, freq_hz=1e3, cycles=40).to_json()
    assert out["topology"] == "chain"
    assert out["envelope_tau_s"] == pytest.approx(want["envelope_tau_s"], rel=1e-9)
    assert out["ringdown_time_s"] == pytest.approx(want["ringdown_time_s"], rel=1e-9)
