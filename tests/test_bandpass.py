"""Low-pass → band-pass transformation, pairing, stage order and gain sharing."""

import math

import numpy as np
import pytest
import scipy.signal
from numpy.testing import assert_allclose

from bandsmith.chain.bandpass import band_from, geffe, plan_cascade
from bandsmith.common.errors import InputError
from bandsmith.chain.prototypes import RESPONSES, prototype
import bandpass_reference


def reference_zpk(response, n, band, ripple_db=None):
    """The whole band-pass from scipy.signal, the reference library (analog, rad/s)."""
    return bandpass_reference.reference_zpk(response, n, band.f_low_hz, band.f_high_hz, ripple_db)


def reference_db(response, n, band, gain, f_hz, ripple_db=None):
    """Reference magnitude in dB, scaled to ``gain`` at the geometric centre."""
    return bandpass_reference.reference_db(response, n, band.f_low_hz, band.f_high_hz, f_hz, gain=gain, ripple_db=ripple_db, f0_hz=band.f0_hz)


@pytest.mark.parametrize(
    "response,n,q_bp,ripple,want",
    [
        # Derived check values (scipy.signal.lp2bp_zpk on buttap/cheb1ap): Butterworth N = 2, Qbp = 5.
        ("butterworth", 2, 5.0, None, [("0.931622", "7.08881"), ("1.073397", "7.08881")]),
        # Butterworth N = 3, Qbp = 10: the real pole's section at f0, Q = 10 (exact by the formula
        # Q = Qbp/α0, α0 = 1), and a pair.
        ("butterworth", 3, 10.0, None, [("1.000000", "10.00000"), ("0.95762", "20.0188"), ("1.04425", "20.0188")]),
        # Chebyshev 1 dB, N = 2, Qbp = 2.
        ("chebyshev", 2, 2.0, 1.0, [("0.79936", "3.73562"), ("1.25099", "3.73562")]),
    ],
)
def test_reference_check_values(response, n, q_bp, ripple, want):
    # Source: derived with scipy.signal.lp2bp_zpk on buttap/cheb1ap (the same numbers as Geffe's
    # algorithm, Williams & Taylor, Electronic Filter Design Handbook, band-pass chapter; from memory); each compared to within one unit of its last printed digit.
    f0 = 1000.0
    plan = plan_cascade(prototype(response, n, ripple_db=ripple), band_from(f0_hz=f0, bw_hz=f0 / q_bp), 1.0)
    assert len(plan.sections) == len(want)
    for sec, (f_text, q_text) in zip(plan.sections, want):
        for got, text in ((sec.f0_hz / f0, f_text), (sec.q, q_text)):
            digits = len(text.partition(".")[2])
            assert_allclose(got, float(text), rtol=0, atol=10.0**-digits)


@pytest.mark.parametrize("n", range(1, 9))
@pytest.mark.parametrize("response", RESPONSES)
def test_geffe_poles_equal_lp2bp_zpk(response, n):
    # Reference library: scipy.signal.lp2bp_zpk on the same prototype (Geffe's algorithm is the
    # same transformation, section by section).
    proto = prototype(response, n)
    for q_bp in (0.7, 3.0, 25.0):
        wc = 1.0
        _, p_ref, _ = scipy.signal.lp2bp_zpk([], proto.poles, proto.k, wo=wc, bw=wc / q_bp)
        got = []
        for sec in proto.sections:
            q, w = geffe(sec.alpha, sec.beta, q_bp)
            for w0 in ((wc,) if sec.real else (wc / w, wc * w)):
                # Section poles: roots of s² + (ω0/Q)s + ω0².
                got.extend(np.roots([1.0, w0 / q, w0 * w0]))
        key = lambda z: (round(z.real, 9), round(z.imag, 9))  # noqa: E731
        assert_allclose(np.array(sorted(got, key=key)), np.array(sorted(p_ref, key=key)), rtol=1e-9, atol=1e-12)


@pytest.mark.parametrize("n", range(1, 9))
@pytest.mark.parametrize("response", RESPONSES)
def test_planned_chain_matches_scipy(response, n):
    # Reference library: scipy.signal.iirfilter(analog=True, btype='bandpass') for butter/cheby1,
    # scipy.signal.bessel(analog=True, norm='mag') for Bessel; scaled to the gain at the centre.
    ripple = 1.0 if response == "chebyshev" else None
    for f0, bw in ((10e3, 1e3), (2e3, 3e3)):
        band = band_from(f0_hz=f0, bw_hz=bw)
        plan = plan_cascade(prototype(response, n, ripple_db=ripple), band, 4.0)
        f = np.geomspace(f0 / 20, f0 * 20, 3001)
        got = 20 * np.log10(np.abs(plan.response(f)))
        assert_allclose(got, reference_db(response, n, band, 4.0, f, ripple), atol=1e-9)
        assert_allclose(abs(plan.response(np.array([band.f0_hz]))[0]), 4.0, rtol=1e-12)


@pytest.mark.parametrize("n", range(1, 9))
@pytest.mark.parametrize("response", RESPONSES)
def test_stage_order_and_internal_peaks(response, n):
    # Rule (common practice, no source): ascending Q; every internal node's peak equals the
    # whole filter's peak.
    ripple = 0.5 if response == "chebyshev" else None
    band = band_from(f0_hz=50e3, bw_hz=5e3)
    plan = plan_cascade(prototype(response, n, ripple_db=ripple), band, 2.0)
    qs = [s.q for s in plan.sections]
    assert all(a <= b * (1 + 1e-12) for a, b in zip(qs, qs[1:]))
    f = np.geomspace(band.f_low_hz / 1.5, band.f_high_hz * 1.5, 400_001)
    h = np.abs(np.cumprod(plan.stage_responses(f), axis=0)).max(axis=1)
    assert_allclose(h, plan.peak_gain, rtol=1e-5)
    assert_allclose([s.peak_internal_gain for s in plan.sections], plan.peak_gain, rtol=1e-9)
    # Even-order Chebyshev: the centre is a ripple trough, so the peak is the gain plus the ripple.
    want = 2.0 * (10 ** (ripple / 20) if response == "chebyshev" and n % 2 == 0 else 1.0)
    assert_allclose(plan.peak_gain, want, rtol=1e-7)


def test_band_edges_land_on_the_prototype_edge_level():
    # The prototype's ω = 1 maps onto both band edges: −3 dB for Butterworth/Bessel, −R for Chebyshev.
    band = band_from(f_low_hz=900.0, f_high_hz=1100.0)
    for response, level in (("butterworth", 10 * math.log10(0.5)), ("bessel", 10 * math.log10(0.5)), ("chebyshev", -0.5)):
        plan = plan_cascade(prototype(response, 5), band, 1.0)
        edges = np.abs(plan.response(np.array([band.f_low_hz, band.f_high_hz]))) / plan.peak_gain
        assert_allclose(20 * np.log10(edges), level, atol=1e-9)


def test_band_from_centre_and_width():
    band = band_from(f0_hz=1000.0, bw_hz=250.0)
    assert_allclose(band.f_low_hz * band.f_high_hz, 1e6, rtol=1e-12)
    assert_allclose(band.bw_hz, 250.0, rtol=1e-12)
    band = band_from(f_low_hz=800.0, f_high_hz=1250.0, f0_hz=1000.0)
    assert_allclose(band.q_bp, 1000.0 / 450.0, rtol=1e-12)


@pytest.mark.parametrize(
    "kwargs,field",
    [
        ({"bw_hz": 10.0}, "f0"),
        ({"f0_hz": 100.0}, "bw"),
        ({"f0_hz": 100.0, "bw_hz": -1.0}, "bw"),
        ({"f0_hz": 0.0, "bw_hz": 1.0}, "f0"),
        ({"f_low_hz": 100.0}, "f-high"),
        ({"f_high_hz": 100.0}, "f-low"),
        ({"f_low_hz": 200.0, "f_high_hz": 100.0}, "f-high"),
        ({"f_low_hz": 100.0, "f_high_hz": 400.0, "f0_hz": 250.0}, "f0"),
        ({"f_low_hz": 100.0, "f_high_hz": 400.0, "bw_hz": 300.0}, "bw"),
    ],
)
def test_band_bad_input(kwargs, field):
    with pytest.raises(InputError) as exc:
        band_from(**kwargs)
    assert exc.value.field == field


def test_gain_must_be_positive():
    with pytest.raises(InputError) as exc:
        plan_cascade(prototype("butterworth", 2), band_from(f0_hz=1e3, bw_hz=1e2), 0.0)
    assert exc.value.field == "gain"
