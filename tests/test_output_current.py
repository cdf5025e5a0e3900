"""The op-amp output current with a load: a resistor, a divider, the next stage of a chain."""

import itertools
import math

import pytest
from numpy.testing import assert_allclose

from bandsmith.analysis.analyzer import opamp_output_current
from bandsmith.design.candidate import Conditions
from bandsmith.chain.cascade import ChainSettings, design_cascade
from bandsmith.circuits import all_topologies
from bandsmith.solver.mna import solve_at
from bandsmith.solver.netlist import Element, Netlist

TOPOLOGIES = all_topologies()


@pytest.mark.parametrize("topo", TOPOLOGIES, ids=lambda t: t.id)
def test_a_divider_draws_what_its_resistance_draws(topo):
    # Ohm's law (derived): a divider Ra + Rb to ground has an input resistance Ra + Rb.
    nl = topo.build(topo.example)
    divider = Netlist((Element("RA", "R", ("in", "out"), 3.3e3), Element("RB", "R", ("out", "0"), 6.8e3)))
    for f in (300.0, 2e3, 15e3):
        assert_allclose(opamp_output_current(nl, f, load=divider), opamp_output_current(nl, f, rload_ohm=10.1e3), rtol=1e-12)


@pytest.mark.parametrize("pair", list(itertools.product(TOPOLOGIES, repeat=2)), ids=lambda p: f"{p[0].id}>{p[1].id}")
def test_next_stage_current_adds_as_kcl_says(pair):
    # Derived (KCL at the output, ideal op-amp): the output voltage does not depend on the load,
    # so the op-amp delivers its own circuit's current plus V_out·Y_in of the next stage, with
    # Y_in the next stage's input current per volt (minus the source current of the MNA vector).
    first, second = (t.build(t.example) for t in pair)
    for f in (500.0, 4e3):
        s = 2j * math.pi * f
        x1, lay1 = solve_at(first, s)
        x2, lay2 = solve_at(second, s)
        v_out = x1[lay1.node_index[first.output]]
        # the amplifier driving the output takes the load; the others' currents do not change
        # (ideal op-amps hold every node voltage); the figure is the largest of them
        driver = next(e.ref for e in first.opamps if e.nodes[2] == first.output)
        own = x1[lay1.opamp_row[driver]]
        others = [abs(x1[lay1.opamp_row[e.ref]]) for e in first.opamps if e.ref != driver]
        want = max([abs(own + v_out * x2[lay2.source_row])] + others)
        assert_allclose(opamp_output_current(first, f, load=second), want, rtol=1e-9)


def test_each_inner_stage_of_a_chain_drives_the_next():
    s = ChainSettings.from_request("butterworth", 3, f0_hz=8e3, bw_hz=2e3, gain=2.0, series="E24")
    cond = Conditions(vin_v=0.4, rload_ohm=2e3)
    r = design_cascade(s, conditions=cond)
    assert r.feasible, r.reason
    for st, nxt in zip(r.stages[:-1], r.stages[1:]):
        an = st.result.analysis
        want = opamp_output_current(an.netlist, an.ideal.item().f0_hz, load=nxt.result.analysis.netlist) * st.vin_v
        assert_allclose(an.requirements.iout_peak_ma, want * 1e3, rtol=1e-12)
    last = r.stages[-1].result.analysis
    want = opamp_output_current(last.netlist, last.ideal.item().f0_hz, rload_ohm=2e3) * r.stages[-1].vin_v
    assert_allclose(last.requirements.iout_peak_ma, want * 1e3, rtol=1e-12)


def test_the_currents_of_several_are_each_ones_alone():
    # opamp_output_currents stacks the solves of every case; each number is the one
    # opamp_output_current gives alone (bit for bit), with and without a next stage.
    from bandsmith.analysis.analyzer import opamp_output_currents

    cases = [(a.build(a.example), f, b.build(b.example) if b is not None else None)
             for (a, b), f in zip(itertools.product(TOPOLOGIES, list(TOPOLOGIES) + [None]), itertools.cycle((250.0, 3e3, 47e3)))]
    got = opamp_output_currents(cases)
    assert got == [opamp_output_current(nl, f, load=load) for nl, f, load in cases]
