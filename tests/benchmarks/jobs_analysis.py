"""Benchmark jobs of one candidate's analysis and of a compare, timed by run.py (not collected by pytest).

- ``analyze_one(circuit)``: everything the window computes for one candidate of that circuit
  (the calls of ``bandsmith.app.document.results.analyse_entry``, made here from the core): the
  analysis with a finite op-amp (ideal and finite figures, required GBW, sensitivities), the
  finite-op-amp and the ideal sweep at 1001 points, the step response and the GBW error ladder.
  Each call analyses afresh (a new, equal candidate; no result cache in between).
- ``compare_e24()``: the API's compare of every circuit from one target with E24 parts, verdicts,
  ranking and yield estimates included (what ``bandsmith compare --json`` computes).

Scenarios are our own: each circuit's worked example at a 1 MHz op-amp; a 3.3 kHz tone channel,
Q 4, gain 3.
"""

from __future__ import annotations

import math

import numpy as np


def circuits() -> tuple[str, ...]:
    """Every circuit the registry knows (those added later too)."""
    from bandsmith.circuits import topology_ids

    return tuple(topology_ids())


def example_values(circuit: str) -> dict[str, float]:
    """The circuit's example; the tank with a winding resistance (its slowest, general path)."""
    from bandsmith.circuits import get_topology

    values = dict(get_topology(circuit).example)
    if "RL" in values and not values["RL"]:
        values["RL"] = 15.0
    return values


def analyze_one(circuit: str = "mfb"):
    from bandsmith.analysis.analyzer import sweep
    from bandsmith.analysis.gbw_sweep import gbw_error_sweep, gbw_ladder
    from bandsmith.analysis.timeresponse import step_response
    from bandsmith.design.candidate import Candidate, Conditions

    values = example_values(circuit)
    cond = Conditions(gbw_hz=1e6)
    f0 = Candidate(circuit, values).analyze(Conditions()).ideal.item().f0_hz
    f = np.geomspace(f0 / 100.0, f0 * 100.0, 1001)

    def job():
        an = Candidate(circuit, values).analyze(cond)
        h = an.h_actual if an.h_actual is not None else an.h_ideal
        sweep(h, f)
        sweep(an.h_ideal, f)
        step_response(h)
        ideal = an.ideal.item()
        req = an.requirements
        wanted = [g for g in (cond.gbw_hz, req.gbw_hz) if g is not None and math.isfinite(g)]
        ladder = gbw_ladder(ideal.f0_hz, lo_hz=min(wanted) / 3.0, hi_hz=max(wanted) * 3.0)
        gbw_error_sweep(an.netlist, an.ideal, ladder, a0=cond.a0, tolerances=cond.tolerances, family=an.family)
        h.poles(0)
        h.zeros(0)

    return job


def compare_e24():
    from bandsmith import api

    return lambda: api.compare(f0_hz=3.3e3, q=4.0, gain=3.0, series="E24").to_json()
