"""The faster paths give the results of the ones they replace (speed itself is the benchmark's).

- ``sweep --csv`` block formatting: the same text as formatting each value with Python's
  ``format(v, ".10g")`` (the language reference's format specification) through ``csv.writer``.
- Monte Carlo trials measured by the closed-form roots: the same figures (1e-12 relative) and the
  same pass/fail as the tracked-grid search they replace.
- One BLAS thread: a thread count the user set in the environment is kept.
- The MNA pencil from a structure's cached stamps (``mna.build_system``): bit for bit the pencil of
  adding every stamp of ``mna._stamps`` in turn, signed zeros included, batches of one and more.
- ``Topology.values_from``'s one-comparison acceptance: the same values accepted and the same
  parts refused as its rule written out check by check (our own contract, no source).
"""

import csv
import io
import os
import subprocess
import sys

import numpy as np
import pytest
from numpy.testing import assert_allclose, assert_array_equal

from bandsmith.analysis.figures import exact_in_closed_form
from bandsmith.files.exports import write_csv
from bandsmith.circuits import get_topology, topology_ids
from bandsmith.solver.mna import IDEAL, OpAmpModel
from bandsmith.spread.evaluator import draws, evaluator_columns, prepare_spread
from bandsmith.spread.spread_settings import SpreadSettings


def test_csv_blocks_are_the_text_of_each_value_formatted():
    rng = np.random.default_rng(3)
    cols = [10.0 ** rng.uniform(-30, 30, 70_000) * rng.choice([-1.0, 1.0], 70_000) for _ in range(3)]
    cols.append(np.array([np.nan, np.inf, -np.inf, -0.0, 0.0, 1e-320, 5e-324, 1.7976931348623157e308] * 8750))
    out = io.StringIO()
    write_csv(out, cols)
    ref = io.StringIO()
    csv.writer(ref, lineterminator="\n").writerows([f"{v:.10g}" for v in row] for row in np.column_stack(cols).tolist())
    assert out.getvalue() == ref.getvalue()


def _netlist(circuit):
    topo = get_topology(circuit)
    values = dict(topo.example)
    if "RL" in values:
        values["RL"] = 15.0  # a winding resistance: the tank's numerator gains a zero
    return topo.netlist(values)


@pytest.mark.parametrize("circuit, opamp", [("rlc-tank", IDEAL), ("mfb", OpAmpModel(1e6, 1e5)), ("sallen-key", OpAmpModel(1e6, 1e5))])
def test_closed_form_trials_match_the_tracked_search(circuit, opamp):
    net = _netlist(circuit)
    settings = SpreadSettings(trials=5000, seed=11, gbw_tol=0.2 if not opamp.ideal else 0.0)
    prep = prepare_spread(net, settings, opamp)
    ev = prep.evaluator
    (_, drawn), = list(draws(settings, prep.spread, settings.trials))
    ratios = evaluator_columns(ev, drawn)
    h = ev.rational(ratios)
    assert exact_in_closed_form(h)
    fig, _ = ev.figures(ratios)
    tracked = ev._measure_tracked(h, ratios)
    assert_array_equal(fig.valid, tracked.valid)
    for name in ("f0_hz", "q", "bw_hz", "gain_center_db"):
        assert_allclose(getattr(fig, name), getattr(tracked, name), rtol=1e-12)


def test_a_blas_thread_count_set_by_the_user_is_kept():
    code = "import os, bandsmith.solver; print(os.environ['OPENBLAS_NUM_THREADS'])"
    env = dict(os.environ, OPENBLAS_NUM_THREADS="2")
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True).stdout
    assert out.strip() == "2"
    env.pop("OPENBLAS_NUM_THREADS")
    env.pop("MKL_NUM_THREADS", None)
    env.pop("OMP_NUM_THREADS", None)
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True).stdout
    assert out.strip() == "1"


@pytest.mark.parametrize("circuit", ["dabp", "state-variable", "tow-thomas", "akerberg-mossberg"])
def test_step_slopes_of_every_amplifier_output_in_one_pass_equal_one_by_one(circuit):
    """max_step_slopes (shared poles and modes) against max_step_slope member by member, itself
    checked against scipy.signal.step in tests/test_requirements.py and tests/test_step_slope.py:
    the same numbers, with ideal op-amps (closed forms) and finite ones (the shared modes)."""
    import math

    from bandsmith.analysis.timeresponse import max_step_slope, max_step_slopes
    from bandsmith.circuits import get_topology
    from bandsmith.solver.mna import build_system
    from bandsmith.solver.rational import node_rationals

    from bandsmith.solver.mna import OpAmpModel

    topo = get_topology(circuit)
    netlist = topo.build(dict(topo.example))
    for opamp in (IDEAL, OpAmpModel(1e6), OpAmpModel(2e5)):  # finite op-amps: every node above second order
        system = build_system(netlist, opamp)
        nodes = [system.layout.node_index[e.nodes[2]] for e in netlist.opamps] + [system.output_index]
        h = node_rationals(system, nodes, 2 * math.pi * 1e3)
        assert max_step_slopes(h) == [max_step_slope(h, i=i) for i in range(h.batch)]


def test_quadratic_hurwitz_shortcut_agrees_with_the_roots():
    """The quadratic case of hurwitz_stable against numpy.roots (stable iff both roots have a
    negative real part; a root on the axis is not stable)."""
    from bandsmith.solver.stability import hurwitz_stable

    rng = np.random.default_rng(7)
    den = rng.normal(size=(2000, 3))
    den[::9, 1] = 0.0  # roots on the imaginary axis
    den[::13, 2] = 0.0  # a root at zero
    want = [bool(np.all(np.roots(d).real < 0)) for d in den]
    assert_array_equal(hurwitz_stable(den), want)


def test_hurwitz_of_one_polynomial_equals_the_batch_form_row_by_row():
    """hurwitz_stable of a single polynomial (Python floats) against the array form of the same
    polynomial in a batch, degrees 0 to 6, scales over 60 decades, zeros, signs, infinities and
    NaN (Routh's test, E. J. Routh, A Treatise on the Stability of a Given State of Motion, 1877:
    the same first column either way); and against numpy.roots where the roots are well defined."""
    from bandsmith.solver.stability import hurwitz_stable, hurwitz_stable_one

    rng = np.random.default_rng(11)
    specials = [0.0, -0.0, 1e-320, 1e308, -1e308, np.inf, -np.inf, np.nan, 1.0, -1.0]
    with np.errstate(all="ignore"):
        for k in range(1, 8):
            dens = rng.normal(size=(1500, k)) * 10.0 ** rng.uniform(-30, 30, size=(1500, k))
            dens[::3] = np.abs(dens[::3])
            dens[::7, rng.integers(k)] = rng.choice(specials, size=dens[::7].shape[0])
            batch = hurwitz_stable(dens)
            one = [bool(hurwitz_stable(d[None, :])[0]) for d in dens]
            assert one == batch.tolist()
            assert [hurwitz_stable_one(d.tolist()) for d in dens] == one
        for d in rng.normal(size=(300, 4)):
            assert bool(hurwitz_stable(d[None, :])[0]) == bool(np.all(np.roots(d).real < 0))


@pytest.mark.parametrize("circuit", ["rlc-tank", "mfb", "sallen-key", "dabp", "state-variable"])
def test_gbw_error_sweep_through_the_family_agrees_with_the_batched_solve(circuit, monkeypatch):
    """gbw_error_sweep (the op-amp family) against the same sweep through the batched MNA solve
    of every GBW: the same figures to 1e-7 relative. Rounding can send a member to the other of
    the sweep's two measurements (Newton's method or companion-matrix roots), and the roots lose
    up to about 1e-6 of Q where far op-amp poles leave tiny leading coefficients (Newton's
    method agrees there with a 50-digit evaluation to 5e-13, checked with mpmath)."""
    import math

    from bandsmith.analysis import gbw_sweep
    from bandsmith.analysis.analyzer import ideal_figures
    from bandsmith.circuits import get_topology

    topo = get_topology(circuit)
    netlist = topo.build(dict(topo.example))
    ideal = ideal_figures(netlist)
    ladder = gbw_sweep.gbw_ladder(ideal.item().f0_hz, n=40)
    fast = gbw_sweep.gbw_error_sweep(netlist, ideal, ladder)

    def solved(net, *, gbw_hz, a0, w_ref):
        from bandsmith.solver.mna import build_system
        from bandsmith.solver.rational import rational_from_system

        return rational_from_system(build_system(net, gbw_hz=gbw_hz, a0=a0), w_ref)

    from bandsmith.analysis import gbw_search

    monkeypatch.setattr(gbw_sweep, "rational_and_family", lambda *a: (None, None))
    monkeypatch.setattr(gbw_search, "transfer_function", solved)
    slow = gbw_sweep.gbw_error_sweep(netlist, ideal, ladder)
    assert_allclose(1.0 + fast.f0_error, 1.0 + slow.f0_error, rtol=1e-7)
    assert_allclose(1.0 + fast.q_error, 1.0 + slow.q_error, rtol=1e-7)
    assert_allclose(fast.gain_error_db, slow.gain_error_db, atol=1e-6)
    assert math.isfinite(float(np.min(fast.worst)))


def numbers(obj, path=""):
    """Every leaf of a JSON-like object with its path, ``(path, value)``."""
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield from numbers(v, f"{path}.{k}")
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from numbers(v, f"{path}[{i}]")
    else:
        yield path, obj


@pytest.mark.parametrize("gbw_hz", [None, 1e6])
def test_circuits_designed_together_equal_each_designed_alone(gbw_hz):
    """design_many (the analyses of every circuit in one batch, as compare and each stage of a
    chain make them) against design() circuit by circuit: the same parts, and the same JSON to
    1e-12 relative (the batch's Newton iterations may run a step longer: rounding only). A
    consistency check of our own two paths, no outside source."""
    import json
    import math

    from bandsmith.circuits import topology_ids
    from bandsmith.design.candidate import Conditions
    from bandsmith.design.designer import Spec, design, design_json, design_many

    cond = Conditions(gbw_hz=gbw_hz)
    ids = topology_ids()
    for spec in (Spec(3.3e3, 4.0, 3.0), Spec(20e3, 50.0, 10.0), Spec(455e3, 20.0, 2.0)):
        together = design_many(ids, spec, conditions=cond)
        for cid, res in zip(ids, together):
            alone = design(cid, spec, conditions=cond)
            assert res.chosen == alone.chosen, cid
            a, b = dict(numbers(json.loads(json.dumps(design_json(res))))), dict(numbers(json.loads(json.dumps(design_json(alone)))))
            assert a.keys() == b.keys()
            for key, x in a.items():
                y = b[key]
                if isinstance(x, float) and isinstance(y, float) and math.isfinite(x):
                    assert y == pytest.approx(x, rel=1e-12, abs=1e-300), f"{cid}{key}"
                else:
                    assert x == y, f"{cid}{key}"


def test_a_candidate_that_cannot_be_analysed_does_not_stop_the_others(monkeypatch):
    """analyze_candidates: the analysis of each candidate, or the InputError it raises alone (a
    candidate made to fail its check here: no part values within range leave no measurable peak).
    A consistency check of our own batching, no outside source."""
    from bandsmith.common.errors import InputError
    from bandsmith.design import candidate as cmod

    topo = get_topology("mfb")
    good = cmod.Candidate("mfb", topo.example)
    bad = cmod.Candidate("mfb", {**topo.example, "R3": 2.0 * topo.example["R3"]})
    checked = cmod.Candidate._checked

    def check(self, result, conditions):
        if self.values == bad.values:
            raise InputError("parts", "no measurable peak (made to fail)")
        return checked(self, result, conditions)

    monkeypatch.setattr(cmod.Candidate, "_checked", check)
    out = cmod.analyze_candidates([good, bad, good], cmod.Conditions())
    assert isinstance(out[1], InputError) and out[1].field == "parts"
    assert out[0].to_json() == good.analyze(cmod.Conditions()).to_json() == out[2].to_json()


@pytest.mark.parametrize("gbw_hz", [None, 4e6])
def test_candidates_analysed_together_under_their_own_tolerances_equal_each_alone(gbw_hz):
    """analyze_candidates with one set of conditions per candidate, differing in the tolerances
    (a chain's stages are held to their own) and the source resistance: each candidate's analysis
    and amplifier needs are those it has alone under its own, bit for bit but the figures and
    required GBW that come from the joined ladder's padded polynomials (1e-12, as for candidates
    under one set of conditions). A consistency check of our own batching, no outside source."""
    import json
    import math
    from dataclasses import replace

    from bandsmith.analysis.tolerances import Tolerances
    from bandsmith.design.candidate import Candidate, Conditions, analyze_candidates

    rng = np.random.default_rng(3)
    cands, conds = [], []
    for cid in ("mfb", "tow-thomas", "sallen-key", "dabp", "mfb", "akerberg-mossberg", "rlc-tank", "tow-thomas"):
        topo = get_topology(cid)
        cands.append(Candidate(cid, {k: v * float(np.exp(rng.uniform(-0.2, 0.2))) if v > 0 else v for k, v in topo.example.items()}))
        tol = Tolerances(f0=float(rng.choice([0.01, 0.004, 0.0125])), q=float(rng.choice([0.05, 0.03])), gain_db=float(rng.choice([0.5, 0.25])))
        conds.append(Conditions(gbw_hz=gbw_hz, tolerances=tol, rsource_ohm=50.0 if len(conds) == 0 else None))
    together = analyze_candidates(cands, conds)
    for cand, cond, an in zip(cands, conds, together):
        alone = cand.analyze(cond)
        a, b = dict(numbers(json.loads(json.dumps(alone.to_json())))), dict(numbers(json.loads(json.dumps(an.to_json()))))
        assert a.keys() == b.keys()
        for key, x in a.items():
            if isinstance(x, float) and math.isfinite(x):
                assert b[key] == pytest.approx(x, rel=1e-12, abs=1e-300), f"{cand.topology_id}{key}"
            else:
                assert b[key] == x, f"{cand.topology_id}{key}"
        assert an.drive.tolerances == cond.tolerances
    with pytest.raises(ValueError):
        analyze_candidates(cands[:2], [conds[0], replace(conds[1], vin_v=2.0)])


@pytest.mark.parametrize("circuit", ["rlc-tank", "mfb", "sallen-key", "dabp", "state-variable", "tow-thomas", "akerberg-mossberg"])
def test_search_combinations_from_gathered_logs_equal_the_values_passed_part_by_part(circuit):
    """The standard-value search's transfer functions (each combination's log ratios gathered
    from the logs of the offered values, _combination_searches) against _combinations of the same
    values given part by part (their ratios built, then their logs taken): the same coefficients
    bit for bit, with a winding resistance or a pinned part held at its own value. A consistency
    check of our own two paths, no outside source."""
    from bandsmith.analysis.tolerances import Tolerances
    from bandsmith.design import standard
    from bandsmith.design.designer import Spec

    topo = get_topology(circuit)
    rng = np.random.default_rng(5)
    for trial in range(4):
        values = {k: v * float(np.exp(rng.uniform(-0.3, 0.3))) if v > 0 else v for k, v in topo.example.items()}
        if "RL" in values:
            values["RL"] = 15.0 if trial % 2 else 0.0
        values = topo.values_from(values)
        keep = tuple(c.ref for c in topo.components if c.required)[: trial % 2]  # the first part pinned in odd trials
        spec = Spec(2e4 * float(np.exp(rng.uniform(-1, 1))) / (2 * np.pi), 2.0, 1.0)
        with np.errstate(all="ignore"):
            mine = standard._combination_searches([(topo, values, spec, "E24", keep, Tolerances(), 1)])[0]
            ref = standard._combinations(topo.build(mine.values), dict(zip(mine.free, mine.flat[mine.index])), spec.w0)
        assert_array_equal(mine.h.num, ref.num)
        assert_array_equal(mine.h.den, ref.den)
        assert_array_equal(mine.h.w_ref, ref.w_ref)


@pytest.mark.parametrize("series", ["E12", "E24", "E96"])
def test_standard_searches_made_together_equal_each_made_alone(series):
    """choose_standard_many (every circuit's combinations measured in one closed-form batch, as a
    compare and each stage of a chain make them) against choose_standard circuit by circuit: the
    same Choice, exactly (the closed form works member by member). A consistency check of our own
    two paths, no outside source."""
    from bandsmith.circuits import all_topologies
    from bandsmith.design.designer import Spec
    from bandsmith.analysis.tolerances import Tolerances
    from bandsmith.design.standard import choose_standard, choose_standard_many

    spec = Spec(3.3e3, 4.0, 3.0)
    items = []
    for topo in all_topologies():
        exact = topo.values_from(dict(topo.synthesize(spec, {}, series=series)))
        items.append((topo, exact, spec, series, (), Tolerances(), 1))
    together = choose_standard_many(items)
    assert len(together) == len(items) and all(c.values is not None for c in together)
    for item, choice in zip(items, together):
        topo, exact, spec_, series_, keep, tol, width = item
        assert choice == choose_standard(topo, exact, spec_, series_, keep=keep, tolerances=tol, width=width), topo.id


@pytest.mark.parametrize("series", ["E12", "E24", "E96"])
def test_search_rationals_made_together_equal_each_made_alone(series):
    """_combination_searches of every circuit at several targets in one call (their coefficients
    taken to p = s/w_ref and scaled as one joined batch, standard._scaled_searches; the searches
    of one circuit stacked) against the call of each circuit at each target alone: the same
    coefficients and w_ref bit for bit, and _joined_rows (the joined batch's rows, a view, with
    the searches' order in it) equal to Rational.joined of the searches' own in that order. A consistency check of our own two paths, no
    outside source."""
    from bandsmith.analysis.tolerances import Tolerances
    from bandsmith.circuits import all_topologies
    from bandsmith.circuits.synthesis import Infeasible
    from bandsmith.design import standard
    from bandsmith.design.designer import Spec
    from bandsmith.solver.rational import Rational

    items = []
    for f0, q, gain in ((3.3e3, 4.0, 3.0), (38e3, 1.3, 1.5), (44e3, 2.6, 2.0), (120.0, 9.0, 0.5)):
        spec = Spec(f0, q, gain)
        for topo in all_topologies():
            try:
                exact = topo.values_from(dict(topo.synthesize(spec, {}, series=series)))
            except Infeasible:
                continue
            items.append((topo, exact, spec, series, (), Tolerances(), 1 + (f0 > 1e4)))
    with np.errstate(all="ignore"):
        together = standard._combination_searches(items)
        alone = [standard._combination_searches([item])[0] for item in items]
    for mine, ref, item in zip(together, alone, items):
        assert_array_equal(mine.h.num, ref.h.num)
        assert_array_equal(mine.h.den, ref.h.den)
        assert_array_equal(mine.h.w_ref, ref.h.w_ref)
        with np.errstate(all="ignore"):  # and the values given part by part (Expansion.rational)
            by_parts = standard._combinations(item[0].build(mine.values), dict(zip(mine.free, mine.flat[mine.index])), item[2].w0)
        assert_array_equal(mine.h.num, by_parts.num)
        assert_array_equal(mine.h.den, by_parts.den)
        assert_array_equal(mine.h.w_ref, by_parts.w_ref)
    for part in (together, together[3:9], together[::2], together[9:2:-1]):
        rows, order = standard._joined_rows(part)
        joined = Rational.joined([part[i].h for i in order])
        assert sorted(order) == list(range(len(part)))
        assert_array_equal(rows.num, joined.num)
        assert_array_equal(rows.den, joined.den)
        assert_array_equal(rows.w_ref, joined.w_ref)


@pytest.mark.parametrize("series", ["E12", "E24", "E96"])
def test_repeated_searches_are_made_once_with_the_same_choices(series):
    """choose_standard_groups makes a search whose every input repeats an earlier one of its
    group once (_combination_searches' _Same: a compare's Tow-Thomas and Akerberg-Mossberg, whose
    ideal transfer functions are one function of the same parts, designed alike; their kept
    expansions' products the same, Expansion.same_products): the same Choice, exactly, as each
    circuit's search alone, in groups of several targets (a chain's stages) too. A consistency
    check of our own two paths, no outside source."""
    from bandsmith.analysis.tolerances import Tolerances
    from bandsmith.circuits import all_topologies
    from bandsmith.circuits.synthesis import Infeasible
    from bandsmith.design import standard
    from bandsmith.design.designer import Spec
    from bandsmith.solver.expansion import unit_expansion_values

    tt, am = get_topology("tow-thomas"), get_topology("akerberg-mossberg")
    values = tt.values_from(tt.example)
    exp_tt, _ = unit_expansion_values(tt.build(values))
    exp_am, _ = unit_expansion_values(am.build(am.values_from(values)))
    assert exp_tt is not exp_am and exp_tt.same_products(exp_am)
    assert not exp_tt.same_products(unit_expansion_values(get_topology("mfb").build(get_topology("mfb").example))[0])
    groups = []
    for f0, q, gain in ((3.3e3, 4.0, 3.0), (38e3, 1.3, 1.5), (44e3, 2.6, 2.0)):
        spec = Spec(f0, q, gain)
        items = []
        for topo in all_topologies():
            try:
                exact = topo.values_from(dict(topo.synthesize(spec, {}, series=series)))
            except Infeasible:
                continue
            items.append((topo, exact, spec, series, (), Tolerances(), 1))
        groups.append(items)
    flat = [item for items in groups for item in items]
    with np.errstate(all="ignore"):
        found = standard._combination_searches(flat, groups=[g for g, items in enumerate(groups) for _ in items])
    repeated = [(flat[k][0].id, flat[m.of][0].id) for k, m in enumerate(found) if isinstance(m, standard._Same)]
    assert repeated and all(pair == ("akerberg-mossberg", "tow-thomas") for pair in repeated)
    together = standard.choose_standard_groups(groups)
    for items, choices in zip(groups, together):
        for item, choice in zip(items, choices):
            topo, exact, spec_, series_, keep, tol, width = item
            assert choice == standard.choose_standard(topo, exact, spec_, series_, keep=keep, tolerances=tol, width=width), topo.id


@pytest.mark.parametrize("circuit", sorted(topology_ids()))
def test_picked_monomials_equal_dense_log(circuit):
    """Expansion.dense_log_finite_picked_into (the monomials of a few rows, picked for every
    combination by standard._monomial_rows, written into arrays given) against dense_log of
    every combination's own log ratios (standard._log_gather), one search and a stack of
    three, with random free parts, option counts and finite logs: the same coefficients bit for
    bit. A consistency check of our own two paths, no outside source."""
    from bandsmith.design import standard
    from bandsmith.solver.expansion import unit_expansion_values

    topo = get_topology(circuit)
    exp, own = unit_expansion_values(topo.build(topo.values_from(topo.example)))
    rng = np.random.default_rng(19)
    n_var = len(own)
    base = np.log(own) - np.log([u.value for u in exp.variables])
    for trial in range(6):
        chosen = sorted(rng.choice(n_var, size=rng.integers(1, n_var + 1), replace=False).tolist())
        sizes = tuple(int(n) for n in rng.integers(1, 4, len(chosen)))
        rows = tuple(chosen.index(j) if j in chosen else -1 for j in range(n_var))
        gather = standard._log_gather(sizes, rows)
        few, picks = standard._monomial_rows(sizes, rows, exp.monomial_supports())
        n_entries = sum(sizes) + len(sizes) + n_var - len(chosen)
        wn, wd = exp.dense_widths
        for stack in (None, 3):
            shape = (n_entries,) if stack is None else (stack, n_entries)
            logs = rng.normal(0.0, 2.0, shape) + base.mean()
            full = logs.take(gather) if stack is None else logs.take(gather, axis=1)
            few_logs = logs.take(few) if stack is None else logs.take(few, axis=1)
            mine = np.empty(full.shape[:-1] + (wn,)), np.empty(full.shape[:-1] + (wd,))
            exp.dense_log_finite_picked_into(few_logs, picks, *mine)
            for got, ref in zip(mine, exp.dense_log(full)):
                assert_array_equal(got, ref)
        assert few.shape[0] <= gather.shape[0]


@pytest.mark.parametrize("circuit", sorted(topology_ids()))
def test_search_expansion_is_the_netlists_own(circuit):
    """standard._search_expansion (a circuit's kept expansion and its variables' names made once
    per circuit and optional parts at zero, the variables' values read from the parts) against
    unit_expansion_values of the netlist built from the same values: the same expansion and
    values, exactly, at random values with an optional part at zero and above it. A consistency
    check of our own two paths, no outside source."""
    from bandsmith.design import standard
    from bandsmith.solver.expansion import unit_expansion_values

    topo = get_topology(circuit)
    rng = np.random.default_rng(3)
    optional = [ref for ref, _, required in topo.part_kinds if not required]
    for trial in range(6):
        values = {ref: v * float(np.exp(rng.uniform(-1, 1))) for ref, v in topo.example.items() if v > 0}
        for ref in optional:
            values[ref] = 0.0 if trial % 2 else 3.3 * (trial + 1)
        values = topo.values_from(values)
        exp, own = standard._search_expansion(topo, values)
        ref_exp, ref_own = unit_expansion_values(topo.build(values))
        assert exp is ref_exp
        assert own == ref_own


@pytest.mark.parametrize("series", ["E12", "E24", "E96"])
def test_standard_searches_of_several_targets_equal_each_target_alone(series):
    """choose_standard_groups (a chain's stages: every target's circuits, the searches of one
    circuit stacked over the targets, one closed-form batch) against choose_standard_many target
    by target: the same Choices, exactly. A consistency check of our own two paths, no outside
    source."""
    from bandsmith.analysis.tolerances import Tolerances
    from bandsmith.circuits import all_topologies
    from bandsmith.circuits.synthesis import Infeasible
    from bandsmith.design.designer import Spec
    from bandsmith.design.standard import choose_standard_groups, choose_standard_many

    groups = []
    for f0, q, gain in ((38e3, 1.3, 1.5), (44e3, 2.6, 2.0), (35e3, 4.1, 1.0), (51e3, 6.5, 3.0)):
        spec = Spec(f0, q, gain)
        items = []
        for topo in all_topologies():
            try:
                exact = topo.values_from(dict(topo.synthesize(spec, {}, series=series)))
            except Infeasible:  # a target this circuit cannot meet
                continue
            items.append((topo, exact, spec, series, (), Tolerances(f0=0.01 / q, q=0.03), 1))
        groups.append(items)
    together = choose_standard_groups(groups)
    assert [len(c) for c in together] == [len(g) for g in groups]
    for items, choices in zip(groups, together):
        assert choices == choose_standard_many(items)


@pytest.mark.parametrize("width", [1, 2])
@pytest.mark.parametrize("series", ["E12", "E24", "E96"])
def test_closed_form_search_costs_are_the_measured_figures_costs(series, width):
    """The standard-value search's costs from the closed form (standard._peak_costs, on
    figures.biquad_peak_figures) against the costs from measure_many's figures (standard._costs),
    every circuit's combinations together: the same numbers, exactly. A consistency check of our
    own two paths, no outside source."""
    from bandsmith.analysis.figures import measure_many
    from bandsmith.analysis.tolerances import Tolerances
    from bandsmith.circuits import all_topologies
    from bandsmith.design import standard
    from bandsmith.design.designer import Spec

    spec = Spec(27e3, 6.0, 2.0)
    searches = []
    for topo in all_topologies():
        exact = topo.values_from(dict(topo.synthesize(spec, {}, series=series)))
        with np.errstate(all="ignore"):
            searches += standard._combination_searches([(topo, exact, spec, series, (), Tolerances(), width)])
    with np.errstate(all="ignore"):
        closed = standard._peak_costs(searches)
        measured = standard._costs(searches, measure_many([m.h for m in searches]))
    assert closed is not None and len(closed) == len(measured) == 7
    for a, b in zip(closed, measured):
        assert_array_equal(a, b)


@pytest.mark.parametrize("circuit", ["dabp", "state-variable", "tow-thomas", "akerberg-mossberg"])
def test_amplifier_values_at_f0_match_a_50_digit_solve(circuit):
    """amplifier_needs's output voltages and currents at f0 (solved in node_rationals's batch)
    against the same MNA pencil solved at f0 in 50-digit arithmetic (mpmath.lu_solve), on the
    example parts scaled off the standard values: within 1e-13."""
    import math

    import mpmath

    from bandsmith.analysis.analyzer import amplifier_needs
    from bandsmith.analysis.transfer import nominal_system

    topo = get_topology(circuit)
    rng = np.random.default_rng(3)
    values = {k: v * 10 ** rng.uniform(-0.1, 0.1) if v else v for k, v in topo.example.items()}
    netlist = topo.build(topo.values_from(values))
    f0 = 1234.5
    needs = amplifier_needs(netlist, f0)
    system = nominal_system(netlist)
    lay = system.layout
    g, c = system.G[0], system.C[0]
    w = 2 * math.pi * f0
    with mpmath.workdps(50):
        a = mpmath.matrix([[mpmath.mpc(g[i, j], w * mpmath.mpf(c[i, j])) for j in range(lay.size)] for i in range(lay.size)])
        b = mpmath.matrix([1 if i == lay.source_row else 0 for i in range(lay.size)])
        x = mpmath.lu_solve(a, b)
    for e, amp in zip(netlist.opamps, needs):
        assert_allclose(amp.vout_peak_v, float(abs(x[lay.node_index[e.nodes[2]]])), rtol=1e-13)
        assert_allclose(amp.iout_peak_a, float(abs(x[lay.opamp_row[e.ref]])), rtol=1e-13)


@pytest.mark.parametrize("circuit", ["mfb", "dabp", "state-variable", "tow-thomas", "akerberg-mossberg"])
def test_node_rationals_writes_out_the_sampled_solve(circuit):
    """node_rationals forms member 0's pencil, determinant and solve itself (fewer array calls),
    its coefficients by one product (_interpolation_matrix) and its trims on lists (_trim_rows):
    against the general path it shortens (the samples of _samples, MnaSystem.solve's right-hand
    side, the transform _coefficients and the array trim _trim) the same shapes and exact zeros,
    every coefficient within 1e-14 of its row's largest. With ``at`` the solution there is the
    pencil solved at that point (numpy.linalg.solve), every unknown."""
    import math

    from bandsmith.circuits import get_topology
    from bandsmith.solver.mna import MnaSystem, build_system
    from bandsmith.solver.rational import _coefficients, _samples, _trim, node_rationals

    topo = get_topology(circuit)
    system = build_system(topo.build(dict(topo.example)))
    idx = [system.layout.node_index[e.nodes[2]] for e in topo.build(dict(topo.example)).opamps]
    idx += [system.layout.opamp_row[r] for r in system.layout.opamp_row]
    w = 2 * math.pi * 1e3
    one = MnaSystem(system.G[:1], system.C[:1], system.layout, system.output_index, None)
    k, a = _samples(one, np.array([w]))
    a = a[0]
    den_v = np.linalg.det(a)
    x = np.linalg.solve(a, one.source_vector().astype(complex)[None, :, None])[:, :, 0]
    both = _coefficients(np.concatenate([den_v[None, :], (x[:, idx] * den_v[:, None]).T]), k)
    num_c, den_c = _trim(both[1:]), _trim(both[:1])
    scale = np.abs(den_c).max()
    h, x0 = node_rationals(system, idx, w, at=2j * math.pi * 2e3)
    num_ref, den_ref = num_c / scale, np.repeat(den_c / scale, len(idx), axis=0)
    assert h.num.shape == num_ref.shape and h.den.shape == den_ref.shape
    assert np.array_equal(h.num == 0, num_ref == 0) and np.array_equal(h.den == 0, den_ref == 0)
    assert_allclose(h.num, num_ref, rtol=0, atol=1e-14 * np.abs(num_ref).max())
    assert_allclose(h.den, den_ref, rtol=0, atol=1e-14)
    assert np.array_equal(node_rationals(system, idx, w).num, h.num)
    x_ref = np.linalg.solve(system.G[0] + 2j * math.pi * 2e3 * system.C[0], one.source_vector().astype(complex))
    assert_allclose(x0, x_ref, rtol=1e-13, atol=0)


def _stamped_one_by_one(netlist, opamp, overrides, gbw_hz=None, a0=None):
    """The pencil of adding each stamp of ``mna._stamps`` in turn, as the module notes write it."""
    from bandsmith.solver.mna import MnaLayout, _stamps

    layout = MnaLayout.of(netlist)
    over = overrides or {}
    size = max([1] + [np.size(v) for v in over.values()] + [np.size(v) for v in (gbw_hz, a0) if v is not None])
    gbw = opamp.gbw_hz if gbw_hz is None else np.asarray(gbw_hz, dtype=float)
    gain0 = opamp.a0 if a0 is None else np.asarray(a0, dtype=float)
    n = layout.size
    G, C = np.zeros((size, n, n)), np.zeros((size, n, n))
    parts = {e.ref: e for e in netlist.elements}
    for which, i, j, sign, q in _stamps(netlist, layout):
        m = G if which == "G" else C
        if q is None:
            y = 1.0
        else:
            kind, ref = q
            if kind in ("a0", "wt"):
                if gbw is None:
                    continue
                y = 1.0 / gain0 if kind == "a0" else 1.0 / (2.0 * np.pi * gbw)
            elif kind == "rs":
                e = parts[ref]
                y = over.get(ref + ".rs", over.get(e.series_ref, e.series_resistance) if e.series_ref else e.series_resistance)
            else:
                v = over.get(ref, parts[ref].value)
                y = 1.0 / np.asarray(v, dtype=float) if kind == "g" else v
        y = np.broadcast_to(np.asarray(y, dtype=float), (size,))
        if sign > 0:
            m[:, i, j] += y
        else:
            m[:, i, j] -= y
    return G, C


@pytest.mark.parametrize("circuit", ["rlc-tank", "mfb", "sallen-key", "dabp", "state-variable", "tow-thomas", "akerberg-mossberg"])
def test_the_pencil_from_cached_stamps_is_every_stamp_added_in_turn(circuit):
    from bandsmith.solver.mna import build_system

    topo = get_topology(circuit)
    values = topo.values_from(dict(topo.example))
    netlist = topo.build(values)
    rng = np.random.default_rng(7)
    cases = [None, {e.ref: rng.uniform(0.5, 2.0, 9) * e.value for e in netlist.passives}]
    if any(e.kind == "L" for e in netlist.elements):
        cases.append({"RL": np.array([0.0, 1.0, 7.0])})  # a zero winding resistance: a signed zero to keep
    ladders = [(None, None), (np.geomspace(1e5, 1e8, 5), np.full(5, 2e5))]  # per-member op-amps
    for opamp in (IDEAL, OpAmpModel(2e6, 3e5)):
        for over in cases:
            for gbw_hz, a0 in ladders:
                if over is not None and gbw_hz is not None:
                    continue  # (one batch size at a time)
                got = build_system(netlist, opamp, overrides=over, gbw_hz=gbw_hz, a0=a0)
                want_g, want_c = _stamped_one_by_one(netlist, opamp, over, gbw_hz, a0)
                for a, b in ((got.G, want_g), (got.C, want_c)):
                    assert_array_equal(a, b)
                    assert_array_equal(np.signbit(a), np.signbit(b))
                size = got.G.shape[0]
                if gbw_hz is None and opamp.ideal:
                    want_a0 = want_wt = np.zeros(size)
                else:  # each op-amp's 1/A0 and 1/ωt per member, as the stamps take them
                    want_a0 = np.broadcast_to(1.0 / np.asarray(opamp.a0 if a0 is None else a0, dtype=float), (size,))
                    want_wt = np.broadcast_to(1.0 / (2.0 * np.pi * np.asarray(opamp.gbw_hz if gbw_hz is None else gbw_hz, dtype=float)), (size,))
                assert len(got.amp_terms) == len(netlist.opamps)
                for row, col, inv_a0, inv_wt in got.amp_terms:
                    assert_array_equal(inv_a0, want_a0)
                    assert_array_equal(inv_wt, want_wt)


def test_biquad_peak_figures_are_measures_closed_form_and_nan_where_not_stable():
    # f0, Q and the gain of second-order band-passes: the numbers of measure()'s closed form where
    # every member has a peak; where one has none, NaN, and there Routh–Hurwitz fails too (a
    # quadratic is stable when its three coefficients are nonzero and of one sign).
    from bandsmith.analysis.figures import biquad_peak_figures, measure
    from bandsmith.solver.rational import Rational
    from bandsmith.solver.stability import hurwitz_stable

    rng = np.random.default_rng(11)
    b = 4000
    den = np.abs(rng.normal(size=(b, 3))) * 10.0 ** rng.uniform(-3, 3, (b, 3))
    num = np.column_stack([rng.normal(size=b), np.zeros(b)])
    h = Rational(num, den * rng.choice([-1.0, 1.0], (b, 1)), 10.0 ** rng.uniform(1, 6, b))
    want = measure(h)
    got = biquad_peak_figures(h)
    for a, w in zip(got, (want.f0_hz, want.q, want.gain_center_db)):
        assert_array_equal(a, w)
    odd = Rational(num[:64], den[:64] * rng.choice([-1.0, 1.0], (64, 3)), h.w_ref[:64])
    f0, q, db = biquad_peak_figures(odd)
    assert not (hurwitz_stable(odd.den) & ~np.isfinite(q)).any()
    assert (~np.isfinite(q)).sum() > 10  # (the signs drawn leave some with no peak)
    assert biquad_peak_figures(Rational(np.ones((2, 3)), den[:2], h.w_ref[:2])) is None  # not a band-pass


def test_sallen_key_normalised_parts_of_one_gain_are_the_arrays_numbers():
    # The Sallen–Key design's normalised parts for one gain K and one capacitor ratio, in plain
    # numbers: the very values of the array form (the same IEEE operations) over random targets.
    import math

    from bandsmith.circuits import sallen_key
    from bandsmith.circuits.synthesis import Spec

    rng = np.random.default_rng(21)
    compared = 0
    for _ in range(3000):
        spec = Spec(10 ** rng.uniform(1, 6), 10 ** rng.uniform(-0.5, 2), 10 ** rng.uniform(-1, 1.5))
        k, r = float(1.0 + 10 ** rng.uniform(-3, 1.5)), float(10 ** rng.uniform(-2, 2))
        one = sallen_key._normalised_one(spec, k, r)
        if one is None:
            continue
        compared += 1
        with np.errstate(all="ignore"):
            arrays = sallen_key._normalised(spec, np.array(k), np.array(r))
        for a, b in zip(arrays, one):
            assert float(a) == b or (math.isnan(float(a)) and math.isnan(b))
        # a gain grid with one plain r: the numbers of r as an array
        ks = 1.0 + 10 ** rng.uniform(-3, 1.5, 8)
        with np.errstate(all="ignore"):
            for a, b in zip(sallen_key._normalised(spec, ks, r), sallen_key._normalised(spec, ks, np.array(r))):
                assert_array_equal(a, b)
    assert compared > 2500


def test_sallen_key_spread_of_three_numbers_is_the_arrays():
    # The resistor spread of one design in plain numbers: the value of the array form, zero,
    # negative and infinite parts included (common practice, no source: a consistency check).
    from bandsmith.circuits import sallen_key

    rng = np.random.default_rng(22)
    edge = [0.0, -0.0, -1.5, np.inf, -np.inf, 1e-300, 1e300]
    for trial in range(3000):
        xs = [float(10 ** rng.uniform(-6, 6)) for _ in range(3)]
        if trial % 2 == 0:
            xs[(trial // 2) % 3] = edge[(trial // 6) % len(edge)]
        one = sallen_key._spread(*xs)
        assert type(one) is float
        assert one == float(sallen_key._spread(*(np.array(x) for x in xs)))


def test_sallen_key_grid_spreads_are_the_array_forms_numbers():
    # The spreads best_gain_k weighs over a gain grid (_grid_spreads: fewer array calls, one
    # branch of the root where the gain is clear of 1) against _spread of _normalised's arrays,
    # bit for bit: random targets, gains near 1 on both sides, r = 1 with the grid's terms made
    # once and other r (common practice, no source: a consistency check of our own two forms).
    from bandsmith.circuits import sallen_key
    from bandsmith.circuits.synthesis import Spec

    rng = np.random.default_rng(23)
    for trial in range(2000):
        gain = 10 ** rng.uniform(-1, 1.5)
        if trial % 2:
            gain = 1.0 + rng.choice([-1.0, 1.0]) * 10 ** rng.uniform(-9.5, -5)
        spec = Spec(10 ** rng.uniform(1, 6), 10 ** rng.uniform(-0.5, 2), float(gain))
        r = 1.0 if trial % 3 else float(10 ** rng.uniform(-2, 2))
        terms = sallen_key._K_GRID_TERMS if r == 1.0 else None
        with np.errstate(all="ignore"):
            ref = sallen_key._spread(*sallen_key._normalised(spec, sallen_key._K_GRID, r))
            fine = 1.0 + 10 ** rng.uniform(-3, 1.5, 161)
            ref_fine = sallen_key._spread(*sallen_key._normalised(spec, fine, r))
        assert_array_equal(sallen_key._grid_spreads(spec, sallen_key._K_GRID, r, terms), ref)
        assert_array_equal(sallen_key._grid_spreads(spec, fine, r), ref_fine)


def test_interpolation_matrix_is_the_transform_and_list_trim_is_the_array_trim():
    """_interpolation_matrix (one product) against _coefficients (numpy.fft) on random
    polynomials sampled at _circle's points: within 1e-15 of the largest coefficient; _trim_rows
    on lists against _trim on arrays, random rows with zeros, tiny entries, NaN and infinities: equal."""
    from bandsmith.solver.rational import (
        _circle,
        _coefficients,
        _interpolation_matrix,
        _trim,
        _trim_rows,
    )

    rng = np.random.default_rng(11)
    for k in range(1, 9):
        c = rng.standard_normal((4, k))  # highest power first
        values = np.array([np.polyval(row, _circle(k)[0]) for row in c])
        assert_allclose((values @ _interpolation_matrix(k)).real, _coefficients(values, k), rtol=0, atol=1e-15 * np.abs(c).max() * k)
        assert_allclose((values @ _interpolation_matrix(k)).real, c, rtol=0, atol=1e-14 * np.abs(c).max())
    for _ in range(3000):
        rows, cols = rng.integers(1, 5), rng.integers(1, 7)
        m = rng.standard_normal((rows, cols)) * 10.0 ** rng.integers(-16, 2, size=(rows, cols))
        m[rng.random((rows, cols)) < 0.2] = 0.0
        if rng.random() < 0.1:
            m[rng.integers(rows), rng.integers(cols)] = rng.choice([np.nan, np.inf, -np.inf])
        assert np.array_equal(np.array(_trim_rows(m.tolist())), _trim(m), equal_nan=True)

def test_a_structures_first_pencil_stamped_directly_is_the_plans():
    """build_system's first pencil of a structure (stamped straight from the netlist, no plan
    made) against the next one of the same netlist (from the plan) and against adding every stamp
    in turn: every circuit at random part values (the tank also with a winding resistance), ideal
    and finite op-amps, the same floats, signs of zero included, and the same layout and terms."""
    from bandsmith.circuits import all_topologies
    from bandsmith.solver import mna

    rng = np.random.default_rng(2)
    for topo in all_topologies():
        for k in range(6):
            values = {r: v * 10 ** rng.uniform(-1, 1) if v else v for r, v in topo.example.items()}
            if "RL" in values and k % 2:
                values["RL"] = 12.0
            netlist = topo.build(topo.values_from(values))
            for opamp in (IDEAL, OpAmpModel(3e6, 2e5)):
                mna._PLANS.clear()
                mna._SEEN.clear()
                first, planned = mna.build_system(netlist, opamp), mna.build_system(netlist, opamp)
                want_g, want_c = _stamped_one_by_one(netlist, opamp, None)
                for a, b in ((first.G, planned.G), (first.C, planned.C), (first.G, want_g), (first.C, want_c)):
                    assert a.shape == b.shape and np.array_equal(a, b) and np.array_equal(np.signbit(a), np.signbit(b))
                assert first.layout == planned.layout and first.output_index == planned.output_index
                for x, y in zip(first.amp_terms, planned.amp_terms, strict=True):
                    assert x[:2] == y[:2] and np.array_equal(x[2], y[2]) and np.array_equal(x[3], y[3])


def test_node_rationals_of_no_unknown_is_an_empty_batch():
    """node_rationals asked for no unknown: a batch of none, shaped as the array trims shaped it
    (numerators (0, 1), the denominator's width kept), and with ``at`` the solution there."""
    import math

    from bandsmith.circuits import get_topology
    from bandsmith.solver.mna import build_system
    from bandsmith.solver.rational import node_rationals

    topo = get_topology("dabp")
    system = build_system(topo.build(dict(topo.example)))
    h = node_rationals(system, [], 2 * math.pi * 1e3)
    assert h.num.shape == (0, 1) and h.den.shape[0] == 0 and h.den.shape[1] >= 3 and h.w_ref.shape == (0,)
    h, x0 = node_rationals(system, [], 2 * math.pi * 1e3, at=2j * math.pi * 1e3)
    assert h.batch == 0 and x0.shape == (system.layout.size,)


def test_family_shifted_terms_in_one_step_are_the_terms_written_one_by_one():
    """AmpFamily's shifted terms T_j·p^i written at their places in one step, and the count of
    leading all-zero columns from the terms' own leading zeros: the matrix of writing each term
    into its row in turn, and the columns _lead_trim drops from it (terms with leading zeros and
    terms that are zero throughout included)."""
    from bandsmith.solver.rational import _family_pairs, _family_shifted, _lead_trim

    rng = np.random.default_rng(5)
    for m in (1, 2, 3, 4):
        for _ in range(400):
            terms = []
            for _j in range(m + 1):
                size = int(rng.integers(1, 8))
                t = rng.normal(size=size)
                if rng.random() < 0.3:
                    t[: int(rng.integers(0, size + 1))] = 0.0
                terms.append(t)
            length = max(t.size + j for j, t in enumerate(terms))
            want = np.zeros((len(_family_pairs(m)[0]), length))
            for n, (j, i) in enumerate(_family_pairs(m)[0]):
                want[n, length - terms[j].size - i : length - i] = terms[j]
            got, zero = _family_shifted(tuple(terms), m)
            assert_array_equal(got, want)
            assert zero == want.shape[1] - _lead_trim(want).shape[1]


def test_lead_trim_of_one_row_is_the_general_trim():
    """_lead_trim's one-row path (a member taken alone from a padded batch) against the rule it
    states, written out on the columns: every leading all-zero column dropped, at least one kept
    (rows of zeros, NaN and signed zeros included)."""
    from bandsmith.solver.rational import _lead_trim

    rng = np.random.default_rng(11)
    for _ in range(3000):
        row = rng.normal(size=int(rng.integers(1, 10)))
        row[: int(rng.integers(0, row.size + 1))] = 0.0
        if rng.random() < 0.1:
            row[int(rng.integers(0, row.size))] = np.nan
        if rng.random() < 0.1:
            row[: int(rng.integers(0, row.size + 1))] = -0.0
        c = row[None, :]
        nonzero = [k for k in range(row.size) if row[k] != 0]
        want = c[:, nonzero[0] :] if nonzero else c[:, -1:]
        assert_array_equal(_lead_trim(c), want)
        assert _lead_trim(c).shape == want.shape


@pytest.mark.parametrize("circuit", ["dabp", "state-variable", "tow-thomas", "akerberg-mossberg"])
def test_step_slopes_from_node_coefficients_lists_equal_those_of_the_rational(circuit):
    """The amplifier needs' list path (node_coefficients, max_step_slopes_of) against the arrays
    (node_rationals, max_step_slopes, itself checked member by member above): the same
    coefficients and slopes bit for bit, ideal op-amps (closed forms) and finite ones (the
    shared modes), with and without the circuit's own denominator and a solve at f0."""
    import math

    from bandsmith.analysis.timeresponse import max_step_slopes, max_step_slopes_of
    from bandsmith.design.candidate import Candidate, Conditions
    from bandsmith.solver.mna import build_system
    from bandsmith.solver.rational import node_coefficients, node_rationals

    topo = get_topology(circuit)
    an = Candidate(circuit, dict(topo.example)).analyze(Conditions())
    w = 2 * math.pi * an.ideal.item().f0_hz
    den = (an.h_ideal.den[0].tolist(), float(an.h_ideal.w_ref[0]))
    for opamp, kw in ((IDEAL, {}), (IDEAL, {"den": den, "at": 1j * w}), (OpAmpModel(1e6), {}), (OpAmpModel(2e5), {"at": 2j * w})):
        system = build_system(an.netlist, opamp)
        nodes = [system.layout.node_index[e.nodes[2]] for e in an.netlist.opamps] + [system.output_index]
        nums, den_c, x = node_coefficients(system, nodes, w, **kw)
        h = node_rationals(system, nodes, w, **kw)
        if "at" in kw:
            h, xh = h
            assert_array_equal(x, xh)
        assert_array_equal(np.array(nums), h.num)
        assert_array_equal(np.array([den_c] * len(nums)), h.den)
        assert max_step_slopes_of(nums, den_c, w) == max_step_slopes(h)
@pytest.mark.parametrize("circuit", ["dabp", "state-variable", "tow-thomas", "akerberg-mossberg"])
def test_node_rationals_from_the_known_denominator_equal_those_from_determinants(circuit):
    """node_rationals given the circuit's own denominator (from its analysis) instead of taking
    determinants of the pencil: the same transfer functions but for rounding (a common factor
    cancels), and the same solution at f0, every op-amp output and the output node."""
    import math

    from bandsmith.design.candidate import Candidate, Conditions
    from bandsmith.solver.mna import build_system
    from bandsmith.solver.rational import node_rationals

    topo = get_topology(circuit)
    an = Candidate(circuit, dict(topo.example)).analyze(Conditions())
    system = build_system(an.netlist)
    nodes = [system.layout.node_index[e.nodes[2]] for e in an.netlist.opamps] + [system.output_index]
    w = 2 * math.pi * an.ideal.item().f0_hz
    den = (an.h_ideal.den[0].tolist(), float(an.h_ideal.w_ref[0]))
    (a, xa), (b, xb) = node_rationals(system, nodes, w, at=1j * w), node_rationals(system, nodes, w, at=1j * w, den=den)
    assert a.num.shape == b.num.shape and a.den.shape == b.den.shape
    assert_allclose(b.num, a.num, rtol=1e-12, atol=1e-13 * np.abs(a.num).max())
    assert_allclose(b.den, a.den, rtol=1e-12, atol=1e-13)
    assert_array_equal(xa, xb)


def test_sampling_circle_in_plain_numbers_is_numpys():
    """The sampling circle's points and rotation factors made with cmath on plain numbers: the
    values numpy's complex exponential gives on the same arrays, bit for bit."""
    from bandsmith.solver.rational import _ANGLE_OFFSET, _circle

    for k in range(1, 64):
        points, undo = _circle(k)
        theta = 2.0 * np.pi * np.arange(k) / k + _ANGLE_OFFSET
        assert_array_equal(points, np.exp(1j * theta))
        assert_array_equal(undo, np.exp(-1j * np.arange(k) * _ANGLE_OFFSET))


@pytest.mark.parametrize("circuit", topology_ids())
def test_an_analysis_in_a_batch_is_the_analysis_alone_bit_for_bit(circuit):
    """analyze_many groups candidates of one structure (a chain's stages on one circuit) and
    measures every candidate's ladder in one batch; each candidate's transfer functions, ideal
    figures and sensitivities are still those it gets alone, bit for bit (a result must not
    depend on what else was analysed with it), and its figures with the op-amp and its required
    GBW to 1e-12 (measured in a batch padded to the longest polynomial, whose squared magnitudes
    are products that may round by their place). Common practice, no source: reproducible results."""
    from bandsmith.analysis.analyzer import analyze, analyze_many

    topo = get_topology(circuit)
    rng = np.random.default_rng(5)
    base = dict(topo.example)
    if "RL" in base:
        base["RL"] = 15.0
    netlists = [topo.netlist({r: v * float(np.exp(rng.uniform(-0.3, 0.3))) for r, v in base.items()}) for _ in range(4)]
    others = [get_topology(c).netlist(dict(get_topology(c).example)) for c in ("mfb", "dabp")]
    opamp = OpAmpModel(3e6, 1e5)
    together = analyze_many(netlists + others, opamp=opamp)
    for netlist, got in zip(netlists, together):
        alone = analyze(netlist, opamp=opamp)
        for name in ("num", "den"):
            assert_array_equal(getattr(got.h_ideal, name), getattr(alone.h_ideal, name))
            assert_array_equal(getattr(got.h_actual, name), getattr(alone.h_actual, name))
        for name in ("f0_hz", "q", "gain_center_db", "f_low_hz", "f_high_hz"):
            assert_array_equal(getattr(got.ideal, name), getattr(alone.ideal, name))
            assert_allclose(getattr(got.actual, name), getattr(alone.actual, name), rtol=1e-12)
        assert got.sensitivity == alone.sensitivity
        assert_allclose(got.required_gbw[0], alone.required_gbw[0], rtol=1e-12)


def _values_from_by_the_rule(topo, given):
    """Topology.values_from's contract written out check by check (our own rule, common practice,
    no source): unknown parts and missing required ones refused; each value finite, a required
    part above zero, an optional one zero or more, and above zero within the kind's range of
    bandsmith.common.limits.PART_RANGES."""
    from bandsmith.common.errors import InputError
    from bandsmith.common.limits import PART_RANGES

    for ref in given:
        if ref not in topo.refs:
            raise InputError(ref, "unknown")
    out = {}
    for c in topo.components:
        if c.ref not in given:
            if c.required:
                raise InputError(c.ref, "missing")
            out[c.ref] = float(c.default)
            continue
        v = float(given[c.ref])
        lo, hi = PART_RANGES[c.kind]
        if not np.isfinite(v) or (c.required and v <= 0) or v < 0 or (v > 0 and not lo <= v <= hi):
            raise InputError(c.ref, "refused")
        out[c.ref] = v
    return out


@pytest.mark.parametrize("circuit", ["rlc-tank", "sallen-key", "state-variable"])
def test_values_from_accepts_and_refuses_by_the_rule(circuit):
    from bandsmith.common.errors import InputError
    from bandsmith.common.limits import PART_RANGES

    topo = get_topology(circuit)
    base = topo.values_from(topo.example)
    for comp in topo.components:
        lo, hi = PART_RANGES[comp.kind]
        for v in (np.nan, np.inf, -np.inf, 0.0, -0.0, -1.0, 5e-324, lo, np.nextafter(lo, 0), hi, np.nextafter(hi, np.inf),
                  1e300, 3.3e3, 4.7e-9, 1):
            given = dict(base, **{comp.ref: v})
            try:
                want = _values_from_by_the_rule(topo, given)
            except InputError as exc:
                with pytest.raises(InputError) as got:
                    topo.values_from(given)
                assert got.value.field == exc.field
                continue
            got_values = topo.values_from(given)
            assert got_values == want and all(type(x) is float for x in got_values.values())
        if not comp.required:  # an optional part left out takes its default
            given = {k: x for k, x in base.items() if k != comp.ref}
            assert topo.values_from(given) == _values_from_by_the_rule(topo, given)
        else:
            with pytest.raises(InputError, match="missing"):
                topo.values_from({k: x for k, x in base.items() if k != comp.ref})
    with pytest.raises(InputError, match="has no part"):
        topo.values_from(dict(base, X9=1.0))


def _choose_level_by_rows(unit, kinds, level_ref, series):
    """choose_level as first written: every part's log10 at every level, the resistors' centre
    by reductions over their rows (the reference the two-subtraction centre must equal)."""
    import math

    from bandsmith.circuits import synthesis

    caps, log_caps = synthesis._level_capacitors(synthesis.capacitor_series(series))
    log_s = log_caps - math.log10(unit[level_ref])
    parts = [(ref, v) for ref, v in unit.items() if v > 0]
    sign, lo, hi, weight, rows = synthesis._level_weights(tuple(kinds[ref] for ref, _ in parts))
    lx = np.log10([v for _, v in parts])[:, None] + sign * log_s[None, :]
    cost = weight @ (np.maximum(0.0, lo - lx) + np.maximum(0.0, lx - hi))
    if rows:
        r = lx[rows]
        cost += 0.05 * np.abs(0.5 * (r.min(axis=0) + r.max(axis=0)) - math.log10(synthesis.R_CENTRE_OHM))
    return float(caps[int(np.argmin(cost))] / unit[level_ref])


def test_choose_level_centre_from_the_extreme_resistors_equals_the_row_reductions():
    """choose_level's resistor centre from the least and largest unit resistor (rounding is
    monotone: IEEE 754-2019, 4.3) gives the level of the reductions over every resistor's row,
    over random designs of every mix of kinds and three series. A consistency check of our own
    two forms, no outside source."""
    from bandsmith.circuits.synthesis import choose_level

    rng = np.random.default_rng(17)
    mixes = ["RRRCC", "RRRRRRCC", "RLC", "RRCCL", "CC", "RC"]
    for trial in range(3000):
        mix = mixes[trial % len(mixes)]
        refs = [f"{k}{i}" for i, k in enumerate(mix)]
        unit = {r: float(10.0 ** rng.uniform(-9, 9)) for r in refs}
        if trial % 7 == 0 and "R" in mix:  # equal resistors, an absent part
            first_r = next(r for r in refs if r[0] == "R")
            unit.update({r: unit[first_r] for r in refs if r[0] == "R"})
            unit[refs[-1]] = 0.0 if refs[-1][0] != "C" else unit[refs[-1]]
        ref_c = next(r for r in refs if r[0] == "C")
        kinds = {r: r[0] for r in refs}
        series = ("E6", "E24", "E96")[trial % 3]
        assert choose_level(unit, kinds, ref_c, series) == _choose_level_by_rows(unit, kinds, ref_c, series)


def test_choose_level_near_the_minimum_is_the_level_of_every_level_weighed():
    """choose_level looks first at the two levels around its cost's continuous minimum (the cost
    is convex in log10 of the level: a sum of distances to intervals and of |t − t_c|); where it
    decides, it is the argmin of the costs of every level, first of equals (numpy.argmin), over
    random designs of every mix of kinds and four series; and on exact ties built on purpose (the
    resistors' centre midway between two levels) it leaves the choice to every level's costs.
    Convexity of a sum of convex functions: Boyd & Vandenberghe, Convex Optimization (2004),
    3.2.1; the rest a consistency check of our own two forms."""
    import math

    from bandsmith.circuits import synthesis

    rng = np.random.default_rng(23)
    mixes = ["RRRCC", "RRRRRRCC", "RLC", "RRCCL", "RC", "RRLC"]
    decided = 0
    for trial in range(6000):
        mix = mixes[trial % len(mixes)]
        refs = [f"{k}{i}" for i, k in enumerate(mix)]
        unit = {r: float(10.0 ** rng.uniform(-9, 9)) for r in refs}
        if trial % 5 == 0:  # equal resistors
            first_r = next(r for r in refs if r[0] == "R")
            unit.update({r: unit[first_r] for r in refs if r[0] == "R"})
        ref_c = next(r for r in refs if r[0] == "C")
        cs = synthesis.capacitor_series(("E3", "E6", "E24", "E96", "E192")[trial % 5])
        caps, log_caps = synthesis._level_capacitors(cs)
        parts = [(v, r[0]) for r, v in unit.items()]
        every = int(synthesis._level_costs(parts, log_caps - math.log10(unit[ref_c])).argmin())
        near = synthesis._level_near_minimum(parts, synthesis._level_capacitor_lists(cs)[1], math.log10(unit[ref_c]))
        assert near is None or near == every
        decided += near is not None
    assert decided > 5900
    caps, log_caps = synthesis._level_capacitors("E6")
    undecided = 0
    for k in range(10, 70):
        unit = {"R1": 10.0 ** (4.0 + 0.5 * (log_caps[k] + log_caps[k + 1])), "C1": 1.0}
        parts = [(unit["R1"], "R"), (1.0, "C")]
        every = int(synthesis._level_costs(parts, log_caps - 0.0).argmin())
        near = synthesis._level_near_minimum(parts, synthesis._level_capacitor_lists("E6")[1], 0.0)
        assert near is None or near == every
        undecided += near is None
        assert synthesis.choose_level(unit, {"R1": "R", "C1": "C"}, "C1", "E24") == float(caps[every])
    assert undecided > 0


def test_the_crossing_cubics_add_the_basis_terms_in_order():
    """The required-GBW search evaluates every candidate's interpolating cubics in one einsum
    (gbw_search._crossings); einsum's own loop adds the four basis terms in order, so each
    candidate's numbers are those of the terms added one by one, whatever the batch (what makes a
    required GBW the same alone and in a chain). Checked on random errors; the basis is exactly the
    failing point at the step's start and the passing one at its end. Common practice, no source."""
    from bandsmith.analysis.gbw_search import _BASIS_ROWS

    rng = np.random.default_rng(2)
    for _ in range(300):
        err = rng.normal(size=(int(rng.integers(1, 60)), 3, 4)) * 10.0 ** rng.uniform(-3, 3, size=(1, 3, 1))
        ordered = err[:, :, 0, None] * _BASIS_ROWS[0]
        for j in (1, 2, 3):
            ordered = ordered + err[:, :, j, None] * _BASIS_ROWS[j]
        assert_array_equal(np.einsum("cfj,jt->cft", err, _BASIS_ROWS, optimize=False), ordered)
    assert _BASIS_ROWS[:, 0].tolist() == [0.0, 1.0, 0.0, 0.0]
    assert _BASIS_ROWS[:, -1].tolist() == [0.0, 0.0, 1.0, 0.0]


def test_crossings_taken_at_once_are_the_rule_worked_case_by_case(monkeypatch):
    """gbw_search._crossings gathers every case's four points and works their errors as arrays
    (many cases) or in plain numbers (one or two), each path forced in turn; against its rule
    worked case by case in plain numbers (each figure's error over its
    tolerance at the four points; a case kept where all are finite, of the ideal's sign, over
    one at the failing point and within one at the passing point; the cubic's last sub-step
    over one, a margin above): the same answers, on random ladders with NaN figures, sign flips
    and cases at the ladder's ends. Our own contract, no outside source."""
    import math

    from bandsmith.analysis import gbw_search
    from bandsmith.analysis.figures import Figures
    from bandsmith.analysis.tolerances import Tolerances

    def by_case(fig, case):
        ref, ladder, start, j, tol = case
        if j < 1 or j + 2 >= ladder.size:
            return None
        sl = slice(start + j - 1, start + j + 3)
        err = [[(v / ref.f0_hz - 1.0) / tol.f0 for v in fig.f0_hz[sl].tolist()], [(v / ref.q - 1.0) / tol.q for v in fig.q[sl].tolist()],
               [(v - ref.gain_center_db) / tol.gain_db for v in fig.gain_center_db[sl].tolist()]]
        if not all(math.isfinite(e) for row in err for e in row):
            return None
        if not all(math.copysign(1.0, g) == math.copysign(1.0, ref.gain_center) for g in fig.gain_center[sl].tolist()):
            return None
        if not (max(abs(row[1]) for row in err) > 1.0 and max(abs(row[2]) for row in err) <= 1.0):
            return None
        worst = np.abs(np.einsum("fj,jt->ft", np.array(err), gbw_search._BASIS_ROWS, optimize=False)).max(axis=0)
        k = gbw_search._SUB.size - int(np.argmax(worst[::-1] > 1.0))
        return float(ladder[j] * math.exp(gbw_search._SUB[k] * math.log(ladder[j + 1] / ladder[j])) * (1.0 + gbw_search._CROSSING_MARGIN))

    rng = np.random.default_rng(12)
    found = []
    for _ in range(200):
        cases, rows = [], 0
        for _c in range(int(rng.integers(1, 9))):
            ladder = gbw_search._ladder(float(10 ** rng.uniform(2, 5)))[int(rng.integers(0, 55)):]
            ref = Figures(float(1e3 * rng.uniform(0.5, 2)), float(rng.uniform(0.5, 20)), 0.0, 0.0, 0.0,
                          float(rng.choice([-1.0, 1.0])) * 3.0, float(rng.uniform(-10, 20)), 0.0).item()
            tol = Tolerances(f0=float(rng.choice([0.01, 0.004])), q=float(rng.choice([0.05, 0.03])), gain_db=float(rng.choice([0.5, 0.25])))
            cases.append((ref, ladder, rows, int(rng.integers(0, ladder.size)), tol))
            rows += ladder.size
        refs = Figures.repeated([c[0] for c in cases], [c[1].size for c in cases])
        scale = 10.0 ** rng.uniform(-3.5, -1.0, size=rows)
        fig = Figures(refs.f0_hz * (1 + rng.normal(size=rows) * scale), refs.q * (1 + rng.normal(size=rows) * 3 * scale),
                      refs.bw_hz, refs.f_low_hz, refs.f_high_hz,
                      refs.gain_center * np.where(rng.random(rows) < 0.02, -1.0, 1.0),
                      refs.gain_center_db + rng.normal(size=rows) * 30 * scale, refs.phase_center_deg)
        for name in ("f0_hz", "q", "gain_center_db"):
            getattr(fig, name)[rng.random(rows) < 0.02] = np.nan
        want = [by_case(fig, c) for c in cases]
        for few in (0, 2, 100):  # every case at once, the path by a candidate's size, case by case
            monkeypatch.setattr(gbw_search, "_ONE_BY_ONE", few)
            assert gbw_search._crossings(fig, cases) == want
        found += [w is not None for w in want]
    assert 100 < sum(found) < len(found)  # answers and fine ladders both met


def test_largest_in_rows_is_numpys_maximum_along_the_rows():
    """rational.largest_in_rows (many rows reduced down the columns of a transposed copy) against
    numpy's np.abs(c).max(axis=-1, keepdims=True) (numpy's reference, ndarray.max): the same
    numbers and shape, on batches of every size around the switch, stacks, views with leading
    columns dropped, NaN, infinities and signed zeros."""
    from bandsmith.solver.rational import largest_in_rows

    rng = np.random.default_rng(13)
    for _ in range(400):
        shape = tuple(int(v) for v in rng.integers(1, 40, size=int(rng.integers(2, 4))))
        c = rng.normal(size=shape) * 10.0 ** rng.uniform(-200, 200, size=shape)
        for special in (np.nan, np.inf, -np.inf, -0.0, 0.0):
            c[rng.random(shape) < 0.03] = special
        if rng.random() < 0.3:
            c[..., : int(rng.integers(0, shape[-1]))] = 0.0
        view = c[..., int(rng.integers(0, shape[-1])):]
        for x in (c, view):
            got, want = largest_in_rows(x), np.abs(x).max(axis=-1, keepdims=True)
            assert got.shape == want.shape
            assert_array_equal(got, want)


def test_polynomials_stored_by_coefficient_give_the_batch_numbers():
    """rational.polyder_rows and polyval_rows (polynomials stored by coefficient, (k, B)) against
    polyder_batch and polyval_batch on the same polynomials stored by member, and figures._outer
    (many members multiplied through a transposed view) against numpy's broadcast outer product:
    the same numbers bit for bit, constants, NaN and infinities included. The derivative's
    factors as floats against numpy's polyder (numpy's reference), term by term."""
    from bandsmith.analysis.figures import _outer
    from bandsmith.solver.rational import polyder_batch, polyder_rows, polyval_batch, polyval_rows

    rng = np.random.default_rng(14)
    for _ in range(300):
        b, k = int(rng.integers(1, 300)), int(rng.integers(1, 10))
        c = rng.normal(size=(b, k)) * 10.0 ** rng.uniform(-60, 60, size=(b, k))
        c[rng.random((b, k)) < 0.02] = np.nan
        c[rng.random((b, k)) < 0.02] = np.inf
        x = rng.normal(size=b) * 10.0 ** rng.uniform(-5, 5, size=b)
        rows = np.ascontiguousarray(c.T)
        assert_array_equal(polyder_rows(rows), polyder_batch(c).T)
        with np.errstate(invalid="ignore", over="ignore"):  # (infinities of both signs meet)
            assert_array_equal(polyval_rows(rows, x), polyval_batch(c, x))
        d = rng.normal(size=(b, int(rng.integers(1, 10))))
        assert_array_equal(_outer(c, d), (c[:, :, None] * d[:, None, :]).reshape(b, -1))
        assert _outer(c, d).flags.c_contiguous
        if b > 1:
            assert_array_equal(polyder_batch(c[:1]).ravel(), np.polyder(c[0]) if k > 1 else [0.0])


def test_members_taken_at_once_are_each_taken_alone():
    """Rational.items and Figures.members (a search's probes, gathered at once) against
    Rational.item and Figures.take of each row alone: the same coefficients, shapes and
    figures, rows with leading zeros, all zeros, NaN and signed zeros included. Our own contract,
    no outside source."""
    from bandsmith.analysis.figures import Figures
    from bandsmith.solver.rational import Rational

    rng = np.random.default_rng(15)
    for _ in range(200):
        b = int(rng.integers(1, 40))
        num, den = rng.normal(size=(b, int(rng.integers(1, 6)))), rng.normal(size=(b, int(rng.integers(1, 8))))
        for c in (num, den):
            for r in range(b):
                c[r, : int(rng.integers(0, c.shape[1] + 1))] = float(rng.choice([0.0, -0.0]))
            c[rng.random(c.shape) < 0.03] = np.nan
        h = Rational(num, den, rng.uniform(1, 1e5, size=b))
        fig = Figures(*rng.normal(size=(8, b)))
        rows = rng.integers(0, b, size=int(rng.integers(1, 6))).tolist()
        for r, one, f in zip(rows, h.items(rows), fig.members(rows)):
            alone = h.item(r)
            for x, y in ((one.num, alone.num), (one.den, alone.den), (one.w_ref, alone.w_ref)):
                assert x.shape == y.shape
                assert_array_equal(x, y)
            for x, y in zip(f.scalars(("f0_hz", "q", "bw_hz", "f_low_hz", "f_high_hz", "gain_center", "gain_center_db", "phase_center_deg")),
                            fig.take(slice(r, r + 1)).scalars(("f0_hz", "q", "bw_hz", "f_low_hz", "f_high_hz", "gain_center", "gain_center_db", "phase_center_deg"))):
                assert x == y
            assert f.f0_hz.shape == (1,)


def test_measure_near_with_phase_rows_is_the_whole_measure_but_the_others_phases():
    """measure_near with phase_rows (the required-GBW search keeps a probe's centre phase only)
    against measure_near of every member: the same figures bit for bit, the phase of the rows
    asked for, NaN for the rest. Our own contract, no outside source."""
    import math

    from bandsmith.analysis import gbw_search
    from bandsmith.analysis.analyzer import _first_pass_many
    from bandsmith.analysis.figures import measure_near

    netlists = [_netlist(c) for c in ("mfb", "tow-thomas", "dabp")]
    firsts = _first_pass_many(netlists, [None] * len(netlists))
    items = [(n, f.ideal, f.family, f.w_ref) for n, f in zip(netlists, firsts)]
    gbws = [gbw_search._ladder(f.ideal.item().f0_hz) for f in firsts]
    h = gbw_search._ladders(items, gbws, 1e5)
    ref = firsts[0].ideal
    whole = measure_near(h, ref, spread=0.5)
    finite = np.flatnonzero(np.isfinite(whole.phase_center_deg)).tolist()
    rows = [3, finite[0], finite[-1], h.batch - 1]
    part = measure_near(h, ref, spread=0.5, phase_rows=rows)
    for name in ("f0_hz", "q", "bw_hz", "f_low_hz", "f_high_hz", "gain_center", "gain_center_db"):
        assert_array_equal(getattr(part, name), getattr(whole, name))
    assert_array_equal(part.phase_center_deg[rows], whole.phase_center_deg[rows])
    others = np.setdiff1d(np.arange(h.batch), rows)
    assert np.isnan(part.phase_center_deg[others]).all()
    assert len(finite) > 10 and not math.isnan(float(part.phase_center_deg[rows[1]]))
    assert np.isnan(measure_near(h, ref, spread=0.5, phase_rows=[]).phase_center_deg).all()


def test_netlist_nodes_and_refusals_follow_the_rule_written_out():
    """Netlist's nodes (every node but ground and the input, in the order first met, found through
    a dict) against the rule written out node by node, on every circuit and its netlist driving
    another; and its refusals: a reference used twice, an output not connected. Element's checks
    in their order: an unknown kind, a node count, a value, both ends on one node, a series
    resistance. Our own contract, no outside source."""
    import math

    from bandsmith.common.errors import InputError
    from bandsmith.solver.netlist import Element, Netlist

    def rule(net):
        seen = []
        for e in net.elements:
            for n in e.nodes:
                if n not in seen and n not in (net.ground, net.input):
                    seen.append(n)
        return tuple(seen)

    for circuit in topology_ids():
        topo = get_topology(circuit)
        net = topo.build(topo.values_from(topo.example))
        assert net.nodes == rule(net)
        joined = net.driving(get_topology("mfb").build(get_topology("mfb").values_from(get_topology("mfb").example)))
        assert joined.nodes == rule(joined)
    r = Element("R1", "R", ("in", "out"), 1e3)
    with pytest.raises(InputError, match="used twice"):
        Netlist((r, r))
    with pytest.raises(InputError, match="not connected"):
        Netlist((Element("R1", "R", ("in", "a"), 1e3),))
    for args, words in ((("X1", "Q", ("a", "b", "c", "d")), "unknown element kind"), (("R1", "R", ("a",), -1.0), "has 2 nodes"),
                        (("U1", "opamp", ("a", "b")), "has 3 nodes"), (("R1", "R", ("a", "a"), -1.0), "not a usable value"),
                        (("R1", "R", ("a", "a"), 1.0), "same node"), (("L1", "L", ("a", "b"), 1e-3, -1.0), "series resistance"),
                        (("U1", "opamp", ("a", "b", "c"), 0.0, math.nan), "series resistance")):
        with pytest.raises(InputError, match=words):
            Element(*args)


@pytest.mark.parametrize("circuit", ["dabp", "state-variable", "tow-thomas", "akerberg-mossberg"])
def test_families_weighted_together_equal_each_weighted_alone(circuit):
    """family_sums of several families scaled as AmpFamily.weighted scales them (a chain's stages
    on one several-op-amp circuit: their op-amp weights over the GBW ladders as one stack, as
    gbw_search._ladders takes them) against AmpFamily.weighted family by family: the same
    coefficients bit for bit, with the families' own terms and with terms whose leading entries
    are zero in some families only (each then trimmed alone). A consistency check of our own two
    paths, no outside source."""
    import math

    from bandsmith.solver.rational import AmpFamily, _by_largest, family_sums, family_weights
    from bandsmith.solver.rational import Rational
    from numpy.testing import assert_array_equal

    fams = _random_families(get_topology(circuit), np.random.default_rng(8), 6)
    m = len(fams[0].den_terms) - 1
    zeroed = [AmpFamily(tuple(np.r_[0.0, t[1:]] if k % 2 and j == m else t for j, t in enumerate(f.num_terms)),
                        tuple(np.r_[0.0, t[1:]] if k % 3 == 0 and j == m else t for j, t in enumerate(f.den_terms)), f.w_ref)
              for k, f in enumerate(fams)]
    for group in (fams, zeroed, zeroed[::3]):
        gbw = np.geomspace(1e4, 1e11, 62)
        beta = np.concatenate([f.w_ref / (2 * math.pi * gbw) for f in group])
        weights = family_weights(np.array([1e-5]), beta, m).reshape(len(group), gbw.size, -1)
        together = []
        for f, (num, den) in zip(group, family_sums(group, list(weights))):
            num, den = _by_largest(num, den)
            together.append(Rational(num, den, np.full(num.shape[0], f.w_ref)))
        for f, w, h in zip(group, weights, together):
            fresh = AmpFamily(f.num_terms, f.den_terms, f.w_ref).weighted(w)
            assert_array_equal(h.num, fresh.num)
            assert_array_equal(h.den, fresh.den)
            assert_array_equal(h.w_ref, fresh.w_ref)


def _random_families(topo, rng, n: int) -> list:
    """n op-amp families of one several-op-amp circuit (transfer.several_amp_family) at its
    example parts each scaled by a random factor within ±0.4 in the log, each at a random w_ref
    near 2π·10 kHz."""
    import math

    from bandsmith.analysis.transfer import several_amp_family

    fams = []
    for _ in range(n):
        values = topo.values_from({k: v * float(np.exp(rng.uniform(-0.4, 0.4))) if v > 0 else v for k, v in topo.example.items()})
        fams.append(several_amp_family(topo.build(values), 2 * math.pi * 1e4 * float(np.exp(rng.uniform(-1, 1)))))
    return fams


@pytest.mark.parametrize("circuit", ["dabp", "state-variable", "tow-thomas", "akerberg-mossberg"])
def test_family_sums_of_ladders_of_several_lengths_equal_each_family_alone(circuit):
    """family_sums of one circuit's families with ladders of different lengths (a chain's stages:
    their weights padded with rows of zeros into one stack, every family's rows a view of the
    stacked products) and the weights of the circuit's op-amps as the first columns of those of
    more op-amps (a compare's families of two and three op-amps weighted in one call): each
    family's unscaled sums are those of its own product and trim (AmpFamily.weighted before its
    scaling), bit for bit, and the shifted terms it keeps are those it makes alone. A consistency
    check of our own two paths, no outside source."""
    import math

    from bandsmith.solver.rational import AmpFamily, _lead_trim, family_sums, family_weights

    rng = np.random.default_rng(9)
    fams = _random_families(get_topology(circuit), rng, 5)
    m = len(fams[0].den_terms) - 1
    pairs = (m + 1) * (m + 2) // 2
    for group in (fams, fams[:1], fams[1:3]):
        gbws = [np.geomspace(1e4, 1e11, int(rng.integers(4, 62))) for _ in group]
        beta = np.concatenate([f.w_ref / (2 * math.pi * g) for f, g in zip(group, gbws)])
        weights = family_weights(np.array([1e-5]), beta, m + 1)  # one op-amp more: the first columns serve
        starts = np.cumsum([0] + [g.size for g in gbws])
        copies = [AmpFamily(f.num_terms, f.den_terms, f.w_ref) for f in group]
        sums = family_sums(copies, [weights[a:b, :pairs] for a, b in zip(starts[:-1], starts[1:])])
        for f, copy, g, (num, den) in zip(group, copies, gbws, sums):
            w = family_weights(np.array([1e-5]), f.w_ref / (2 * math.pi * g), m)
            fresh = AmpFamily(f.num_terms, f.den_terms, f.w_ref)
            num_s, den_s = fresh.shifted_terms()
            assert_array_equal(num, _lead_trim(w @ num_s, fresh._zero_lead[0]))
            assert_array_equal(den, _lead_trim(w @ den_s, fresh._zero_lead[1]))
            assert num.shape == _lead_trim(w @ num_s, fresh._zero_lead[0]).shape
            for kept, own in zip(copy.shifted_terms(), (num_s, den_s)):
                assert_array_equal(kept, own)
            assert copy._zero_lead == fresh._zero_lead


@pytest.mark.parametrize("gbw_hz", [None, 3e6])
def test_ladders_joined_are_each_candidates_own_ladder_padded(gbw_hz):
    """gbw_search._ladders (every kind of candidate in one batch: the one-op-amp families' rows
    together, the several-op-amp families' weights in one call and their sums by runs of one
    shape, a candidate without a family solved as it is, everything scaled in one pass) against
    Rational.joined of each candidate's with_gbw alone: the same coefficients bit for bit, in
    the search's order and in another. A consistency check of our own two paths, no outside
    source."""
    from bandsmith.analysis import gbw_search
    from bandsmith.analysis.analyzer import _first_pass_many
    from bandsmith.solver.rational import AmpFamily, Rational

    rng = np.random.default_rng(4)
    netlists = []
    for cid in ("mfb", "tow-thomas", "dabp", "sallen-key", "state-variable", "akerberg-mossberg", "rlc-tank", "tow-thomas", "dabp"):
        topo = get_topology(cid)
        netlists.append(topo.netlist(topo.values_from({k: v * float(np.exp(rng.uniform(-0.3, 0.3))) if v > 0 else v
                                                       for k, v in topo.example.items()})))
    firsts = _first_pass_many(netlists, [None] * len(netlists))
    items = [(n, f.ideal, f.family, f.w_ref) for n, f in zip(netlists, firsts)]
    items.append((netlists[1], firsts[1].ideal, None, firsts[1].w_ref))  # no family: solved whole
    for order in (sorted(range(len(items)), key=lambda k: gbw_search._batch_key(items[k][2])), list(range(len(items)))[::-1]):
        chosen = [items[k] for k in order]
        gbws = []
        for _, ideal, _, _ in chosen:
            ladder = gbw_search._ladder(ideal.item().f0_hz)[int(rng.integers(0, 40)):]
            gbws.append(ladder if gbw_hz is None else np.append(ladder, gbw_hz))
        got = gbw_search._ladders(chosen, gbws, 2e5)
        fresh = [(n, i, AmpFamily(f.num_terms, f.den_terms, f.w_ref) if isinstance(f, AmpFamily) else f, w) for n, i, f, w in chosen]
        want = Rational.joined([gbw_search.with_gbw(n, f, w, g, 2e5) for (n, _, f, w), g in zip(fresh, gbws)])
        assert_array_equal(got.num, want.num)
        assert_array_equal(got.den, want.den)
        assert_array_equal(got.w_ref, want.w_ref)
        assert got.num.shape == want.num.shape and got.den.shape == want.den.shape


@pytest.mark.parametrize("circuit", ["dabp", "state-variable", "tow-thomas", "akerberg-mossberg"])
def test_several_amp_families_made_together_equal_each_made_alone(circuit):
    """several_amp_families (a chain's stages on one several-op-amp circuit: their families from
    the expansion's op-amp terms of a stack) against several_amp_family netlist by netlist: the
    same terms bit for bit, with a one-op-amp netlist among them (None). A consistency check of
    our own two paths, no outside source."""
    import math

    from bandsmith.analysis.transfer import several_amp_families, several_amp_family
    from numpy.testing import assert_array_equal

    topo = get_topology(circuit)
    rng = np.random.default_rng(12)
    netlists, w_refs = [], []
    for _ in range(7):
        values = topo.values_from({k: v * float(np.exp(rng.uniform(-0.5, 0.5))) if v > 0 else v for k, v in topo.example.items()})
        netlists.append(topo.build(values))
        w_refs.append(2 * math.pi * 1e3 * float(np.exp(rng.uniform(-2, 2))))
    mfb = get_topology("mfb")
    netlists.insert(3, mfb.build(mfb.example))
    w_refs.insert(3, 1e4)
    together = several_amp_families(netlists, w_refs)
    assert together[3] is None
    for netlist, w, fam in zip(netlists, w_refs, together):
        alone = several_amp_family(netlist, w)
        if alone is None:
            assert fam is None
            continue
        assert fam.w_ref == alone.w_ref
        for a, b in zip(fam.num_terms + fam.den_terms, alone.num_terms + alone.den_terms):
            assert_array_equal(a, b)


def test_several_amp_families_of_several_structures_equal_each_made_alone():
    """several_amp_families of a compare's circuits (one netlist of each several-op-amp circuit,
    their terms scaled together padded to one stack: _scaled_apart) against several_amp_family
    netlist by netlist: the same terms bit for bit, with the number of terms and their lengths
    each family's own. A consistency check of our own two paths, no outside source."""
    import math

    from bandsmith.analysis.transfer import several_amp_families, several_amp_family
    from numpy.testing import assert_array_equal

    rng = np.random.default_rng(21)
    for _ in range(10):
        netlists, w_refs = [], []
        for circuit in ("dabp", "state-variable", "tow-thomas", "akerberg-mossberg", "mfb"):
            topo = get_topology(circuit)
            values = topo.values_from({k: v * float(np.exp(rng.uniform(-0.5, 0.5))) if v > 0 else v for k, v in topo.example.items()})
            netlists.append(topo.build(values))
            w_refs.append(2 * math.pi * 1e3 * float(np.exp(rng.uniform(-3, 3))))
        together = several_amp_families(netlists, w_refs)
        assert together[-1] is None
        for netlist, w, fam in zip(netlists[:-1], w_refs, together):
            alone = several_amp_family(netlist, w)
            assert fam.w_ref == alone.w_ref
            assert len(fam.num_terms) == len(alone.num_terms) and len(fam.den_terms) == len(alone.den_terms)
            for a, b in zip(fam.num_terms + fam.den_terms, alone.num_terms + alone.den_terms):
                assert a.shape == b.shape
                assert_array_equal(a, b)


def test_response_on_the_imaginary_axis_equals_at_s():
    """Rational.at_f (its points p = jω/w_ref as one real product, _jw) against at_s of
    s = 2πf·j (a complex division by w_ref): the same responses bit for bit, over random
    polynomials, references and frequencies. A consistency check of our own two paths, no
    outside source."""
    from bandsmith.solver.rational import Rational
    from numpy.testing import assert_array_equal

    rng = np.random.default_rng(2)
    for k in range(1, 9):
        for _ in range(100):
            b = int(rng.integers(1, 6))
            h = Rational(rng.normal(size=(b, max(1, k - 1))), rng.normal(size=(b, k)) + 0.1, 10 ** rng.uniform(-3, 7, size=b))
            f = 10 ** rng.uniform(-2, 8, size=int(rng.integers(1, 40)))
            assert_array_equal(h.at_f(f), h.at_s(2j * np.pi * f))


def test_the_required_gbw_search_measures_the_lower_ladder_only_where_it_can_matter(monkeypatch):
    """The required-GBW search measures each coarse ladder from a few steps below the rule of
    thumb's GBW up, and the whole ladder only where that leaves the answer open
    (gbw_search._first_measured, _settled): on the candidates of random compares, with and
    without an op-amp riding along, the answers (and the op-amp's figures) are those of every
    ladder measured whole, also where the first round is forced to start four steps from the
    top, so that nearly every search takes the second round. Our own contract, no outside source."""
    from bandsmith.analysis import gbw_search
    from bandsmith.analysis.analyzer import analyze_many
    from bandsmith.analysis.tolerances import Tolerances
    from bandsmith.design.designer import Spec, prepare_designs

    rng = np.random.default_rng(5)
    netlists = []
    for _ in range(6):
        spec = Spec(f0_hz=float(10 ** rng.uniform(2, 5)), q=float(10 ** rng.uniform(-0.3, 1.6)), gain=float(10 ** rng.uniform(-0.5, 1.3)))
        netlists += [c.netlist for c in prepare_designs(tuple(topology_ids()), spec, series="E24").candidates()]
    chosen = gbw_search._first_measured

    def searched(first, opamp):
        monkeypatch.setattr(gbw_search, "_first_measured", first)
        found = analyze_many(netlists, opamp=opamp, tolerances=Tolerances(f0=0.02, q=0.1, gain_db=1.0))
        return [(a.required_gbw, None if a.actual is None else [np.asarray(getattr(a.actual, k)).tolist() for k in ("f0_hz", "q", "gain_center_db")])
                for a in found]

    for opamp in (IDEAL, OpAmpModel(gbw_hz=3e6)):
        whole = searched(lambda ref: 0, opamp)
        assert searched(chosen, opamp) == whole
        assert searched(lambda ref: gbw_search._LADDER_POINTS - 4, opamp) == whole


def _node_coefficients_50_digits(system, nodes, w):
    """Member 0's denominator and the numerators of ``nodes`` in ``p = s/w`` (highest power
    first), from 50-digit mpmath solves and determinants of the pencil at ``r + 1`` points of the
    unit circle (``r`` the count of reactive rows' rank bound: the number of capacitors and
    inductors), interpolated by a 50-digit Vandermonde solve; all divided by the denominator's
    largest |coefficient|, exact zeros below 1e-30 of it."""
    import mpmath as mp

    mp.mp.dps = 50
    g, c = system.G[0], system.C[0]
    n = g.shape[0]
    r = int(np.count_nonzero(c.any(axis=1)))
    pts = [mp.exp(2j * mp.pi * j / (r + 1) + 0.3j) for j in range(r + 1)]
    vals = []
    for p in pts:
        a = mp.matrix([[mp.mpf(float(g[i, j])) + p * w * mp.mpf(float(c[i, j])) for j in range(n)] for i in range(n)])
        b = mp.matrix(n, 1)
        b[system.layout.source_row] = 1
        x, d = mp.lu_solve(a, b), mp.det(a)
        vals.append([d] + [d * x[i] for i in nodes])
    v = mp.matrix([[p**m for m in range(r + 1)] for p in pts])
    rows = []
    for col in range(1 + len(nodes)):
        cf = mp.lu_solve(v, mp.matrix([row[col] for row in vals]))
        rows.append([mp.re(cf[m]) for m in reversed(range(r + 1))])
    scale = max(abs(x) for x in rows[0])
    return [[float(x / scale) if abs(x / scale) > mp.mpf(10) ** -30 else 0.0 for x in row] for row in rows]


@pytest.mark.parametrize("circuit", ["dabp", "state-variable", "tow-thomas", "akerberg-mossberg"])
def test_node_coefficients_from_the_fewest_samples_against_50_digits(circuit):
    """node_coefficients with a degree bound of 2 (the circuit's two capacitors) samples the
    pencil at p = e^{iπ/4} and p = 1 only (real coefficients: conjugate points add nothing). On
    random part values its denominator and numerators (with the circuit's own denominator, as the
    amplifier needs take it) agree with 50-digit mpmath values to 1e-13 of the largest
    coefficient, as the full circle's do, the step slopes from them with those of the 50-digit
    coefficients to 1e-13, and the solution at f0 is the full circle's bit for bit (the same
    pencil solved). Reference: mpmath (50 digits)."""
    import math

    from bandsmith.analysis.timeresponse import max_step_slopes_of
    from bandsmith.design.candidate import Candidate, Conditions
    from bandsmith.solver.mna import build_system
    from bandsmith.solver.rational import node_coefficients

    topo = get_topology(circuit)
    rng = np.random.default_rng(7)
    for _ in range(4):
        values = {k: v * 10.0 ** rng.uniform(-0.3, 0.3) for k, v in topo.example.items()}
        an = Candidate(circuit, values).analyze(Conditions())
        system = build_system(an.netlist)
        assert sum(e.kind in ("C", "L") for e in an.netlist.elements) == 2
        nodes = [system.layout.node_index[e.nodes[2]] for e in an.netlist.opamps]
        w = 2 * math.pi * an.ideal.item().f0_hz
        den = (an.h_ideal.den[0].tolist(), float(an.h_ideal.w_ref[0]))
        exact = _node_coefficients_50_digits(system, nodes, w)
        sign = 1.0 if exact[0][-1] * den[0][-1] > 0 else -1.0  # the analysis's denominator keeps its sign
        exact = [[sign * x for x in row] for row in exact]
        nums, den_c, x = node_coefficients(system, nodes, w, at=1j * w, den=den, degree=2)
        _, _, x_full = node_coefficients(system, nodes, w, at=1j * w, den=den)
        assert_array_equal(x, x_full)
        for got, want in zip([den_c] + nums, exact):
            got = [0.0] * (len(want) - len(got)) + got
            assert_allclose(got, want, rtol=0, atol=1e-13)
        slopes = max_step_slopes_of(nums, den_c, w)
        assert_allclose(slopes, max_step_slopes_of([r[-3:] for r in exact[1:]], exact[0][-3:], w), rtol=1e-13)


def test_fewest_samples_give_back_real_polynomials():
    """The fewest samples' matrix (rational._few_matrix) turns the values of any real polynomial of
    degree 0, 1 or 2 at rational._few_points, laid out as (Re, Im, Re, …), into its coefficients
    (highest power first), to rounding: numpy.polyval gives the values. Reference: numpy.polyval."""
    from bandsmith.solver.rational import _few_matrix, _few_points

    rng = np.random.default_rng(3)
    for degree in (0, 1, 2):
        points = np.array(_few_points(degree))
        for _ in range(50):
            c = rng.standard_normal(degree + 1) * 10.0 ** rng.uniform(-3, 3, degree + 1)
            v = np.polyval(c, points)
            b = np.column_stack([v.real, v.imag]).ravel()[: degree + 1]
            assert_allclose(b @ _few_matrix(degree), c, rtol=0, atol=1e-14 * np.abs(c).max())


def test_polyval_batch_complex_points_equal_mixed_real_complex_horner():
    """polyval_batch makes real coefficients complex once at complex points: bit for bit (signed
    zeros, infinities and NaN included) the Horner steps with the real coefficients in each mixed
    operation, which numpy carries out on the float64 operand cast to complex128 with a zero
    imaginary part (numpy's type promotion rules, numpy.result_type; the numpy user guide). The
    sign bit of a NaN is not compared (it carries no number)."""
    from bandsmith.solver.rational import polyval_batch

    def mixed(c, x):  # the steps as written, every coefficient real
        cc = c if x.ndim == 1 else c.reshape(c.shape + (1,) * (x.ndim - 1))
        if c.shape[1] == 1:
            return cc[:, 0] + np.zeros_like(x)
        y = cc[:, 0] * x
        for i in range(1, c.shape[1] - 1):
            y += cc[:, i]
            y *= x
        y += cc[:, -1]
        return y

    rng = np.random.default_rng(5)
    for _ in range(300):
        b, k = int(rng.integers(1, 6)), int(rng.integers(1, 9))
        c = rng.normal(size=(b, k)) * 10.0 ** rng.integers(-5, 5, size=(b, k))
        c[rng.random((b, k)) < 0.15] = rng.choice([0.0, -0.0, np.inf, -np.inf, np.nan])
        x = (rng.normal(size=(b, 7)) + 1j * rng.normal(size=(b, 7))) if rng.random() < 0.5 else 1j * rng.normal(size=b)
        x[np.unravel_index(rng.integers(0, x.size), x.shape)] = rng.choice([0j, complex(-0.0, -0.0), 1j * np.inf])
        with np.errstate(all="ignore"):
            got, want = polyval_batch(c, x), mixed(c, x)
        assert got.dtype == want.dtype
        assert_array_equal(got.view(float), want.view(float))
        number = ~np.isnan(want.view(float))  # (a NaN's sign bit carries nothing)
        assert_array_equal(np.signbit(got.view(float))[number], np.signbit(want.view(float))[number])
