"""Closed-form roots and the fast figure paths, checked against general-purpose references."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

from bandsmith.analysis.analyzer import _first_pass
from bandsmith.analysis.gbw_search import _ladder
from bandsmith.circuits import get_topology, topology_ids
from bandsmith.analysis.figures import measure, measure_near
from bandsmith.solver.polyroots import cubic_roots, quadratic_roots


def _real_sorted(roots):
    return np.sort(roots[np.isfinite(roots)])


def test_cubic_roots_match_numpy_roots_across_scales():
    # numpy.roots (companion-matrix eigenvalues, a general-purpose reference) on cubics whose roots
    # spread over twenty decades: the closed form must keep the small roots beside a large one.
    rng = np.random.default_rng(3)
    for _ in range(300):
        true = rng.normal(size=3) * 10 ** rng.uniform(-10, 10, size=3)
        c = np.poly(true)[None, :] * rng.uniform(0.5, 2.0)
        got, bad = cubic_roots(c)
        assert not bad[0]
        assert_allclose(_real_sorted(got[0]), np.sort(true), rtol=1e-12)


def test_cubic_with_one_real_root_beside_a_large_complex_pair():
    # The reversed-polynomial branch: a real root at 1 and a pair of modulus 1e9.
    pair = 1e9 * np.exp(1j * np.array([2.0, -2.0]))
    c = np.poly(np.concatenate([[1.0], pair])).real[None, :]
    got, _ = cubic_roots(c)
    assert_allclose(_real_sorted(got[0]), [1.0], rtol=1e-13)


def test_quadratic_roots_real_and_complex():
    got, bad = quadratic_roots(np.array([[1.0, -3.0, 2.0], [1.0, 0.0, 1.0], [2.0, -4.0, 2.0]]))
    assert not bad.any()
    assert_allclose(np.sort(got[0]), [1.0, 2.0])
    assert np.all(np.isnan(got[1]))  # u² + 1: a complex pair
    assert_allclose(got[2], [1.0, 1.0])  # a double root counts as real


@pytest.mark.parametrize("spread", [0.14, 0.5, 2.0])
@pytest.mark.parametrize("topology_id", topology_ids())
def test_measure_near_equals_the_exact_figures_where_it_measures(topology_id, spread):
    # The Newton-from-the-ideal path against the exact-root path on a GBW ladder: where it gives
    # figures they agree to 1e-8 (the band edges start from the peak's Lorentzian where that lies
    # in their window, and wider windows find members far from the ideal: those too), and with
    # the default window (14 %) the members it leaves out are far outside the default tolerances
    # (f0 ±1 %, Q ±5 %), so NaN never turns a pass into a fail. With several op-amps the
    # companion-matrix roots of the higher-degree polynomials are off by up to some 1e-7 at these
    # Q; Newton's figures hold 1e-12 there (the next test, against 50-digit mpmath).
    topo = get_topology(topology_id)
    nl = topo.netlist(dict(topo.example))
    first = _first_pass(nl, None)
    ladder = _ladder(first.ideal.item().f0_hz)
    h = first.family.at(ladder, 1e5)
    exact, near = measure(h), measure_near(h, first.ideal, spread=spread)
    got = np.isfinite(near.q)
    assert got.sum() >= 30
    rtol = 1e-8 if len(nl.opamps) == 1 else 1e-6
    for name in ("f0_hz", "q", "gain_center", "f_low_hz", "f_high_hz"):
        assert_allclose(getattr(near, name)[got], getattr(exact, name)[got], rtol=rtol)
    if spread == 0.14:
        ref = first.ideal.item()
        worst = np.maximum(np.abs(exact.f0_hz[~got] / ref.f0_hz - 1.0) / 0.01, np.abs(exact.q[~got] / ref.q - 1.0) / 0.05)
        assert np.all(~np.isfinite(worst) | (worst > 2.0))


@pytest.mark.parametrize("topology_id", ["tow-thomas", "akerberg-mossberg"])
def test_measure_near_against_fifty_digit_figures(topology_id):
    # f0 and Q of GBW-ladder members of a circuit with several op-amps, from the same polynomials
    # evaluated in 50-digit arithmetic (mpmath: the peak where d|H|²/dω = 0, the edges where
    # |H|² is half the peak), against Newton's figures: f0 to 1e-12, Q to 1e-11 (the edges'
    # rounding, some 1e-14 of f0, over a bandwidth of 1/Q of it; Q reaches 76 on this ladder).
    import mpmath as mp

    topo = get_topology(topology_id)
    first = _first_pass(topo.netlist(dict(topo.example)), None)
    h = first.family.at(_ladder(first.ideal.item().f0_hz), 1e5)
    near = measure_near(h, first.ideal, spread=0.14)
    members = np.flatnonzero(np.isfinite(near.q))[::6]
    assert members.size >= 5
    with mp.workdps(50):
        for i in members:
            num, den = ([mp.mpf(float(c)) for c in row] for row in (h.num[i], h.den[i]))
            x_of = 2 * mp.pi / mp.mpf(float(h.w_ref[i]))

            def mag2(x):
                p = mp.mpc(0, x)
                return abs(mp.polyval(num, p) / mp.polyval(den, p)) ** 2

            x_pk = mp.findroot(lambda x: mp.diff(mag2, x), mp.mpf(float(near.f0_hz[i])) * x_of)
            half = mag2(x_pk) / 2
            x_lo = mp.findroot(lambda x: mag2(x) - half, mp.mpf(float(near.f_low_hz[i])) * x_of)
            x_hi = mp.findroot(lambda x: mag2(x) - half, mp.mpf(float(near.f_high_hz[i])) * x_of)
            assert near.f0_hz[i] == pytest.approx(float(x_pk / x_of), rel=1e-12)
            assert near.q[i] == pytest.approx(float(x_pk / (x_hi - x_lo)), rel=1e-11)


def test_biquad_closed_form_at_a_very_high_q():
    # Facts of the trade (common practice, no source): a parallel tank has f0 = 1/(2π√(LC)) and,
    # across R2, Q = R2·√(C/L). At Q ≈ 3e10 the closed form still gives both to 1e-12.
    topo = get_topology("rlc-tank")
    v = {"R1": 1.0, "R2": 1.0, "L": 1e-15, "C": 1e6}
    fig = measure(_first_pass(topo.netlist(v), None).h_ideal).item()
    assert fig.f0_hz == pytest.approx(1.0 / (2 * np.pi * np.sqrt(1e-15 * 1e6)), rel=1e-12)
    assert fig.q == pytest.approx(1.0 * np.sqrt(1e6 / 1e-15), rel=1e-12)


@pytest.mark.parametrize("signs", ["positive", "negative", "mixed"])
def test_cubic_roots_of_batches_with_three_real_roots_match_numpy_roots(signs):
    # A whole batch with three real roots (the cubics of a spread): the dominant root is found with
    # one cosine where the coefficients decide it; numpy.roots (companion-matrix eigenvalues) is
    # the reference. Roots over eight decades, well apart.
    rng = np.random.default_rng({"positive": 1, "negative": 2, "mixed": 3}[signs])
    n = 500
    true = rng.uniform(1.0, 3.0, size=(n, 3)) * 10.0 ** rng.integers(-4, 5, size=(n, 3))
    true[:, 1] *= 1.5  # no double roots
    if signs == "negative":
        true = -true
    elif signs == "mixed":
        true *= rng.choice([-1.0, 1.0], size=(n, 3))
    c = np.stack([np.poly(t) for t in true])
    got, bad = cubic_roots(c)
    assert not bad.any()
    for g, t in zip(got, true):
        assert_allclose(_real_sorted(g), np.sort(t), rtol=1e-9)


def test_positive_roots_only_leave_the_positive_roots_unchanged():
    # With positive=True a root array with no member at or above zero skips its Newton polish;
    # the positive roots must be exactly those of the full computation (derived: a polish step is
    # at most half the root, so it never crosses zero).
    from bandsmith.solver.polyroots import cubic_roots_rows, quadratic_roots_rows

    rng = np.random.default_rng(8)
    n = 4000
    true = rng.uniform(0.5, 2.0, size=(n, 3)) * 10.0 ** rng.integers(-3, 4, size=(n, 3))
    true[:, :2] *= -1.0  # two negative roots in every member, one positive
    true[:50, 2] = 0.0  # a root at zero
    c = [np.ascontiguousarray(col) for col in np.stack([np.poly(t) for t in true]).T]
    for solve, coeffs in ((cubic_roots_rows, c), (quadratic_roots_rows, [np.ones(n), -(true[:, 0] + true[:, 2]), true[:, 0] * true[:, 2]])):
        full, bad_full = solve(*coeffs)
        pos, bad_pos = solve(*coeffs, positive=True)
        np.testing.assert_array_equal(bad_full, bad_pos)
        for a, b in zip(full, pos):
            np.testing.assert_array_equal(np.where(a > 0, a, np.nan), np.where(b > 0, b, np.nan))


def test_companion_roots_are_numpy_roots_bit_for_bit():
    # companion_roots is numpy.roots without its checks: the same numbers, dtype and order
    # (numpy.roots as the reference), zeros at either end included.
    from bandsmith.solver.polyroots import companion_roots

    rng = np.random.default_rng(5)
    for _ in range(500):
        p = rng.normal(size=int(rng.integers(1, 8)))
        p[rng.random(p.size) < 0.3] = 0.0
        want, got = np.roots(p), companion_roots(p)
        assert got.dtype == want.dtype and got.shape == want.shape
        assert got.tobytes() == want.tobytes()
