"""Low-pass → band-pass transformation, pairing into second-order sections, stage order and gains.

Rules
-----
Band edges. The prototype's band edge (ω = 1) maps onto both band edges ``f_low`` and ``f_high``
of the band-pass: for Butterworth and Bessel they are the −3 dB points, for Chebyshev the edges of
the ripple band (−R dB below the passband peak). The band's centre is the geometric mean
``f_c = √(f_low·f_high)``, its bandwidth ``B = f_high − f_low`` and ``Q_bp = f_c/B``.

Transformation. ``s → Q_bp·(s/ω_c + ω_c/s)`` turns each prototype pole into band-pass poles,
computed section by section with Geffe's algorithm (A. B. Williams & F. J. Taylor, *Electronic
Filter Design Handbook*, band-pass chapter — from memory; identical to
``scipy.signal.lp2bp_zpk``, which the tests show). For a pole pair ``−α ± jβ``::

    C = α² + β²;  D = 2α/Q_bp;  E = C/Q_bp² + 4;  G = √(E² − 4D²)
    Q = √((E + G)/(2D²));  M = α·Q/Q_bp;  W = M + √(M² − 1)

gives two sections of that Q at ``f_c/W`` and ``W·f_c``; a real pole ``−α0`` gives one section at
``f_c`` with ``Q = Q_bp/α0``. So a prototype of order N gives N second-order band-pass sections,
each ``H_i(s) = g_i·(ω_i/Q_i)·s/(s² + (ω_i/Q_i)·s + ω_i²)`` with peak gain ``g_i`` at its own
``f_i``.

Overall gain. ``gain`` is the magnitude of the whole at the geometric centre ``f_c``. Every family
as normalised here peaks at 1 in the prototype, so the overall peak is ``gain``, except for an
even-order Chebyshev, whose centre lies in a ripple trough: its peak is ``gain·10^(R/20)``.

Stage order and gain distribution (common practice, no source). Stages run by ascending Q (ties:
ascending f0), so that the sharply peaking stages come last, where the preceding stages have
already removed the out-of-band signal they would boost. The gains are set so that the peak
(over frequency) of the response from the input to every stage's output equals the peak of the
whole filter's response: no internal node swings more than the output, and none is needlessly
small (the signal stays well above the noise). With ``P_k`` the peak of the product of the first
k unit-peak sections, stage k's output is scaled to ``c_k = G_peak/P_k``, so its own peak gain is
``g_k = c_k/c_(k−1)`` (``c_0 = 1``). The peak internal gain of every stage is thus the overall
peak gain.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from bandsmith.common.errors import InputError
from bandsmith.chain.prototypes import Prototype

__all__ = ["Band", "band_from", "geffe", "SectionPlan", "CascadePlan", "plan_cascade", "biquad_bandpass", "partial_magnitudes", "peak_over_frequency"]


@dataclass(frozen=True, slots=True)
class Band:
    """A pass band given by its edges (Hz)."""

    f_low_hz: float
    f_high_hz: float

    @property
    def f0_hz(self) -> float:
        """Geometric centre ``√(f_low·f_high)`` (Hz)."""
        return math.sqrt(self.f_low_hz * self.f_high_hz)

    @property
    def bw_hz(self) -> float:
        """Bandwidth ``f_high − f_low`` (Hz)."""
        return self.f_high_hz - self.f_low_hz

    @property
    def q_bp(self) -> float:
        """``f0/bandwidth`` of the whole band (the transformation's Q_bp)."""
        return self.f0_hz / self.bw_hz

    def to_json(self) -> dict:
        return {"f0_hz": float(self.f0_hz), "bw_hz": float(self.bw_hz), "f_low_hz": float(self.f_low_hz), "f_high_hz": float(self.f_high_hz), "q": float(self.q_bp)}


def _pos(name: str, v) -> float:
    x = float(v)
    if not (math.isfinite(x) and x > 0):
        raise InputError(name, f"must be a finite number above zero, got {v!r}")
    return x


def band_from(*, f0_hz=None, bw_hz=None, f_low_hz=None, f_high_hz=None, rel_tol: float = 1e-3) -> Band:
    """The band from a centre and bandwidth, or from its two edges (Hz).

    With ``f0_hz`` and ``bw_hz``: ``f_low·f_high = f0²`` and ``f_high − f_low = bw``. With the
    edges, ``f0_hz`` may be given too but must be their geometric mean within ``rel_tol``.

    Raises
    ------
    InputError
        Naming ``f0``, ``bw``, ``f-low`` or ``f-high``.
    """
    has_edges = f_low_hz is not None or f_high_hz is not None
    if bw_hz is not None and has_edges:
        raise InputError("bw", "give either --bw or --f-low with --f-high, not both")
    if has_edges:
        if f_low_hz is None:
            raise InputError("f-low", "missing; --f-high needs --f-low")
        if f_high_hz is None:
            raise InputError("f-high", "missing; --f-low needs --f-high")
        lo, hi = _pos("f-low", f_low_hz), _pos("f-high", f_high_hz)
        if hi <= lo:
            raise InputError("f-high", f"must be above f-low ({lo:g} Hz), got {hi:g} Hz")
        band = Band(lo, hi)
        if f0_hz is not None:
            f0 = _pos("f0", f0_hz)
            if abs(f0 / band.f0_hz - 1.0) > rel_tol:
                raise InputError("f0", f"{f0:g} Hz is not the geometric centre √(f_low·f_high) = {band.f0_hz:.6g} Hz of the band; leave it out or correct it")
        return band
    if f0_hz is None:
        raise InputError("f0", "missing; give --f0 with --bw, or --f-low and --f-high")
    if bw_hz is None:
        raise InputError("bw", "missing; give --bw, or --f-low and --f-high")
    f0, bw = _pos("f0", f0_hz), _pos("bw", bw_hz)
    lo = math.sqrt(0.25 * bw * bw + f0 * f0) - 0.5 * bw
    return Band(lo, lo + bw)


def geffe(alpha: float, beta: float, q_bp: float) -> tuple[float, float]:
    """Geffe's band-pass sections for one prototype pole (see the module notes).

    Parameters
    ----------
    alpha, beta : float
        The prototype pole ``−α ± jβ`` (``β = 0`` for a real pole), normalised.
    q_bp : float
        ``f_c/B`` of the band.

    Returns
    -------
    (q, w) : tuple of float
        The sections' Q and the frequency factor W: a pair gives sections at ``f_c/W`` and
        ``W·f_c``; a real pole gives one section at ``f_c`` (``W = 1``).
    """
    if beta == 0.0:
        return q_bp / alpha, 1.0
    c = alpha * alpha + beta * beta
    d = 2.0 * alpha / q_bp
    e = c / (q_bp * q_bp) + 4.0
    g = math.sqrt(e * e - 4.0 * d * d)
    q = math.sqrt((e + g) / (2.0 * d * d))
    m = alpha * q / q_bp
    w = m + math.sqrt(max(m * m - 1.0, 0.0))
    return q, w


def biquad_bandpass(s: np.ndarray, w0: np.ndarray, q: np.ndarray, gain: np.ndarray | float = 1.0) -> np.ndarray:
    """Band-pass biquads ``g·(ω0/Q)·s/(s² + (ω0/Q)s + ω0²)`` at ``s`` (rad/s): shape ``(N, F)``.

    ``w0`` (rad/s), ``q`` and ``gain`` have shape ``(N,)``; ``s`` has shape ``(F,)``.
    """
    w0 = np.asarray(w0, dtype=float)[:, None]
    q = np.asarray(q, dtype=float)[:, None]
    g = np.broadcast_to(np.asarray(gain, dtype=float), w0.shape[:1])[:, None]
    s = np.asarray(s, dtype=complex)[None, :]
    a = w0 / q
    return g * a * s / (s * s + a * s + w0 * w0)


def partial_magnitudes(stage_h, x) -> np.ndarray:
    """The magnitudes ``|H_1·…·H_k|``, k = 1…n, of a chain's first stages (its internal
    responses), as :func:`peak_over_frequency` asks for them: ``(n, F)``.

    Parameters
    ----------
    stage_h : callable
        Frequencies ``(P,)`` (Hz) to the n stages' responses ``(n, P)`` (complex, signal order).
    x : ndarray
        ``(F,)``: the search grid, every row at these points; the rows are ``|cumprod|`` over the
        stages. ``(n, F)``: refining grids, row k at its own points; row k is the product of the
        first k + 1 stages at them (:func:`_own_partial_products`, the stages evaluated once for
        all rows).

    Notes
    -----
    A refining row's values are those of multiplying its stages in signal order at its points
    alone; the search grid keeps the cumulative product it has always used (numpy's cumulative
    product may round differently from the running product, and the grid's values are kept
    bit for bit).
    """
    x = np.asarray(x, dtype=float)
    if x.ndim == 1:
        return np.abs(np.cumprod(stage_h(x), axis=0))
    return np.abs(_own_partial_products(stage_h(x.reshape(-1)), x.shape[1]))


def _own_partial_products(h: np.ndarray, width: int) -> np.ndarray:
    """Row k: ``H_1·H_2·…·H_(k+1)`` at the k-th block of ``width`` points, ``(n, width)``.

    ``h`` is ``(n, n·width)``: n stages in signal order, each at every row's points (one
    evaluation for all rows of a :func:`peak_over_frequency` refinement). The running product
    multiplies in signal order, as ``np.prod`` over the first k + 1 stages of a row's own points
    does, so the values are those of evaluating each row alone.
    """
    n = h.shape[0]
    out = np.empty((n, width), dtype=h.dtype)
    run = h[0]
    for k in range(n):  # one step per stage (at most a few tens), never per frequency
        if k:
            run = run * h[k]
        out[k] = run[k * width : (k + 1) * width]
    return out


def peak_over_frequency(mag_fn, f_lo_hz: float, f_hi_hz: float, *, q_max: float, rows: int) -> tuple[np.ndarray, np.ndarray]:
    """Peaks of ``rows`` magnitude responses over ``[f_lo, f_hi]``: ``(peak, f_at_peak)``, each ``(rows,)``.

    ``mag_fn(f_hz)`` takes frequencies of shape ``(F,)`` or ``(rows, F)`` and returns magnitudes of
    shape ``(rows, F)``. A log grid fine enough for ``q_max`` (40 points per bandwidth of the
    sharpest section) finds each peak; two local grids of 201 points refine it (the magnitude near a
    peak is flat to second order, so the peak value is good to about 1e-9 relative).
    """
    span = math.log(f_hi_hz / f_lo_hz)
    step = 1.0 / (40.0 * max(q_max, 0.5))
    n = int(min(max(span / step, 400), 400_000)) + 1
    lf = np.linspace(math.log(f_lo_hz), math.log(f_hi_hz), n)
    mag = mag_fn(np.exp(lf))
    i = np.argmax(mag, axis=1)
    centre = lf[i]
    delta = lf[1] - lf[0]
    for _ in range(2):
        local = centre[:, None] + np.linspace(-delta, delta, 201)[None, :]
        mag = mag_fn(np.exp(local))
        j = np.argmax(mag, axis=1)
        centre = local[np.arange(rows), j]
        delta = delta / 100.0
    peak = mag[np.arange(rows), j]
    return peak, np.exp(centre)


@dataclass(frozen=True, slots=True)
class SectionPlan:
    """One planned second-order band-pass stage.

    Attributes
    ----------
    index : int
        Position in the chain, from 1 (signal order).
    f0_hz, q : float
        Centre frequency (Hz) and Q of the section.
    gain : float
        The stage's own peak gain magnitude, at its f0 (V/V).
    peak_internal_gain : float
        Planned peak over frequency of the response from the chain's input to this stage's output.
    lowpass_pole : complex
        The prototype pole (upper member of a pair) it comes from.
    """

    index: int
    f0_hz: float
    q: float
    gain: float
    peak_internal_gain: float
    lowpass_pole: complex

    @property
    def peak_internal_gain_db(self) -> float:
        return 20.0 * math.log10(self.peak_internal_gain)

    def to_json(self) -> dict:
        return {
            "index": int(self.index),
            "f0_hz": float(self.f0_hz),
            "q": float(self.q),
            "gain": float(self.gain),
            "peak_internal_gain_db": float(self.peak_internal_gain_db),
            "lowpass_pole": [float(self.lowpass_pole.real), float(self.lowpass_pole.imag)],
        }


@dataclass(frozen=True, slots=True)
class CascadePlan:
    """The band-pass target as a chain of planned sections.

    Attributes
    ----------
    prototype : Prototype
    band : Band
    gain : float
        Requested magnitude at the geometric centre (V/V).
    peak_gain : float
        The overall response's peak magnitude (V/V).
    sections : tuple of SectionPlan
        In signal order (ascending Q).
    """

    prototype: Prototype
    band: Band
    gain: float
    peak_gain: float
    sections: tuple[SectionPlan, ...]

    def stage_responses(self, f_hz: np.ndarray) -> np.ndarray:
        """Each planned section's ideal response at frequencies in Hz: ``(N, F)`` complex."""
        w0 = np.array([2.0 * math.pi * s.f0_hz for s in self.sections])
        q = np.array([s.q for s in self.sections])
        g = np.array([s.gain for s in self.sections])
        return biquad_bandpass(2j * math.pi * np.asarray(f_hz, dtype=float), w0, q, g)

    def response(self, f_hz: np.ndarray) -> np.ndarray:
        """The planned chain's ideal response at frequencies in Hz: ``(F,)`` complex."""
        return np.prod(self.stage_responses(f_hz), axis=0)

    def to_json(self) -> dict:
        return {"band": self.band.to_json(), "gain": float(self.gain), "peak_gain": float(self.peak_gain), "sections": [s.to_json() for s in self.sections]}


def plan_cascade(proto: Prototype, band: Band, gain: float) -> CascadePlan:
    """Turn a prototype into band-pass sections, order them and share the gain (module notes).

    Parameters
    ----------
    proto : Prototype
        The low-pass prototype (order N).
    band : Band
        Band edges in Hz.
    gain : float
        Magnitude at the geometric centre, V/V (> 0).
    """
    if not (math.isfinite(gain) and gain > 0):
        raise InputError("gain", f"must be a finite number above zero, got {gain!r}")
    fc, qbp = band.f0_hz, band.q_bp
    raw = []
    for sec in proto.sections:
        q, w = geffe(sec.alpha, sec.beta, qbp)
        if sec.real:
            raw.append((q, fc, sec.pole))
        else:
            raw.append((q, fc / w, sec.pole))
            raw.append((q, fc * w, sec.pole))
    raw.sort(key=lambda t: (round(t[0], 9), t[1]))
    f0 = np.array([t[1] for t in raw])
    q = np.array([t[0] for t in raw])
    n = len(raw)
    w0 = 2.0 * math.pi * f0

    def sections_h(f_hz):
        return biquad_bandpass(2j * math.pi * f_hz, w0, q)

    lo = min(f0.min(), band.f_low_hz) / 2.0
    hi = max(f0.max(), band.f_high_hz) * 2.0
    peaks, _ = peak_over_frequency(lambda f: partial_magnitudes(sections_h, f), lo, hi, q_max=float(q.max()), rows=n)
    centre = float(np.abs(np.prod(biquad_bandpass(np.array([2j * math.pi * fc]), w0, q), axis=0))[0])
    k_total = gain / centre
    peak_gain = k_total * float(peaks[-1])
    c = peak_gain / peaks
    c[-1] = k_total * 1.0  # exact: the whole chain's constant
    stage_gain = c / np.concatenate([[1.0], c[:-1]])
    sections = tuple(
        SectionPlan(index=i + 1, f0_hz=float(f0[i]), q=float(q[i]), gain=float(stage_gain[i]), peak_internal_gain=float(c[i] * peaks[i]), lowpass_pole=complex(raw[i][2]))
        for i in range(n)
    )
    return CascadePlan(prototype=proto, band=band, gain=float(gain), peak_gain=peak_gain, sections=sections)
