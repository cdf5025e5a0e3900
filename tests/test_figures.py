"""Measured response figures against the biquad's exact values, and their limit as GBW grows.

For a band-pass biquad H = H0·(ω0/Q)·s/(s² + (ω0/Q)·s + ω0²) (derived, any circuit-theory text):
|H(jω)|² = H0²·(ω0ω/Q)² / ((ω0² − ω²)² + (ω0ω/Q)²) is largest, H0², at ω = ω0; it is half of that
where |ω0² − ω²| = ω0ω/Q, i.e. ω = ω0·(√(1 + 1/(4Q²)) ∓ 1/(2Q)); so bandwidth = ω0/Q exactly,
f_low·f_high = f0², and H(jω0) = H0. The README's "Definitions" measure the figures on the response; they must equal these.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose, assert_array_equal

from bandsmith.analysis.analyzer import analyze, ideal_figures, transfer_function
from bandsmith.circuits import get_topology
from bandsmith.analysis.figures import measure
from bandsmith.solver.mna import OpAmpModel
from bandsmith.solver.rational import Rational

TWO_PI = 2.0 * math.pi


def biquad_expected(f0, q, h0):
    """Exact figures of the biquad (derivation in the module docstring)."""
    r = 1.0 / (2.0 * q)
    f_low = f0 * (math.sqrt(1.0 + r * r) - r)
    f_high = f0 * (math.sqrt(1.0 + r * r) + r)
    return {"f0_hz": f0, "q": q, "bw_hz": f0 / q, "f_low_hz": f_low, "f_high_hz": f_high, "gain_center": h0}


def _log_uniform(rng, lo, hi):
    return float(np.exp(rng.uniform(math.log(lo), math.log(hi))))


def random_tank(rng):
    """A tank of any f0 (10 Hz – 1 MHz), Q from 0.2 to 1000 and gain from 0.01 to 1000."""
    f0, q, g = _log_uniform(rng, 10, 1e6), _log_uniform(rng, 0.2, 1e3), _log_uniform(rng, 1e-2, 1e3)
    c = _log_uniform(rng, 1e-10, 1e-6)
    L = 1.0 / ((TWO_PI * f0) ** 2 * c)
    r2 = q * math.sqrt(L / c)
    v = {"R1": r2 / g, "R2": r2, "L": L, "C": c}
    # parallel resonance (circuit theory): f0 = 1/(2π√(LC)), Q = R2·√(C/L), H0 = −R2/R1
    return v, biquad_expected(f0, q, -g)


def random_mfb(rng):
    """Any MFB part set; expected figures from the closed form (Franco 3rd ed. ch. 3, mapped)."""
    v = {r: _log_uniform(rng, 100, 1e6) for r in ("R1", "R2", "R3")}
    v.update({c: _log_uniform(rng, 1e-10, 1e-6) for c in ("C1", "C2")})
    r1, r2, r3, c1, c2 = (v[k] for k in ("R1", "R2", "R3", "C1", "C2"))
    w0 = math.sqrt((1 / r1 + 1 / r2) / (r3 * c1 * c2))
    return v, biquad_expected(w0 / TWO_PI, w0 * r3 * c1 * c2 / (c1 + c2), -r3 * c1 / (r1 * (c1 + c2)))


def random_sallen_key(rng):
    """A stable Sallen–Key part set (variant A closed form, derived by nodal analysis), Q up to about 100."""
    while True:
        v = {r: _log_uniform(rng, 1e3, 1e5) for r in ("R1", "R2", "R3", "RA")}
        v.update({c: _log_uniform(rng, 1e-9, 1e-6) for c in ("C1", "C2")})
        v["RB"] = v["RA"] * _log_uniform(rng, 0.01, 10)
        r1, r2, r3, ca, cb = (v[k] for k in ("R1", "R2", "R3", "C1", "C2"))
        k = 1 + v["RB"] / v["RA"]
        a1 = 1 / (r1 * ca) + (1 - k) / (r2 * ca) + 1 / (r3 * ca) + 1 / (r3 * cb)
        w0 = math.sqrt((r1 + r2) / (r1 * r2 * r3 * ca * cb))
        if a1 > 0 and w0 / a1 < 100:
            return v, biquad_expected(w0 / TWO_PI, w0 / a1, (k / (r1 * ca)) / a1)


MAKERS = {"rlc-tank": random_tank, "mfb": random_mfb, "sallen-key": random_sallen_key}


@pytest.mark.parametrize("topology_id", list(MAKERS))
def test_ideal_figures_equal_biquad_values(topology_id):
    # For an ideal op-amp the measured figures equal the biquad values (derived; to 1e-6).
    rng = np.random.default_rng(31 + list(MAKERS).index(topology_id))
    topo = get_topology(topology_id)
    for _ in range(40):
        v, want = MAKERS[topology_id](rng)
        fig = ideal_figures(topo.netlist(v)).item()
        for key, w in want.items():
            assert_allclose(getattr(fig, key), w, rtol=1e-6, err_msg=f"{key} for {v}")
        assert_allclose(fig.f_low_hz * fig.f_high_hz, fig.f0_hz**2, rtol=1e-6)  # derived, above
        assert_allclose(fig.gain_center_db, 20 * math.log10(abs(want["gain_center"])), atol=1e-6)
        # common practice, no source: inverting circuits sit at 180° at f0, the non-inverting at 0°
        assert_allclose(abs(fig.phase_center_deg), 180.0 if topo.inverting else 0.0, atol=1e-5)


def test_batched_measure_equals_one_by_one_and_grid_search():
    # derived (consistency): a batch measures each member as it would alone, and the grid-and-refine
    # path (for Monte Carlo) finds the same figures as the exact-roots path when the band is inside.
    rng = np.random.default_rng(5)
    topo = get_topology("mfb")
    base = dict(topo.example)
    n = 32
    over = {r: base[r] * rng.uniform(0.7, 1.3, n) for r in base}
    h = transfer_function(topo.netlist(base), overrides=over)
    batch = measure(h)
    grid = measure(h, grid=np.logspace(-1, 1, 400))
    for i in range(n):
        one = measure(h.item(i)).item()
        for key in ("f0_hz", "q", "bw_hz", "f_low_hz", "f_high_hz", "gain_center", "phase_center_deg"):
            assert_allclose(getattr(batch, key)[i], getattr(one, key), rtol=1e-12)
            assert_allclose(getattr(grid, key)[i], getattr(one, key), rtol=1e-9)


def test_biquad_given_directly_as_a_rational():
    # scipy-style (b, a) of a hand-made biquad (derived values above), independent of any circuit
    f0, q, h0 = 2500.0, 7.5, -3.0
    w0 = TWO_PI * f0
    # in p = s/ω0: H = (H0/Q)·p / (p² + p/Q + 1)
    num = np.array([[h0 / q, 0.0]])
    den = np.array([[1.0, 1.0 / q, 1.0]])
    fig = measure(Rational(num, den, np.array([w0]))).item()
    for key, w in biquad_expected(f0, q, h0).items():
        assert_allclose(getattr(fig, key), w, rtol=1e-9)


# ------------------------------------------------------------------ finite op-amp → ideal

# × f0. Found: below about 30·f0 (a very slow op-amp, the figures 5–20 % off) the Q deviation of the
# MFB and Sallen–Key examples is not monotone in GBW; from 30·f0 on it is.
GBW_LADDER = np.array([30.0, 100.0, 300.0, 1e3, 3e3, 1e4, 3e4, 1e5, 3e5, 1e6])


@pytest.mark.parametrize("topology_id", ["rlc-tank", "mfb", "sallen-key"])
def test_finite_opamp_figures_converge_monotonically_to_ideal(topology_id):
    # derived: the single-pole model A(s) = A0/(1 + s·A0/(2π·GBW)) tends to the ideal op-amp as
    # GBW → ∞ and A0 → ∞; with A0 = 1e12 the deviations of f0, Q and gain shrink monotonically
    # along the GBW ladder, roughly as 1/GBW (first order in f0/GBW, derived).
    topo = get_topology(topology_id)
    nl = topo.netlist(topo.example)
    ideal = ideal_figures(nl).item()
    f0 = ideal.f0_hz
    h = transfer_function(nl, gbw_hz=f0 * GBW_LADDER, a0=np.full(GBW_LADDER.size, 1e12))
    fig = measure(h)
    errs = {
        "f0": np.abs(fig.f0_hz / ideal.f0_hz - 1),
        "q": np.abs(fig.q / ideal.q - 1),
        "gain": np.abs(fig.gain_center / ideal.gain_center - 1),
    }
    for key, e in errs.items():
        e = e[np.isfinite(e)]
        assert e.size == GBW_LADDER.size, f"{key}: figures defined along the ladder"
        assert np.all(np.diff(e) <= 1e-12), f"{key}: deviation not monotone along the GBW ladder: {e}"
        assert e[-1] < 1e-3, key
    # the last decade: deviation ∝ 1/GBW (ratio ≈ 10 per decade of GBW; first order)
    assert_allclose(errs["f0"][-3] / errs["f0"][-1], 10.0, rtol=0.05)
    assert np.all(fig.gain_center * ideal.gain_center > 0)  # the sign of the circuit is kept


@pytest.mark.parametrize("topology_id", ["rlc-tank", "mfb", "sallen-key"])
def test_finite_opamp_with_default_a0_approaches_ideal_within_the_a0_floor(topology_id):
    # derived: with A0 = 1e5 the limit GBW → ∞ is the op-amp of flat gain A0, whose error is of
    # order (noise gain)/A0; at GBW = 1e5·f0 every figure is within 0.1 % of the ideal one.
    topo = get_topology(topology_id)
    nl = topo.netlist(topo.example)
    ideal = ideal_figures(nl).item()
    fig = measure(transfer_function(nl, OpAmpModel(1e5 * ideal.f0_hz, 1e5))).item()
    assert_allclose([fig.f0_hz, fig.q, fig.gain_center], [ideal.f0_hz, ideal.q, ideal.gain_center], rtol=1e-3)


@pytest.mark.parametrize("topology_id", ["rlc-tank", "mfb", "sallen-key"])
def test_analyze_actual_equals_direct_measurement(topology_id):
    # consistency: analyze()'s finite-op-amp figures are those of the model measured directly
    topo = get_topology(topology_id)
    nl = topo.netlist(topo.example)
    gbw = 300.0 * topo.formulas(topo.example).f0_hz
    for a0 in (1e5, 3e3):
        res = analyze(nl, opamp=OpAmpModel(gbw, a0))
        direct = measure(transfer_function(nl, OpAmpModel(gbw, a0))).item()
        got = res.actual.item()
        for key in ("f0_hz", "q", "bw_hz", "gain_center", "phase_center_deg"):
            assert_allclose(getattr(got, key), getattr(direct, key), rtol=1e-9, err_msg=key)
        assert_allclose(res.h_actual.at_f(np.array([got.f0_hz]))[0, 0],
                        transfer_function(nl, OpAmpModel(gbw, a0)).at_f(np.array([got.f0_hz]))[0, 0], rtol=1e-9)


def test_figures_json_has_contract_keys():
    # README (`bandsmith analyze`): FIGURES keys
    fig = ideal_figures(get_topology("rlc-tank").netlist(get_topology("rlc-tank").example))
    keys = {"f0_hz", "q", "bw_hz", "f_low_hz", "f_high_hz", "gain_center", "gain_center_db", "phase_center_deg"}
    j = fig.to_json()
    assert set(j) >= keys
    assert all(isinstance(j[k], float) for k in keys)


def _figures_by_mpmath(num, den, w_ref, f_guess):
    """f0, f_low and f_high (Hz) of one member by 60-digit arithmetic (mpmath): the stationary
    point of ln|H|² and the half-power points, each bracketed around the given guesses."""
    import mpmath

    mpmath.mp.dps = 60
    n = [mpmath.mpf(float(x)) for x in num]
    d = [mpmath.mpf(float(x)) for x in den]

    def mag2(u):  # |H(jx)|² at u = x², x = ω/w_ref
        p = mpmath.mpc(0, mpmath.sqrt(u))
        return abs(mpmath.polyval(n, p) / mpmath.polyval(d, p)) ** 2

    to_u = [(TWO_PI * f / w_ref) ** 2 for f in f_guess]  # f0, f_low, f_high
    pk = mpmath.findroot(lambda u: mpmath.diff(lambda v: mpmath.log(mag2(v)), u), (to_u[1], to_u[2]), solver="anderson")
    half = mag2(pk) / 2
    lo = mpmath.findroot(lambda u: mpmath.log(mag2(u) / half), (to_u[1] * (1 - 1e-6), pk), solver="anderson")
    hi = mpmath.findroot(lambda u: mpmath.log(mag2(u) / half), (pk, to_u[2] * (1 + 1e-6)), solver="anderson")
    return [float(mpmath.sqrt(u) * w_ref / TWO_PI) for u in (pk, lo, hi)]


def test_measure_from_holds_a_narrow_peak_to_many_digits():
    # A state-variable loop whose finite op-amp lifts its Q into the thousands (its GBW a few
    # decades above f0): measure_from's f0 and band edges against 60-digit arithmetic (mpmath,
    # a general-purpose reference library) on the same coefficients. At the Q of 9 148 found here
    # the companion-matrix roots of measure() are off by 1.9e-8 of Q, Newton's method by 1.6e-8: Q
    # is f0 over the difference of the band edges, so an edge's rounding (about 1e-12 of it, that
    # of the half-power polynomial at such a Q) comes back multiplied by Q.
    from bandsmith.analysis.figures import measure_from

    topo = get_topology("state-variable")
    res = analyze(topo.netlist(topo.example))
    f0 = res.ideal.item().f0_hz
    gbw = f0 * np.logspace(1.5, 2.5, 201)  # through the GBW where the loop's Q peaks
    h = res.family.at(gbw, 1e5)
    fig = measure_from(h, res.ideal)
    k = int(np.nanargmax(fig.q))
    assert fig.q[k] > 1e3
    want = _figures_by_mpmath(h.num[k], h.den[k], float(h.w_ref[k]), [fig.f0_hz[k], fig.f_low_hz[k], fig.f_high_hz[k]])
    assert_allclose([fig.f0_hz[k], fig.f_low_hz[k], fig.f_high_hz[k]], want, rtol=1e-12)
    q_true = want[0] / (want[2] - want[1])
    assert_allclose(fig.q[k], q_true, rtol=3e-8)
    assert abs(fig.q[k] / q_true - 1) < abs(measure(h.take(slice(k, k + 1))).q[0] / q_true - 1)  # closer than the roots
    # away from the narrow peak it is measure()'s figures
    exact = measure(h)
    ok = fig.q < 100.0
    assert_allclose(fig.q[ok], exact.q[ok], rtol=1e-9)
    assert_allclose(fig.f0_hz, exact.f0_hz, rtol=1e-9)


def test_measure_from_a_circuit_with_several_stationary_points():
    # The dual-amplifier band-pass with a finite op-amp: its op-amps add a dip and a second peak
    # near the GBW, so |H|² has three stationary points. measure_from keeps Newton's figures where
    # the others are lower and outside the band, and gives measure()'s (the companion-matrix roots
    # of every stationary point, the highest taken) everywhere: GBW from f0 to 10⁶·f0. A
    # consistency check of our own two measurements (the roots checked against the biquad's
    # closed form above), no outside source.
    from bandsmith.analysis.figures import measure_from, measure_near

    topo = get_topology("dabp")
    res = analyze(topo.netlist(topo.example))
    f0 = res.ideal.item().f0_hz
    h = res.family.at(f0 * np.logspace(0.0, 6.0, 121), 1e5)
    near = measure_near(h, res.ideal, spread=9.0, only_peak=True)
    assert near.valid.sum() > 100  # Newton's figures for most members, not the roots
    got, want = measure_from(h, res.ideal), measure(h)
    assert_array_equal(np.isfinite(got.q), np.isfinite(want.q))
    ok = np.isfinite(want.q)
    for key in ("f0_hz", "q", "gain_center", "f_low_hz", "f_high_hz"):
        assert_allclose(getattr(got, key)[ok], getattr(want, key)[ok], rtol=1e-7, err_msg=key)


def test_closed_form_peak_proofs_agree_with_numpy_roots():
    # measure_from settles "is the peak Newton found the highest, with no other stationary point
    # in its band?" in closed form where it can (figures._below_peak, figures._no_root_between);
    # both must never claim what numpy.roots (companion-matrix eigenvalues) denies, and settle
    # the plain cases. |H|² = P/Q below its height 1 at u = x exactly where S > 0 on u ≥ 0 for
    # P = Q − (u − x)²·S; a quadratic S has no real root where its discriminant is negative.
    from bandsmith.analysis.figures import _below_peak, _no_root_between
    from bandsmith.solver.rational import polymul_batch

    rng = np.random.default_rng(11)
    n = 2000
    x = np.exp(rng.uniform(-2.0, 2.0, n))
    s = np.stack([np.exp(rng.uniform(-8.0, 0.0, n)), rng.normal(size=n), np.exp(rng.uniform(-1.0, 1.0, n))], axis=1)
    qu = np.exp(rng.uniform(-3.0, 3.0, (n, 5)))
    square = np.stack([np.ones(n), -2.0 * x, x * x], axis=1)
    pu = qu - polymul_batch(square, s)
    got = _below_peak(pu.T, qu.T, np.ones(n), x)  # (coefficients as rows)
    roots = [np.roots(row) for row in s]
    positive_root = np.array([np.any((np.abs(r.imag) <= 1e-9 * np.abs(r)) & (r.real > 0)) for r in roots])
    assert not (got & positive_root).any()
    assert got[~positive_root].mean() > 0.99  # the margin leaves out only near-double roots
    # Budan–Fourier on quartics with real and complex roots: no root claimed absent that is there
    re = rng.normal(size=(n, 4)) * 3.0
    im = np.where(rng.random(n) < 0.5, 0.0, np.exp(rng.uniform(-6.0, 1.0, n)))  # a complex pair or two real roots
    pair = [[re[i, 0] + 1j * im[i], re[i, 0] - 1j * im[i]] if im[i] else [re[i, 0], re[i, 1]] for i in range(n)]
    c = np.array([np.poly(pair[i] + [re[i, 2], re[i, 3]]).real for i in range(n)])
    a = rng.normal(size=n) * 3.0
    b = a + np.exp(rng.uniform(-3.0, 1.0, n))
    none = _no_root_between(c.T, a, b)  # (coefficients as rows)
    r = [np.roots(row) for row in c]
    inside = np.array([np.any((np.abs(q.imag) <= 1e-9) & (q.real > a[i]) & (q.real <= b[i])) for i, q in enumerate(r)])
    assert not (none & inside).any()
    all_real = im == 0
    assert_array_equal(none[all_real], ~inside[all_real])  # exact when every root is real


def test_nominal_figures_scalars_equal_their_arrays_read_alone():
    """nominal_and_peaks_many gives each nominal batch of one its scalars at once: they are the
    floats its arrays hold (numpy's ndarray.item of each figure, bit for bit) and the arrays are
    measure()'s own figures of member 0 (the reference)."""
    from bandsmith.analysis.figures import _FIELDS, Figures, nominal_and_peaks_many

    rng = np.random.default_rng(7)
    hs = []
    for _ in range(5):
        a = rng.uniform(0.1, 10.0, size=(3, 3))
        b1 = rng.uniform(0.1, 10.0, size=(3, 1))
        hs.append(Rational(np.hstack([b1, np.zeros((3, 1))]), a, np.full(3, rng.uniform(1e2, 1e5))))
    for h, (nominal, _) in zip(hs, nominal_and_peaks_many(hs)):
        alone = Figures(*[np.asarray(getattr(nominal, name)) for name in _FIELDS])  # no scalars kept yet
        for name in _FIELDS:
            got, want = getattr(nominal.item(), name), getattr(alone.item(), name)
            assert type(got) is float and (got == want or (math.isnan(got) and math.isnan(want)))
        assert_array_equal(np.array([getattr(nominal, n)[0] for n in _FIELDS]), np.array([getattr(measure(h).take(slice(0, 1)), n)[0] for n in _FIELDS]))


def test_biquads_joined_pick_what_each_check_alone_picks():
    """_biquads_joined looks at the coefficients of all transfer functions in one joined batch:
    it picks exactly those _biquad_shaped picks one by one (numerators of two or three
    coefficients, a nonzero constant or leading term, a denominator not of three or not finite),
    and joins them as Rational.joined does."""
    from bandsmith.analysis.figures import _biquad_shaped, _biquads_joined

    rng = np.random.default_rng(11)
    for _ in range(200):
        hs = []
        for _ in range(rng.integers(1, 6)):
            b = int(rng.integers(1, 4))
            num = np.hstack([np.zeros((b, int(rng.integers(0, 2)))), rng.uniform(0.5, 2.0, (b, 1)), np.zeros((b, 1))])
            den = rng.uniform(0.5, 2.0, (b, int(rng.choice([3, 3, 3, 4]))))
            pick = rng.integers(0, 8)
            if pick == 0:
                num[rng.integers(0, b), -1] = 1.0
            elif pick == 1 and num.shape[1] == 3:
                num[rng.integers(0, b), 0] = 1.0
            elif pick == 2:
                den[rng.integers(0, b), 1] = np.inf
            elif pick == 3:
                num[rng.integers(0, b), -1] = np.nan
            hs.append(Rational(num, den, np.full(b, 1e3)))
        quick, joined = _biquads_joined(hs)
        assert quick == [i for i, h in enumerate(hs) if _biquad_shaped(h)]
        if len(quick) > 1:
            want = Rational.joined([hs[i] for i in quick])
            assert_array_equal(joined.num, want.num)
            assert_array_equal(joined.den, want.den)
            assert_array_equal(joined.w_ref, want.w_ref)
