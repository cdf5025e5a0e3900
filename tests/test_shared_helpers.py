"""The helpers every module shares: part units, display units, JSON numbers, the second-order
closed form, sensitivities by central differences.

References: SI unit symbols of the ohm, farad and henry and the prefixes micro and milli (BIPM, The
International System of Units, 9th edition, 2019, tables 4 and 7); JSON has no NaN or infinity
(IETF RFC 8259, section 6); the band-pass biquad's figures (derived: |H|² of
H0·(ω0/Q)·s/(s² + (ω0/Q)·s + ω0²) peaks at ω0 and is half the peak at
ω0·(√(1 + 1/(4Q²)) ∓ 1/(2Q))); scipy.signal.freqs for the response itself.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
import scipy.signal
from numpy.testing import assert_allclose

from bandsmith.analysis.figures import biquad_figures
from bandsmith.analysis.sensitivity import SENS_STEP, log_slopes, perturbed_ratios
from bandsmith.common.jsonutil import finite_or_none
from bandsmith.common.units import PART_UNITS, part_unit, to_ma, to_v_per_us


def test_part_units_are_the_si_symbols():
    # BIPM SI brochure, 9th ed., table 4: ohm Ω, farad F, henry H.
    assert PART_UNITS == {"R": "Ω", "C": "F", "L": "H"}
    assert part_unit("C") == "F" and part_unit("X") == ""


def test_display_conversions_use_the_si_prefixes():
    # BIPM SI brochure, 9th ed., table 7: micro = 1e-6, milli = 1e-3.
    assert to_v_per_us(2.5e6) == pytest.approx(2.5, rel=1e-15)
    assert to_ma(0.012) == pytest.approx(12.0, rel=1e-15)


@pytest.mark.parametrize("x, want", [(1.5, 1.5), (np.float64(-2.0), -2.0), (math.nan, None), (math.inf, None), (-math.inf, None), (None, None)])
def test_finite_or_none_writes_only_numbers_json_allows(x, want):
    # RFC 8259 section 6: NaN and Infinity are not permitted as JSON numbers.
    got = finite_or_none(x)
    assert got == want and (got is None or type(got) is float)
    json.dumps(got, allow_nan=False)  # raises on NaN/inf


@pytest.mark.parametrize("f0, q, h0", [(1e3, 0.7, 1.0), (5.6e3, 6.0, -4.9), (20e3, 50.0, 10.0)])
def test_biquad_figures_match_the_derived_values_and_scipy(f0, q, h0):
    w0 = 2.0 * math.pi * f0
    w_ref = 0.9 * w0  # any reference frequency: the coefficients are in p = s/w_ref
    # H = h0·(w0/q)·s/(s² + (w0/q)·s + w0²) in p: b1 = h0·(w0/q)/w_ref, a2 = 1, a1 = (w0/q)/w_ref, a0 = (w0/w_ref)²
    b1, a2, a1, a0 = h0 * (w0 / q) / w_ref, 1.0, (w0 / q) / w_ref, (w0 / w_ref) ** 2
    fig, ok = biquad_figures(np.array([b1]), np.array([a2]), np.array([a1]), np.array([a0]), w_ref)
    r = 1.0 / (2.0 * q)
    assert bool(ok[0])
    assert_allclose(fig.f0_hz[0], f0, rtol=1e-13)
    assert_allclose(fig.q[0], q, rtol=1e-13)
    assert_allclose(fig.f_low_hz[0], f0 * (math.sqrt(1 + r * r) - r), rtol=1e-12)
    assert_allclose(fig.f_high_hz[0], f0 * (math.sqrt(1 + r * r) + r), rtol=1e-12)
    assert_allclose(fig.gain_center[0], h0, rtol=1e-13)
    # the centre gain is the response at f0 (scipy.signal.freqs)
    _, h = scipy.signal.freqs([h0 * w0 / q, 0.0], [1.0, w0 / q, w0 * w0], worN=[w0])
    assert_allclose(abs(h[0]), abs(fig.gain_center[0]), rtol=1e-12)


def test_biquad_figures_flag_an_unstable_member():
    # a1 < 0 with a0, a2 > 0: a right-half-plane pole pair (Routh: the coefficients change sign).
    fig, ok = biquad_figures(np.array([1.0, 1.0]), np.array([1.0, 1.0]), np.array([0.1, -0.1]), np.array([1.0, 1.0]), 1.0)
    assert ok.tolist() == [True, False]


def test_central_differences_of_a_power_law_are_its_exponent():
    # y = x1^2 · x2^-0.5: ∂ln y/∂ln x is exactly 2 and -0.5 (from memory: the log-derivative of a monomial).
    rows = perturbed_ratios(2)
    assert rows.shape == (4, 2)
    assert_allclose(rows[0], [math.exp(SENS_STEP), 1.0])
    assert_allclose(rows[3], [1.0, math.exp(-SENS_STEP)])
    y = rows[:, 0] ** 2 * rows[:, 1] ** -0.5
    assert_allclose(log_slopes(y), [2.0, -0.5], rtol=1e-9)
