"""Benchmark job of the cascade feature, timed by run.py (not collected by pytest).

``cascade_order8``: one order-8 Butterworth band-pass (eight stages) designed with E24 parts,
circuits chosen automatically, with a finite op-amp: every stage designed on every circuit, the
chain measured as a whole and against the reference. Scenario (our own): a 40 kHz ultrasonic
receiver's channel filter, 16 kHz wide, gain 10 at the centre.
"""

from __future__ import annotations


def cascade_order8():
    from bandsmith.design.candidate import Conditions
    from bandsmith.chain.cascade import ChainSettings, design_cascade

    settings = ChainSettings.from_request("butterworth", 8, f0_hz=40e3, bw_hz=16e3, gain=10.0, series="E24")
    result = design_cascade(settings, conditions=Conditions(gbw_hz=20e6))
    assert result.feasible, result.reason
    return result
