"""Transfer functions as ratios of polynomials, obtained from a netlist's MNA pencil.

The transfer function of ``(G + s·C) x = b`` is ``H(s) = N(s)/D(s)`` with ``D = det(G + s·C)``
and ``N = H·D`` (Cramer's rule). Both are polynomials of degree at most the number of reactive
entries (capacitors, inductors, finite op-amps). They are found exactly by interpolation: sampled
at ``K`` points on a circle of radius ``w_ref`` (rad/s) and transformed with a discrete Fourier
transform. Coefficients are kept in the normalised variable ``p = s / w_ref`` so that they stay of
order one, highest power first (numpy's convention).
"""

from __future__ import annotations

import cmath
import functools
import itertools
import math
from dataclasses import dataclass, field
from typing import Sequence

import numpy as np

from bandsmith.solver.mna import MnaSystem, build_system, solve_complex
from bandsmith.solver.polyroots import companion_roots

__all__ = ["Rational", "OpAmpFamily", "AmpFamily", "node_rationals", "node_coefficients", "rational_from_system", "rational_and_family", "amp_family", "reference_w", "nominal_w_ref", "coefficients_in_s", "in_s", "s_powers", "polyval_one", "polyval_batch", "exponents_down", "first_kept", "polyder_rows", "polyval_rows", "pad_rows", "family_weights", "family_sums", "shifted_stack", "largest_in_rows"]

# A point set rotated off the real axis so that no sample lands on a real pole (Q = 0.5 gives a
# double real pole at −w_ref).
_ANGLE_OFFSET = 0.3771
# Leading coefficients below this fraction of the largest are numerical zeros (degree drops).
_TRIM = 1e-11
# Any coefficient below this fraction of the largest is rounding noise (an exact zero at DC).
_SNAP = 1e-13


def polyval_batch(c: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Evaluate polynomials ``c`` (shape ``(B, k)``, highest power first) at ``x`` (``(B, ...)``).

    Real coefficients at complex points are made complex once (numpy makes a real operand
    complex for every mixed operation, the imaginary part zero: the same numbers, without a
    cast in each of Horner's steps)."""
    x = np.asarray(x)
    if x.dtype == np.complex128 and np.asarray(c).dtype == np.float64:
        c = np.asarray(c, dtype=np.complex128)
    cc = c if x.ndim == 1 else np.asarray(c).reshape(c.shape + (1,) * (x.ndim - 1))
    k = cc.shape[1]
    if k == 1:
        return cc[:, 0] + np.zeros_like(x)
    y = cc[:, 0] * x  # a new array: the steps below work in place
    for i in range(1, k - 1):
        y += cc[:, i]
        y *= x
    y += cc[:, k - 1]
    return y


# From this many rows on, a batch's short rows are worked down the columns of a transposed copy
# (largest_in_rows; figures' outer products of coefficients): below it numpy's own loop over the
# rows costs no more than the copy.
COLUMNS_FROM = 64


def largest_in_rows(c: np.ndarray) -> np.ndarray:
    """Each row's largest magnitude, ``max |c|`` along the last axis, kept as an axis of one
    (``c.shape[:-1] + (1,)``): the numbers of ``np.abs(c).max(axis=-1, keepdims=True)`` (a
    maximum rounds nothing, and a NaN is carried either way). Where there are many rows
    (:data:`COLUMNS_FROM`) they are reduced down the columns of a transposed copy: numpy sets up
    its reduction loop for every short row (some 40 ns a row, 15 µs for a GBW ladder batch of
    some 370 members), a column of every row's entries as one loop (under 3 µs with the copy)."""
    mag = np.abs(c)
    rows = mag.size // mag.shape[-1] if mag.shape[-1] else 0
    if rows < COLUMNS_FROM:
        return mag.max(axis=-1, keepdims=True)
    across = np.ascontiguousarray(mag.reshape(rows, mag.shape[-1]).T).max(axis=0)
    return across.reshape(c.shape[:-1] + (1,))


def polyval_rows(rows: np.ndarray, x: np.ndarray) -> np.ndarray:
    """:func:`polyval_batch` of polynomials stored by coefficient, ``rows`` ``(k, B)`` (row ``i``:
    coefficient ``i`` of every member, highest power first; or a list of those ``k`` rows), at
    ``x`` ``(B,)``: the same Horner steps on the same numbers, each coefficient read as one
    contiguous row."""
    k = len(rows)
    if k == 1:
        return rows[0] + np.zeros_like(x)
    y = rows[0] * x
    for i in range(1, k - 1):
        y += rows[i]
        y *= x
    y += rows[k - 1]
    return y


def pad_rows(blocks: Sequence[np.ndarray]) -> np.ndarray:
    """Batches of polynomials (highest power first) stacked into one, each padded with leading
    zeros to the longest (Horner's rule then gives every member the value it had alone)."""
    out = np.zeros((sum(r.shape[0] for r in blocks), max(r.shape[1] for r in blocks)))
    start = 0
    for r in blocks:
        out[start : start + r.shape[0], out.shape[1] - r.shape[1] :] = r
        start += r.shape[0]
    return out


def polyder_batch(c: np.ndarray) -> np.ndarray:
    """Derivative of batched polynomials (highest power first)."""
    k = c.shape[1]
    if k == 1:
        return np.zeros_like(c)
    return c[:, :-1] * _powers_down(k - 1)


def polyder_rows(rows: np.ndarray, out: np.ndarray | None = None) -> np.ndarray:
    """:func:`polyder_batch` of polynomials stored by coefficient, ``rows`` ``(k, B)`` (row ``i``:
    coefficient ``i`` of every member, highest power first): ``(k − 1, B)`` (``(1, B)`` of zeros
    for a constant), the same products, each row scaled by its power as one loop over the members
    (a batch stored by member, ``(B, k)``, takes numpy's loop over its short rows one member at a
    time). ``out``: where to write it."""
    k = rows.shape[0]
    if k == 1:
        if out is None:
            return np.zeros_like(rows)
        out[...] = 0.0
        return out
    return np.multiply(rows[:-1], _powers_down(k - 1)[:, None], out=out)


@functools.lru_cache(maxsize=None)
def exponents_down(width: int) -> np.ndarray:
    """``width − 1, …, 1, 0`` as floats (read-only, made once per width): the powers of a
    polynomial's ``width`` coefficients, highest first (whole numbers, exact as floats: a change
    of variable ``c·w^k`` takes them as ``w ** exponents_down(width)``)."""
    powers = np.arange(width - 1, -1, -1, dtype=float)
    powers.setflags(write=False)
    return powers


def _powers_down(n: int) -> np.ndarray:
    """``n, n − 1, …, 1`` (as floats, read-only): the factors of a derivative of ``n + 1``
    coefficients (whole numbers, exact as floats: the products are those with the integers,
    without numpy's casting of them)."""
    return exponents_down(n + 1)[:-1]


def polymul_batch(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Product of batched polynomials (highest power first); loops over degree, not batch."""
    out = np.zeros((a.shape[0], a.shape[1] + b.shape[1] - 1), dtype=np.result_type(a, b))
    for j in range(b.shape[1]):
        out[:, j : j + a.shape[1]] += a * b[:, j : j + 1]
    return out


def _trim(c: np.ndarray) -> np.ndarray:
    mag = np.abs(c)
    scale = mag.max(axis=1, keepdims=True)
    scale[scale == 0] = 1.0
    noise = mag <= _SNAP * scale
    c = np.where(noise, 0.0, c)
    mag[noise] = 0.0  # |c| after the snap
    small = (mag <= _TRIM * scale).all(axis=0)
    first = int(small.argmin()) if not small.all() else c.shape[1] - 1
    return c[:, first:]


@dataclass(frozen=True, slots=True)
class Rational:
    """``H(s) = N(s/w_ref) / D(s/w_ref)``, batched.

    Attributes
    ----------
    num, den : ndarray
        Real coefficients in ``p = s/w_ref``, highest power first, shape ``(B, m)`` and ``(B, n)``.
    w_ref : ndarray
        Normalising angular frequency in rad/s, shape ``(B,)``.
    """

    num: np.ndarray
    den: np.ndarray
    w_ref: np.ndarray
    # the roots already found, by ("poles" or "zeros", member): :meth:`poles` and :meth:`zeros`
    _roots: dict | None = field(default=None, init=False, repr=False, compare=False)

    @property
    def batch(self) -> int:
        return self.num.shape[0]

    def at_s(self, s: np.ndarray) -> np.ndarray:
        """``H`` at complex frequencies ``s`` (rad/s) of shape ``(F,)`` or ``(B, F)``: ``(B, F)``."""
        s = np.asarray(s, dtype=complex)
        if s.ndim == 1:
            s = np.broadcast_to(s, (self.batch, s.size))
        p = s / self.w_ref[:, None]
        return polyval_batch(self.num, p) / polyval_batch(self.den, p)

    def at_f(self, f_hz: np.ndarray) -> np.ndarray:
        """Frequency response at frequencies in Hz: ``(B, F)`` complex (:meth:`at_s` on the
        imaginary axis, its points ``p = jω/w_ref`` made without a complex division: :meth:`_jw`)."""
        p = self._jw(f_hz)
        return polyval_batch(self.num, p) / polyval_batch(self.den, p)

    def group_delay(self, f_hz: np.ndarray) -> np.ndarray:
        """Group delay ``−dφ/dω`` in seconds at frequencies in Hz, exact from the polynomials: ``(B, F)``."""
        p = self._jw(f_hz)
        return self._delay(p, polyval_batch(self.num, p), polyval_batch(self.den, p))

    def response_and_delay(self, f_hz: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """:meth:`at_f` and :meth:`group_delay` together, ``(H, delay in s)``, each ``(B, F)``: the
        numerator and denominator are evaluated once for both (the same points ``p = jω/w_ref``).

        A second-order band-pass ``b1·p/(a2·p² + a1·p + a0)`` (an ideal op-amp's) in closed form,
        with ``x = ω/w_ref``: ``H = j·b1·x/((a0 − a2·x²) + j·a1·x)`` and, its numerator's phase
        being constant, the delay ``a1·(a0 + a2·x²)/(((a0 − a2·x²)² + (a1·x)²)·w_ref)`` (the
        derivative of the denominator's phase; derived)."""
        if self.num.shape[1] == 2 and self.den.shape[1] == 3 and not self.num[:, 1].any():
            return self._bandpass_response(f_hz)
        p = self._jw(f_hz)
        n = polyval_batch(self.num, p)
        d = polyval_batch(self.den, p)
        return n / d, self._delay(p, n, d)

    def _bandpass_response(self, f_hz: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """:meth:`response_and_delay` of second-order band-passes (its notes)."""
        inv = 1.0 / self.w_ref[:, None]
        x = (2.0 * np.pi * np.asarray(f_hz, dtype=float)) * inv
        b1, a2, a1, a0 = self.num[:, :1], self.den[:, :1], self.den[:, 1:2], self.den[:, 2:]
        x2 = x * x
        re = a0 - a2 * x2
        im = a1 * x
        h = (1j * (b1 * x)) / (re + 1j * im)
        delay = a1 * (a0 + a2 * x2)
        delay /= re * re + im * im
        delay *= inv
        return h, delay

    def _jw(self, f_hz: np.ndarray) -> np.ndarray:
        """The points ``p = jω/w_ref`` of frequencies in Hz, ``(B, F)``: ``ω·(1/w_ref)`` on the
        imaginary axis, which is what numpy's complex division ``jω/w_ref`` computes (a multiply
        by the reciprocal), in one real product instead of two complex operations."""
        w = 2.0 * np.pi * np.asarray(f_hz, dtype=float)
        return 1j * (w * (1.0 / self.w_ref[:, None]))

    def _delay(self, p: np.ndarray, n: np.ndarray, d: np.ndarray) -> np.ndarray:
        """The group delay (s) from ``N`` and ``D`` at ``p = jω/w_ref``."""
        dn = polyval_batch(polyder_batch(self.num), p) / n
        dd = polyval_batch(polyder_batch(self.den), p) / d
        # d(ln H)/dω = j·(N'/N − D'/D)/w_ref; the delay is minus the imaginary part of that.
        return -np.real(dn - dd) / self.w_ref[:, None]

    def item(self, i: int = 0) -> "Rational":
        """The ``i``-th member of the batch, as a batch of one (leading zero coefficients dropped)."""
        return Rational(_lead_trim(self.num[i : i + 1]), _lead_trim(self.den[i : i + 1]), self.w_ref[i : i + 1])

    def items(self, rows: Sequence[int]) -> list["Rational"]:
        """:meth:`item` of each of ``rows`` (the same members, each its own batch of one), their
        rows gathered at once and each one's leading zeros found in one pass: the first column
        that is not zero (a NaN is not), the last where all are (what :meth:`item` keeps)."""
        index = np.asarray(rows, dtype=np.intp)
        num, den, w_ref = self.num[index], self.den[index], self.w_ref[index]
        firsts = []
        for c in (num, den):
            nonzero = c != 0
            firsts.append(np.where(nonzero.any(axis=1), nonzero.argmax(axis=1), c.shape[1] - 1).tolist())
        return [Rational(num[p : p + 1, a:], den[p : p + 1, b:], w_ref[p : p + 1]) for p, (a, b) in enumerate(zip(*firsts))]

    def take(self, index) -> "Rational":
        """A sub-batch (a slice or index array)."""
        return Rational(self.num[index], self.den[index], self.w_ref[index])

    @staticmethod
    def joined(parts: Sequence[Rational]) -> Rational:
        """One batch of the members of several (each polynomial padded with leading zeros)."""
        return Rational(pad_rows([p.num for p in parts]), pad_rows([p.den for p in parts]), np.concatenate([p.w_ref for p in parts]))

    def to_s(self, i: int = 0) -> tuple[np.ndarray, np.ndarray]:
        """``(b, a)`` in powers of ``s`` (highest first, ``a`` monic) for member ``i``, as scipy.signal uses."""
        one = self.item(i)
        return coefficients_in_s(one.num[0], one.den[0], float(self.w_ref[i]))

    def poles(self, i: int = 0) -> np.ndarray:
        """Poles in rad/s of member ``i`` (the roots of its denominator, leading zeros dropped;
        read-only, found once: a candidate's step response, stability check and pole-zero chart
        ask for the same)."""
        return self._found("poles", i)

    def zeros(self, i: int = 0) -> np.ndarray:
        """Finite zeros in rad/s of member ``i`` (none for a constant numerator; read-only, found once)."""
        return self._found("zeros", i)

    def _found(self, which: str, i: int) -> np.ndarray:
        known = self._roots
        if known is None:
            known = {}
            object.__setattr__(self, "_roots", known)
        roots = known.get((which, i))
        if roots is None:
            roots = companion_roots((self.den if which == "poles" else self.num)[i]) * self.w_ref[i]
            roots.setflags(write=False)
            known[(which, i)] = roots
        return roots


def coefficients_in_s(num: np.ndarray, den: np.ndarray, w_ref: float) -> tuple[np.ndarray, np.ndarray]:
    """``(b, a)`` in powers of ``s`` (highest first, ``a`` monic) of ``num/den`` in ``p = s/w_ref``
    (leading zeros already dropped): :meth:`Rational.to_s` of one member (:func:`in_s`)."""
    b, a = in_s(num.tolist(), den.tolist(), s_powers(w_ref, max(num.size, den.size)))
    return np.array(b, dtype=float), np.array(a, dtype=float)


def s_powers(w_ref: float, n: int) -> list[float]:
    """``w_ref^−(n−1)``, …, ``w_ref^−1``, ``1``: the factors that turn coefficients in ``p = s/w_ref``
    into coefficients in ``s`` (``c_k·p^k = (c_k/w_ref^k)·s^k``), formed by numpy (whose power may
    differ from Python's in the last bit); the last ``m`` of them serve any polynomial of ``m``
    coefficients."""
    return (w_ref ** -np.arange(n - 1, -1, -1.0)).tolist()


def in_s(num: list[float], den: list[float], powers: list[float]) -> tuple[list[float], list[float]]:
    """``(b, a)`` in powers of ``s``, ``a`` monic, from one member's coefficients in ``p`` (plain
    numbers, leading zeros dropped) and :func:`s_powers` of at least their length (a handful of
    coefficients: lists are cheaper than arrays; the IEEE products and quotients are the same)."""
    b = [c * f for c, f in zip(num, powers[len(powers) - len(num) :])]
    a = [c * f for c, f in zip(den, powers[len(powers) - len(den) :])]
    lead = a[0]
    if lead == 0:  # an all-zero denominator: IEEE quotients (inf, NaN), as numpy's division gives them
        with np.errstate(divide="ignore", invalid="ignore"):
            return (np.array(b) / lead).tolist(), (np.array(a) / lead).tolist()
    return [c / lead for c in b], [c / lead for c in a]


def polyval_one(coefficients, z):
    """One polynomial (highest power first, plain numbers) at ``z`` by Horner's rule."""
    v = 0j if isinstance(z, complex) else 0.0
    for c in coefficients:
        v = v * z + c
    return v


def reference_w(system: MnaSystem) -> float:
    """A natural angular frequency (rad/s) of the first member: geometric mean of its finite poles.

    Used to normalise polynomial coefficients; an ideal-op-amp second-order band-pass gives ω0.
    """
    import scipy.linalg  # here, not at import: scipy.linalg is a third of the command's start-up

    ev = scipy.linalg.eigvals(system.G[0], -system.C[0])
    mag = np.abs(ev[np.isfinite(ev)])
    mag = mag[(mag > 0) & (mag < 1e300)]
    if mag.size == 0:
        return 1.0
    return float(np.exp(np.mean(np.log(mag))))


@functools.lru_cache(maxsize=64)
def nominal_w_ref(netlist) -> float:
    """:func:`reference_w` of a netlist as it stands (its own values, ideal op-amps), in rad/s:
    the normalising frequency every analysis of it uses, worked out once for the netlists last
    asked for (a netlist is frozen, so it is its own key)."""
    return reference_w(build_system(netlist))


def _degree_bound(system: MnaSystem) -> int:
    """Rows of C with an entry in any member: the degree of ``det(G + s·C)`` is at most that."""
    return int(np.count_nonzero(np.any(system.C != 0, axis=(0, 2))))


def lead_trimmed(values: list[float]) -> list[float]:
    """One polynomial's coefficients (highest power first, a list) from the first nonzero one on,
    the last one kept if all are zero: :meth:`Rational.item`'s trim of one row, in plain floats."""
    return values[first_kept(values):]


def first_kept(values: Sequence) -> int:
    """Where :func:`lead_trimmed` starts: the first entry of ``values`` that is not zero (a NaN is
    not; of flags, the first set: the first column nonzero in some row of a batch), the last
    where all are."""
    for k, v in enumerate(values):  # (a loop: a generator under next() costs some three times more)
        if v != 0:
            return k
    return len(values) - 1


def _lead_trim(c: np.ndarray, expected: int = 0) -> np.ndarray:
    """Drop leading columns that are zero in every row (keeps at least one column).

    ``expected``: the number of such columns known from the structure (a product with columns
    that are zero); checked (they are zero and the next one is not) in two reductions, the
    general search otherwise."""
    if expected and c.shape[1] > expected and c[:, expected].any() and not c[:, :expected].any():
        return c[:, expected:]
    if c.shape[1] < 2 or np.count_nonzero(c[:, 0]):
        return c
    if c.shape[0] == 1:  # one row (a member taken alone from a padded batch): trimmed in plain floats
        return c[:, c.shape[1] - len(lead_trimmed(c[0].tolist())) :]
    nz = np.flatnonzero((c != 0).any(axis=0))
    return c[:, nz[0] :] if nz.size else c[:, -1:]


def _coefficients(values: np.ndarray, k: int) -> np.ndarray:
    """Polynomial coefficients (highest first) from values at the ``k`` rotated points of the circle.

    ``v_j = Σ_k c_k e^{ikθ_j}``: an FFT gives ``c_k·e^{ik·offset}``, ascending powers.
    """
    return (np.fft.fft(values, axis=1) / k * _circle(k)[1]).real[:, ::-1]


@functools.lru_cache(maxsize=64)
def _circle(k: int) -> tuple[np.ndarray, np.ndarray]:
    """The ``k`` rotated unit points ``e^{iθ_j}`` of :func:`_samples` and the factors
    ``e^{−ik·offset}`` that :func:`_coefficients` undoes the rotation with (read-only)."""
    # (a handful of points: plain numbers, the same operations as numpy's on arrays, so the same
    # values, without a process's first complex exponential in numpy)
    points = np.array([cmath.exp(1j * (2.0 * math.pi * j / k + _ANGLE_OFFSET)) for j in range(k)])
    undo = np.array([cmath.exp(-1j * j * _ANGLE_OFFSET) for j in range(k)])
    points.setflags(write=False)
    undo.setflags(write=False)
    return points, undo


@functools.lru_cache(maxsize=64)
def _circle_points(k: int) -> tuple[complex, ...]:
    """:func:`_circle`'s ``k`` points as Python complex numbers (the same values)."""
    return tuple(_circle(k)[0].tolist())


def _samples(system: MnaSystem, w: np.ndarray) -> tuple[int, np.ndarray]:
    k = _degree_bound(system) + 1
    return k, system.matrix(w[:, None] * _circle(k)[0][None, :])


def rational_from_system(system: MnaSystem, w_ref: float | np.ndarray | None = None, *, circle_w: float | None = None) -> Rational:
    """Exact rational transfer function of a batched MNA system.

    Parameters
    ----------
    system : MnaSystem
        The pencil ``G + s·C`` with its batch.
    w_ref : float or ndarray, optional
        Normalising angular frequency (rad/s), scalar or ``(B,)``; by default
        :func:`reference_w` of the first member.
    circle_w : float, optional
        With finite op-amps, the radius (rad/s) of the sampling circle of the ideal-op-amp
        determinants, known to be near their roots (a circuit at unit values); by default the
        ideal circuit's :func:`reference_w` (generalised eigenvalues, scipy.linalg).
    """
    return _rational_and_family(system, w_ref, family=False, circle_w=circle_w)[0]


@dataclass(frozen=True, slots=True)
class OpAmpFamily:
    """A one-op-amp circuit's transfer function for every single-pole op-amp at once.

    The op-amp's row holds ``−(1/A0 + s/ωt)`` in the output node's column and nothing else
    depends on the op-amp, so by expanding the determinant along that row
    ``D(s) = D0(s) − (1/A0 + s/ωt)·M(s)``, with ``D0`` the ideal-op-amp determinant and ``M`` the
    signed cofactor of that entry; the numerator (Cramer's rule replaces the output column) does
    not depend on the op-amp at all. Coefficients in ``p = s/w_ref``, highest first.
    """

    num: np.ndarray
    d0: np.ndarray
    cofactor: np.ndarray
    w_ref: float

    @property
    def width(self) -> int:
        """The number of coefficients of ``D``: those of ``D0`` or of ``M·p``, the longer."""
        return max(self.d0.size, self.cofactor.size + 1)

    def rows_into(self, d0: np.ndarray, m: np.ndarray, mp: np.ndarray) -> None:
        """``D0``, ``M`` and ``M·p`` written into zero rows of one length (at least :attr:`width`),
        each padded with leading zeros: the rows every member's ``D`` is formed from."""
        n = d0.size
        d0[n - self.d0.size :] = self.d0
        m[n - self.cofactor.size :] = self.cofactor
        mp[n - self.cofactor.size - 1 : n - 1] = self.cofactor

    def at(self, gbw_hz: np.ndarray, a0: float | np.ndarray) -> Rational:
        """The transfer functions for op-amps of these GBWs (Hz, ``(B,)``) and open-loop gain(s)."""
        gbw = np.atleast_1d(np.asarray(gbw_hz, dtype=float))
        alpha = 1.0 / np.asarray(a0, dtype=float)
        alpha = alpha[:, None] if alpha.ndim else alpha
        beta = self.w_ref / (2.0 * np.pi * gbw)
        d0, m, mp = np.zeros((3, self.width))  # mp: M(p)·p
        self.rows_into(d0, m, mp)
        den = d0[None, :] - alpha * m[None, :] - beta[:, None] * mp[None, :]
        scale = largest_in_rows(den)
        return Rational(self.num[None, :] / scale, den / scale, np.full(gbw.size, self.w_ref))


def rational_and_family(system: MnaSystem, w_ref: float) -> tuple[Rational, OpAmpFamily | None]:
    """:func:`rational_from_system` of an ideal-op-amp system, and the :class:`OpAmpFamily` of its
    first member (None unless the netlist has exactly one op-amp), from the same samples."""
    return _rational_and_family(system, w_ref, family=True)


def node_rationals(system: MnaSystem, indices, w_ref: float, *, at: complex | None = None, den: tuple | None = None):
    """Transfer functions from the input to several unknowns (node voltages, op-amp currents) of
    member 0 of an ideal-op-amp system, from one set of samples: a batch of ``len(indices)``, every
    member with the one denominator (:func:`node_coefficients`' rows as a :class:`Rational` in
    ``p = s/w_ref``).

    With ``at`` (a complex frequency, rad/s) the result is ``(rational, x)``, ``x`` every unknown's
    complex value at ``at``, ``(n,)``; ``den`` as :func:`node_coefficients` takes it.
    """
    nums, den_c, x = node_coefficients(system, indices, w_ref, at=at, den=den)
    # the shapes given: no unknown asked for is a batch of none, a numerator column as _trim leaves it
    m = len(nums)
    num = np.array(nums).reshape(m, len(nums[0]) if m else 1)
    h = Rational(num, np.array([den_c] * m).reshape(m, len(den_c)), np.full(m, float(w_ref)))
    return h if at is None else (h, x)


def node_coefficients(system: MnaSystem, indices, w_ref: float, *, at: complex | None = None, den: tuple | None = None,
                      degree: int | None = None):
    """The transfer functions of :func:`node_rationals` as plain numbers: ``(nums, den_c, x)``,
    each unknown's numerator and the one denominator in ``p = s/w_ref`` (highest power first,
    lists of floats, all divided by the denominator's largest ``|coefficient|``), and ``x`` every
    unknown's complex value at ``at`` (``(n,)``; None without ``at``). For a caller that reads
    the coefficients one by one (the step slopes' closed forms) rather than as arrays.

    Member 0's pencil at the ``K`` points of :func:`_samples` (``K − 1`` its :func:`_degree_bound`),
    its determinant ``D`` and the unknowns ``x`` there; by Cramer's rule ``D·x_i`` is the numerator
    of unknown ``i``, and one product (:func:`_interpolation_matrix`, the transform of
    :func:`_coefficients`) gives the coefficients of ``D`` and of every numerator, those of ``D``
    and those of the numerators each trimmed as :func:`_trim` trims (:func:`_trim_rows`) as alone.
    The steps of :func:`_samples` and :meth:`~bandsmith.solver.mna.MnaSystem.solve` are written
    out for the one member (the same arithmetic in fewer array operations; the pencil as the
    outer product ``s ⊗ C`` plus ``G``, the same complex products and sums; the points ``w_ref·e^{iθ_j}``
    as Python's products, the same IEEE operations as numpy's).

    With ``at`` (a complex frequency, rad/s) the pencil is solved there too, in the same batch:
    ``x`` is the solution itself, not the polynomials evaluated (the same to rounding), so that
    values of unknowns whose transfer functions are not wanted (the op-amps' currents) come along.

    With ``den`` — ``(coefficients, w)``: member 0's denominator in ``p = s/w`` (rad/s), highest
    power first, any nonzero multiple of ``det(G + s·C)`` (the circuit's transfer function's own,
    from its analysis) — ``D`` at the samples is that polynomial's value instead of a determinant
    (the transfer functions are the same but for rounding, some 1e-15: a common factor of ``D``
    and every ``D·x_i`` cancels; and a process's first determinant costs numpy some 150 µs).

    With ``degree`` — a bound ``r`` on the degree of ``D`` and of every numerator (the number of
    the netlist's capacitors and inductors: each adds a rank-one term to ``C``, and the degree of
    ``det(G + s·C)`` and of every Cramer numerator is at most the rank of ``C``) — where it is 2
    or less (every second-order circuit), the samples are the fewest that fix real coefficients
    (:func:`_few_points`): a polynomial with real coefficients takes conjugate values at conjugate
    points, so a complex sample gives two real equations (``Re`` and ``Im`` of ``Σ c_m·p^m``) and
    a real one gives one; ``p = e^{iπ/4}`` and ``p = 1`` give the three coefficients of ``r = 2`` by
    one real ``(3, 3)`` matrix (:func:`_few_matrix`, the inverse of those equations): two solves
    (and the one at ``at``) instead of the full circle's five or six. The points lie in the right
    half-plane, away from the poles of a stable circuit (and from ``p = j``, near which a high-Q
    denominator is small: a sample there would carry its cancellation). The coefficients are the
    full circle's but for rounding: see the tests against 50-digit values.
    """
    if degree is not None and degree <= 2:  # the fewest samples (see above)
        values, x_at = _sampled(system, indices, w_ref, _few_points(degree), at, den)
        # each row's (Re, Im) pairs side by side, the last Im left out where the last point is real
        return _scaled_rows((values.view(np.float64)[:, : degree + 1] @ _few_matrix(degree)).tolist(), x_at)
    k = int(np.count_nonzero(system.C[0].any(axis=1))) + 1  # _degree_bound of member 0, plus one
    values, x_at = _sampled(system, indices, w_ref, _circle_points(k), at, den)
    return _scaled_rows((values @ _interpolation_matrix(k)).real.tolist(), x_at)


def _sampled(system: MnaSystem, indices, w_ref: float, unit_points, at: complex | None, den: tuple | None):
    """What :func:`node_coefficients` interpolates: ``D`` and ``D·x_i`` of every unknown asked for
    at the points ``w_ref·p_k`` (rows of a ``(1 + len(indices), K)`` complex array: ``D`` the
    determinant, or the caller's denominator ``den`` there), with every unknown solved at ``at``
    (None without it): the pencil at all the points and at ``at`` solved in one stacked call."""
    g, c = system.G[0], system.C[0]
    idx = list(indices)
    w_ref = float(w_ref)
    points = [w_ref * z for z in unit_points]
    k = len(points)
    s = np.array(points if at is None else points + [complex(at)])
    a = np.multiply.outer(s, c)  # (K, n, n), and the pencil at ``at`` after them
    a += g
    values = np.empty((1 + len(idx), k), dtype=complex)  # D, then D·x_i of every unknown asked for
    if den is None:
        values[0] = np.linalg.det(a[:k])
    else:
        coefficients, w = den
        values[0] = [polyval_one(coefficients, z / w) for z in points]
    x = solve_complex(a, _source_column(system.layout.size, system.layout.source_row))  # (K, n, 1), each matrix solved alone
    np.multiply(x[:k, idx, 0].T, values[0], out=values[1:])  # (the same products as D·x, laid out as rows)
    return values, None if at is None else x[k, :, 0]


_FEW_POINTS = {0: (1.0 + 0j,), 1: (cmath.exp(0.25j * math.pi),), 2: (cmath.exp(0.25j * math.pi), 1.0 + 0j)}


def _few_points(degree: int) -> tuple[complex, ...]:
    """The unit points ``p_k`` of :func:`node_coefficients`' fewest samples for real polynomials
    of degree at most ``degree`` (0, 1 or 2): ``(1,)``, ``(e^{iπ/4},)``, ``(e^{iπ/4}, 1)``; the
    real point last, where it gives one equation."""
    return _FEW_POINTS[degree]


@functools.lru_cache(maxsize=4)
def _few_matrix(degree: int) -> np.ndarray:
    """The real ``(r + 1, r + 1)`` matrix ``P`` with ``b @ P`` the coefficients (highest power
    first) of a real polynomial of degree at most ``r`` from ``b``, its values at
    :func:`_few_points` as ``(Re v_0, Im v_0, Re v_1, …)`` (the last ``Im`` left out where the
    last point is real): the transposed inverse of the equations ``Re/Im Σ_m c_m·p_k^m = b``,
    columns reversed. Read-only."""
    n = degree + 1
    rows = []
    for p in _few_points(degree):
        powers = [p**m for m in range(n)]
        rows.append([z.real for z in powers])
        rows.append([z.imag for z in powers])
    inverse = _small_inverse(rows[:n])  # (in plain floats: a real LAPACK solve's first call costs a process some 50 µs)
    m = np.array([row[::-1] for row in zip(*inverse)])  # transposed, columns reversed
    m.setflags(write=False)
    return m


def _small_inverse(a: list[list[float]]) -> list[list[float]]:
    """The inverse of a small nonsingular real matrix (a list of rows) by Gauss–Jordan elimination
    with partial pivoting, in plain floats (:func:`_few_matrix`'s 3 × 3 at most)."""
    n = len(a)
    work = [list(map(float, row)) + [1.0 if i == j else 0.0 for j in range(n)] for i, row in enumerate(a)]
    for col in range(n):
        pivot = max(range(col, n), key=lambda r: abs(work[r][col]))
        work[col], work[pivot] = work[pivot], work[col]
        lead = work[col][col]
        work[col] = [v / lead for v in work[col]]
        for r in range(n):
            if r != col and work[r][col] != 0.0:
                f = work[r][col]
                work[r] = [v - f * w for v, w in zip(work[r], work[col])]
    return [row[n:] for row in work]


def _scaled_rows(both: list[list[float]], x_at):
    """:func:`node_coefficients`' result from the coefficient rows ``both`` (``D`` first, then
    every numerator): each trimmed (:func:`_trim_rows`; ``D`` alone, the numerators together),
    all divided by ``D``'s largest ``|coefficient|``."""
    den_c = _trim_rows(both[:1])[0]
    num_c = _trim_rows(both[1:])
    # the largest |coefficient| (numpy's max where a NaN must carry through); the divisions IEEE's
    scale = max(map(abs, den_c)) if all(map(math.isfinite, den_c)) else float(np.abs(np.array(den_c)).max())
    if scale == 0:  # an all-zero denominator: IEEE quotients (inf, NaN), as numpy's division gives them
        return (np.array(num_c) / scale).tolist(), (np.array(den_c) / scale).tolist(), x_at
    return [[v / scale for v in r] for r in num_c], [v / scale for v in den_c], x_at


@functools.lru_cache(maxsize=64)
def _source_column(n: int, row: int) -> np.ndarray:
    """The right-hand side of :func:`node_coefficients`' solves: ``(1, n, 1)``, a unit source in
    ``row`` (one matrix for every member of the stack), read-only."""
    rhs = np.zeros((1, n, 1), dtype=complex)
    rhs[0, row, 0] = 1.0
    rhs.setflags(write=False)
    return rhs


@functools.lru_cache(maxsize=16)
def _interpolation_matrix(k: int) -> np.ndarray:
    """The ``(k, k)`` complex matrix ``M`` with ``values @ M`` the coefficients (highest power
    first, real parts) of polynomials of degree below ``k`` from their values at the ``k``
    rotated points of :func:`_circle`: :func:`_coefficients` as one product (read-only).

    ``v_j = Σ_m c_m·e^{imθ_j}``, ``θ_j = 2πj/k + offset``, so ``c_m = e^{−im·offset}·(1/k)·Σ_j
    v_j·e^{−2πijm/k}`` (the discrete Fourier transform, undone rotation), and column ``k−1−m``
    of ``M`` holds ``e^{−im·offset}·e^{−2πijm/k}/k`` over ``j``. For the few points of a circuit
    a product of a handful of rows is cheaper than the transform's call; the two agree to
    rounding (some 1e-16 of the largest coefficient)."""
    j = np.arange(k)
    m = np.exp(-2j * np.pi * np.outer(j, j) / k) / k * _circle(k)[1][None, :]
    m = np.ascontiguousarray(m[:, ::-1])
    m.setflags(write=False)
    return m


def _trim_rows(rows: list[list[float]]) -> list[list[float]]:
    """:func:`_trim` of a few short rows given as lists (node_rationals': a handful of
    coefficients, where a dozen array operations cost more than the arithmetic): each row's
    entries at or below ``_SNAP`` times its largest magnitude set to zero, then the leading
    columns whose entries are all at or below ``_TRIM`` times their row's largest dropped (the
    last column kept). The same comparisons on the same floats, so the same result; rows whose
    sum is not finite (any NaN or infinity makes it so; a finite sum that overflows only sends
    them the same way) go to :func:`_trim` itself (its NaN rules are numpy's)."""
    if not rows:
        return []
    if not math.isfinite(sum(map(sum, rows))):  # (Python's max need not carry a NaN)
        return _trim(np.array(rows)).tolist()
    out = []
    first = len(rows[0]) - 1  # the least, over the rows, of each one's first column above its floor
    for r in rows:
        m = max(map(abs, r)) or 1.0
        snap, floor = _SNAP * m, _TRIM * m
        r = [0.0 if abs(v) <= snap else v for v in r]
        for j in range(first):
            if abs(r[j]) > floor:
                first = j
                break
        out.append(r)
    return [r[first:] for r in out] if first else out


def _finite_amps(system: MnaSystem) -> bool:
    terms = system.amp_terms
    return bool(terms) and any(np.any(a != 0) or np.any(b != 0) for _, _, a, b in terms)


def _by_amplifiers(system: MnaSystem, w: np.ndarray, circle_w: float | None = None) -> Rational:
    """Exact transfer function of a system with finite op-amps, expanded in the op-amp terms.

    Each op-amp ``k`` adds ``x_k(s) = −(1/A0 + s/ωt)`` to one entry ``(r_k, c_k)`` of the pencil,
    and the determinant is linear in every row, so (row ``r_k`` split into its ideal part and
    ``x_k·e_{c_k}``)

        D(s) = Σ_S Π_{k∈S} x_k(s) · det(A_S(s)),

    over every subset ``S`` of the op-amps, ``A_S`` being the ideal-op-amp pencil with the rows
    ``r_k`` (k ∈ S) replaced by the unit rows ``e_{c_k}``; the numerator (Cramer's rule: the output
    column replaced by the source vector) likewise. Each ``det(A_S)`` is interpolated on the circle
    ``|s| = w_ref``, where its roots (those of passive-and-ideal-op-amp sub-circuits) live, and
    the products with the linear factors are formed exactly. Interpolating ``D`` itself instead
    loses the small high-order coefficients that far op-amp poles put in it (``(w_ref/ωt)^m``,
    below the rounding of the samples).
    """
    terms = system.amp_terms
    G0 = system.G.copy()
    C0 = system.C.copy()
    for r, c, a, b in terms:  # the ideal-op-amp pencil: the terms were stamped with a minus sign
        G0[:, r, c] += a
        C0[:, r, c] += b
    base = MnaSystem(G0, C0, system.layout, system.output_index, None)
    # the circle: the ideal circuit's natural frequency (a w_ref among far op-amp poles would put
    # it far from the roots of the det(A_S)); the result is rescaled to w_ref at the end
    wb = np.full(system.batch, reference_w(base) if circle_w is None else float(circle_w))
    k, a0 = _samples(base, wb)
    bsz = system.batch
    # x_k in p_b = s/wb, highest power first: −(wb/ωt)·p_b − 1/A0, shape (B, 2)
    lin = [np.stack([-np.broadcast_to(b, (bsz,)) * wb, -np.broadcast_to(a, (bsz,))], axis=1) for _, _, a, b in terms]
    den = None
    num = None
    subsets, coef = _subset_coefficients(a0, k, terms, system.source_vector(), system.output_index)
    for subset, (d_c, n_c) in zip(subsets, coef):
        for j in subset:
            d_c = polymul_batch(d_c, lin[j])
            n_c = polymul_batch(n_c, lin[j])
        den = d_c if den is None else _padd(den, d_c)
        num = n_c if num is None else _padd(num, n_c)
    den = _lead_trim(_rescale(den, wb / w))
    num = _lead_trim(_rescale(num, wb / w))
    scale = np.max(np.abs(den), axis=1, keepdims=True)
    scale[scale == 0] = 1.0
    return Rational(num / scale, den / scale, np.array(w, dtype=float))


def _rescale(c: np.ndarray, ratio: np.ndarray) -> np.ndarray:
    """Coefficients in ``p_b = s/w_b`` (highest power first) to ``p = s/w``, ``ratio = w_b/w``
    per member: ``c_k·p_b^k = c_k·(w/w_b)^k·p^k``."""
    powers = np.arange(c.shape[1] - 1, -1, -1.0)
    return c * (1.0 / ratio[:, None]) ** powers[None, :]


def _subset_coefficients(samples: np.ndarray, k: int, terms, source: np.ndarray, out: int):
    """For every subset ``S`` of the op-amps (:func:`_by_amplifiers`), the coefficients (in ``p``)
    of ``det(A_S)`` and of its Cramer numerator, ``A_S`` the sampled ideal pencil ``samples``
    (``(B, K, n, n)``) with the rows of the op-amps in ``S`` replaced by the unit rows of their
    output columns: ``(subsets, coef)`` with ``coef[i, 0]`` the coefficients of
    ``det(A_S)`` and ``coef[i, 1]`` of its Cramer numerator for ``S = subsets[i]``: ``(S, 2, B, K)``."""
    keep, fill, subsets, live = _subset_pattern(tuple((t[0], t[1]) for t in terms), samples.shape[-1], out, source.tobytes())
    b = samples.shape[0]
    # every subset's matrix and its Cramer matrix in one stack, (2·subsets, B, K, n, n), but for
    # the Cramer matrices with a zero row, whose determinant is exactly zero
    mats = np.where(keep[live, None, None], samples[None], fill[live, None, None])
    dets = np.zeros((keep.shape[0],) + samples.shape[:2], dtype=complex)
    dets[live] = np.linalg.det(mats)
    return subsets, _snap(_coefficients(dets.reshape(-1, samples.shape[1]), k)).reshape(len(subsets), 2, b, -1)


@functools.lru_cache(maxsize=64)
def _subset_pattern(rc: tuple[tuple[int, int], ...], n: int, out: int, source: bytes):
    """What :func:`_subset_coefficients` puts in place of the pencil's entries, by circuit
    structure: ``(keep, fill, subsets, live)``, ``keep`` ``(2·subsets, n, n)`` True where the entry
    stays and ``fill`` the entry otherwise (the op-amps' unit rows, the source column of each
    Cramer matrix), every subset of the op-amps by size, and the indices of the matrices whose
    determinant is not zero by structure: a Cramer matrix of a subset holding the op-amp that
    drives the output has that op-amp's row all zero (its unit row lies in the output column, which
    the source column replaces, zero there). Read-only."""
    src = np.frombuffer(source, dtype=float).astype(complex)
    subsets = tuple(sub for size in range(len(rc) + 1) for sub in itertools.combinations(range(len(rc)), size))
    keep = np.ones((2 * len(subsets), n, n), dtype=bool)
    fill = np.zeros((2 * len(subsets), n, n), dtype=complex)
    for i, subset in enumerate(subsets):
        for j in subset:
            r, c = rc[j]
            keep[2 * i : 2 * i + 2, r, :] = False
            fill[2 * i : 2 * i + 2, r, :] = 0.0
            fill[2 * i : 2 * i + 2, r, c] = 1.0
    keep[1::2, :, out] = False
    fill[1::2, :, out] = src
    zero = [2 * i + 1 for i, subset in enumerate(subsets) if any(rc[j][1] == out and src[rc[j][0]] == 0 for j in subset)]
    live = np.array([i for i in range(2 * len(subsets)) if i not in zero], dtype=int)
    for a in (keep, fill, live):
        a.setflags(write=False)
    return keep, fill, subsets, live


@dataclass(frozen=True, slots=True)
class AmpFamily:
    """A several-op-amp circuit's transfer function for every single-pole op-amp at once, the same
    op-amp on every amplifier.

    With ``x(p) = −(1/A0 + p·w_ref/ωt)`` the determinant is ``D = Σ_j x^j·D_j(p)``, ``D_j`` the sum
    of ``det(A_S)`` over the subsets of ``j`` op-amps (:func:`_by_amplifiers`), and the numerator
    likewise; ``den_terms[j]`` and ``num_terms[j]`` hold ``D_j`` and ``N_j`` (highest power first).
    The one-op-amp case is :class:`OpAmpFamily`.
    """

    num_terms: tuple[np.ndarray, ...]
    den_terms: tuple[np.ndarray, ...]
    w_ref: float
    # the shifted terms of :func:`_family_shifted`, (numerator, denominator), made at the first at(),
    # and the number of leading columns of each that are zero in every term
    _shifted: tuple[np.ndarray, np.ndarray] | None = field(default=None, init=False, repr=False, compare=False)
    _zero_lead: tuple[int, int] = field(default=(0, 0), init=False, repr=False, compare=False)

    def at(self, gbw_hz: np.ndarray, a0: float | np.ndarray) -> Rational:
        """The transfer functions for op-amps of these GBWs (Hz, ``(B,)``) and open-loop gain(s).

        ``x^j = (−α − β·p)^j = Σ_i C(j, i)·(−β)^i·(−α)^(j−i)·p^i`` (binomial theorem), so both
        polynomials are one weighted sum of the shifted ``N_j``, ``D_j``: a single product."""
        gbw = np.atleast_1d(np.asarray(gbw_hz, dtype=float))
        alpha = 1.0 / np.asarray(a0, dtype=float)
        # one open-loop gain for the whole ladder: one value, its powers broadcast in the weights
        alpha = alpha.reshape(1) if alpha.size == 1 else np.broadcast_to(alpha, gbw.shape)
        beta = self.w_ref / (2.0 * np.pi * gbw)
        return self.weighted(family_weights(alpha, beta, len(self.den_terms) - 1))

    def weighted(self, weights: np.ndarray) -> Rational:
        """The transfer functions for the rows of :func:`family_weights` (``(B, pairs)``, this
        family's ``m``): :meth:`at` once its op-amps' weights are made (a caller with the ladders
        of several families of one ``m`` makes their weights in one batch)."""
        num_s, den_s = self.shifted_terms()
        return self._trimmed(weights @ num_s, weights @ den_s)

    def _trimmed(self, num: np.ndarray, den: np.ndarray) -> Rational:
        """Weighted sums of the shifted terms as transfer functions: the leading columns that are
        zero in every row dropped, each member scaled by its denominator's largest coefficient."""
        num, den = _by_largest(_lead_trim(num, self._zero_lead[0]), _lead_trim(den, self._zero_lead[1]))
        return Rational(num, den, np.full(num.shape[0], self.w_ref))

    def shifted_terms(self) -> tuple[np.ndarray, np.ndarray]:
        """The numerator's and denominator's shifted terms ``T_j·p^i`` (:func:`_family_shifted`,
        ``(pairs, length)`` each, read-only), made when first asked for, with the number of
        leading columns that are zero in every row (``_zero_lead``)."""
        if self._shifted is None:
            m = len(self.den_terms) - 1
            # (their shape kept: a product of another shape may add in another order)
            (num_s, num_zero), (den_s, den_zero) = _family_shifted(self.num_terms, m), _family_shifted(self.den_terms, m)
            object.__setattr__(self, "_shifted", (num_s, den_s))
            object.__setattr__(self, "_zero_lead", (num_zero, den_zero))
        return self._shifted


def _by_largest(num: np.ndarray, den: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Each member (along the last axis) over its denominator's largest coefficient in size, 1
    where that is zero: the scaling of a family's weighted sums (:meth:`AmpFamily.weighted`, one
    family or a stack of them)."""
    scale = largest_in_rows(den)
    scale[scale == 0] = 1.0
    return num / scale, den / scale


def _leads_with(c: np.ndarray, zero: int) -> bool:
    """True where :func:`_lead_trim` of every family's block ``c[g]`` (a stack ``(G, B, length)``)
    drops exactly its first ``zero`` columns: they are zero in every row, and the next column is
    not (in some row of each block)."""
    return zero < c.shape[2] and bool(c[:, :, zero].any(axis=1).all()) and not c[:, :, :zero].any()


def family_sums(families: Sequence[AmpFamily], weights: Sequence[np.ndarray]) -> list[tuple[np.ndarray, np.ndarray]]:
    """The weighted sums of several families whose terms have one set of sizes (their shifted
    terms one shape: one circuit's families, a compare's two circuits of one structure or a
    chain's stages on one circuit), each with its rows of :func:`family_weights` (``(B_g, pairs)``,
    ``B_g`` at least two): per family its numerators and denominators, ``(B_g, length)``, the
    leading columns that are zero in every row dropped (:func:`_lead_trim`), not yet scaled
    (:meth:`AmpFamily.weighted` before its scaling, number for number).

    One family alone is two products. Several are two stacked products over
    :func:`shifted_stack` (numpy's matmul takes a stack one product per family, so each family
    gets the numbers it has alone; tested), their weights padded with rows of zeros to the
    longest (a product's row does not depend on how many rows it has beside it, from two on;
    tested); where every family has as many leading zero columns, and the column after them is
    not zero in any, the trim is one view of the stack."""
    if len(families) == 1:
        f, w = families[0], weights[0]
        num_s, den_s = f.shifted_terms()
        return [(_lead_trim(w @ num_s, f._zero_lead[0]), _lead_trim(w @ den_s, f._zero_lead[1]))]
    rows = [w.shape[0] for w in weights]
    if len(set(rows)) == 1:
        stack = np.stack(weights)
    else:
        stack = np.zeros((len(weights), max(rows), weights[0].shape[1]))
        for g, w in enumerate(weights):
            stack[g, : w.shape[0]] = w
    num_s, den_s = shifted_stack(families)
    num = stack @ num_s
    den = stack @ den_s
    zeros = {f._zero_lead for f in families}
    if len(zeros) == 1:
        zn, zd = zeros.pop()
        if _leads_with(num, zn) and _leads_with(den, zd):  # every family trimmed as _lead_trim trims it alone
            return [(num[g, :b, zn:], den[g, :b, zd:]) for g, b in enumerate(rows)]
    # (leading zeros that differ: each alone)
    return [(_lead_trim(num[g, :b], f._zero_lead[0]), _lead_trim(den[g, :b], f._zero_lead[1])) for g, (f, b) in enumerate(zip(families, rows))]


def shifted_stack(families: Sequence[AmpFamily]) -> tuple[np.ndarray, np.ndarray]:
    """:meth:`AmpFamily.shifted_terms` of several families whose terms have one set of sizes, as
    two stacks ``(G, pairs, length)`` (numerators', denominators'): each one gather from every
    family's terms joined (:func:`_family_shifted`'s, over the stack: :func:`_shifted_index`'s
    positions, family ``g``'s moved on by ``g`` times the terms' joined size). A family whose
    shifted terms are not made yet keeps its own (views of the stacks) and its leading zero
    columns, counted as :func:`_family_shifted` counts them."""
    m = len(families[0].den_terms) - 1
    stacks, zeros = [], []
    for which in ("num_terms", "den_terms"):
        sizes = tuple(t.size for t in getattr(families[0], which))
        gather, length, firsts = _shifted_index(sizes, m, len(families))
        values = np.concatenate([t for f in families for t in getattr(f, which)] + [_ONE_ZERO])
        stacks.append(values[gather])
        flat = values.tolist()
        per = sum(sizes)
        zeros.append([_zero_columns(flat, g * per, sizes, firsts, length) for g in range(len(families))])
    for g, f in enumerate(families):
        if f._shifted is None:
            object.__setattr__(f, "_shifted", (stacks[0][g], stacks[1][g]))
            object.__setattr__(f, "_zero_lead", (zeros[0][g], zeros[1][g]))
    return stacks[0], stacks[1]


@functools.lru_cache(maxsize=16)
def _family_pairs(m: int) -> tuple[tuple[tuple[int, int], ...], np.ndarray, np.ndarray, np.ndarray]:
    """The pairs ``(j, i)``, ``0 ≤ i ≤ j ≤ m``, of the terms ``x^j·T_j`` (``x = −α − β·p``) expanded
    by the binomial theorem, with the powers ``i`` and ``j − i`` (index arrays) and the binomial
    coefficients ``C(j, i)`` (read-only)."""
    pairs = tuple((j, i) for j in range(m + 1) for i in range(j + 1))
    i_pow = np.array([i for _, i in pairs])
    rest = np.array([j - i for j, i in pairs])
    comb = np.array([float(math.comb(j, i)) for j, i in pairs])
    for a in (i_pow, rest, comb):
        a.setflags(write=False)
    return pairs, i_pow, rest, comb


def family_weights(alpha: np.ndarray, beta: np.ndarray, m: int) -> np.ndarray:
    """``C(j, i)·(−β)^i·(−α)^(j−i)`` for every pair of :func:`_family_pairs`: ``(B, pairs)``.

    Each power of ``−β`` and ``−α`` is taken once (``m + 1`` of each), then picked per pair; an
    ``α`` of one value (one open-loop gain for the whole ladder, shape ``(1,)``: :meth:`AmpFamily.at`
    passes it so) is raised once and broadcast."""
    _, i_pow, rest, comb = _family_pairs(m)
    nb, na = -beta, -alpha
    pb = np.empty((nb.size, m + 1))
    pa = np.empty((na.size, m + 1))
    pb[:, 0] = 1.0  # x**0, x**1 and x**2 are 1, x and x·x exactly
    pa[:, 0] = 1.0
    if m > 0:
        pb[:, 1] = nb
        pa[:, 1] = na
    if m > 1:
        pb[:, 2] = nb * nb
        pa[:, 2] = na * na
    for i in range(3, m + 1):  # a product more: pow's general path costs some 100 ns a number
        np.multiply(pb[:, i - 1], nb, out=pb[:, i])
        np.multiply(pa[:, i - 1], na, out=pa[:, i])
    return comb * pb[:, i_pow] * pa[:, rest]


def _family_shifted(terms: tuple[np.ndarray, ...], m: int) -> tuple[np.ndarray, int]:
    """The shifted terms ``T_j·p^i`` of every pair of :func:`_family_pairs`, ``(pairs, length)``,
    and the number of leading columns that are zero in every row (what :func:`_lead_trim` drops,
    :func:`_zero_columns`).

    The terms' coefficients are joined once, a zero after them, and the matrix is one gather
    from that (:func:`_shifted_index`: each entry's coefficient, or the zero): the same values
    as each term written into a zero row."""
    sizes = tuple(t.size for t in terms)
    gather, length, firsts = _shifted_index(sizes, m)
    values = np.concatenate(terms + (_ONE_ZERO,))
    return values[gather], _zero_columns(values.tolist(), 0, sizes, firsts, length)


def _zero_columns(flat: list[float], start: int, sizes: tuple[int, ...], firsts: tuple[int, ...], length: int) -> int:
    """The leading columns that are zero in every row of a family's shifted terms, from its
    terms' coefficients joined (``flat``, plain numbers, the family's from ``start`` on): row
    ``(j, i)`` holds ``T_j`` from column ``length − size_j − i``, so the first nonzero column of
    any row is the least, over the terms, of ``length − size_j − j`` (``firsts``: the row
    ``(j, j)``) plus the term's own leading zeros (a NaN counts as nonzero, as numpy's nonzero
    counts it); ``length − 1`` where every term is zero throughout."""
    zero = length - 1
    for size, first in zip(sizes, firsts):
        for k in range(start, start + size):
            if flat[k] != 0.0:
                zero = min(zero, first + k - start)
                break
        start += size
    return zero


_ONE_ZERO = np.zeros(1)  # the entry :func:`_family_shifted`'s gaps take (read-only)
_ONE_ZERO.setflags(write=False)


@functools.lru_cache(maxsize=64)
def _shifted_index(sizes: tuple[int, ...], m: int, count: int = 0) -> tuple[np.ndarray, int, tuple[int, ...]]:
    """For :func:`_family_shifted` of terms of these sizes: the ``(pairs, length)`` positions in
    the terms' joined coefficients (the zero after them, at ``Σ sizes``, where no term lies) of
    every entry (pair ``(j, i)``'s row holds ``T_j`` from column ``length − size_j − i``: ``T_j·p^i``,
    highest power first), the row length and each term's first column in its row ``(j, j)``,
    ``length − size_j − j``. With a ``count``, the positions for that many families' terms
    joined one after the other (:func:`shifted_stack`), ``(count, pairs, length)``, the zero
    after all of them. Read-only."""
    length = max(size + j for j, size in enumerate(sizes))
    offsets = list(itertools.accumulate(sizes, initial=0))
    per = offsets[-1]
    gather = np.full((max(count, 1), len(_family_pairs(m)[0]), length), max(count, 1) * per, dtype=np.intp)
    for g in range(max(count, 1)):
        for n, (j, i) in enumerate(_family_pairs(m)[0]):
            start = length - sizes[j] - i
            gather[g, n, start : start + sizes[j]] = np.arange(g * per + offsets[j], g * per + offsets[j] + sizes[j])
    if not count:
        gather = gather[0]
    gather.setflags(write=False)
    return gather, length, tuple(length - size - j for j, size in enumerate(sizes))


def amp_family(system: MnaSystem, w_ref: float) -> AmpFamily | None:
    """:class:`AmpFamily` of member 0 of an ideal-op-amp system with several op-amps (None with
    fewer than two), sampled on the circle ``|s| = w_ref`` (rad/s) as
    :func:`rational_and_family` samples it: the same family, without the ideal solve."""
    if len(system.layout.opamp_row) < 2 or not system.amp_terms:
        return None
    one = MnaSystem(system.G[:1], system.C[:1], system.layout, system.output_index, system.amp_terms)
    k, a = _samples(one, np.array([float(w_ref)]))
    return _amp_family(one, a, k, float(w_ref))


def _amp_family(system: MnaSystem, samples: np.ndarray, k: int, w: float) -> AmpFamily:
    """:class:`AmpFamily` of member 0 of an ideal-op-amp system (its sampled pencil given)."""
    terms = system.amp_terms
    subsets, coef = _subset_coefficients(samples[:1], k, terms, system.source_vector(), system.output_index)
    # the sum over the subsets of each size (they come by size), added in their order
    sums = []
    start = 0
    for j in range(len(terms) + 1):
        stop = start + math.comb(len(terms), j)
        acc = coef[start, :, 0]  # (2, K): determinant and Cramer numerator
        for i in range(start + 1, stop):
            acc = acc + coef[i, :, 0]
        sums.append(acc)
        start = stop
    return AmpFamily(tuple(x[1] for x in sums), tuple(x[0] for x in sums), float(w))


def _snap(c: np.ndarray) -> np.ndarray:
    """Rounding noise (below :data:`_SNAP` of the largest coefficient of a row) set to zero."""
    scale = np.max(np.abs(c), axis=1, keepdims=True)
    return np.where(np.abs(c) <= _SNAP * scale, 0.0, c)


def _padd(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Sum of batched polynomials of possibly different lengths (highest power first)."""
    n = max(a.shape[1], b.shape[1])
    out = np.zeros((a.shape[0], n), dtype=np.result_type(a, b))
    out[:, n - a.shape[1] :] += a
    out[:, n - b.shape[1] :] += b
    return out


def _rational_and_family(system: MnaSystem, w_ref, *, family: bool, circle_w: float | None = None) -> tuple[Rational, OpAmpFamily | None]:
    if w_ref is None:
        w_ref = reference_w(system)
    w = np.broadcast_to(np.asarray(w_ref, dtype=float), (system.batch,))
    if _finite_amps(system):
        return _by_amplifiers(system, w, circle_w), None
    k, a = _samples(system, w)
    den_v = np.linalg.det(a)
    b = np.broadcast_to(system.source_vector().astype(complex), a.shape[:-1])[..., None]
    h = np.linalg.solve(a, b)[..., system.output_index, 0]
    num_v = h * den_v
    den_c = _trim(_coefficients(den_v, k))
    num_c = _trim(_coefficients(num_v, k))
    scale = np.max(np.abs(den_c), axis=1, keepdims=True)
    rational = Rational(num_c / scale, den_c / scale, np.array(w, dtype=float))
    fam = None
    rows = list(system.layout.opamp_row.values())
    if family and len(rows) > 1 and system.amp_terms:
        fam = _amp_family(system, a, k, float(w[0]))
    elif family and len(rows) == 1:
        r, c = rows[0], system.output_index
        minor = np.delete(np.delete(a[0], r, axis=-2), c, axis=-1)
        cof = (-1.0) ** (r + c) * _coefficients(np.linalg.det(minor)[None, :], k)
        cof = _trim(cof)[0] / scale[0, 0]
        fam = OpAmpFamily(_lead_trim(num_c[:1])[0] / scale[0, 0], _lead_trim(den_c[:1])[0] / scale[0, 0], cof, float(w[0]))
    return rational, fam
