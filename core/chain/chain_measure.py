"""Measuring a built chain as a whole: its sweep, band edges, ripple, internal peaks and the
reference band-pass of scipy.signal (rules in :mod:`bandsmith.chain.cascade`)."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from bandsmith.common.jsonutil import finite_or_none
from bandsmith.chain.bandpass import partial_magnitudes, peak_over_frequency
from bandsmith.chain.chain_settings import HALF_POWER_DB, ChainSettings

__all__ = ["Overall", "reference_zpk", "sweep_frequencies", "measure_chain", "measure_chains", "chain_peaks", "max_dev_db", "deviations_db", "largest"]




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


# The false-position estimate of a crossing is off by about |g''/(2g')|·w²/4 in a bracket of
# width w (log f); near a chain's band edge |g''/g'| stays below a few times its sharpest Q.
# Probes this many w² either side of it (chosen here: bracket a stage Q up to about 60 at once;
# a miss only costs a step).
_PROBE = 32.0


def _crossing(mag_fn, lo_hz: np.ndarray, hi_hz: np.ndarray, level) -> np.ndarray:
    """Where ``mag_fn`` crosses ``level`` (a number, or one per bracket) between each pair of
    brackets: the exp of the mean of the two neighbouring floats of log f between which
    ``mag − level`` changes sign, every bracket in one call per step.

    ``mag_fn(x, k)``: frequencies ``x`` (Hz), ``(P,)``, and the bracket each belongs to, ``(P,)``,
    to the magnitudes ``(P,)`` (a point's value independent of the others asked with it).

    Notes
    -----
    Bisection in log f (:func:`_bisected`) ends on that pair of floats. Each step here instead
    takes the false-position estimate ``x`` of the crossing in the bracket ``[a, b]`` and
    probes ``x ± d`` with ``d = max(_PROBE·w², one float step)``, ``w = b − a`` (the midpoint
    alone once ``4d ≥ w``, and after a step that did not halve the bracket); the next bracket is
    the part of ``[a, x − d, x + d, b]`` where the sign changes. A smooth magnitude lets that
    shrink the bracket from one sweep step to a few float steps in four or five steps where
    bisection takes some forty; at worst it takes two steps per halving. Where ``mag − level``
    changes sign once in the bracket both end on the same pair of floats, so the value is
    bisection's, bit for bit. Bisection itself (as before) where the ends do not differ in sign
    or are not finite, or where its 60 halvings might stop short of neighbouring floats (a
    bracket at or near 1 Hz, where log f's floats are finer).
    """
    a, b = np.log(lo_hz), np.log(hi_hz)
    n = a.size
    level = np.broadcast_to(np.asarray(level, dtype=float), (n,))
    k2, level2 = np.concatenate([np.arange(n)] * 2), np.concatenate([level, level])
    ends = mag_fn(np.exp(np.concatenate([a, b])), k2) - level2
    fa, fb = ends[:n], ends[n:]
    if not (np.isfinite(ends).all() and (np.signbit(fa) != np.signbit(fb)).all()
            and (b - a <= 2.0**50 * np.spacing(np.minimum(np.abs(a), np.abs(b)))).all()):
        return _bisected(mag_fn, a, b, fa, level)
    cols = np.arange(n)
    slow = np.zeros(n, dtype=bool)
    for _ in range(200):  # two steps per halving at most: some 90 from a sweep step to one float
        m = 0.5 * (a + b)
        if ((m == a) | (m == b)).all():
            break
        w = b - a
        d = np.maximum(_PROBE * w * w, np.spacing(np.maximum(np.abs(a), np.abs(b))))
        x = a - fa * (w / (fb - fa))  # fa, fb of opposite signs: inside [a, b] up to rounding
        mid = (4.0 * d >= w) | slow | ~np.isfinite(x)  # (x: fa and fb both zeros of opposite signs)
        x1 = np.where(mid, m, np.clip(x - d, a, b))
        x2 = np.where(mid, m, np.clip(x + d, a, b))
        f = mag_fn(np.exp(np.concatenate([x1, x2])), k2) - level2
        pts = np.stack([a, x1, x2, b])
        vals = np.stack([fa, f[:n], f[n:], fb])
        j = np.argmax(np.signbit(vals) != np.signbit(fa), axis=0)  # the first point past the change (1 to 3)
        a, fa, b, fb = pts[j - 1, cols], vals[j - 1, cols], pts[j, cols], vals[j, cols]
        slow = b - a > 0.5 * w
    return np.exp(0.5 * (a + b))


def _bisected(mag_fn, a: np.ndarray, b: np.ndarray, fa: np.ndarray, level: np.ndarray) -> np.ndarray:
    """:func:`_crossing` by bisection in log f from the brackets ``[a, b]`` (logs of Hz), ``fa``
    the values at ``a``: at most 60 halvings, every bracket in one call per step."""
    k = np.arange(a.size)
    for _ in range(60):
        m = 0.5 * (a + b)
        if ((m == a) | (m == b)).all():
            break  # every bracket is two neighbouring floats: the steps left change nothing
        fm = mag_fn(np.exp(m), k) - level
        same = np.signbit(fm) == np.signbit(fa)
        a, fa = np.where(same, m, a), np.where(same, fm, fa)
        b = np.where(same, b, m)
    return np.exp(0.5 * (a + b))


def _edges(chain_mag, f: np.ndarray, mags: np.ndarray, owner: np.ndarray, levels: list[float]) -> list[tuple[float, float]]:
    """The lower and upper crossing of each level by the response ``owner[n]`` (magnitudes
    ``mags[owner[n]]`` on the sweep), ``(nan, nan)`` where the sweep has none; the brackets of
    all levels are bisected together."""
    lo, hi, lv, who, which = [], [], [], [], []
    out = [(math.nan, math.nan)] * len(levels)
    for n, level in enumerate(levels):
        above = np.flatnonzero(mags[owner[n]] >= level)
        if above.size == 0 or above[0] == 0 or above[-1] == f.size - 1:
            continue
        i0, i1 = above[0], above[-1]
        lo += [f[i0 - 1], f[i1]]
        hi += [f[i0], f[i1 + 1]]
        lv += [level, level]
        who += [owner[n], owner[n]]
        which.append(n)
    if which:
        rows = np.array(who)
        x = _crossing(lambda x, k: chain_mag(x, rows[k]), np.array(lo), np.array(hi), np.array(lv))
        for k, n in enumerate(which):
            out[n] = (float(x[2 * k]), float(x[2 * k + 1]))
    return out


def measure_chain(response, settings: ChainSettings, f: np.ndarray, q_max: float) -> Overall:
    """Overall figures of one chain response ``response(f_hz) -> complex (F,)`` on the sweep ``f``,
    measured alone: the reference :func:`measure_chains` (which a chain's assembly uses, for its
    responses together) must agree with."""

    def mag_fn(x):
        x = np.asarray(x, dtype=float)
        return np.abs(response(x.reshape(-1))).reshape(x.shape)

    mag = mag_fn(f)
    peak, f_pk = peak_over_frequency(lambda x: mag_fn(x).reshape(1, -1), float(f[0]), float(f[-1]), q_max=q_max, rows=1)
    return measure_chains(lambda x, rows: mag_fn(x), settings, f, mag[None, :], peak, f_pk)[0]


def measure_chains(chain_mag, settings: ChainSettings, f: np.ndarray, mags: np.ndarray, peaks: np.ndarray, f_peaks: np.ndarray) -> tuple[Overall, ...]:
    """Overall figures of several responses of one chain (ideal and finite op-amp, say), measured
    together: each one's figures are those :func:`measure_chain` finds for it alone.

    Parameters
    ----------
    chain_mag : callable
        ``chain_mag(x, rows)``: ``x`` frequencies (Hz), ``(P,)``, and ``rows`` the response each
        belongs to (``(P,)``, or one int for all), to the magnitudes ``(P,)``. A point's value
        must not depend on the other points asked with it (numpy's elementwise arithmetic).
    settings : ChainSettings
    f : ndarray
        The sweep (Hz), ``(F,)``.
    mags : ndarray
        Every response's magnitude on the sweep, ``(R, F)``.
    peaks, f_peaks : ndarray
        Every response's peak magnitude and its frequency (Hz) over the sweep's span, ``(R,)``
        (:func:`bandsmith.chain.bandpass.peak_over_frequency`).

    Notes
    -----
    The band edges of all responses are bisected together (one evaluation per step for all their
    brackets); a bracket already down to two neighbouring floats is left as it is by the further
    steps (its midpoint is one of its ends, whose side is known), so it ends where it would alone.
    """
    R = mags.shape[0]
    levels = []
    for r in range(R):
        p = float(peaks[r])
        levels += [p * 10 ** (settings.edge_level_db / 20), p * 10 ** (HALF_POWER_DB / 20)]
    edges = _edges(chain_mag, f, mags, np.repeat(np.arange(R), 2), levels)
    out = []
    for r in range(R):
        (lo, hi), (lo3, hi3) = edges[2 * r], edges[2 * r + 1]
        peak = float(peaks[r])
        f0 = math.sqrt(lo * hi) if math.isfinite(lo) and math.isfinite(hi) else math.nan
        # one point per call: numpy multiplies the stages of a lone point in another order than
        # those of several points (both right to rounding); alone, the figure is as it always was
        gc = float(20 * np.log10(chain_mag(np.array([f0]), r)[0])) if math.isfinite(f0) else math.nan
        ripple = _ripple(lambda x, r=r: chain_mag(x, r), f, mags[r], lo, hi, peak)
        out.append(Overall(lo, hi, f0, gc, ripple, 20 * math.log10(peak), float(f_peaks[r]), settings.edge_level_db, lo3, hi3))
    return tuple(out)


def _ripple(mag_fn, f: np.ndarray, mag: np.ndarray, lo: float, hi: float, peak: float) -> float:
    """The peak (magnitude) over the deepest dip between the band edges ``lo`` and ``hi`` in dB;
    0 for one maximum, nan without edges. ``mag`` is the magnitude on the sweep ``f``, ``mag_fn``
    the magnitude at frequencies ``(P,)``."""
    if not math.isfinite(lo):
        return math.nan
    inside = np.flatnonzero((f > lo) & (f < hi))
    if inside.size < 3:
        return 0.0
    m = mag[inside]
    dips = np.flatnonzero((m[1:-1] < m[:-2]) & (m[1:-1] <= m[2:])) + 1
    if dips.size == 0:
        return 0.0
    # Refine every dip on local grids (the magnitude is flat to second order there).
    lf = np.log(f[inside[dips]])
    delta = np.log(f[1] / f[0])
    for _ in range(2):
        local = lf[:, None] + np.linspace(-delta, delta, 201)[None, :]
        ml = mag_fn(np.exp(local).reshape(-1)).reshape(local.shape)
        j = np.argmin(ml, axis=1)
        lf = local[np.arange(lf.size), j]
        delta /= 100.0
    deepest = float(np.min(ml[np.arange(lf.size), j]))
    ripple = 20 * math.log10(peak / deepest)
    return 0.0 if ripple < 1e-9 else ripple  # below: rounding noise on a maximally flat top


def chain_peaks(stage_hs, n: int, f: np.ndarray, q_max: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Peaks over the sweep's span of a chain's internal responses and of its whole responses, in
    one :func:`bandsmith.chain.bandpass.peak_over_frequency` search.

    Parameters
    ----------
    stage_hs : sequence of callable
        One per whole response (R of them; the first with the ideal op-amp): frequencies ``(P,)``
        (Hz) to its stages' responses ``(n, P)`` in signal order.
    n : int
        The number of stages.
    f : ndarray
        The sweep (Hz); its ends are the span searched.
    q_max : float
        The sharpest stage's Q (the search grid's step).

    Returns
    -------
    internal_db : ndarray
        ``(n,)``: the peak in dB of ``|H_1…H_k|`` of the first response, k = 1…n.
    peaks, f_peaks : ndarray
        ``(R,)``: the peak magnitude of each whole response and its frequency (Hz).

    Notes
    -----
    The internal responses are :func:`bandsmith.chain.bandpass.partial_magnitudes` (``|cumprod|``
    on the search grid, products in signal order on the refining grids), the whole ones
    ``|prod|``, each row at its own frequencies on the refining grids. These are the very values
    of searching each alone (numpy's product along an axis of several points multiplies in
    order, elementwise). So where a refining grid of the first whole response is that of its
    last internal one (the two peaks found at the same grid point, as they mostly are), its
    magnitudes are that row's, taken without evaluating its stages again.
    """
    first = stage_hs[0]

    def mag_fn(x):
        x = np.asarray(x, dtype=float)
        if x.ndim == 1:  # one grid for all rows: each response's stages evaluated once, for both uses
            hs = [sh(x) for sh in stage_hs]
            return np.concatenate([partial_magnitudes(lambda _: hs[0], x)] + [np.abs(np.prod(h, axis=0))[None, :] for h in hs])
        out = np.empty(x.shape)
        out[:n] = partial_magnitudes(first, x[:n])  # row k: the first k + 1 stages at its grid
        for r, sh in enumerate(stage_hs):
            if r == 0 and np.array_equal(x[n], x[n - 1]):  # the first whole response where its last partial one is refined
                out[n] = out[n - 1]
            else:
                out[n + r] = np.abs(np.prod(sh(x[n + r]), axis=0))
        return out

    peaks, f_pk = peak_over_frequency(mag_fn, float(f[0]), float(f[-1]), q_max=q_max, rows=n + len(stage_hs))
    return 20 * np.log10(peaks[:n]), peaks[n:], f_pk[n:]


def max_dev_db(a: np.ndarray, b: np.ndarray) -> float:
    """The largest ``|20·log10|a| − 20·log10|b||`` (dB) of two responses; nan when empty."""
    return largest(deviations_db(np.abs(a), np.abs(b)))


def deviations_db(mags: np.ndarray, ref_mag: np.ndarray) -> np.ndarray:
    """``|20·log10(mags) − 20·log10(ref_mag)|`` (dB) elementwise, ``mags`` ``(..., F)`` (one row per
    response) against the reference's magnitudes ``(F,)``; a zero magnitude gives inf, not a
    warning. A part of the sweep (the band) takes its elements: the same numbers as its own."""
    with np.errstate(divide="ignore"):
        return np.abs(20 * np.log10(mags) - 20 * np.log10(ref_mag))


def largest(d: np.ndarray) -> float:
    """The largest of deviations (:func:`deviations_db`), nan when there are none."""
    return float(np.max(d)) if d.size else math.nan
