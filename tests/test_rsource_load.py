"""A converter's input as the load (R ∥ C from the output to ground): the output current at f0."""

import math

import pytest

from bandsmith import api

MFB = ["R1=16k", "R2=1.1k", "R3=150k", "C1=2.4n", "C2=2.2n"]


def _iout(**kw):
    return api.analyze("mfb", MFB, **kw).to_json()["requirements"]["iout_peak_ma"] * 1e-3


def test_capacitive_load_current_is_v_out_times_omega_c():
    # the load's own current is |V_out|·ω0·C (a capacitor's admittance jωC, any circuit text);
    # with the circuit's own current it adds as phasors, so the total lies within their sum and difference
    fig = api.analyze("mfb", MFB).to_json()["ideal"]
    own = _iout()
    for c in (1e-9, 10e-9, 1e-6):
        i_c = abs(fig["gain_center"]) * 2 * math.pi * fig["f0_hz"] * c
        total = _iout(cload_f=c)
        assert abs(i_c - own) - 1e-12 <= total <= i_c + own + 1e-12
    assert _iout(cload_f=1e-6) == pytest.approx(abs(fig["gain_center"]) * 2 * math.pi * fig["f0_hz"] * 1e-6, rel=0.02)


def test_response_is_unchanged_by_the_load():
    # an op-amp output (an ideal voltage source in the model) drives the load: the figures stay
    a, b = api.analyze("mfb", MFB).to_json(), api.analyze("mfb", MFB, rload_ohm=2e3, cload_f=47e-9).to_json()
    assert a["ideal"] == b["ideal"]


def test_resistive_and_capacitive_load_together():
    fig = api.analyze("mfb", MFB).to_json()["ideal"]
    r, c = 1e3, 10e-9
    y = math.hypot(1 / r, 2 * math.pi * fig["f0_hz"] * c)  # |1/R + jωC|
    i_load = abs(fig["gain_center"]) * y
    own = _iout()
    assert abs(i_load - own) <= _iout(rload_ohm=r, cload_f=c) <= i_load + own
