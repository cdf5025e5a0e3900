"""Measuring a built chain as a whole: its sweep, band edges, ripple, internal peaks and the
reference band-pass of scipy.signal (rules in :mod:`bandsmith.chain.cascade`)."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from bandsmith.common.jsonutil import finite_or_none
from bandsmith.chain.bandpass import peak_over_frequency
from bandsmith.chain.chain_settings import HALF_POWER_DB, ChainSettings

if TYPE_CHECKING:
    from bandsmith.chain.cascade import Stage

__all__ = ["Overall", "reference_zpk", "sweep_frequencies", "measure_chain", "peaks_internal", "max_dev_db"]




@dataclass(frozen=True, slots=True)
class Overall:
    """Figures of a whole chain's response (Hz, dB)."""

    f_low_hz: float
    f_high_hz: float
    f0_hz: float
    gain_center_db: float
    ripple_db: float
    peak_gain_db: float
    f_peak_hz: float
    edge_level_db: float
    f_low_3db_hz: float
    f_high_3db_hz: float

    def to_json(self) -> dict:
        f = finite_or_none

        return {
            "f_low_hz": f(self.f_low_hz),
            "f_high_hz": f(self.f_high_hz),
            "f0_hz": f(self.f0_hz),
            "bw_hz": f(self.f_high_hz - self.f_low_hz),
            "gain_center_db": f(self.gain_center_db),
            "ripple_db": f(self.ripple_db),
            "peak_gain_db": f(self.peak_gain_db),
            "f_peak_hz": f(self.f_peak_hz),
            "edge_level_db": f(self.edge_level_db),
            "f_low_3db_hz": f(self.f_low_3db_hz),
            "f_high_3db_hz": f(self.f_high_3db_hz),
        }


def reference_zpk(settings: ChainSettings) -> tuple[np.ndarray, np.ndarray, float]:
    """Zeros, poles (rad/s) and gain of scipy.signal's band-pass for the settings.

    ``iirfilter(N, [ω_low, ω_high], rp=R, btype='bandpass', analog=True, ftype='butter'|'cheby1')``
    or ``bessel(N, [ω_low, ω_high], btype='bandpass', analog=True, norm='mag')``, with the gain
    scaled so that the magnitude at the geometric centre is ``settings.gain``.
    """
    import scipy.signal  # here, not at import: it costs the window 0.6 s at start

    wn = [2 * math.pi * settings.f_low_hz, 2 * math.pi * settings.f_high_hz]
    n = settings.order
    if settings.response == "bessel":
        z, p, k = scipy.signal.bessel(n, wn, btype="bandpass", analog=True, norm="mag", output="zpk")
    else:
        ftype = "butter" if settings.response == "butterworth" else "cheby1"
        z, p, k = scipy.signal.iirfilter(n, wn, rp=settings.ripple_db, btype="bandpass", analog=True, ftype=ftype, output="zpk")
    wc = 2 * math.pi * settings.band.f0_hz
    _, hc = scipy.signal.freqs_zpk(z, p, k, worN=[wc])
    return z, p, float(k) * settings.gain / float(abs(hc[0]))


def sweep_frequencies(settings: ChainSettings, q_max: float) -> np.ndarray:
    band = settings.band
    r = max(10.0, (band.f_high_hz / band.f_low_hz) ** 2)
    span = 2.0 * math.log(r)
    n = int(min(max(span * 40.0 * max(q_max, 0.5), 2000), 400_000)) + 1
    return np.geomspace(band.f0_hz / r, band.f0_hz * r, n)


def _crossing(mag_fn, lo_hz: np.ndarray, hi_hz: np.ndarray, level) -> np.ndarray:
    """Where ``mag_fn`` crosses ``level`` (a number, or one per bracket) between each pair of
    brackets (bisection in log f, every bracket in one call per step)."""
    a, b = np.log(lo_hz), np.log(hi_hz)
    fa = mag_fn(np.exp(a)) - level
    for _ in range(60):
        m = 0.5 * (a + b)
        if ((m == a) | (m == b)).all():
            break  # every bracket is two neighbouring floats: the steps left change nothing
        fm = mag_fn(np.exp(m)) - level
        same = np.signbit(fm) == np.signbit(fa)
        a, fa = np.where(same, m, a), np.where(same, fm, fa)
        b = np.where(same, b, m)
    return np.exp(0.5 * (a + b))


def _edges(mag_fn, f: np.ndarray, mag: np.ndarray, levels: tuple[float, ...]) -> list[tuple[float, float]]:
    """The lower and upper crossing of each level, ``(nan, nan)`` where the sweep has none; the
    brackets of all levels are bisected together."""
    lo, hi, lv, which = [], [], [], []
    out = [(math.nan, math.nan)] * len(levels)
    for n, level in enumerate(levels):
        above = np.flatnonzero(mag >= level)
        if above.size == 0 or above[0] == 0 or above[-1] == f.size - 1:
            continue
        i0, i1 = above[0], above[-1]
        lo += [f[i0 - 1], f[i1]]
        hi += [f[i0], f[i1 + 1]]
        lv += [level, level]
        which.append(n)
    if which:
        x = _crossing(mag_fn, np.array(lo), np.array(hi), np.array(lv))
        for k, n in enumerate(which):
            out[n] = (float(x[2 * k]), float(x[2 * k + 1]))
    return out


def measure_chain(response, settings: ChainSettings, f: np.ndarray, q_max: float, *, mag: np.ndarray | None = None) -> Overall:
    """Overall figures of a chain response ``response(f_hz) -> complex (F,)`` on the sweep ``f``
    (``mag``: its magnitude on the sweep, when the caller has it)."""

    def mag_fn(x):
        x = np.asarray(x, dtype=float)
        return np.abs(response(x.reshape(-1))).reshape(x.shape)

    if mag is None:
        mag = mag_fn(f)
    peak, f_pk = peak_over_frequency(lambda x: mag_fn(x).reshape(1, -1), float(f[0]), float(f[-1]), q_max=q_max, rows=1)
    peak, f_pk = float(peak[0]), float(f_pk[0])
    (lo, hi), (lo3, hi3) = _edges(mag_fn, f, mag, (peak * 10 ** (settings.edge_level_db / 20), peak * 10 ** (HALF_POWER_DB / 20)))
    f0 = math.sqrt(lo * hi) if math.isfinite(lo) and math.isfinite(hi) else math.nan
    gc = float(20 * np.log10(mag_fn(np.array([f0]))[0])) if math.isfinite(f0) else math.nan
    ripple = math.nan
    if math.isfinite(lo):
        inside = np.flatnonzero((f > lo) & (f < hi))
        if inside.size >= 3:
            m = mag[inside]
            dips = np.flatnonzero((m[1:-1] < m[:-2]) & (m[1:-1] <= m[2:])) + 1
            if dips.size == 0:
                ripple = 0.0
            else:
                # Refine every dip on local grids (the magnitude is flat to second order there).
                lf = np.log(f[inside[dips]])
                delta = np.log(f[1] / f[0])
                for _ in range(2):
                    local = lf[:, None] + np.linspace(-delta, delta, 201)[None, :]
                    ml = mag_fn(np.exp(local))
                    j = np.argmin(ml, axis=1)
                    lf = local[np.arange(lf.size), j]
                    delta /= 100.0
                deepest = float(np.min(ml[np.arange(lf.size), j]))
                ripple = 20 * math.log10(peak / deepest)
                if ripple < 1e-9:  # rounding noise on a maximally flat top
                    ripple = 0.0
        else:
            ripple = 0.0
    return Overall(lo, hi, f0, gc, ripple, 20 * math.log10(peak), f_pk, settings.edge_level_db, lo3, hi3)


def peaks_internal(stages: tuple[Stage, ...], cascade_resp, f: np.ndarray, q_max: float) -> np.ndarray:
    n = len(stages)

    def mag_fn(x):
        x = np.asarray(x, dtype=float)
        if x.ndim == 1:
            return np.abs(np.cumprod(cascade_resp(x), axis=0))
        out = np.empty(x.shape)
        for k in range(n):  # one row per stage (at most 8), vectorised over frequency
            out[k] = np.abs(np.prod(cascade_resp(x[k])[: k + 1], axis=0))
        return out

    peaks, _ = peak_over_frequency(mag_fn, float(f[0]), float(f[-1]), q_max=q_max, rows=n)
    return 20 * np.log10(peaks)


def max_dev_db(a: np.ndarray, b: np.ndarray) -> float:
    with np.errstate(divide="ignore"):
        d = np.abs(20 * np.log10(np.abs(a)) - 20 * np.log10(np.abs(b)))
    return float(np.max(d)) if d.size else math.nan
