"""The whole analog band-pass from scipy.signal, the reference library of the chain tests.

scipy.signal.iirfilter(N, [ω1, ω2], rp=R, btype='bandpass', analog=True, ftype='butter' or
'cheby1'), and for Bessel scipy.signal.bessel(N, [ω1, ω2], btype='bandpass', analog=True,
norm='mag'). Built here independently of bandsmith.chain.cascade.reference_zpk.
"""

from __future__ import annotations

import math

import numpy as np
import scipy.signal


def reference_zpk(response: str, order: int, f_low_hz: float, f_high_hz: float, ripple_db: float | None = None):
    """Zeros, poles and gain (rad/s) of the band-pass with these edges (Hz); ``ripple_db`` for Chebyshev."""
    wn = [2 * math.pi * f_low_hz, 2 * math.pi * f_high_hz]
    if response == "bessel":
        return scipy.signal.bessel(order, wn, btype="bandpass", analog=True, norm="mag", output="zpk")
    ftype = {"butterworth": "butter", "chebyshev": "cheby1"}[response]
    return scipy.signal.iirfilter(order, wn, rp=ripple_db, btype="bandpass", analog=True, ftype=ftype, output="zpk")


def reference_db(response: str, order: int, f_low_hz: float, f_high_hz: float, f_hz, *, gain: float = 1.0,
                 ripple_db: float | None = None, f0_hz: float | None = None) -> np.ndarray:
    """Its magnitude (dB) at ``f_hz``, scaled to ``gain`` at the centre ``f0_hz`` (default the
    geometric centre √(f_low·f_high))."""
    z, p, k = reference_zpk(response, order, f_low_hz, f_high_hz, ripple_db)
    f0 = math.sqrt(f_low_hz * f_high_hz) if f0_hz is None else f0_hz
    _, h = scipy.signal.freqs_zpk(z, p, k, worN=2 * math.pi * np.concatenate([[f0], np.asarray(f_hz, dtype=float)]))
    return 20 * np.log10(np.abs(h[1:]) * gain / np.abs(h[0]))
