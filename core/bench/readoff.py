"""f0, Q and centre gain read off measured points, with the README's "Definitions".

f0 is the frequency of the magnitude peak; f_low and f_high are the points 3 dB (half power,
10·log10 2 dB) below the peak; Q = f0/(f_high − f_low); the centre gain is the peak magnitude,
signed negative where the phase at f0 is beyond ±90°; the centre phase is the phase at f0 in
(−180, 180].

Between points
--------------
- Peak: a parabola in ``ln f`` fitted by least squares to the dB values of the points within
  1 dB of the highest one (at least the highest point and its two neighbours; with exactly those
  three it is the classical three-point parabolic interpolation). Its vertex gives f0 and the
  peak gain. Using every point of the top 1 dB averages the measurement's scatter, which on a
  dense sweep is as large as the dB step between neighbouring points near the peak.
- −3 dB points: walking outwards from the peak, the first pair of neighbouring points that
  brackets the threshold; the crossing is interpolated linearly in ``ln f`` between them.
- Centre phase: the unwrapped phase interpolated linearly in ``ln f`` at f0.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from bandsmith.common.jsonutil import finite_or_none
from bandsmith.common.errors import InputError

__all__ = ["ReadOff", "read_off", "read_off_measurement", "PEAK_WINDOW_DB", "HALF_POWER_DB"]

PEAK_WINDOW_DB = 1.0
HALF_POWER_DB = 10.0 * math.log10(2.0)


@dataclass(frozen=True, slots=True)
class ReadOff:
    """Figures read off measured points (NaN where the data do not show them).

    Attributes
    ----------
    f0_hz, bw_hz, f_low_hz, f_high_hz : float
        Peak frequency, −3 dB bandwidth and its edges (Hz).
    q : float
        f0 / bandwidth.
    gain_center_db : float
        Peak magnitude in dB.
    gain_center : float
        Peak magnitude (V/V), negative where the phase says the circuit inverts; positive when
        there is no phase.
    phase_center_deg : float
        Phase at f0 in (−180, 180], NaN without phase data.
    points : int
        Number of measured points.
    notes : tuple of str
        Why a figure is missing, in plain words.
    """

    f0_hz: float
    q: float
    bw_hz: float
    f_low_hz: float
    f_high_hz: float
    gain_center_db: float
    gain_center: float
    phase_center_deg: float
    points: int
    notes: tuple[str, ...] = ()

    def to_json(self) -> dict:
        f = finite_or_none

        return {
            "f0_hz": f(self.f0_hz), "q": f(self.q), "bw_hz": f(self.bw_hz), "f_low_hz": f(self.f_low_hz),
            "f_high_hz": f(self.f_high_hz), "gain_center": f(self.gain_center), "gain_center_db": f(self.gain_center_db),
            "phase_center_deg": f(self.phase_center_deg), "points": int(self.points), "notes": list(self.notes),
        }


def _peak(x: np.ndarray, y: np.ndarray, i: int) -> tuple[float, float]:
    """Vertex ``(x, y)`` of the least-squares parabola over the top ``PEAK_WINDOW_DB`` around ``i``."""
    n = x.size
    lo = i
    while lo > 0 and y[lo - 1] >= y[i] - PEAK_WINDOW_DB:
        lo -= 1
    hi = i
    while hi < n - 1 and y[hi + 1] >= y[i] - PEAK_WINDOW_DB:
        hi += 1
    lo, hi = min(lo, i - 1), max(hi, i + 1)
    xs, ys = x[lo : hi + 1] - x[i], y[lo : hi + 1]
    a, b, c = np.polyfit(xs, ys, 2)
    if not a < 0:
        return float(x[i]), float(y[i])
    xv = float(np.clip(-b / (2.0 * a), xs[0], xs[-1]))
    return float(x[i] + xv), float(np.polyval((a, b, c), xv))


def _crossing(x: np.ndarray, y: np.ndarray, i: int, level: float, step: int) -> float:
    """``ln f`` where the dB values first fall below ``level`` walking from ``i`` by ``step``."""
    k = i
    while 0 <= k + step < x.size:
        if y[k + step] < level:
            a, b = y[k], y[k + step]
            t = (a - level) / (a - b)
            return float(x[k] + t * (x[k + step] - x[k]))
        k += step
    return math.nan


def read_off(f_hz, mag_db, phase_deg=None) -> ReadOff:
    """Read f0, Q, bandwidth and centre gain off measured points.

    Parameters
    ----------
    f_hz : array_like
        Increasing frequencies (Hz), at least three.
    mag_db : array_like
        Magnitude (dB) at each frequency.
    phase_deg : array_like, optional
        Phase (degrees) at each frequency.
    """
    f = np.asarray(f_hz, dtype=float).reshape(-1)
    y = np.asarray(mag_db, dtype=float).reshape(-1)
    if f.size < 3 or y.shape != f.shape:
        raise InputError("measured", "needs at least three points, with a magnitude for each frequency")
    if not (np.all(f > 0) and np.all(np.diff(f) > 0)):
        raise InputError("measured", "frequencies must be above zero and increase")
    x = np.log(f)
    i = int(np.argmax(y))
    notes: list[str] = []
    nan = math.nan
    if i == 0 or i == f.size - 1:
        edge = "lowest" if i == 0 else "highest"
        notes.append(f"the magnitude is largest at the {edge} measured frequency: the data show no peak, so no f0 or Q")
        g = float(y[i])
        return ReadOff(nan, nan, nan, nan, nan, g, 10.0 ** (g / 20.0), nan, int(f.size), tuple(notes))
    x0, g_db = _peak(x, y, i)
    level = g_db - HALF_POWER_DB
    xl = _crossing(x, y, i, level, -1)
    xh = _crossing(x, y, i, level, +1)
    if not math.isfinite(xl):
        notes.append("the magnitude never falls 3 dB below the peak below f0: no lower edge, bandwidth or Q")
    if not math.isfinite(xh):
        notes.append("the magnitude never falls 3 dB below the peak above f0: no upper edge, bandwidth or Q")
    f0 = math.exp(x0)
    fl, fh = math.exp(xl) if math.isfinite(xl) else nan, math.exp(xh) if math.isfinite(xh) else nan
    bw = fh - fl
    q = f0 / bw if math.isfinite(bw) and bw > 0 else nan
    gain = 10.0 ** (g_db / 20.0)
    phase = nan
    if phase_deg is not None:
        p = np.degrees(np.unwrap(np.radians(np.asarray(phase_deg, dtype=float).reshape(-1))))
        phase = float(np.interp(x0, x, p))
        phase = 180.0 - ((180.0 - phase) % 360.0)  # into (-180, 180]
        if abs(phase) > 90.0:
            gain = -gain
    return ReadOff(f0, q, bw, fl, fh, g_db, gain, phase, int(f.size), tuple(notes))


def read_off_measurement(m) -> ReadOff:
    """:func:`read_off` of a :class:`~bandsmith.bench.measured.Measurement`."""
    return read_off(m.f_hz, m.mag_db, m.phase_deg)
