"""Benchmark jobs of the tolerance spread, timed by run.py (not collected by pytest).

Each function runs its job once, as ``bandsmith tolerance --json`` does (trials, statistics, yield
and the worst case over every corner). Scenario (our own): the multiple-feedback 2 kHz alarm-tone
detector of the circuit's example, default tolerances (R 1 %, C 5 %).

- ``mc_ideal_100k``: 100 000 trials with an ideal op-amp;
- ``mc_finite_10k``: 10 000 trials with a 1 MHz single-pole op-amp whose GBW spreads ±20 %.
"""

from __future__ import annotations


def _netlist():
    from bandsmith.circuits import get_topology

    topo = get_topology("mfb")
    return topo.netlist(topo.example)


def mc_ideal_100k():
    from bandsmith.spread.tolerance import SpreadSettings, run_spread

    return run_spread(_netlist(), SpreadSettings(trials=100_000, seed=7)).to_json()


def mc_finite_10k():
    from bandsmith.solver.mna import OpAmpModel
    from bandsmith.spread.tolerance import SpreadSettings, run_spread

    return run_spread(_netlist(), SpreadSettings(trials=10_000, seed=7, gbw_tol=0.2), opamp=OpAmpModel(1e6, 1e5)).to_json()
