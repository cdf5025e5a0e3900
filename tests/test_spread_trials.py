"""The trial figures worked one array per coefficient (bandsmith.spread.trialfigures) against
general-purpose references.

- Coefficients through shared monomial prefixes: bit for bit those of the expansion, and equal
  (1e-9) to the MNA solver's (LU determinants at interpolation points, numpy.linalg).
- Routh–Hurwitz on rows: the same answer as the (B, k) implementation and as the real parts of
  numpy.roots (companion-matrix eigenvalues).
- Peak and half-power points by Newton's method from the first-order estimate (several op-amps,
  finite GBW): the figures of the global search (numpy.linalg.eigvals of the companion matrices)
  within 1e-9, the same trials measured, the same trials passing, including a slow op-amp with
  wide tolerances where many trials fail.
- Closed-form roots on rows: the (B, k) path of bandsmith.analysis.figures (to rounding).
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose, assert_array_equal

from bandsmith.analysis.analyzer import within_tolerances
from bandsmith.analysis.figures import _by_roots, _slope_u, _sq_mag_u, measure
from bandsmith.circuits import get_topology
from bandsmith.solver.mna import IDEAL, OpAmpModel
from bandsmith.solver.stability import hurwitz_stable
from bandsmith.spread import trialfigures as tf
from bandsmith.spread.evaluator import Evaluator, draws, evaluator_columns, nominal_figures, prepare_spread
from bandsmith.spread.spread_settings import SpreadSettings

FINITE = OpAmpModel(1e6, 1e5)
MULTI = ["dabp", "state-variable", "tow-thomas", "akerberg-mossberg"]


def _netlist(circuit):
    topo = get_topology(circuit)
    values = dict(topo.example)
    if "RL" in values:
        values["RL"] = 15.0
    return topo.netlist(values)


def _setup(circuit, opamp, settings):
    net = _netlist(circuit)
    prep = prepare_spread(net, settings, opamp)
    ev = prep.evaluator
    (_, drawn), = list(draws(settings, prep.spread, settings.trials))
    return net, ev, evaluator_columns(ev, drawn), prep.nominal


def _rows(a):
    return [np.ascontiguousarray(a[:, i]) for i in range(a.shape[1])]


def _monomial_by_monomial(expansion, ratios):
    """The coefficients the plain way: each monomial as its own product of powers, then each term
    added in order (what the shared prefixes must reproduce exactly)."""
    q = np.array(ratios.T, dtype=float)
    bad = ~(np.isfinite(q) & (q > 0)).all(axis=0)
    for j, v in enumerate(expansion.variables):
        if v.inverse:
            q[j] = 1.0 / q[j]
    factors, num_terms, den_terms = expansion.monomial_terms()
    mono = []
    for f in factors:
        m = np.ones(q.shape[1])
        for k, (i, e) in enumerate(f):
            m = (np.power(q[i], e) if e != 1 else q[i].copy()) if k == 0 else m * (q[i] if e == 1 else q[i] ** e)
        mono.append(m)
    out = []
    for terms, size in ((num_terms, len(expansion.num_powers)), (den_terms, len(expansion.den_powers))):
        c = np.zeros((size, q.shape[1]))
        for row, m, coef in terms:
            c[row] += coef * mono[m]
        c[:, bad] = np.nan
        out.append(c)
    return out


@pytest.mark.parametrize("circuit", ["rlc-tank", "mfb", "sallen-key"] + MULTI)
def test_shared_prefix_coefficients_are_the_expansions_and_the_solvers(circuit):
    _, ev, ratios, _ = _setup(circuit, FINITE, SpreadSettings(trials=3000, seed=4, gbw_tol=0.2))
    ratios = np.array(ratios)
    ratios[7, 1] = np.nan
    ratios[9, 0] = -1.0
    moved = ratios.copy()  # A0 off its nominal too (the shared products leave out factors held at 1)
    moved[:, [j for j, v in enumerate(ev.variables) if v.kind == "a0"]] *= 1.01
    for r in (ratios, moved):  # 3000 members: the expansion's large-batch loops
        for mine, theirs in zip(ev.expansion.coefficients(r), _monomial_by_monomial(ev.expansion, r)):
            assert_array_equal(mine, theirs)  # the same products and sums: bit-identical, NaN alike
    # the MNA solver (numpy.linalg determinants), normalised alike, on a few members
    good = ratios[:40][np.isfinite(ratios[:40]).all(axis=1) & (ratios[:40] > 0).all(axis=1)]
    h_exp = ev.rational(good)
    ev_solver = Evaluator(ev.netlist, ev.opamp, ev.w_ref, nominal_figures(ev.netlist, ev.opamp, ev.w_ref), engine="solver")
    h_sol = ev_solver.rational(good)
    f = np.geomspace(0.3, 3.0, 7) * ev.nominal.f0_hz
    assert_allclose(h_exp.at_f(f), h_sol.at_f(f), rtol=1e-9)


@pytest.mark.parametrize("k", [2, 3, 4, 5, 6, 7])
def test_routh_hurwitz_on_rows_matches_the_batch_form_and_the_roots(k):
    rng = np.random.default_rng(k)
    # products of stable and unstable factors, and plain random polynomials
    den = rng.uniform(0.05, 3.0, size=(4000, k)) * np.where(rng.random((4000, k)) < 0.1, -1.0, 1.0)
    den[:10, 1] = 0.0
    den[10, 2 % k] = np.nan
    mine = tf.hurwitz_rows(_rows(den))
    assert_array_equal(mine, hurwitz_stable(den))
    clean = np.isfinite(den).all(axis=1)
    for row, stable in zip(den[clean][:400], mine[clean][:400]):
        r = np.roots(row)
        margin = np.max(r.real) if r.size else -1.0
        if abs(margin) > 1e-9:  # away from the axis, where the two tests must agree
            assert stable == (margin < 0)


@pytest.mark.parametrize("circuit, opamp", [("rlc-tank", IDEAL), ("rlc-tank", FINITE), ("mfb", FINITE), ("sallen-key", FINITE)])
def test_closed_form_on_rows_matches_the_batch_form(circuit, opamp):
    settings = SpreadSettings(trials=3000, seed=5, gbw_tol=0.0 if opamp.ideal else 0.2)
    _, ev, ratios, _ = _setup(circuit, opamp, settings)
    h = ev.rational(ratios)
    pu, qu = _sq_mag_u(h.num), _sq_mag_u(h.den)
    ref = _by_roots(pu, qu, _slope_u(pu, qu))
    rp, rq = tf.sq_mag_rows(_rows(h.num)), tf.sq_mag_rows(_rows(h.den))
    assert_array_equal(np.stack(rp, axis=1), pu)
    mine = tf.by_roots_rows(rp, rq, tf.slope_rows(rp, rq))
    for a, b in zip(mine, ref):
        # the slope's sums are BLAS's in the batch form (fused multiply-adds): a unit in the last place
        assert_array_equal(np.isfinite(a), np.isfinite(b))
        assert_allclose(a, b, rtol=1e-13)


@pytest.mark.parametrize("circuit", MULTI)
@pytest.mark.parametrize("case", ["finite", "slow"])
def test_newton_from_the_estimate_gives_the_global_figures(circuit, case):
    if case == "finite":
        opamp, settings = FINITE, SpreadSettings(trials=2500, seed=3, gbw_tol=0.2)
    else:  # a slow op-amp, wide tolerances: many trials unstable or far from their estimate
        opamp = OpAmpModel(1e5, 1e4)
        settings = SpreadSettings(tolerances={"R": 0.2, "C": 0.3}, trials=2500, seed=3, gbw_tol=0.5)
    _, ev, ratios, nominal = _setup(circuit, opamp, settings)
    fig, ok = ev.figures(ratios)
    h = ev.rational(ratios)
    ref = measure(h)  # companion-matrix eigenvalues (numpy.linalg.eigvals): global
    ref_ok = hurwitz_stable(h.den) & ref.valid
    assert_array_equal(ok, ref_ok)
    assert_array_equal(ok & within_tolerances(fig, nominal.item(), settings.window), ref_ok & within_tolerances(ref, nominal.item(), settings.window))
    for name in ("f0_hz", "q", "f_low_hz", "f_high_hz", "gain_center_db", "phase_center_deg"):
        assert_allclose(getattr(fig, name)[ok], getattr(ref, name)[ok], rtol=1e-9, atol=1e-9)
