"""Band-edge crossings of a chain's response: the probed false-position search against bisection
and against scipy.signal's band-pass edges. Scenarios are our own."""

import math

import numpy as np
import pytest
import scipy.signal

from bandsmith.chain.chain_measure import _bisected, _crossing


def _butter_mag(n, f_low, f_high):
    """|H| of scipy.signal's analog Butterworth band-pass (``butter(n, [w1, w2], 'bandpass',
    analog=True)``) at frequencies in Hz, one value per point."""
    z, p, k = scipy.signal.butter(n, [2 * math.pi * f_low, 2 * math.pi * f_high], btype="bandpass", analog=True, output="zpk")

    def mag(x, _k=None):
        _, h = scipy.signal.freqs_zpk(z, p, k, worN=2 * math.pi * np.asarray(x, dtype=float))
        return np.abs(h)

    return mag


@pytest.mark.parametrize("n, f_low, f_high", [(2, 900.0, 1100.0), (4, 30e3, 50e3), (6, 300.0, 3400.0), (8, 11.5e3, 12.5e3)])
def test_edges_are_scipy_band_edges(n, f_low, f_high):
    # scipy.signal.butter: an analog Butterworth band-pass is 3.0103 dB down (|H| = 1/√2) exactly
    # at its band edges. Brackets of one sweep step around each edge, as a chain's sweep gives.
    mag = _butter_mag(n, f_low, f_high)
    f = np.geomspace(f_low / 4, f_high * 4, 4001)
    above = np.flatnonzero(mag(f) >= 1 / math.sqrt(2))
    lo = np.array([f[above[0] - 1], f[above[-1]]])
    hi = np.array([f[above[0]], f[above[-1] + 1]])
    x = _crossing(mag, lo, hi, np.full(2, 1 / math.sqrt(2)))
    np.testing.assert_allclose(x, [f_low, f_high], rtol=1e-12)


@pytest.mark.parametrize("n, f_low, f_high", [(2, 900.0, 1100.0), (4, 30e3, 50e3), (6, 300.0, 3400.0), (8, 11.5e3, 12.5e3)])
@pytest.mark.parametrize("level_db", [-0.5, -3.0103, -20.0])
def test_same_floats_as_bisection(n, f_low, f_high, level_db):
    # Where the magnitude crosses the level once in a bracket, the search ends on the pair of
    # neighbouring floats (log f) that bisection ends on: the very same value.
    mag = _butter_mag(n, f_low, f_high)
    level = 10 ** (level_db / 20)
    f = np.geomspace(f_low / 4, f_high * 4, 4001)
    above = np.flatnonzero(mag(f) >= level)
    lo = np.array([f[above[0] - 1], f[above[-1]]])
    hi = np.array([f[above[0]], f[above[-1] + 1]])
    lv = np.full(2, level)
    a = np.log(lo)
    ref = _bisected(mag, a, np.log(hi), mag(np.exp(a)) - lv, lv)
    assert np.array_equal(_crossing(mag, lo, hi, lv), ref)


def test_no_sign_change_falls_back_to_bisection():
    # Both ends on one side of the level: bisection's answer (it runs to the far end).
    mag = _butter_mag(2, 900.0, 1100.0)
    lo, hi, lv = np.array([950.0]), np.array([1000.0]), np.array([0.1])
    a = np.log(lo)
    assert np.array_equal(_crossing(mag, lo, hi, lv), _bisected(mag, a, np.log(hi), mag(np.exp(a)) - lv, lv))


def test_bracket_at_one_hz_is_bisected():
    # An edge at 1 Hz: log f's floats near 0 are far finer than a sweep step, so bisection's 60
    # halvings stop short of neighbouring floats; the search then is bisection itself. The edge
    # is still scipy.signal's (butter's band edge, |H| = 1/√2).
    mag = _butter_mag(2, 1.0, 3.0)
    f = np.geomspace(0.25, 12.0, 4001)
    above = np.flatnonzero(mag(f) >= 1 / math.sqrt(2))
    lo, hi, lv = np.array([f[above[0] - 1]]), np.array([f[above[0]]]), np.array([1 / math.sqrt(2)])
    a = np.log(lo)
    x = _crossing(mag, lo, hi, lv)
    assert np.array_equal(x, _bisected(mag, a, np.log(hi), mag(np.exp(a)) - lv, lv))
    np.testing.assert_allclose(x, [1.0], rtol=1e-12)
