"""The coefficient expansion against the MNA solver it replaces (bandsmith.solver.rational, itself checked
against sympy's nodal derivations in test_circuits_sympy.py)."""

import numpy as np
import pytest

from bandsmith.circuits import all_topologies
from bandsmith.solver.expansion import unit_expansion
from bandsmith.solver.mna import OpAmpModel, build_system
from bandsmith.solver.rational import rational_from_system


def _ratios(netlist, exp, variables, rng, n):
    base = np.array([v.value / u.value for v, u in zip(variables, exp.variables)])
    return base * np.exp(rng.uniform(-0.3, 0.3, (n, base.size)))


@pytest.mark.parametrize("topo", all_topologies(), ids=lambda t: t.id)
def test_rational_matches_the_solver(topo):
    netlist = topo.build(topo.example)
    exp, variables = unit_expansion(netlist)
    rng = np.random.default_rng(7)
    ratios = _ratios(netlist, exp, variables, rng, 6)
    w_ref = 2 * np.pi * 1e3
    mine = exp.rational(ratios, w_ref=w_ref)
    over = {v.name: ratios[:, j] * u.value for j, (v, u) in enumerate(zip(variables, exp.variables))}
    ref = rational_from_system(build_system(netlist, overrides=over), w_ref)
    s = 2j * np.pi * np.geomspace(100.0, 1e4, 7)
    np.testing.assert_allclose(mine.at_s(s), ref.at_s(s), rtol=1e-9)


@pytest.mark.parametrize("topo", all_topologies(), ids=lambda t: t.id)
def test_dense_with_an_absent_opamp_pole_is_the_ideal_circuit(topo):
    amp = OpAmpModel(gbw_hz=1e6, a0=1e5)
    netlist = topo.build(topo.example)
    exp, variables = unit_expansion(netlist, amp)
    ratios = np.array([[v.value / u.value for v, u in zip(variables, exp.variables)]] * 2)
    absent = np.zeros(ratios.shape, dtype=bool)
    absent[0, [exp.names.index("gbw"), exp.names.index("a0")]] = True
    num, den = exp.dense(ratios, absent=absent)
    ideal = rational_from_system(build_system(netlist), exp.w_ref)
    finite = rational_from_system(build_system(netlist, amp), exp.w_ref)
    p = 1j * np.geomspace(0.1, 10.0, 5)
    got = np.polyval(num[0], p) / np.polyval(den[0], p)
    np.testing.assert_allclose(got, ideal.at_s(p * exp.w_ref)[0], rtol=1e-9)
    got = np.polyval(num[1], p) / np.polyval(den[1], p)
    np.testing.assert_allclose(got, finite.at_s(p * exp.w_ref)[0], rtol=1e-9)


@pytest.mark.parametrize("topo", all_topologies(), ids=lambda t: t.id)
def test_a_large_batch_with_absent_stamps_agrees_with_the_solver(topo):
    # Above SMALL_BATCH members the coefficients come from loops over the monomials (not the
    # products of small batches): the ideal members (op-amp stamps absent) equal the solver's
    # ideal circuit and the finite ones the single-pole op-amp's (MNA solve, rational_from_system).
    from bandsmith.solver.expansion import SMALL_BATCH

    amp = OpAmpModel(gbw_hz=1e6, a0=1e5)
    netlist = topo.build(topo.example)
    exp, variables = unit_expansion(netlist, amp)
    n = SMALL_BATCH + 5
    ratios = np.array([[v.value / u.value for v, u in zip(variables, exp.variables)]] * n)
    absent = np.zeros(ratios.shape, dtype=bool)
    absent[::2, [exp.names.index("gbw"), exp.names.index("a0")]] = True
    num, den = exp.dense(ratios, absent=absent)
    p = 1j * np.geomspace(0.1, 10.0, 5)
    for i, net_amp in ((0, None), (1, amp), (n - 1, None)):
        ref = rational_from_system(build_system(netlist) if net_amp is None else build_system(netlist, net_amp), exp.w_ref)
        got = np.polyval(num[i], p) / np.polyval(den[i], p)
        np.testing.assert_allclose(got, ref.at_s(p * exp.w_ref)[0], rtol=1e-9)


def test_a_member_with_an_unusable_value_is_nan_and_the_rest_are_not():
    topo = next(t for t in all_topologies() if t.id == "mfb")
    netlist = topo.build(topo.example)
    exp, variables = unit_expansion(netlist)
    ratios = np.ones((4, len(variables)))
    ratios[1, 0] = 0.0
    ratios[2, 1] = -1.0
    ratios[3, 0] = np.inf
    num, den = exp.dense(ratios)
    assert np.isfinite(num[0]).all() and np.isfinite(den[0]).all()
    assert np.isnan(num[1:]).all() and np.isnan(den[1:]).all()


@pytest.mark.parametrize("topo", all_topologies(), ids=lambda t: t.id)
def test_first_pass_by_expansion_agrees_with_the_solver(topo, monkeypatch):
    """The analysis' first pass (nominal and perturbed ideal circuits, the op-amp family) from the
    coefficient expansion against the batched MNA solve (the reference: Cramer's rule on the
    pencil, exact interpolation), every circuit, one and several op-amps: 1e-12 relative."""
    from bandsmith.analysis import analyzer

    netlist = topo.build(topo.example)
    fast = analyzer._first_pass(netlist, None)
    monkeypatch.setattr(analyzer, "_expansion_setup", lambda *a: None)
    slow = analyzer._first_pass(netlist, None, w_ref=fast.w_ref)
    s = 1j * fast.w_ref * np.geomspace(0.2, 5.0, 11)
    np.testing.assert_allclose(fast.h_ideal.at_s(s), slow.h_ideal.at_s(s), rtol=1e-12)
    if slow.family is not None:
        gbw = np.array([1e4, 1e6, 1e8]) * fast.w_ref / (2 * np.pi)
        np.testing.assert_allclose(fast.family.at(gbw, 1e5).at_s(s), slow.family.at(gbw, 1e5).at_s(s), rtol=1e-12)
    for key, by_ref in slow.sensitivity.items():  # central differences: rounding over the step, 1e-8
        for ref, v in by_ref.items():
            assert abs(fast.sensitivity[key][ref] - v) <= 1e-8, (key, ref)


@pytest.mark.parametrize("topo", [t for t in all_topologies() if len(t.build(t.example).opamps) > 1], ids=lambda t: t.id)
def test_opamp_terms_give_the_circuit_at_every_gbw(topo):
    """The several-op-amp family from the expansion's monomials (Expansion.opamp_terms through
    transfer.several_amp_family, as the analysis builds it) against a direct MNA solve (numpy.linalg.solve of the stamped pencil, the
    op-amps single-pole) at random part values, GBWs from 1e-2 to 1e6 times f0: 1e-9 relative."""
    from bandsmith.analysis.transfer import several_amp_family
    from bandsmith.solver.expansion import UNIT_OPAMP

    rng = np.random.default_rng(11)
    base = topo.build(topo.example)
    for _ in range(3):
        netlist = base.with_values({r: v * float(np.exp(rng.uniform(-0.3, 0.3))) for r, v in base.values().items()})
        w_ref = 2 * np.pi * 1e3
        family = several_amp_family(netlist, w_ref)
        gbw = np.geomspace(10.0, 1e9, 8)
        s = 1j * np.geomspace(1e2, 1e5, 7)
        got = family.at(gbw, 1e5).at_s(s)
        for i, g in enumerate(gbw):
            system = build_system(netlist, OpAmpModel(gbw_hz=float(g), a0=1e5))
            a = system.G[0][None] + s[:, None, None] * system.C[0][None]
            x = np.linalg.solve(a, np.broadcast_to(system.source_vector().astype(complex), a.shape[:-1])[..., None])
            np.testing.assert_allclose(got[i], x[:, system.output_index, 0], rtol=1e-9)
    exp, _ = unit_expansion(base, UNIT_OPAMP)
    assert exp.opamp_terms(np.zeros(len(exp.names))) is not None
    assert unit_expansion(base)[0].opamp_terms(np.zeros(len(base.passives))) is None  # no op-amp variables


@pytest.mark.parametrize("topo", [t for t in all_topologies() if len(t.build(t.example).opamps) > 1], ids=lambda t: t.id)
def test_ideal_part_is_the_circuit_with_ideal_opamps(topo):
    """Expansion.ideal_part (the monomials of the expansion with the op-amps' stamps that carry
    none, what the first pass of a several-op-amp circuit takes its ideal members through) against
    the ideal expansion of the same structure and the op-amp terms' x^0 row at random part values:
    the same polynomials to 1e-14 relative (each expansion's coefficients are fitted, so they may
    differ in the last bit), and against a direct MNA solve with ideal op-amps (numpy.linalg.solve
    of the stamped pencil) to 1e-12."""
    from bandsmith.solver.expansion import UNIT_OPAMP, unit_expansion_values

    rng = np.random.default_rng(5)
    base = topo.build(topo.example)
    opamp_exp, _ = unit_expansion_values(base, UNIT_OPAMP)
    ideal_exp, _ = unit_expansion_values(base)
    part = opamp_exp.ideal_part()
    assert part is opamp_exp.ideal_part()  # made once per structure
    assert part.exps_ratio.shape[1] == ideal_exp._exps_ratio.shape[1]  # as few monomials as the ideal expansion
    for _ in range(5):
        netlist = base.with_values({r: v * float(np.exp(rng.uniform(-0.5, 0.5))) for r, v in base.values().items()})
        lr_op = opamp_exp.log_ratios_of(unit_expansion_values(netlist, UNIT_OPAMP)[1])
        num, den = part.dense_log(lr_op[None, :])
        num_i, den_i = ideal_exp.dense_log(ideal_exp.log_ratios_of(unit_expansion_values(netlist)[1])[None, :])
        np.testing.assert_allclose(num, num_i, rtol=1e-14, atol=1e-14 * np.abs(num_i).max())
        np.testing.assert_allclose(den, den_i, rtol=1e-14, atol=1e-14 * np.abs(den_i).max())
        num_t, den_t = opamp_exp.opamp_terms(lr_op)
        np.testing.assert_allclose(num[0], num_t[0, num_t.shape[1] - num.shape[1] :], rtol=1e-14, atol=1e-14 * np.abs(num).max())
        np.testing.assert_allclose(den[0], den_t[0, den_t.shape[1] - den.shape[1] :], rtol=1e-14, atol=1e-14 * np.abs(den).max())
        system = build_system(netlist)
        s = 1j * np.geomspace(1e2, 1e5, 7)
        a = system.G[0][None] + s[:, None, None] * system.C[0][None]
        x = np.linalg.solve(a, np.broadcast_to(system.source_vector().astype(complex), a.shape[:-1])[..., None])
        got = np.polyval(num[0], s) / np.polyval(den[0], s)
        np.testing.assert_allclose(got, x[:, system.output_index, 0], rtol=1e-12)
    assert unit_expansion_values(base)[0].ideal_part() is None  # no op-amp variables


def test_an_unfitted_structure_is_refused_when_no_fit_is_wanted():
    # A structure neither fitted in this process nor in the shipped table raises instead of being
    # fitted (fit=False); fitted once, it is served.
    from bandsmith.solver.expansion import ExpansionUnavailable
    from bandsmith.solver.netlist import Element

    topo = next(t for t in all_topologies() if t.id == "mfb")
    netlist = topo.build(topo.example)
    odd = netlist.with_element(Element("RX", "R", (netlist.output, netlist.ground), 12345.0))
    with pytest.raises(ExpansionUnavailable):
        unit_expansion(odd, fit=False)
    unit_expansion(odd)
    assert unit_expansion(odd, fit=False)[0] is unit_expansion(odd)[0]


@pytest.mark.parametrize("opamp", [None, "unit", "finite"])
def test_unit_expansion_values_is_unit_expansion_in_plain_floats(opamp):
    """unit_expansion_values looks the kept expansion up in one pass over the elements: the very
    expansion unit_expansion keeps for the structure, and its variables' values in order, on
    every circuit (an inductor with and without a winding resistance, ideal and finite op-amps)."""
    from bandsmith.solver.expansion import IDEAL, UNIT_OPAMP, ExpansionUnavailable, unit_expansion_values

    model = {None: IDEAL, "unit": UNIT_OPAMP, "finite": OpAmpModel(1e6, 1e5)}[opamp]
    for topo in all_topologies():
        for values in (dict(topo.example), {**topo.example, "RL": 12.0} if "RL" in topo.example else None):
            if values is None:
                continue
            netlist = topo.build(topo.values_from(values))
            try:
                exp, variables = unit_expansion(netlist, model, fit=False)
            except ExpansionUnavailable:
                continue
            got, floats = unit_expansion_values(netlist, model, fit=False)
            assert got is exp
            assert floats == [v.value for v in variables] and all(type(x) is float for x in floats)
