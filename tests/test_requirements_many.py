"""Amplifier needs of several analyses worked out together (analyzer.requirements_many, what a
compare's judging asks first) against each analysis's own, worked out alone.

These are consistency checks of the batch (no outside source: the lone path they are held to is
itself checked against derived closed forms and a 50-digit solve in test_requirements.py and
test_speed_paths.py). Every number must be the same float, bit for bit.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from bandsmith.analysis.analyzer import analyze_many, requirements, requirements_many
from bandsmith.analysis.timeresponse import max_step_slope
from bandsmith.circuits import all_topologies


def _netlists(seed: int):
    rng = np.random.default_rng(seed)
    out = []
    for topo in all_topologies():
        values = {k: v * 10 ** rng.uniform(-0.3, 0.3) if v else v for k, v in topo.example.items()}
        out.append(topo.build(topo.values_from(values)))
    return out


def _same(a, b) -> bool:
    """Two floats (or None) equal as floats, NaN equal to NaN."""
    if a is None or b is None:
        return a is b
    return a == b or (math.isnan(a) and math.isnan(b))


def _assert_same(x, y):
    for f in dataclasses.fields(x):
        u, v = getattr(x, f.name), getattr(y, f.name)
        if f.name == "amplifiers":
            assert len(u) == len(v)
            for p, q in zip(u, v):
                for g in dataclasses.fields(p):
                    pu, qv = getattr(p, g.name), getattr(q, g.name)
                    assert pu == qv if isinstance(pu, str) else _same(pu, qv), (g.name, pu, qv)
        elif isinstance(u, float) or u is None:
            assert _same(u, v), (f.name, u, v)
        else:
            assert u == v, (f.name, u, v)


@pytest.mark.parametrize("seed, rload", [(1, None), (2, None), (3, 2.2e3), (4, 470.0)])
def test_requirements_many_is_each_alone(seed, rload):
    """requirements_many over every circuit at once gives each analysis the requirements that
    requirements() gives it alone (its output current by solve_at), bit for bit; with a load
    resistor too."""
    netlists = _netlists(seed)
    together = analyze_many(netlists, vin_v=0.7, rload_ohm=rload)
    got = requirements_many(together)
    for a, req in zip(together, got):
        assert a.requirements is req
        d = a.drive
        alone = requirements(a.netlist, a.ideal, max_step_slope(a.h_ideal), vin_v=d.vin_v, a0=d.a0, rload_ohm=d.rload_ohm,
                             tolerances=d.tolerances, gbw_search=a.required_gbw, h_ideal=a.h_ideal)
        _assert_same(req, alone)


def test_requirements_many_keeps_requirements_already_there():
    """An analysis whose requirements were set (a load's current, with_requirements) keeps them."""
    a, b = analyze_many(_netlists(5)[:2])
    set_req = dataclasses.replace(b.requirements, iout_peak_a=1.0)
    b2 = b.with_requirements(set_req)
    got = requirements_many([a, b2])
    assert got[1] is set_req and got[0] is a.requirements
