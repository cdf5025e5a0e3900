"""Tone bursts: the response to a sine switched on for N cycles (or a duration), and its envelope.

For ``H(s) = D + Σ r_i/(s − λ_i)`` (simple poles ``λ_i``, residues ``r_i``, direct term ``D``) and the
input ``x(t) = sin(ωt + φ)`` switched on at ``t = 0``, partial fractions of
``H(s)·(s·sin φ + ω·cos φ)/(s² + ω²)`` give, exactly (derived),

    y_φ(t) = Im(H(jω)·e^{j(ωt+φ)}) + Σ_i r_i·(λ_i·sin φ + ω·cos φ)/(λ_i² + ω²)·e^{λ_i t}.

A burst that starts at 0 and ends at ``T`` is ``sin(ωt)`` minus the same sine switched on at
``T``, i.e. ``sin(ω(t − T) + ωT)``, so ``y(t) = y_0(t) − y_{ωT}(t − T)·1(t ≥ T)``: every time at
once, no integration. The sum over conjugate poles is real.

The envelope is the magnitude of the analytic (positive-frequency) part: the steady term
``H(jω)·e^{jωt}`` and, for every pole of positive imaginary part, ``2j·c_i·e^{λ_i t}`` (``c_i``
its coefficient above), real poles counted once as ``j·c_i·e^{λ_i t}``; its imaginary part is
``y``. For one second-order band-pass stage the ring-down envelope is then exactly
``A·e^{−t/τ}`` with ``τ = 1/σ = 2Q/ω0 = Q/(π·f0)`` (the pole ``λ = −ω0/(2Q) + jω_d``).

Figures
-------
- ``envelope_tau_s``: the time constant of the ring-down envelope, a least-squares fit of
  ``ln(envelope)`` against time from the burst's end until it has fallen 40 dB (or the end of the
  record); for one stage it is ``2Q/ω0``.
- ``settle_time_s``: from the burst's start, the last time the envelope is outside ``±P`` of the
  steady amplitude ``|H(jω)|`` before the burst ends; None when it never settles within the burst.
- ``ringdown_time_s``: from the burst's end, the last time the envelope is above 1 % of the steady
  amplitude.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from bandsmith.common.errors import InputError

__all__ = ["Zpk", "zpk_of", "chain_zpk", "BurstResult", "burst_response", "RINGDOWN_LEVEL", "MAX_POINTS", "MAX_WAVEFORM_POINTS"]

RINGDOWN_LEVEL = 0.01
FIT_DROP_DB = 40.0
MAX_POINTS = 200_000  # with up to ~20 poles the (T, P) exponentials stay near 60 MB
MAX_WAVEFORM_POINTS = 4000
_SAMPLES_PER_CYCLE = 64
_SAMPLES_PER_TAU = 400


@dataclass(frozen=True, slots=True)
class Zpk:
    """Zeros and poles (rad/s) and gain of ``H(s) = k·∏(s − z)/∏(s − p)``."""

    z: np.ndarray
    p: np.ndarray
    k: float


def zpk_of(h, i: int = 0) -> Zpk:
    """Member ``i`` of a :class:`~bandsmith.solver.rational.Rational` as zeros, poles and gain."""
    b, a = h.to_s(i)
    b = np.trim_zeros(np.asarray(b, dtype=float), "f")
    a = np.trim_zeros(np.asarray(a, dtype=float), "f")
    return Zpk(np.roots(b), np.roots(a), float(b[0] / a[0]))


def chain_zpk(parts) -> Zpk:
    """The product of several transfer functions (a chain of stages driven by op-amp outputs)."""
    zs = [zpk_of(h) for h in parts]
    return Zpk(np.concatenate([x.z for x in zs]), np.concatenate([x.p for x in zs]), float(np.prod([x.k for x in zs])))


def _residues(zpk: Zpk) -> np.ndarray:
    """Residues at the poles of a proper zpk (simple poles)."""
    z, p, k = zpk.z, zpk.p, zpk.k
    if z.size > p.size:
        raise InputError("circuit", "its response is not proper (more zeros than poles); a burst needs a proper one")
    scale = max(float(np.max(np.abs(p))), 1.0)
    d = p[:, None] - p[None, :]
    np.fill_diagonal(d, 1.0)
    if p.size > 1 and float(np.min(np.abs(d))) < 1e-9 * scale:
        # coincident poles (identical stages): parted by a relative 1e-7, an error of that order
        p = p * (1.0 + 1e-7 * np.arange(p.size))
        d = p[:, None] - p[None, :]
        np.fill_diagonal(d, 1.0)
    num = k * np.prod(p[:, None] - z[None, :], axis=1) if z.size else np.full(p.size, k, dtype=complex)
    return num / np.prod(d, axis=1)


def _h_at(zpk: Zpk, w: float) -> complex:
    s = 1j * w
    return complex(zpk.k * np.prod(s - zpk.z) / np.prod(s - zpk.p))


@dataclass(frozen=True, slots=True)
class BurstResult:
    """A tone burst's response.

    Attributes
    ----------
    freq_hz : float
        The tone (Hz).
    duration_s : float
        How long the tone is on (s).
    t_s, y, envelope : ndarray
        Times (s), output (V per volt of input peak) and its envelope.
    steady_amplitude : float
        ``|H(jω)|`` (V/V).
    envelope_tau_s, settle_time_s, ringdown_time_s : float or None
        See the module notes (s).
    within : float
        The settling band as a fraction of the steady amplitude.
    """

    freq_hz: float
    duration_s: float
    t_s: np.ndarray
    y: np.ndarray
    envelope: np.ndarray
    steady_amplitude: float
    envelope_tau_s: float | None
    settle_time_s: float | None
    ringdown_time_s: float | None
    within: float

    def waveform(self, max_points: int = MAX_WAVEFORM_POINTS) -> dict:
        """Times, output and envelope for plotting, at most ``max_points`` (every k-th sample)."""
        step = max(1, math.ceil(self.t_s.size / max_points))
        return {"t_s": self.t_s[::step].tolist(), "y": self.y[::step].tolist(), "envelope": self.envelope[::step].tolist()}

    def to_json(self) -> dict:
        return {
            "freq_hz": self.freq_hz,
            "duration_s": self.duration_s,
            "cycles": self.duration_s * self.freq_hz,
            "within": self.within,
            "steady_amplitude": self.steady_amplitude,
            "envelope_tau_s": self.envelope_tau_s,
            "settle_time_s": self.settle_time_s,
            "ringdown_time_s": self.ringdown_time_s,
            "waveform": self.waveform(),
        }


def _switched(r: np.ndarray, p: np.ndarray, w: float, phi: float, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Transient part of ``y_φ`` (real) and its analytic counterpart (complex), at times ``t ≥ 0``."""
    c = r * (p * math.sin(phi) + w * math.cos(phi)) / (p * p + w * w)
    e = np.exp(np.outer(t, p))  # (T, P)
    real = np.real(e @ c)
    upper = p.imag > 0
    real_pole = np.abs(p.imag) <= 1e-12 * np.maximum(np.abs(p), 1.0)
    weight = np.where(upper, 2.0, np.where(real_pole, 1.0, 0.0))
    analytic = 1j * (e @ (weight * c))
    return real, analytic


def burst_response(zpk: Zpk, freq_hz: float, duration_s: float, *, within: float = 0.01, t_end_s: float | None = None) -> BurstResult:
    """The response to ``sin(2π·f·t)`` on from 0 to ``duration_s`` (module notes).

    Parameters
    ----------
    zpk : Zpk
        The transfer function (a stage or a whole chain).
    freq_hz : float
        The tone (Hz).
    duration_s : float
        How long it is on (s).
    within : float
        Settling band, a fraction of the steady amplitude (default 0.01).
    t_end_s : float, optional
        End of the record (s); by default the burst plus 10 time constants of the slowest pole.

    Returns
    -------
    BurstResult
    """
    if not (math.isfinite(freq_hz) and freq_hz > 0):
        raise InputError("freq", f"must be a frequency above zero, got {freq_hz!r}")
    if not (math.isfinite(duration_s) and duration_s > 0):
        raise InputError("duration", f"must be a time above zero, got {duration_s!r}")
    if not (0 < within < 1):
        raise InputError("within", f"must be a fraction above 0 and below 100 %, got {within!r}")
    if np.any(zpk.p.real >= 0):
        raise InputError("circuit", "its response is not stable (a pole in the right half-plane); no burst settles")
    w = 2 * math.pi * freq_hz
    r = _residues(zpk)
    p = zpk.p
    tau_max = 1.0 / float(np.min(-p.real))
    tau_min = 1.0 / float(np.max(-p.real))
    end = t_end_s if t_end_s is not None else duration_s + 10.0 * tau_max
    dt = min(1.0 / (freq_hz * _SAMPLES_PER_CYCLE), tau_min / _SAMPLES_PER_TAU)
    n = int(min(MAX_POINTS, max(2000, math.ceil(end / dt) + 1)))
    t = np.linspace(0.0, end, n)
    hj = _h_at(zpk, w)
    amp = abs(hj)
    steady = hj * np.exp(1j * w * t)
    tr0, an0 = _switched(r, p, w, 0.0, t)
    y = np.imag(steady) + tr0
    z = steady + an0
    after = t >= duration_s
    ta = t[after] - duration_s
    phi = w * duration_s
    tr1, an1 = _switched(r, p, w, phi, ta)
    steady1 = hj * np.exp(1j * (w * ta + phi))
    y[after] -= np.imag(steady1) + tr1
    z[after] -= steady1 + an1
    env = np.abs(z)  # a direct term D is in H(jω): its share D·sin(ωt + φ) is in the steady parts
    settle = _settle(t, env, amp, within, duration_s)
    ring = _ringdown(ta, env[after], amp)
    tau = _fit_tau(ta, env[after])
    return BurstResult(float(freq_hz), float(duration_s), t, y, env, float(amp), tau, settle, ring, float(within))


def _settle(t, env, amp, within, duration_s) -> float | None:
    on = t < duration_s
    out = np.abs(env[on] / amp - 1.0) > within
    if not out.any():
        return 0.0
    last = int(np.flatnonzero(out)[-1])
    if last >= int(on.sum()) - 1:
        return None  # still outside the band when the burst ends
    return float(t[last + 1])


def _ringdown(ta, env, amp) -> float | None:
    above = env > RINGDOWN_LEVEL * amp
    if not above.any():
        return 0.0
    last = int(np.flatnonzero(above)[-1])
    if last >= env.size - 1:
        return None
    return float(ta[last + 1])


def _fit_tau(ta, env) -> float | None:
    if env.size < 3 or env[0] <= 0:
        return None
    floor = env[0] * 10 ** (-FIT_DROP_DB / 20)
    keep = env > floor
    stop = int(np.argmin(keep)) if not keep.all() else env.size
    if stop < 3:
        return None
    x, yl = ta[:stop], np.log(env[:stop])
    slope = np.polyfit(x, yl, 1)[0]
    return float(-1.0 / slope) if slope < 0 else None
