"""Channel centres on a rule: IEC 61260-1 octave and fractional-octave bands, or a typed list.

IEC 61260-1:2014 (Electroacoustics — Octave-band and fractional-octave-band filters — Part 1),
clause 5.2–5.4, base-ten system (formulas from memory; checked against the nominal labels below):

* octave frequency ratio ``G = 10^(3/10)``, reference frequency ``fr = 1000 Hz``;
* exact mid-band frequencies ``fm = fr·G^(x/b)`` for odd ``b`` and ``fm = fr·G^((2x+1)/(2b))``
  for even ``b`` (``x`` any integer, ``1/b`` the bandwidth designator);
* band edges ``f1 = fm·G^(−1/(2b))`` and ``f2 = fm·G^(1/(2b))``.

A second-order band-pass whose −3 dB points are the band edges has
``Q = fm/(f2 − f1) = √(G^(1/b))/(G^(1/b) − 1)``, so neighbouring channels cross at −3 dB.

Nominal mid-band labels: for octave and one-third-octave bands the standard lists the R10
preferred numbers (ISO 3: 1, 1.25, 1.6, 2, 2.5, 3.15, 4, 5, 6.3, 8 in every decade); for narrower
bands it rounds the exact frequency to three significant digits when the leading digit is 1 to 4
and to two when it is 5 to 9 (IEC 61260-1:2014 annex E, from memory).
"""

from __future__ import annotations

import math
from typing import Sequence

import numpy as np

from bandsmith.common.errors import InputError

__all__ = [
    "G", "F_REF_HZ", "R10", "band_index_range", "mid_band_hz", "band_edges_hz", "band_q",
    "nominal_label_hz", "fraction_centres", "listed_centres", "even_centres", "q_for_crossing",
]

#: Base-ten octave ratio (IEC 61260-1:2014, 5.2).
G = 10.0 ** 0.3
#: Reference frequency (Hz).
F_REF_HZ = 1000.0
#: The R10 preferred numbers (ISO 3), the third-octave nominal labels in one decade.
R10 = (1.0, 1.25, 1.6, 2.0, 2.5, 3.15, 4.0, 5.0, 6.3, 8.0)
#: Bandwidth designators accepted (1/b octave).
MAX_FRACTION = 48


def _check_b(b) -> int:
    if isinstance(b, bool):
        raise InputError("octave-fraction", f"must be a whole number from 1 to {MAX_FRACTION}, got {b!r}")
    try:
        bi = int(b)
    except (TypeError, ValueError):
        raise InputError("octave-fraction", f"must be a whole number from 1 to {MAX_FRACTION}, got {b!r}") from None
    if bi != float(b) or not 1 <= bi <= MAX_FRACTION:
        raise InputError("octave-fraction", f"must be a whole number from 1 to {MAX_FRACTION}, got {b!r}")
    return bi


def _exponent(x, b: int):
    """The power of G of band ``x`` (array or int)."""
    x = np.asarray(x, dtype=float)
    return x / b if b % 2 else (2.0 * x + 1.0) / (2.0 * b)


def mid_band_hz(x, b) -> np.ndarray:
    """Exact mid-band frequencies (Hz) of bands ``x`` of ``1/b`` octave (IEC 61260-1:2014, 5.4).

    Computed as ``1000·10^(3·e/10)`` with ``e`` the power of G, so that third-octave centres are
    ``1000·10^(x/10)`` to rounding.
    """
    b = _check_b(b)
    return F_REF_HZ * 10.0 ** (0.3 * _exponent(x, b))


def band_edges_hz(fm, b) -> tuple[np.ndarray, np.ndarray]:
    """Lower and upper band-edge frequencies (Hz): ``fm·G^(∓1/(2b))``."""
    b = _check_b(b)
    fm = np.asarray(fm, dtype=float)
    k = G ** (1.0 / (2.0 * b))
    return fm / k, fm * k


def band_q(b) -> float:
    """Q of a second-order band-pass whose −3 dB points are the edges of a ``1/b``-octave band."""
    b = _check_b(b)
    r = G ** (1.0 / b)
    return math.sqrt(r) / (r - 1.0)


def band_index_range(b, f_from_hz: float, f_to_hz: float) -> np.ndarray:
    """Band numbers ``x`` from the band nearest ``f_from_hz`` to the band nearest ``f_to_hz``.

    Each end snaps to the band whose exact mid-band frequency is nearest on a log scale (so
    ``20`` and ``20000`` give the third-octave bands of 19.95 Hz and 19.95 kHz).
    """
    b = _check_b(b)
    for name, f in (("from", f_from_hz), ("to", f_to_hz)):
        if not (math.isfinite(f) and f > 0):
            raise InputError(name, f"must be a frequency above zero, got {f!r}")
    if f_to_hz < f_from_hz:
        raise InputError("to", f"must not be below --from ({f_from_hz:g} Hz), got {f_to_hz:g} Hz")

    def index(f):
        e = math.log10(f / F_REF_HZ) / 0.3  # power of G
        return round(e * b) if b % 2 else round((2.0 * b * e - 1.0) / 2.0)

    return np.arange(index(f_from_hz), index(f_to_hz) + 1)


def nominal_label_hz(fm, b) -> np.ndarray:
    """Nominal mid-band labels (Hz) of exact mid-band frequencies ``fm`` (see the module notes)."""
    b = _check_b(b)
    fm = np.atleast_1d(np.asarray(fm, dtype=float))
    dec = np.floor(np.log10(fm) + 1e-12)
    mant = fm / 10.0 ** dec
    if b in (1, 3):
        r10 = np.array(R10 + (10.0,))
        pick = r10[np.argmin(np.abs(np.log10(mant[:, None] / r10[None, :])), axis=1)]
        return pick * 10.0 ** dec
    digits = np.where(mant < 5.0, 3, 2)
    return np.array([round(m, d - 1) for m, d in zip(mant, digits)]) * 10.0 ** dec


def fraction_centres(b, f_from_hz: float, f_to_hz: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``(x, exact mid-band Hz, nominal label Hz)`` of the ``1/b``-octave bands from F1 to F2."""
    x = band_index_range(b, f_from_hz, f_to_hz)
    fm = mid_band_hz(x, b)
    return x, fm, nominal_label_hz(fm, b)


def listed_centres(values: Sequence[float]) -> np.ndarray:
    """Centres typed by the user (Hz): above zero, distinct, returned ascending."""
    f = np.asarray([float(v) for v in values], dtype=float)
    if f.size == 0:
        raise InputError("centres", "give at least one centre frequency")
    if not np.all(np.isfinite(f) & (f > 0)):
        raise InputError("centres", "every centre must be a frequency above zero")
    f = np.sort(f)
    if np.any(np.diff(f) <= 1e-9 * f[1:]):
        raise InputError("centres", "the centres must be distinct")
    return f


def even_centres(f_from_hz: float, f_to_hz: float, count: int, *, linear: bool = False) -> np.ndarray:
    """``count`` centres from F1 to F2 (Hz), evenly spaced on a log scale (equal ratios) or, with
    ``linear``, in hertz (equal steps)."""
    for name, f in (("from", f_from_hz), ("to", f_to_hz)):
        if not (math.isfinite(f) and f > 0):
            raise InputError(name, f"must be a frequency above zero, got {f!r}")
    if isinstance(count, bool) or not isinstance(count, int) or count < 1:
        raise InputError("count", f"must be a whole number of channels, 1 or more, got {count!r}")
    if count > 1 and not f_to_hz > f_from_hz:
        raise InputError("to", f"must be above --from ({f_from_hz:g} Hz) for more than one channel, got {f_to_hz:g} Hz")
    if count == 1:
        return np.array([float(f_from_hz)])
    return np.linspace(f_from_hz, f_to_hz, count) if linear else np.geomspace(f_from_hz, f_to_hz, count)


def q_for_crossing(f: np.ndarray) -> np.ndarray:
    """Q of each channel of a typed list so that neighbours cross at −3 dB.

    Each channel's band reaches the geometric means with its neighbours, ``√(f[i−1]·f[i])`` and
    ``√(f[i]·f[i+1])`` (the outer channels mirror their one neighbour); a second-order band-pass
    whose −3 dB points are f1 and f2 has ``Q = f0/(f2 − f1)``, exactly so when ``f0 = √(f1·f2)``. With equal ratios
    ``r`` between centres this is ``√r/(r − 1)``, the formula of the rule-based bands. A single
    channel has no neighbour, and no Q follows from it (None).
    """
    f = np.asarray(f, dtype=float)
    if f.size < 2:
        return None
    ratio = f[1:] / f[:-1]
    r = np.concatenate(([ratio[0]], ratio))  # ratio below each channel
    r_up = np.concatenate((ratio, [ratio[-1]]))
    f1 = f / np.sqrt(r)
    f2 = f * np.sqrt(r_up)
    return f / (f2 - f1)
