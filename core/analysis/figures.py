"""Response figures measured on the computed response (the README's "Definitions").

f0 is the frequency of the magnitude peak; f_low and f_high are the −3 dB points relative to the
peak; the bandwidth is their difference; Q = f0/bandwidth; the centre gain is |H(f0)| with the sign
of the circuit (negative where the phase at f0 is beyond ±90°, as for an inverting circuit); the
centre phase is the angle of H(f0) in degrees in (−180, 180].

Method
------
With ``u = (ω/w_ref)²`` the squared magnitude is a ratio of real polynomials, ``|H|² = P(u)/Q(u)``
(``P(u)`` is ``N(p)·N(−p)`` at ``p² = −u``). The peak is a root of ``P'Q − PQ'`` and the
half-power points are roots of ``P − ½|H|²_peak·Q``, found one of four ways, each vectorised over
the batch:

- a batch of pure second-order band-passes in closed form (:func:`_biquad`);
- otherwise as exact real positive roots (closed form for quadratics and cubics in large batches,
  :mod:`bandsmith.solver.polyroots`, else companion-matrix eigenvalues);
- with a search grid (large Monte Carlo batches): bracketed on the grid and refined by a
  safeguarded Newton iteration to about 1e-13 relative;
- :func:`measure_near`: Newton's method from reference figures (GBW ladders near the ideal op-amp).
"""

from __future__ import annotations

import functools
import math
import operator
from dataclasses import dataclass, field, fields, replace
from typing import Sequence

import numpy as np

from bandsmith.common.jsonutil import finite_or_none
from bandsmith.solver.polyroots import cubic_roots, quadratic_roots
from bandsmith.solver.rational import COLUMNS_FROM, Rational, largest_in_rows, polyder_batch, polyder_rows, polyval_batch, polyval_rows

__all__ = ["Figures", "defined", "measure", "measure_many", "nominal_and_peaks_many", "measure_near", "measure_from", "biquad_figures", "biquad_peak_figures", "exact_in_closed_form", "figures_at", "real_positive_roots_eig",
           "CLOSED_FORM_FROM"]

_ROOT_STEPS = 8
# From this batch size on, quadratics and cubics are solved in closed form (bandsmith.solver.polyroots): a
# fixed cost of some hundred array operations against about 1.4 µs per member for eigenvalues.
CLOSED_FORM_FROM = 96


@dataclass(frozen=True, slots=True)
class Figures:
    """Response figures, each an array over the batch (shape ``(B,)``); NaN where undefined."""

    f0_hz: np.ndarray
    q: np.ndarray
    bw_hz: np.ndarray
    f_low_hz: np.ndarray
    f_high_hz: np.ndarray
    gain_center: np.ndarray
    gain_center_db: np.ndarray
    phase_center_deg: np.ndarray
    # member 0 as scalars, made when first asked for (:meth:`item`: an analysis's ideal figures
    # are read so, a dozen times over, by its requirements, verdict, design and JSON)
    _first: "Figures | None" = field(default=None, init=False, repr=False, compare=False)

    def take(self, index) -> "Figures":
        """A sub-batch (a slice or index array), as arrays."""
        return Figures(*[np.asarray(getattr(self, name))[index] for name in _FIELDS])

    def members(self, rows: Sequence[int] | slice) -> "list[Figures]":
        """:meth:`take` of each of ``rows`` (indices, or a slice) as a batch of one
        (``take(slice(r, r + 1))``), the figures of every row gathered at once, each with its
        :meth:`item` made from them (the same floats)."""
        columns = [np.asarray(getattr(self, name))[rows] for name in _FIELDS]
        floats = [c.tolist() for c in columns]
        out = []
        for p in range(len(floats[0])):
            one = Figures(*[c[p : p + 1] for c in columns])
            object.__setattr__(one, "_first", Figures(*[f[p] for f in floats]))
            out.append(one)
        return out

    @staticmethod
    def repeated(members: "list[Figures]", counts) -> "Figures":
        """One batch of one-member figures, member ``i`` repeated ``counts[i]`` times (the
        members' eight figures as the rows of one table, repeated in one call)."""
        try:  # members as scalars (Figures.item's floats): their rows as numpy reads them
            table = np.array([_ROW(m) for m in members], dtype=float)
        except ValueError:  # (arrays of one among scalars)
            table = None
        if table is None or table.ndim != 2:
            table = np.array([[float(np.asarray(v).item()) for v in _ROW(m)] for m in members])
        return Figures(*np.repeat(table.T, counts, axis=1))

    def put(self, index, other: "Figures") -> "Figures":
        """A copy with the members at ``index`` (an index array) replaced by ``other``'s, in order."""
        out = []
        for name in _FIELDS:
            v = np.array(getattr(self, name), dtype=float)
            v[index] = getattr(other, name)
            out.append(v)
        return Figures(*out)

    def item(self, i: int = 0) -> "Figures":
        """Member ``i`` as scalars (floats); member 0 made once (the figures' arrays are not
        written to once made)."""
        if i == 0 and self._first is not None:
            return self._first
        one = Figures(*_floats((self.f0_hz, self.q, self.bw_hz, self.f_low_hz, self.f_high_hz, self.gain_center,
                                self.gain_center_db, self.phase_center_deg), i))
        if i == 0:
            object.__setattr__(self, "_first", one)
        return one

    def scalars(self, names: Sequence[str], i: int = 0) -> list[float]:
        """Member ``i``'s figures ``names`` as floats (those of :meth:`item`)."""
        one = self.item(i)
        return [getattr(one, name) for name in names]

    def to_json(self, i: int = 0) -> dict:
        """The README's FIGURES object for member ``i`` (None where a figure is undefined): the
        floats of :meth:`item`."""
        one = self.item(i)
        return {name: finite_or_none(getattr(one, name)) for name in _FIELDS}

    @property
    def valid(self) -> np.ndarray:
        """True where every figure is defined (:func:`defined`)."""
        return defined(self.f0_hz, self.q, self.gain_center_db)


def defined(f0_hz, q, gain_center_db) -> np.ndarray | bool:
    """True where f0, Q and the centre gain (dB) are all finite: a member's figures are defined
    (:attr:`Figures.valid`, and a search's figures kept as arrays); for one member as plain
    floats (:meth:`Figures.item`'s) a bool, tested in plain numbers."""
    if type(f0_hz) is float and type(q) is float and type(gain_center_db) is float:
        return math.isfinite(q) and math.isfinite(f0_hz) and math.isfinite(gain_center_db)
    return np.isfinite(q) & np.isfinite(f0_hz) & np.isfinite(gain_center_db)


_FIELDS = tuple(f.name for f in fields(Figures) if f.init)  # the eight figures
_ROW = operator.attrgetter(*_FIELDS)  # a member's eight figures, as a tuple


def _floats(values: Sequence, i: int) -> list[float]:
    """Member ``i`` of each figure (an array, or a float for a batch of one) as a float."""
    if all(type(v) is np.ndarray and v.dtype == np.float64 for v in values):
        return [v.item(i) for v in values]  # (flat index; a float64's item is a float)
    return [float(v) if isinstance(v, (float, int)) else float(np.asarray(v).item(i)) for v in values]


@functools.lru_cache(maxsize=None)
def _sq_mag_matrix(k: int) -> np.ndarray:
    """(k·k, k) matrix taking the outer product of ``c`` (highest power first) to the coefficients
    in ``u`` (highest first) of ``|c(jx)|²`` at ``u = x²``: ``c_i c_j j^{e_i} (−j)^{e_j} x^{e_i+e_j}``."""
    out = np.zeros((k, k, k))
    for i in range(k):
        ei = k - 1 - i
        for j in range(k):
            ej = k - 1 - j
            if (ei + ej) % 2 == 0:  # j^ei·(−j)^ej = (−1)^ej·j^(ei+ej) = (−1)^(ej + (ei+ej)/2)
                out[i, j, k - 1 - (ei + ej) // 2] = -1.0 if (ej + (ei + ej) // 2) % 2 else 1.0
    return out.reshape(k * k, k)


@functools.lru_cache(maxsize=None)
def _slope_matrix(m: int, n: int) -> np.ndarray:
    """(m·n, m+n−2) matrix taking the outer product of ``P`` and ``Q`` (in ``u``, highest first)
    to ``P'Q − PQ'``: the term ``p_a q_b`` lands at power ``a+b−1`` with weight ``a − b``."""
    deg = m + n - 3  # highest power of the result
    out = np.zeros((m, n, max(deg + 1, 1)))
    for i in range(m):
        a = m - 1 - i
        for j in range(n):
            b = n - 1 - j
            p = a + b - 1
            if p >= 0 and a != b:
                out[i, j, deg - p] = a - b
    return out.reshape(m * n, -1)


def _sq_mag_u(c: np.ndarray) -> np.ndarray:
    """Polynomial in ``u`` equal to ``|c(jx)|²`` at ``u = x²`` (highest power first): one product."""
    k = c.shape[1]
    return _outer(c, c) @ _sq_mag_matrix(k)


def _slope_u(pu: np.ndarray, qu: np.ndarray) -> np.ndarray:
    """``P'Q − PQ'`` (the numerator of d|H|²/du), highest power first: one product."""
    m, n = pu.shape[1], qu.shape[1]
    if m + n < 3:
        return np.zeros((pu.shape[0], 1))
    return _outer(pu, qu) @ _slope_matrix(m, n)


def _outer(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Each member's products of coefficients, ``(B, m·n)`` (C order), entry ``i·n + j`` of member
    ``r`` being ``a[r, i]·b[r, j]``: the left operand of :func:`_sq_mag_u`'s and
    :func:`_slope_u`'s products. Many members (:data:`~bandsmith.solver.rational.COLUMNS_FROM`)
    are multiplied from copies stored by coefficient, written through a transposed view of the
    result: each of the ``m·n`` products then runs over the members in one loop, where numpy
    would run over each member's short row in turn (the same products either way)."""
    rows, m, n = a.shape[0], a.shape[1], b.shape[1]
    if rows < COLUMNS_FROM:
        return (a[:, :, None] * b[:, None, :]).reshape(rows, m * n)
    at = np.ascontiguousarray(a.T)
    bt = at if b is a else np.ascontiguousarray(b.T)
    out = np.empty((rows, m * n))
    np.multiply(at[:, None, :], bt[None, :, :], out=out.reshape(rows, m, n).transpose(1, 2, 0))
    return out


def _root(poly: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """The root of ``poly(u)`` in the bracket ``[lo, hi]`` (batched; the ends differ in sign).

    Safeguarded Newton: a Newton step that leaves the shrinking bracket is replaced by bisection.
    """
    dpoly = polyder_batch(poly)
    lo = lo.copy()
    hi = hi.copy()
    f_lo = polyval_batch(poly, lo)
    x = 0.5 * (lo + hi)
    with np.errstate(divide="ignore", invalid="ignore"):
        for _ in range(_ROOT_STEPS):
            f = polyval_batch(poly, x)
            same = np.signbit(f) == np.signbit(f_lo)
            lo = np.where(same, x, lo)
            f_lo = np.where(same, f, f_lo)
            hi = np.where(same, hi, x)
            step = x - f / polyval_batch(dpoly, x)
            inside = (step >= lo) & (step <= hi)
            x = np.where(inside, step, 0.5 * (lo + hi))
    return x


def measure(h: Rational, *, grid: np.ndarray | None = None) -> Figures:
    """Measure the response figures of every member of a batched transfer function.

    Parameters
    ----------
    h : Rational
        The transfer function (batched).
    grid : ndarray, optional
        Without a grid (the default) the peak and the half-power points are the exact real
        positive roots of their polynomials (batched companion-matrix eigenvalues): global and
        exact, best for batches up to a few thousand. With a search grid in ``ω/w_ref``
        (ascending, ``(G,)`` or ``(B, G)``) they are bracketed on the grid and refined by a
        safeguarded Newton iteration: cheaper for large batches (Monte Carlo) whose band is known;
        a peak on the grid's edge then counts as no peak (NaN figures).

    Returns
    -------
    Figures
        Arrays of shape ``(B,)``.
    """
    quick = _biquad(h)
    if quick is not None:
        return figures_at(h.w_ref, *quick[:-1])
    pu = _sq_mag_u(h.num)
    qu = _sq_mag_u(h.den)
    slope = _slope_u(pu, qu)
    if grid is None:
        u_pk, u_low, u_high = _by_roots(pu, qu, slope)
    else:
        u_pk, u_low, u_high = _by_grid(pu, qu, slope, np.asarray(grid, dtype=float))
    return _figures(h, u_pk, u_low, u_high)


def exact_in_closed_form(h: Rational) -> bool:
    """True when :func:`measure` without a grid takes every root in closed form: a batch of at
    least 96 members whose peak and half-power polynomials in ``u = ω²`` are quadratics or cubics
    (numerator and denominator of degree at most three in ``s``, the denominator above one, the
    slope ``P'Q − PQ'`` of degree two or three). Then the exact measurement costs no more than
    a search grid."""
    m, n = h.num.shape[1], h.den.shape[1]
    return h.batch >= CLOSED_FORM_FROM and m + n - 2 in (3, 4) and max(m, n) in (3, 4)


def _biquad(h: Rational):
    """The closed form of :func:`biquad_figures` when every member is ``b1·p / (a2·p² + a1·p + a0)``
    with a peak; else None."""
    if not _biquad_shaped(h):
        return None
    num, den = h.num, h.den
    parts = _biquad_parts(num[:, -2], den[:, 0], den[:, 1], den[:, 2])
    return parts if parts[-1].all() else None


def _biquads_joined(hs: Sequence[Rational]) -> tuple[list[int], Rational | None]:
    """The indices of the transfer functions of ``hs`` that are :func:`_biquad_shaped`, and their
    members joined into one batch (:meth:`Rational.joined`; None where there are fewer than two):
    the shapes looked at on each, the coefficients on the joined batch, whose rows are each
    member's own (a numerator of two coefficients padded with a leading zero, which is what
    :func:`_biquad_shaped` asks of a numerator of three)."""
    shaped = [i for i, h in enumerate(hs) if _biquad_sized(h)]
    if len(shaped) < 2:
        return [i for i in shaped if _biquad_shaped(hs[i])], None
    joined = Rational.joined([hs[i] for i in shaped])
    if not _off_biquad(joined.num, joined.den).any():
        return shaped, joined
    quick = [i for i in shaped if _biquad_shaped(hs[i])]
    return quick, Rational.joined([hs[i] for i in quick]) if len(quick) > 1 else None


def _biquad_sized(h: Rational) -> bool:
    """True when ``h``'s arrays have a second-order band-pass's widths: three denominator
    coefficients, two or three numerator ones."""
    return h.den.shape[1] == 3 and 2 <= h.num.shape[1] <= 3


def _off_biquad(num: np.ndarray, den: np.ndarray) -> np.ndarray:
    """Per member of arrays of :func:`_biquad_sized` widths, True where it is not of the form
    ``b1·p / (a2·p² + a1·p + a0)`` with a finite denominator (a constant term in the numerator,
    a ``p²`` term in a numerator of three, a denominator that is not finite)."""
    off = num[:, -1] != 0
    if num.shape[1] == 3:
        off |= num[:, 0] != 0
    return off | ~np.isfinite(den).all(axis=1)


def _biquad_shaped(h: Rational) -> bool:
    """True when every member has the form ``b1·p / (a2·p² + a1·p + a0)`` (finite denominator)."""
    return _biquad_sized(h) and not _off_biquad(h.num, h.den).any()


def measure_many(hs: Sequence[Rational]) -> list[Figures]:
    """:func:`measure` of several transfer functions: those that are second-order band-passes
    with a peak in one closed-form batch (the same figures, member by member), the rest each
    on its own."""
    if len(hs) == 1:  # nothing to batch
        return [measure(hs[0])]
    out: list[Figures | None] = [None] * len(hs)
    quick = [i for i, h in enumerate(hs) if _biquad_shaped(h)]
    if len(quick) > 1:
        h = Rational.joined([hs[i] for i in quick])
        num, den = h.num, h.den
        *parts, peak = _biquad_parts(num[:, -2], den[:, 0], den[:, 1], den[:, 2])
        fig = figures_at(h.w_ref, *parts)
        start = 0
        for i in quick:
            stop = start + hs[i].batch
            if peak[start:stop].all():
                out[i] = fig.take(slice(start, stop))
            start = stop
    return [fig if fig is not None else measure(h) for h, fig in zip(hs, out)]


def nominal_and_peaks_many(hs: Sequence[Rational]) -> list[tuple[Figures, np.ndarray]]:
    """For each transfer function of ``hs``: the figures of its member 0 (a batch of one) and
    ``|f0|``, ``|Q|`` and ``|centre gain|`` of every member, ``(3, B)``: what a first pass takes
    its nominal figures and sensitivities from, the same numbers as :func:`measure_many`'s.

    The second-order band-passes with a peak in every member are taken together in closed form:
    ``f0 = √(a0/a2)·w_ref/2π``, ``Q = f0/((|a1|/a2)·w_ref/2π)`` and ``|H| = |b1/a1|``, the very
    operations of :func:`measure`'s closed form (:func:`_biquad_parts`, :func:`figures_at`:
    ``|x + 0j|`` is ``|x|`` exactly), the band edges and the phase only for member 0; the rest
    each through :func:`measure`."""
    out: list = [None] * len(hs)
    quick, h = _biquads_joined(hs) if len(hs) > 1 else ([], None)
    if len(quick) > 1:  # (one alone is measured whole: the closed form over its members costs no more)
        num, den = h.num, h.den
        *values, peak = _biquad_peak_values(h)
        peaks = np.stack(values)
        starts, whole, start = [], [], 0
        every = bool(peak.all())  # (each candidate's rows looked at only where some member has no peak)
        for i in quick:
            stop = start + hs[i].batch
            if every or peak[start:stop].all():
                starts.append(start)
                whole.append((i, start, stop))
            start = stop
        if whole:
            first = np.array(starts)
            nominal = figures_at(h.w_ref[first], *_biquad_parts(num[first, -2], den[first, 0], den[first, 1], den[first, 2])[:-1])
            for fig, (i, start, stop) in zip(nominal.members(slice(None)), whole):
                out[i] = (fig, peaks[:, start:stop])
    for i, h in enumerate(hs):
        if out[i] is None:
            fig = measure(h)
            out[i] = (fig.take(slice(0, 1)), np.abs(np.stack([fig.f0_hz, fig.q, fig.gain_center])))
    return out


def _biquad_parts(b1, a2, a1, a0):
    """``(u_pk, u_low, u_high, bandwidth in ω/w_ref, H at the peak, has a peak)`` of
    ``b1·p / (a2·p² + a1·p + a0)``, NaN where there is no peak (``a0·a2 ≤ 0`` or ``a1 = 0``).

    ``|H|² = b1²x² / ((a0 − a2x²)² + a1²x²)`` peaks at ``x² = a0/a2``; it is half the peak where
    ``a2x² ∓ |a1|x − a0 = 0``, so ``x_high = (|a1| + √(a1² + 4a0a2))/(2a2)`` and
    ``x_low = (a0/a2)/x_high`` (the product of the two, free of cancellation); derived (sympy).
    """
    with np.errstate(invalid="ignore", divide="ignore"):
        h_pk, a2, a1, a0, peak, nan = _biquad_peak(b1, a2, a1, a0)
        u_pk = a0 / a2 * nan
        x_high = (a1 + np.sqrt(a1 * a1 + 4.0 * a0 * a2)) / (2.0 * a2)
        x_low = u_pk / x_high  # x_high − x_low = |a1|/a2 exactly
    return u_pk, x_low * x_low, x_high * x_high, a1 / a2 * nan, h_pk.astype(complex), peak


def _biquad_peak(b1, a2, a1, a0):
    """``(H at the peak, a2, |a1|, a0, has a peak, 1 where it has else NaN)`` of
    ``b1·p / (a2·p² + a1·p + a0)``, the denominator's sign taken out (``a2 > 0``): at the peak
    ``H = b1·jx/(a1·jx) = b1/a1``, signed and real. Floating-point warnings are the caller's."""
    sign = np.sign(a2)
    h_pk = b1 * sign / (a1 * sign)
    a2, a1, a0 = a2 * sign, np.abs(a1), a0 * sign
    peak = (a0 > 0) & (a2 > 0) & (a1 > 0)
    return h_pk, a2, a1, a0, peak, np.where(peak, 1.0, np.nan)


def biquad_peak_figures(h: Rational) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
    """f0 (Hz), Q and the centre gain (dB) of a batch of second-order band-passes
    ``b1·p / (a2·p² + a1·p + a0)``: the same operations on the same numbers as :func:`measure`'s
    closed form (``f0 = √(a0/a2)·w_ref/2π``, ``Q = f0/((|a1|/a2)·w_ref/2π)``, the gain
    ``20·log10|b1/a1|``), without the band edges and the phase that a search over many
    combinations does not use. A member with no peak (``a0`` and ``a2`` of opposite signs, or
    ``a1`` zero: a quadratic that fails Routh–Hurwitz) gets NaN, where :func:`measure` would take
    the whole batch through its polynomial roots. None when a member is not such a band-pass."""
    if not _biquad_shaped(h):
        return None
    f0, q, mag, _ = _biquad_peak_values(h)
    with np.errstate(divide="ignore"):
        db = np.log10(mag)
    db *= 20.0
    db[mag == 0] = np.nan
    return f0, q, db


def _biquad_peak_values(h: Rational) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """``(f0 in Hz, Q, |H| at the peak, has a peak)`` of second-order band-passes
    ``b1·p / (a2·p² + a1·p + a0)`` (:func:`_biquad_shaped`), by :func:`measure`'s closed-form
    operations (:func:`_biquad_parts`, :func:`figures_at`): NaN where there is no peak."""
    with np.errstate(invalid="ignore", divide="ignore"):
        h_pk, a2, a1, a0, peak, nan = _biquad_peak(h.num[:, -2], h.den[:, 0], h.den[:, 1], h.den[:, 2])
        to_hz = h.w_ref / (2.0 * np.pi)
        f0 = np.sqrt(a0 / a2 * nan) * to_hz
        return f0, f0 / (a1 / a2 * nan * to_hz), np.abs(h_pk), peak


def biquad_figures(b1, a2, a1, a0, w_ref) -> tuple[Figures, np.ndarray]:
    """Figures of second-order band-passes ``b1·p / (a2·p² + a1·p + a0)`` in closed form.

    Parameters
    ----------
    b1, a2, a1, a0 : ndarray
        Coefficients, shape ``(B,)``, of the band-pass in ``p = s/w_ref``.
    w_ref : float or ndarray
        The reference frequency in rad/s.

    Returns
    -------
    (Figures, ndarray)
        The figures (NaN where there is no peak) and a mask of the members that are stable (the
        three coefficients of one sign, Routh–Hurwitz for a quadratic) with defined figures.
    """
    b1, a2, a1, a0 = (np.asarray(x, dtype=float) for x in (b1, a2, a1, a0))
    *parts, _ = _biquad_parts(b1, a2, a1, a0)
    fig = figures_at(np.asarray(w_ref, dtype=float), *parts)
    with np.errstate(invalid="ignore", divide="ignore"):
        stable = ((a0 > 0) & (a1 > 0) & (a2 > 0)) | ((a0 < 0) & (a1 < 0) & (a2 < 0))
        # Q as √(a0/a2)·|a2/a1| (the spread has always reported this rounding; f0/bw, as
        # measure() divides, agrees to a unit in the last place)
        q = np.sqrt(parts[0]) * np.abs(a2 / a1)
    fig = replace(fig, q=q)
    return fig, stable & fig.valid


def measure_near(h: Rational, ref: Figures, *, spread: float, only_peak: bool = False, phase_rows: Sequence[int] | None = None) -> Figures:
    """Figures of members known to lie near reference figures (a GBW ladder near the ideal op-amp).

    The peak and the half-power points are found by Newton's method near ``ref``'s (one member
    for all, or one per member; the band edges near ``ref``'s scaled by the peak's move, started
    from a Lorentzian's half-width from the peak found, by the curvature there, where that lies
    within the window); a member for which it does not converge, or converges farther than a
    factor ``1 + spread`` from ``ref``'s (so moved), gets NaN figures: it is off the reference by
    more than ``spread``. Cheaper than
    :func:`measure` by a fixed cost, for callers that ask "within tolerance of the reference?"
    and need exact figures only where it is. With ``only_peak`` a member gets NaN figures too
    unless the peak found is the highest stationary point of ``|H|²`` and none lies between it
    and its band edges (:func:`_only_peak`: then they are exactly what :func:`measure` finds), and
    the band edges start from the peak found, a Lorentzian's half-width from it by the curvature
    there, which holds a band far wider or narrower than ``ref``'s. ``spread`` is one number for
    every member or one per member (a batch of several candidates' ladders, each with its own);
    each member's window factor ``(1 + spread)²`` is Python's float power of its own spread, as
    for one number (the power rounds differently from a product now and then). With
    ``phase_rows`` only those members get their centre phase (the rest NaN: a caller that asks
    only whether the others are within tolerance does not read it).
    """
    if type(spread) is not float and np.ndim(spread):
        values, at = np.unique(np.asarray(spread, dtype=float), return_inverse=True)
        k2 = np.array([(1.0 + v) ** 2 for v in values.tolist()])[at]
    else:
        k2 = (1.0 + spread) ** 2
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        return _measure_near(h, ref, k2, only_peak, phase_rows)


def _measure_near(h: Rational, ref: Figures, k2: float | np.ndarray, only_peak: bool, phase_rows=None) -> Figures:
    b = h.batch
    to_u = (2.0 * np.pi / h.w_ref) ** 2
    both_k2 = k2 if type(k2) is float or np.ndim(k2) == 0 else np.concatenate([k2, k2])  # the band edges' windows, low then high
    pu = _sq_mag_u(h.num)
    qu = _sq_mag_u(h.den)
    slope = _slope_u(pu, qu)
    if np.size(ref.f0_hz) == 1:
        ref = ref.item()  # one reference for every member (else one per member)
    u0 = ref.f0_hz**2 * to_u
    u_pk, ok = _newton(slope, u0, k2)
    # P and Q stored by coefficient from here on (:func:`polyval_rows`, :func:`polyder_rows`:
    # the same arithmetic as on the batch stored by member, in fewer, longer loops)
    p_rows, q_rows = np.ascontiguousarray(pu.T), np.ascontiguousarray(qu.T)
    p0 = polyval_rows(p_rows, u_pk)
    q0 = polyval_rows(q_rows, u_pk)
    peak2 = p0 / q0
    # P − ½·peak²·Q (as _poly_sub forms it), twice over: both band edges' polynomials, the
    # first half of Newton's rows
    n = max(p_rows.shape[0], q_rows.shape[0])
    rows = np.empty((n, 4 * b))  # (the derivatives' half written by _newton_rows)
    half = rows[:, :b]
    half[...] = 0.0
    half[n - p_rows.shape[0] :] += p_rows
    half[n - q_rows.shape[0] :] -= q_rows * (0.5 * peak2)
    rows[:, b : 2 * b] = half
    # a Lorentzian in u with the peak's curvature, |H|² = peak/(1 + ((u − u_pk)/γ)²), puts
    # the edges γ from the peak: γ² = −2·P·Q/(P''Q − P·Q'') there (P'Q = PQ' at the peak)
    p2 = polyval_rows(polyder_rows(polyder_rows(p_rows)), u_pk)
    q2 = polyval_rows(polyder_rows(polyder_rows(q_rows)), u_pk)
    spread_u = 1.0 + np.sqrt(np.abs(2.0 * p0 * q0 / (p2 * q0 - p0 * q2))) / u_pk
    lorentz = np.concatenate([u_pk / spread_u, u_pk * spread_u])
    if only_peak:
        both, ok2 = _newton_rows(rows, lorentz, both_k2, first=5)
    else:
        # the window is where the moved peak carries the reference's band edges; Newton's method
        # starts from the Lorentzian's edges where they lie in it (a member whose Q has moved far
        # from the reference's converges in fewer steps from them), else from the window's centre
        anchor = np.concatenate([ref.f_low_hz**2 * to_u, ref.f_high_hz**2 * to_u]) * np.concatenate([u_pk / u0] * 2)
        starts = np.where((lorentz >= anchor / both_k2) & (lorentz <= anchor * both_k2), lorentz, anchor)
        both, ok2 = _newton_rows(rows, starts, both_k2, first=5, window=anchor)
    ok2 &= np.concatenate([both[:b] < u_pk, both[b:] > u_pk])
    if only_peak:
        ok &= _only_peak(pu, qu, slope, u_pk, peak2, both[:b], both[b:], ok & ok2[:b] & ok2[b:])
    nan = np.nan
    u_pk = np.where(ok, u_pk, nan)
    u_low = np.where(ok & ok2[:b], both[:b], nan)
    u_high = np.where(ok & ok2[b:], both[b:], nan)
    return _figures_quiet(h, u_pk, u_low, u_high, phase_rows)


def _only_peak(pu, qu, slope, u_pk, peak2, u_low, u_high, live) -> np.ndarray:
    """True where the peak found at ``u_pk`` (of height ``peak2``) is the highest stationary point
    of ``|H|² = P/Q`` in ``u > 0`` and none lies between it and its band edges ``u_low``,
    ``u_high`` (then ``|H|²`` falls monotonically from the peak to each edge, so each is the
    half-power point nearest the peak: what :func:`measure` finds). Where ``P'Q − PQ'`` has one
    sign change that holds by Descartes' rule of signs. Elsewhere (``live`` members only) the
    other stationary points are the roots of ``T``, ``P'Q − PQ'`` divided by ``u − u_pk``
    (synthetic division), and both conditions are settled in closed form where that can be
    (:func:`_below_peak`, :func:`_no_root_between`), by the real positive roots of ``T``
    (companion-matrix eigenvalues) for the rest."""
    out = _sign_changes(slope) == 1
    many = np.flatnonzero(live & ~out)
    if many.size:
        pick = slice(None) if many.size == out.size else many  # (every member: views, no copies)
        x = u_pk[pick]
        rest = _deflated(slope[pick].T, x)  # (deg, n): T's coefficients as rows
        proven = _below_peak(pu[pick].T, qu[pick].T, peak2[pick], x) & _no_root_between(rest, u_low[pick], u_high[pick])
        out[many[proven]] = True
        if not proven.all():
            many, rest, x = many[~proven], rest.T[~proven], x[~proven]
            others = _real_positive_roots(rest)  # (n, deg − 1), NaN where none
            top = peak2[many]
            with np.errstate(invalid="ignore"):
                height = _ratio(pu[many], qu[many], np.nan_to_num(others, nan=1.0))
                higher = np.isfinite(others) & (height >= top[:, None] * (1.0 - 1e-9))
                inside = (others > u_low[many, None]) & (others < u_high[many, None])
            out[many] = ~(higher | inside).any(axis=1)
    return out


def _deflated(c: np.ndarray, x: np.ndarray) -> np.ndarray:
    """The quotient of batched polynomials by ``u − x`` (Horner's steps of synthetic division;
    the remainder, ``c(x)``, is dropped): one coefficient fewer. Coefficients as rows, highest
    power first: ``c`` ``(k, n)`` (a transposed batch will do), the quotient ``(k − 1, n)``; each
    step ``q_i = c_i + x·q_(i−1)`` over contiguous rows (two array calls a coefficient)."""
    out = np.empty((c.shape[0] - 1, c.shape[1]))
    out[0] = c[0]
    for k in range(1, c.shape[0] - 1):
        np.multiply(x, out[k - 1], out=out[k])
        out[k] += c[k]
    return out


# _below_peak's margin: a quadratic whose discriminant is within this fraction of 4·s0·s2 of zero
# (a rival peak within rounding of the height) is left to the eigenvalues.
_RIVAL_MARGIN = 1e-12


def _below_peak(pu: np.ndarray, qu: np.ndarray, peak2: np.ndarray, x: np.ndarray) -> np.ndarray:
    """True where ``|H|² = P/Q`` stays below its height ``peak2`` at ``u = x`` for every other
    ``u ≥ 0``, proven in closed form; False where that is not known (not necessarily untrue).

    ``R = peak2·Q − P`` is zero with a zero slope at the peak, so ``R = (u − x)²·S`` with ``S``
    the quotient of two synthetic divisions (the remainders, zero but for rounding, dropped), and
    ``|H|² < peak2`` elsewhere exactly where ``S > 0`` on ``u ≥ 0``: so where every coefficient of
    ``S`` is at least zero and ``S(0) > 0``, or, for a quadratic ``s2·u² + s1·u + s0`` with
    ``s0 > 0`` and ``s2 ≥ 0``, where ``s1² < 4·s0·s2`` (no real root; by a margin of
    :data:`_RIVAL_MARGIN`). A dual-amplifier band-pass's slope has two more sign changes (a dip
    and a small second peak near the op-amp's GBW): its ``S`` is such a quadratic.
    ``P`` and ``Q`` come as coefficient rows, ``(k, n)`` each (highest power first; a transposed
    batch will do)."""
    k = max(pu.shape[0], qu.shape[0])
    if k < 3:
        return np.zeros(x.size, dtype=bool)
    r = np.zeros((k, x.size))  # peak2·Q − P, as _poly_sub forms it
    r[k - qu.shape[0] :] = qu * peak2
    r[k - pu.shape[0] :] -= pu
    s = _deflated(_deflated(r, x), x)
    with np.errstate(invalid="ignore", over="ignore"):
        out = (s >= 0.0).all(axis=0) & (s[-1] > 0.0)
        if s.shape[0] == 3:
            s2, s1, s0 = s[0], s[1], s[2]
            four = 4.0 * s0 * s2
            out |= (s0 > 0.0) & (s2 >= 0.0) & (four - s1 * s1 > _RIVAL_MARGIN * four)
    return out


def _no_root_between(c: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """True where the batched polynomial ``c`` (highest power first) is proven to have no real
    root in ``(a, b]``; False where that is not known.

    Budan–Fourier theorem: the number of real roots in ``(a, b]`` is ``V(a) − V(b)`` less an even
    number, ``V(x)`` being the sign changes of ``c(x)``, ``c'(x)``, …, i.e. of the coefficients of
    ``c(x + y)`` in ``y`` (found by repeated synthetic division, the Taylor shift); so
    ``V(a) = V(b)`` proves that there is none (the Budan–Fourier theorem, a standard result of
    the theory of equations; from memory). Exact when every root is real (then each count is
    Descartes' and exact).
    ``c`` comes as coefficient rows, ``(k, n)`` (highest power first; a transposed batch will
    do): the Taylor shifts ``t_j += x·t_(j−1)`` over contiguous rows, both ends at once."""
    n = c.shape[1]
    t = np.concatenate([c, c], axis=1)  # (k, 2n): the shifts to a, then to b
    x = np.concatenate([a, b])
    step = np.empty_like(x)
    d = c.shape[0] - 1
    for i in range(d):  # after step i the last i + 1 rows are final
        for j in range(1, d + 1 - i):
            np.multiply(x, t[j - 1], out=step)
            t[j] += step
    v = _sign_changes(t.T)
    finite = np.isfinite(t).all(axis=0)
    return (v[:n] == v[n:]) & finite[:n] & finite[n:]


def _sign_changes(c: np.ndarray) -> np.ndarray:
    """Sign changes along each row of coefficients, zeros skipped (Descartes' rule of signs bounds
    the positive real roots by it): shape ``(B,)``."""
    sign = np.sign(c)
    if sign.all():  # no zero to skip (a NaN counts no change either way)
        return (sign[:, 1:] * sign[:, :-1] < 0).sum(axis=1)
    last = np.maximum.accumulate(np.where(sign != 0, np.arange(c.shape[1]), 0), axis=1)
    held = np.take_along_axis(sign, last, axis=1)  # each zero takes the sign before it (leading ones stay 0)
    return (held[:, 1:] * held[:, :-1] < 0).sum(axis=1)


def measure_from(h: Rational, ref: Figures, *, phase: bool = True) -> Figures:
    """:func:`measure`'s figures, found from reference figures where that is safe: Newton's method
    from ``ref`` (:func:`measure_near` with ``only_peak`` and a window of a factor ten) for the
    members whose peak found is the highest, with no other stationary point inside its band, the
    companion-matrix roots for the rest. The same figures
    as :func:`measure` (closer to them than its roots at a high Q), at a fraction of its cost
    for a batch of members near ``ref`` (a GBW ladder). Without ``phase`` the members found by
    Newton's method have no centre phase (NaN: a caller that reads only f0, Q and the gain)."""
    fig = measure_near(h, ref, spread=_FROM_SPREAD, only_peak=True, phase_rows=None if phase else ())
    far = np.flatnonzero(~fig.valid)
    return fig.put(far, measure(h.take(far))) if far.size else fig


# measure_from's window: with one stationary point any root Newton's method converges to is the
# one sought, so the window only stops a member that wanders off.
_FROM_SPREAD = 9.0
_NEWTON_MOST = 40
# _newton steps the members still live after a test on their own from this batch size on (where
# they are at most a quarter of it): below it the steps cost little more than the gather
_COMPACT_FROM = 256


def _newton(poly: np.ndarray, x0, k2: float | np.ndarray, *, first: int = 4, window: np.ndarray | None = None,
            most: int = _NEWTON_MOST) -> tuple[np.ndarray, np.ndarray]:
    """Newton's method on batched polynomials from ``x0`` (``(B,)`` or broadcastable): the roots
    and a mask of the members that converged (last step below 1e-5 relative, so that the error
    after it is of order 1e-10) within a factor ``k2`` (one, or one per member) of their start (of ``window``, the
    windows' centres, where it is given: then the start only sets how soon). A member is settled at the
    first test that finds it converged or outside that window, and stepped no more: what becomes
    of a member does not depend on the rest of the batch. Tests come after ``first`` steps and
    then every other step (a test costs about a step), at most ``most`` steps; the
    converged members then take one step more. Floating-point warnings are the caller's to
    silence (:func:`measure_near` does).

    In a large batch most members settle by the first test (a GBW ladder's far members leave
    the window, its near ones converge); the few still live are then stepped on their own, as
    a batch of their own with the tests at the same steps (:data:`_COMPACT_FROM`): each
    member's arithmetic is the same, element by element, so its result is too."""
    b, k = poly.shape
    rows = np.empty((k, 2 * b))
    rows[:, :b] = poly.T
    return _newton_rows(rows, x0, k2, first=first, window=window, most=most)


def _newton_rows(rows: np.ndarray, x0, k2: float | np.ndarray, *, first: int = 4, window: np.ndarray | None = None,
                 most: int = _NEWTON_MOST) -> tuple[np.ndarray, np.ndarray]:
    """:func:`_newton` of polynomials stored by coefficient in the first half of ``rows``
    ``(k, 2·B)`` (row ``i``: coefficient ``i`` of every member, highest power first; the second
    half is a buffer, written here): the polynomials and their derivatives (a leading zero: the
    same Horner steps) are stepped in one batch, each coefficient row contiguous."""
    k, b = rows.shape[0], rows.shape[1] // 2
    x0 = np.asarray(x0, dtype=float)
    if x0.shape != (b,):
        x0 = np.broadcast_to(x0, (b,))
    centre = x0 if window is None else window
    lo, hi = centre / k2, centre * k2
    rows[0, b:] = 0.0
    if k > 1:  # a constant's derivative is zero
        polyder_rows(rows[:, :b], out=rows[1:, b:])
    whole = rows
    rows = list(rows)  # the coefficient rows as arrays of their own (no view made per step)
    xx = np.empty(2 * b)  # the points of both halves: x, then a copy of it
    x = xx[:b]  # stepped in place
    x[:] = x0
    done = np.zeros(b, dtype=bool)
    live = None  # the members still stepped: every one until the first test
    ok = np.zeros(b, dtype=bool)

    def newton_step() -> np.ndarray:
        """``p(x)/p'(x)`` (Horner's rule on both halves at once, as polyval_batch)."""
        xx[b:] = x
        if k == 1:
            v = rows[0] + np.zeros_like(xx)
        else:
            v = rows[0] * xx
            for i in range(1, k - 1):
                v += rows[i]
                v *= xx
            v += rows[k - 1]
        return v[:b] / v[b:]

    # (called under measure_near's errstate: a member that wanders off may overflow or divide by zero)
    for n in range(1, most + 1):
        step = newton_step()
        if live is None:
            x -= step
        else:
            np.subtract(x, step, out=x, where=live)
        if n >= first and (n - first) % 2 == 0:  # tested every other step: the test costs a step
            inside = (x >= lo) & (x <= hi)
            converged = (np.abs(step) <= 1e-5 * np.abs(x)) & inside  # quadratic: ~1e-10 after it
            if live is not None:
                converged &= live
            ok |= converged
            done |= converged | ~inside
            if done.all():
                break
            live = ~done
            if b >= _COMPACT_FROM and n + 2 <= most:
                rest = np.flatnonzero(live)
                if 4 * rest.size <= b:  # the few still live stepped as a batch of their own
                    settled = ok.copy()  # (their last step taken below)
                    few = np.empty((k, 2 * rest.size))
                    few[:, : rest.size] = whole[:, rest]
                    x[rest], ok[rest] = _newton_rows(few, x[rest], k2 if np.ndim(k2) == 0 else k2[rest], first=2,
                                                     window=centre[rest], most=most - n)
                    np.subtract(x, newton_step(), out=x, where=settled)
                    return x, ok
    # one step more: the error after the test is ~1e-10 relative to the curvature's scale, which
    # for a band edge is the bandwidth (x/Q); after this step it is rounding
    np.subtract(x, newton_step(), out=x, where=ok)
    return x, ok


def _real_positive_roots(c: np.ndarray) -> np.ndarray:
    """Real positive roots of batched real polynomials, NaN elsewhere: shape ``(B, deg)``."""
    b, k = c.shape
    if k < 2:
        return np.full((b, 0), np.nan)
    scale = largest_in_rows(c)
    # A member of lower degree than the batch (an ideal op-amp beside finite ones) has leading
    # zeros: shift it up and multiply by (u + 1), whose root −1 is never real positive.
    lead = None
    for _ in range(k - 1):
        low = np.abs(c[:, 0]) <= 1e-14 * scale[:, 0]
        if not low.any():
            lead = c[:, :1]  # none (near) zero: the floor below would change nothing
            break
        shifted = np.zeros_like(c)
        shifted[:, :-1] = c[:, 1:]
        shifted[:, 1:] += c[:, 1:]
        c = np.where(low[:, None], shifted, c)
    if lead is None:
        lead = c[:, :1]
        lead = np.where(np.abs(lead) <= 1e-14 * scale, 1e-14 * scale, lead)
    if k in (3, 4) and b >= CLOSED_FORM_FROM:  # members it cannot take go to the eigenvalues
        r, bad = (quadratic_roots if k == 3 else cubic_roots)(np.concatenate([lead, c[:, 1:]], axis=1))
        if bad.any():
            r[bad] = real_positive_roots_eig(c[bad], lead[bad])
        return np.where(r > 0, r, np.nan)
    return real_positive_roots_eig(c, lead)


def real_positive_roots_eig(c: np.ndarray, lead: np.ndarray) -> np.ndarray:
    """Real positive roots from the eigenvalues of the companion matrices (any degree)."""
    b, k = c.shape
    comp = np.zeros((b, k - 1, k - 1))
    comp[:, 0, :] = -c[:, 1:] / lead
    for i in range(k - 2):  # the ones below the diagonal
        comp[:, i + 1, i] = 1.0
    bad = ~np.isfinite(comp[:, 0, :]).all(axis=1)  # a member with no peak (NaN) has no roots either
    if bad.any():
        comp[bad] = 0.0
    r = np.linalg.eigvals(comp)
    real = np.abs(r.imag) <= 1e-7 * np.abs(r)
    return np.where(real & (r.real > 0) & ~bad[:, None], r.real, np.nan)


def _ratio(pu, qu, u):
    return polyval_batch(pu, u) / polyval_batch(qu, u)


def _by_roots(pu, qu, slope):
    b = pu.shape[0]
    cand = _real_positive_roots(slope)
    if cand.shape[1] == 0:
        nan = np.full(b, np.nan)
        return nan, nan, nan
    finite = np.isfinite(cand)
    with np.errstate(invalid="ignore", divide="ignore"):
        val = _ratio(pu, qu, np.where(finite, cand, 1.0))  # a stand-in where there is no root
    val = np.where(finite, val, -np.inf)
    j = np.argmax(val, axis=1)
    rows = np.arange(b)
    u_pk = np.where(np.isfinite(val[rows, j]), cand[rows, j], np.nan)
    peak2 = _ratio(pu, qu, u_pk)
    half_roots = _real_positive_roots(_poly_sub(pu, qu * (0.5 * peak2)[:, None]))
    pk = u_pk[:, None]
    with np.errstate(invalid="ignore"):
        low = np.where(half_roots < pk, half_roots, -np.inf).max(axis=1)
        high = np.where(half_roots > pk, half_roots, np.inf).min(axis=1)
    u_low = np.where(np.isfinite(low), low, np.nan)
    u_high = np.where(np.isfinite(high), high, np.nan)
    return u_pk, u_low, u_high


def _on_grid(pu, qu, u):
    """``|H|² = P(u)/Q(u)`` on a grid ``u``: ``(G,)`` shared by the batch (one product with the
    grid's powers per polynomial) or ``(B, G)`` (Horner)."""
    if u.ndim == 2:
        return _ratio(pu, qu, u)
    powers = u[:, None] ** np.arange(max(pu.shape[1], qu.shape[1]) - 1, -1, -1)  # (G, k), highest first
    p = pu @ powers[:, powers.shape[1] - pu.shape[1]:].T
    p /= qu @ powers[:, powers.shape[1] - qu.shape[1]:].T
    return p


def _last_true(mask: np.ndarray) -> np.ndarray:
    """Per row, the index of the last True, −1 where there is none (boolean passes only)."""
    g = mask.shape[1]
    k = g - 1 - np.argmax(mask[:, ::-1], axis=1)
    return np.where(mask.any(axis=1), k, -1)


def _by_grid(pu, qu, slope, grid):
    b = pu.shape[0]
    if grid.ndim == 2 and grid.shape[0] == 1:
        grid = grid[0]  # one row for the whole batch
    shared = grid.ndim == 1
    u = grid * grid  # (G,) or (B, G)
    mag2 = _on_grid(pu, qu, u)
    rows = np.arange(b)
    i = np.argmax(mag2, axis=1)
    g = u.shape[-1]
    inner = (i > 0) & (i < g - 1)
    ic = np.clip(i, 1, g - 2)

    def at(k):
        return u[k] if shared else u[rows, k]

    # Peak: d|H|²/du ∝ P'Q − PQ' goes from positive to negative.
    u_pk = _root(slope, at(ic - 1), at(ic + 1))
    peak2 = _ratio(pu, qu, u_pk)
    # Half-power points: P − ½·peak²·Q crosses zero each side of the peak; bracketed by the
    # last grid point below half power before the peak and the first one after it.
    half = _poly_sub(pu, qu * (0.5 * peak2)[:, None])
    below = mag2 < (0.5 * peak2)[:, None]
    idx = np.arange(g)[None, :]
    low_k = _last_true(below & (idx < ic[:, None]))
    after = below & (idx > ic[:, None])
    first_after = np.argmax(after, axis=1)
    high_k = np.where(after.any(axis=1), first_after, g)
    lk = np.clip(low_k, 0, g - 2)
    hk = np.clip(high_k, 1, g - 1)
    both = _root(
        np.concatenate([half, half]),
        np.concatenate([at(lk), np.maximum(at(hk - 1), u_pk)]),
        np.concatenate([np.minimum(at(lk + 1), u_pk), at(hk)]),
    )
    u_low = np.where(low_k >= 0, both[:b], np.nan)
    u_high = np.where(high_k < g, both[b:], np.nan)
    return np.where(inner, u_pk, np.nan), u_low, u_high


def _figures(h: Rational, u_pk, u_low, u_high) -> Figures:
    """Figures from the peak and half-power points (in ``u``)."""
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        return _figures_quiet(h, u_pk, u_low, u_high)


def _figures_quiet(h: Rational, u_pk, u_low, u_high, phase_rows=None) -> Figures:
    """:func:`_figures` under the caller's floating-point error state (:func:`measure_near`'s
    ignores what :func:`_figures` ignores: an error state entered and left costs some 2 µs).
    ``H`` at the peak by Horner's rule on the coefficients made complex once, stored by
    coefficient (numpy makes a real operand complex for every mixed operation: the same
    numbers); ``phase_rows``: as :func:`measure_near` takes it."""
    p = 1j * np.sqrt(u_pk)
    if h.batch >= COLUMNS_FROM:
        hc = polyval_rows(np.ascontiguousarray(h.num.T, dtype=complex), p) / polyval_rows(np.ascontiguousarray(h.den.T, dtype=complex), p)
    else:
        hc = polyval_batch(h.num, p) / polyval_batch(h.den, p)
    return _figures_at(h.w_ref, u_pk, u_low, u_high, None, hc, phase_rows)


def figures_at(w_ref, u_pk, u_low, u_high, bw_x, hc) -> Figures:
    """Figures from the peak and half-power points (in ``u``), ``H`` at the peak and, where it is
    known without cancellation, ``bw_x``, the bandwidth in ``ω/w_ref``."""
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        return _figures_at(w_ref, u_pk, u_low, u_high, bw_x, hc)


def _figures_at(w_ref, u_pk, u_low, u_high, bw_x, hc, phase_rows=None) -> Figures:
    """:func:`figures_at` under the caller's floating-point error state (invalid values, division
    by zero and overflow ignored); with ``phase_rows``, the phase of those members only (NaN
    elsewhere)."""
    to_hz = w_ref / (2.0 * np.pi)
    x_pk = np.sqrt(u_pk)  # ω/w_ref at the peak
    f0 = x_pk * to_hz
    f_low = np.sqrt(u_low) * to_hz
    f_high = np.sqrt(u_high) * to_hz
    bw = f_high - f_low if bw_x is None else bw_x * to_hz
    re, im = hc.real, hc.imag
    if phase_rows is None:
        phase = _degrees(im, re)
    else:
        phase = np.full(hc.shape, np.nan)
        if len(phase_rows):
            phase[phase_rows] = _degrees(im[phase_rows], re[phase_rows])
    mag = np.hypot(re, im)
    db = np.log10(mag)  # −inf at a zero gain: NaN below
    db *= 20.0
    db[mag == 0] = np.nan
    return Figures(
        f0_hz=f0,
        q=f0 / bw,
        bw_hz=bw,
        f_low_hz=f_low,
        f_high_hz=f_high,
        gain_center=np.copysign(mag, re + 0.0),  # negative where |phase| > 90° (+ 0.0 clears a −0)
        gain_center_db=db,
        phase_center_deg=phase,
    )


def _degrees(im: np.ndarray, re: np.ndarray) -> np.ndarray:
    """The angle of ``re + j·im`` in degrees, in (−180, 180] (−180 itself, to 1e-7, as 180)."""
    phase = np.arctan2(im, re)
    phase *= 180.0 / np.pi
    phase[phase <= -180.0 + 1e-7] = 180.0
    return phase


def _poly_sub(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """``a − b`` for batched polynomials of possibly different lengths (highest power first)."""
    n = max(a.shape[1], b.shape[1])
    out = np.zeros((a.shape[0], n), dtype=np.result_type(a, b))
    out[:, n - a.shape[1] :] += a
    out[:, n - b.shape[1] :] -= b
    return out
