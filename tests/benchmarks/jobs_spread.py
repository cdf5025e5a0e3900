"""Benchmark jobs of the tolerance spread, timed by run.py (not collected by pytest).

Each function runs its job once for one circuit, as ``bandsmith tolerance --json`` does (trials,
statistics, yield and the worst case over every corner). Scenario (our own): each circuit's worked
example (the tank with a winding resistance), default tolerances (R 1 %, C 5 %).

- ``mc_ideal_100k``: 100 000 trials with an ideal op-amp;
- ``mc_finite_10k``: 10 000 trials with a 1 MHz single-pole op-amp whose GBW spreads ±20 %;
- ``mc_finite_1m``: the same with a million trials.
"""

from __future__ import annotations

from jobs_analysis import example_values


def _netlist(circuit: str):
    from bandsmith.circuits import get_topology

    return get_topology(circuit).netlist(example_values(circuit))


def mc_ideal_100k(circuit: str = "mfb"):
    from bandsmith.spread.tolerance import SpreadSettings, run_spread

    return run_spread(_netlist(circuit), SpreadSettings(trials=100_000, seed=7)).to_json()


def _finite(circuit: str, trials: int):
    from bandsmith.solver.mna import OpAmpModel
    from bandsmith.spread.tolerance import SpreadSettings, run_spread

    settings = SpreadSettings(trials=trials, seed=7, gbw_tol=0.2)
    return run_spread(_netlist(circuit), settings, opamp=OpAmpModel(1e6, 1e5)).to_json()


def mc_finite_10k(circuit: str = "mfb"):
    return _finite(circuit, 10_000)


def mc_finite_1m(circuit: str = "mfb"):
    return _finite(circuit, 1_000_000)
