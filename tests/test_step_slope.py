"""The largest step slope (the impulse response's peak) against scipy.signal.impulse."""

import warnings

import numpy as np
import pytest
import scipy.signal

from bandsmith.solver.rational import Rational
from bandsmith.analysis.timeresponse import max_step_slope, step_response


def _biquad(w0, q, gain, w_ref):
    """H(s) = gain·(w0/q)·s / (s² + (w0/q)·s + w0²), written in p = s/w_ref."""
    b = np.array([[gain * (w0 / q) * w_ref, 0.0]])
    a = np.array([[w_ref**2, (w0 / q) * w_ref, w0**2]])
    return Rational(b, a, np.array([w_ref]))


@pytest.mark.parametrize("seed", range(12))
def test_closed_form_is_the_peak_of_scipys_impulse_response(seed):
    rng = np.random.default_rng(seed)
    w0 = 2 * np.pi * 10 ** rng.uniform(0, 6)
    q = 10 ** rng.uniform(np.log10(0.3), np.log10(50))
    gain = rng.choice([-1, 1]) * 10 ** rng.uniform(-1, 2)
    h = _biquad(w0, q, gain, w_ref=w0 * 10 ** rng.uniform(-0.5, 0.5))
    got = max_step_slope(h)
    # scipy.signal.impulse on a fine grid from t = 0 over many decay times
    t = np.linspace(0.0, 16.0 * max(q, 1.0 / q) / w0, 20001)
    _, y = scipy.signal.impulse(([gain * w0 / q, 0.0], [1.0, w0 / q, w0 * w0]), T=t)
    peak = np.max(np.abs(y))
    assert got == pytest.approx(abs(y[0]), rel=1e-9)  # the peak sits at t = 0+
    assert peak <= got * (1 + 1e-9)
    # and the sampled step response agrees
    assert step_response(h).max_slope_per_s == pytest.approx(got, rel=1e-9)


def test_a_circuit_that_is_not_a_pure_biquad_uses_the_step_response():
    # a band-pass with an extra real pole: no closed form here
    h = Rational(np.array([[0.0, 1.0, 0.0]]), np.array([[0.1, 1.1, 1.2, 1.0]]), np.array([1.0]))
    assert max_step_slope(h) == step_response(h).max_slope_per_s


@pytest.mark.parametrize("seed", range(16))
def test_second_order_closed_form_is_the_peak_of_scipys_impulse_response(seed):
    # Any stable second-order b(s)/a(s) with b of degree up to two (a low-pass, high-pass or
    # mixed node of a two-integrator loop): the exact largest |h(t)| (derived in
    # timeresponse._second_order_slope) against scipy.signal.impulse on a grid of 40 001 points over
    # the first three periods (where the largest value lies) and 20 001 over many decay times.
    rng = np.random.default_rng(100 + seed)
    w0 = 2 * np.pi * 10 ** rng.uniform(1, 5)
    q = 10 ** rng.uniform(np.log10(0.2), np.log10(80))
    if seed % 4 == 3:
        q = 0.2 + 0.25 * rng.uniform()  # real poles
    b = list(rng.normal(size=3) * np.array([1.0, w0, w0 * w0]))
    if seed % 3 == 1:
        b[0] = 0.0
    a = [1.0, w0 / q, w0 * w0]
    w_ref = w0 * 10 ** rng.uniform(-0.5, 0.5)
    h = Rational(np.array([[b[0] * w_ref**2, b[1] * w_ref, b[2]]]), np.array([[w_ref**2, a[1] * w_ref, a[2]]]), np.array([w_ref]))
    got = max_step_slope(h)
    period = 2 * np.pi / (w0 * np.sqrt(abs(1 - 1 / (4 * q * q))) if q > 0.5 else w0)
    early = np.linspace(0.0, 3.0 * period, 40001)
    late = np.linspace(0.0, 16.0 * max(q, 1.0 / q) / w0, 20001)
    direct = b[0]  # the impulse's δ(t) (a jump of the step) is not a slope: left out, as scipy.signal.impulse does
    rest = [b[1] - direct * a[1], b[2] - direct * a[2]]
    peak = max(np.max(np.abs(scipy.signal.impulse((rest, a), T=t)[1])) for t in (early, late))
    assert got == pytest.approx(peak, rel=1e-6)
    assert got >= peak * (1 - 1e-9)


def test_an_all_zero_denominator_gives_no_slope_rather_than_an_error():
    # A degenerate member (every denominator coefficient zero) read as no slope, 0.0, as the array
    # form of these closed forms gave it; the list form once raised ZeroDivisionError here.
    import numpy as np

    from bandsmith.analysis.timeresponse import max_step_slope, max_step_slopes
    from bandsmith.solver.rational import Rational

    for den in ([0.0, 0.0, 0.0], [0.0]):
        h = Rational(np.array([[1.0, 0.0]]), np.array([den]), np.array([1e3]))
        assert max_step_slope(h) == 0.0
        assert max_step_slopes(h) == [0.0]


def _circuits():
    from bandsmith.circuits import topology_ids

    return topology_ids()


@pytest.mark.parametrize("circuit", _circuits())
@pytest.mark.parametrize("gbw_hz", [1e6, 2e5])
def test_step_response_with_finite_op_amps_matches_scipy(circuit, gbw_hz):
    # Every circuit's example with single-pole op-amps: real op-amp poles beside the complex pair
    # (or a second real pair), each summed in its own form by the modal step response; against
    # scipy.signal.step and scipy.signal.impulse (matrix exponential of a state-space form) on the
    # same (b, a) and the same times.
    from bandsmith.circuits import get_topology
    from bandsmith.design.candidate import Candidate, Conditions

    values = dict(get_topology(circuit).example)
    an = Candidate(circuit, values).analyze(Conditions(gbw_hz=gbw_hz))
    h = an.h_actual
    got = step_response(h)
    b, a = h.to_s()
    sys = scipy.signal.lti(b, a)
    t = got.t_s
    y = scipy.signal.step(sys, T=t)[1]
    imp = scipy.signal.impulse(sys, T=t)[1]
    scale_y, scale_h = np.max(np.abs(y)), np.max(np.abs(imp))
    np.testing.assert_allclose(got.y, y, atol=1e-7 * scale_y)
    np.testing.assert_allclose(got.slope_per_s, imp, atol=1e-7 * scale_h)


def test_an_unstable_circuit_grows_without_numpy_warnings():
    # (s − 1)(s² + 0.1·s + 1) in the denominator: a pole at +1 rad/s, so the step response grows
    # as e^t (common practice, no source: a right-half-plane pole is an oscillator's, not a filter's);
    # over a long grid it outgrows the largest double, which is not an arithmetic fault to warn of
    den = np.polymul([1.0, -1.0], [1.0, 0.1, 1.0])
    h = Rational(np.array([[0.0, 1.0, 0.0]]), den[None, :], np.array([1.0]))
    t = np.linspace(0.0, 2000.0, 4001)
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        step = step_response(h, t)
    assert step.y[10] == pytest.approx(float(scipy.signal.step(([1.0, 0.0], den), T=t[:11])[1][10]), rel=1e-9)
    assert not np.all(np.isfinite(step.y))  # e^2000 is beyond any double
