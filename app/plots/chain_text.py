"""What the chain's plots and pages call a response, and the frequencies they draw: plain Python
and numpy, so that the report and the window's texts need no Qt to use them."""

from __future__ import annotations

import math

import numpy as np

from bandsmith.chain.cascade import ChainSettings

__all__ = ["plot_frequencies", "response_title"]

_RESPONSE_TITLES = {"butterworth": "Butterworth", "chebyshev": "Chebyshev", "bessel": "Bessel"}


def response_title(settings: ChainSettings) -> str:
    """"Butterworth", or "Chebyshev 0.5 dB"."""
    name = _RESPONSE_TITLES.get(settings.response, settings.response)
    return f"{name} {settings.ripple_db:g} dB" if settings.ripple_db is not None else name


def plot_frequencies(settings: ChainSettings, q_max: float) -> np.ndarray:
    """Log-spaced frequencies (Hz) the pane draws: the band and its skirts, dense enough for the
    sharpest stage (about 60 points per unit of ln f per unit of Q)."""
    band = settings.band
    k = min(max((band.f_high_hz / band.f_low_hz) ** 3, 2.0), 30.0)
    span = 2.0 * math.log(k)
    n = int(min(max(1200, span * 60.0 * max(q_max, 1.0)), 20000))
    return np.geomspace(band.f0_hz / k, band.f0_hz * k, n)
