"""The bank's response: every channel, their sum, the ripple of the sum, the isolation table.

Each channel's transfer function is its analysis' rational ``H_i(s)`` (with the op-amp model when
one is given, else ideal). The sum is the complex sum ``Σ H_i(jω)`` — what a summing amplifier
after the bank, or a graphic equaliser set flat, delivers. Its ripple is the largest minus the
smallest ``20·log10|Σ H_i|`` over the covered band, from the lower −3 dB point of the lowest
channel's target to the upper −3 dB point of the highest's (``f0·(√(1 + 1/(4Q²)) ∓ 1/(2Q))``, the
band-edges of a second-order band-pass).

Isolation (common practice, no source): ``isolation_db[i][j] = 20·log10(|H_i(f0_i)|/|H_i(f_j)|)``,
the attenuation of channel ``i`` at channel ``j``'s target centre relative to its own centre gain
(the peak of ``|H_i|``); the neighbours are ``j = i ± 1``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from bandsmith.bank.build import Bank

__all__ = ["BankResponse", "bank_response", "edges_3db", "COVER_POINTS"]

#: Points across the covered band for the ripple (log-spaced, with every centre and edge added).
COVER_POINTS = 4000


@dataclass(frozen=True, slots=True)
class BankResponse:
    """The bank's frequency response.

    Attributes
    ----------
    f_hz : ndarray
        Sweep (Hz), shape ``(F,)``.
    channels : ndarray
        Complex ``H_i(j2πf)``, shape ``(N, F)``.
    total : ndarray
        Their complex sum, shape ``(F,)``.
    band_hz : tuple of float
        The covered band (Hz).
    sum_ripple_db : float
        Largest minus smallest ``|Σ H_i|`` in dB over the covered band.
    sum_min_db, sum_max_db : float
    isolation_db : ndarray
        ``(N, N)`` attenuation (dB, positive) of channel i at channel j's target centre.
    centre_gain_db : ndarray
        Each channel's centre (peak) gain in dB.
    """

    f_hz: np.ndarray
    channels: np.ndarray
    total: np.ndarray
    band_hz: tuple[float, float]
    sum_ripple_db: float
    sum_min_db: float
    sum_max_db: float
    isolation_db: np.ndarray
    centre_gain_db: np.ndarray

    @property
    def channels_db(self) -> np.ndarray:
        return 20.0 * np.log10(np.abs(self.channels))

    @property
    def total_db(self) -> np.ndarray:
        return 20.0 * np.log10(np.abs(self.total))


def edges_3db(f0, q) -> tuple[np.ndarray, np.ndarray]:
    """Lower and upper −3 dB points (Hz) of a second-order band-pass: ``f0·(√(1 + 1/(4Q²)) ∓ 1/(2Q))``."""
    f0, q = np.asarray(f0, dtype=float), np.asarray(q, dtype=float)
    a = np.sqrt(1.0 + 1.0 / (4.0 * q * q))
    return f0 * (a - 0.5 / q), f0 * (a + 0.5 / q)


def _rationals(bank: Bank):
    out = []
    for ch in bank.channels:
        a = ch.analysis
        out.append(a.h_actual if a.h_actual is not None else a.h_ideal)
    return out


def _figures(bank: Bank):
    return [ch.analysis.actual if ch.analysis.actual is not None else ch.analysis.ideal for ch in bank.channels]


def evaluate(bank: Bank, f_hz: np.ndarray) -> np.ndarray:
    """Complex ``H_i(j2πf)`` of every channel, shape ``(N, F)`` (one vectorised call per channel)."""
    s = 2j * math.pi * np.asarray(f_hz, dtype=float)
    return np.vstack([h.at_s(s)[0] for h in _rationals(bank)])


def bank_response(bank: Bank, *, points: int = 400) -> BankResponse:
    """The bank's response over a log sweep of ``points`` from a decade below the lowest channel to
    a decade above the highest, and its ripple and isolation (see the module notes)."""
    f0 = np.array([ch.target_f0_hz for ch in bank.channels])
    q = np.array([ch.q for ch in bank.channels])
    lo, hi = edges_3db(f0, q)
    band = (float(lo[0]), float(hi[-1]))
    f_plot = np.geomspace(f0[0] / 10.0, f0[-1] * 10.0, int(points))
    h_plot = evaluate(bank, f_plot)
    f_cover = np.unique(np.concatenate((np.geomspace(band[0], band[1], COVER_POINTS), f0, lo, hi)))
    f_cover = f_cover[(f_cover >= band[0]) & (f_cover <= band[1])]
    s_db = 20.0 * np.log10(np.abs(evaluate(bank, f_cover).sum(axis=0)))
    peak = np.array([abs(float(np.asarray(fig.gain_center).reshape(-1)[0])) for fig in _figures(bank)])
    at_centres = np.abs(evaluate(bank, f0))  # (N, N): channel i at centre j
    iso = 20.0 * np.log10(peak[:, None] / at_centres)
    return BankResponse(
        f_hz=f_plot,
        channels=h_plot,
        total=h_plot.sum(axis=0),
        band_hz=band,
        sum_ripple_db=float(s_db.max() - s_db.min()),
        sum_min_db=float(s_db.min()),
        sum_max_db=float(s_db.max()),
        isolation_db=iso,
        centre_gain_db=20.0 * np.log10(peak),
    )
