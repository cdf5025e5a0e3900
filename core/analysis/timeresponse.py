"""Step and impulse responses of a rational transfer function.

For a strictly proper ``H(s) = N(s)/D(s)`` with simple poles ``λ_i`` and residues ``r_i`` the
impulse response is ``h(t) = Σ r_i·e^{λ_i t}`` and the unit-step response
``y(t) = D_∞ + Σ r_i·(e^{λ_i t} − 1)/λ_i`` (``D_∞`` the direct term), evaluated for all times at
once. The step's slope is the impulse response, so the largest ``|dy/dt|`` of a step of height
``vin`` is ``vin·max|h(t)|``. Poles that nearly coincide (a Q of exactly 0.5) make the residues
ill-conditioned; there the responses come from the matrix exponential of a state-space form
instead (scipy.linalg.expm, batched over time).
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from bandsmith.solver.rational import Rational, in_s, lead_trimmed, polyval_one, s_powers

__all__ = ["StepResponse", "step_response", "default_time_grid", "max_step_slope", "max_step_slopes", "max_step_slopes_of"]


@dataclass(frozen=True, slots=True)
class StepResponse:
    """Unit-step response ``y`` (V/V) and its slope ``dy/dt`` (1/s) at times ``t_s`` (s)."""

    t_s: np.ndarray
    y: np.ndarray
    slope_per_s: np.ndarray
    max_slope_per_s: float


_UNIT_GRID = {1000: np.linspace(0.0, 1.0, 1000)}  # the default grid's shape, scaled per circuit


def default_time_grid(poles: np.ndarray, n: int = 1000) -> np.ndarray:
    """Times from 0 to where the slowest pole has decayed (8 time constants), at most 40 cycles."""
    finite = [p for p in poles.tolist() if cmath.isfinite(p)]
    decay = [abs(p.real) for p in finite if p.real != 0]
    if not decay:
        return np.linspace(0.0, 1.0, n)
    t_end = 8.0 / min(decay)
    osc = [abs(p.imag) for p in finite if p.imag != 0]
    if osc:
        t_end = min(t_end, 40.0 * 2.0 * np.pi / min(osc))
    return _UNIT_GRID[n] * t_end if n in _UNIT_GRID else np.linspace(0.0, t_end, n)


def _polydiv(u: np.ndarray, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``numpy.polydiv(u, v)`` of two real 1-D coefficient arrays (highest power first): the same
    long division and the same stripping of leading remainder terms (``numpy.allclose(r[0], 0,
    rtol=1e-14)``, i.e. ``|r[0]| ≤ 1e-8``), without its general-purpose overhead."""
    u = u + 0.0
    v = v + 0.0
    n = v.size - 1
    scale = 1.0 / v[0]
    q = np.zeros(max(u.size - n, 1))
    r = u
    for k in range(u.size - n):
        d = scale * r[k]
        q[k] = d
        r[k : k + n + 1] -= d * v
    while r.size > 1 and abs(r[0]) <= 1e-8:
        r = r[1:]
    return q, r


# Below this real part exp(z) is zero in double precision (it underflows below −745.13).
_UNDERFLOW = -746.0


class _Modes:
    """The modes of one denominator ``a`` (its simple poles ``p``) over times ``t``, shared by
    every numerator over it; :meth:`responses` gives a numerator's step and impulse responses,
    with residues ``r_i = N(λ_i)/D'(λ_i)`` after division.

    A real polynomial's complex poles come in conjugate pairs whose terms are conjugate, so each
    pair ``σ ± jω`` counts once, twice the real part of its upper pole's term: with ``2r = A + jB``
    and ``2r/λ = C + jD``, ``h = e^{σt}·(A·cos ωt − B·sin ωt)`` and
    ``y = e^{σt}·(C·cos ωt − D·sin ωt) − C``. A real pole (an op-amp's, mostly) gives
    ``h = r·e^{λt}`` and ``y = (r/λ)·(e^{λt} − 1)``; ``y`` starts from the direct term ``D_∞``.
    All in real arithmetic, each pole's row over the times at once. A pole in the right
    half-plane (an unstable candidate) makes its mode outgrow the largest double late in the
    grid: the responses are infinite or NaN there, as the growth they describe, without a warning.

    ``uniform``: how many of the first times are evenly spaced from 0 (:func:`default_time_grid`'s
    grid, whose last one is its end): there a pair's cosine and sine come from
    :func:`_even_phasors`, not from ``numpy.cos`` and ``numpy.sin`` of every time.
    """

    __slots__ = ("a", "poles", "size", "grows", "pair", "real_lam", "real_exp", "pair_lam", "pair_cos", "pair_sin")

    def __init__(self, a: np.ndarray, t: np.ndarray, p: np.ndarray, uniform: int = 0):
        p = p[p.imag >= 0]
        self.a = a
        self.poles = p.tolist()
        self.size = t.size
        self.grows = any(z.real > 0 for z in self.poles)
        if self.grows:
            with np.errstate(over="ignore", invalid="ignore"):
                self._modes(t, p, uniform)
        else:
            self._modes(t, p, uniform)

    def _modes(self, t: np.ndarray, p: np.ndarray, uniform: int) -> None:
        """Each pole's mode over the times ``t`` (the upper poles ``p``). A mode whose decay
        underflows to zero before the last time (an op-amp's fast poles, over most of the grid)
        is taken only where it has not (:func:`_decay`); a pair's cosine and sine are taken over
        every time (times zero where the decay is)."""
        self.pair = pair = p.imag > 0
        self.real_lam = self.real_exp = self.pair_lam = self.pair_cos = self.pair_sin = None
        latest = float(t.max())
        if not pair.all():  # real poles (a real point keeps a zero imaginary part)
            self.real_lam = lam = p.real[~pair]
            self.real_exp = _decay(lam[:, None] * t, lam, latest)[0]  # (poles, times)
        if pair.any():
            self.pair_lam = lam = p[pair]
            e = _decay(lam.real[:, None] * t, lam.real, latest)[0]
            self.pair_cos, self.pair_sin = _phasors(lam.imag, t, uniform)
            self.pair_cos *= e
            self.pair_sin *= e

    def responses(self, b: np.ndarray, *, step: bool = True) -> tuple[np.ndarray | None, np.ndarray]:
        """``(y, h)``: the unit-step response (None without ``step``) and the impulse response."""
        if self.grows:
            with np.errstate(over="ignore", invalid="ignore"):
                return self._responses(b, step)
        return self._responses(b, step)

    def _responses(self, b: np.ndarray, step: bool) -> tuple[np.ndarray | None, np.ndarray]:
        a = self.a
        direct = 0.0
        if b.size >= a.size:
            quotient, b = _polydiv(b, a)
            direct = float(quotient[-1])
        r = np.array(_residues(b.tolist(), a.tolist(), self.poles), dtype=complex)
        h = np.zeros(self.size)
        y = np.full(self.size, direct) if step else None
        if self.real_exp is not None:
            rr = r.real[~self.pair]
            h += rr @ self.real_exp
            if step:
                y += (rr / self.real_lam) @ (self.real_exp - 1.0)
        if self.pair_lam is not None:
            twice = 2.0 * r[self.pair]
            h += twice.real @ self.pair_cos - twice.imag @ self.pair_sin
            if step:
                over = twice / self.pair_lam
                y += over.real @ self.pair_cos - over.imag @ self.pair_sin - over.real.sum()
        return y, h


def _phasors(omega: np.ndarray, t: np.ndarray, uniform: int) -> tuple[np.ndarray, np.ndarray]:
    """``(cos ωt, sin ωt)`` of angular frequencies ``omega`` (rad/s, ``(P,)``) at times ``t`` (s),
    ``(P, T)`` each: the first ``uniform`` times (evenly spaced from 0, the last of them the
    grid's end) by :func:`_even_phasors`, the rest by ``numpy.cos`` and ``numpy.sin``."""
    if uniform < 2:
        wt = omega[:, None] * t
        return np.cos(wt), np.sin(wt)
    cos, sin = np.empty((omega.size, t.size)), np.empty((omega.size, t.size))
    z = _even_phasors(omega, t[uniform - 1] / (uniform - 1), uniform)
    cos[:, :uniform] = z.real
    sin[:, :uniform] = z.imag
    if uniform < t.size:
        wt = omega[:, None] * t[uniform:]
        np.cos(wt, out=cos[:, uniform:])
        np.sin(wt, out=sin[:, uniform:])
    return cos, sin


def _even_phasors(omega: np.ndarray, dt: float, n: int) -> np.ndarray:
    """``exp(j·ω·k·dt)``, ``k = 0 … n − 1``, for each of ``omega`` (rad/s, ``(P,)``; ``dt`` in s):
    ``(P, n)`` complex. With ``k = m·a + b`` (``m = ⌈√n⌉``) each is the product of two unit
    phasors, ``exp(j·ω·m·a·dt)·exp(j·ω·b·dt)`` (angle addition), so some ``2√n`` cosines and sines
    serve ``n`` times: within a few units in the last place of each (a cosine or sine of a
    large argument costs some 20 ns a time, the product under one)."""
    m = math.isqrt(n - 1) + 1
    steps = np.arange(m) * dt  # (the fine steps, then the coarse ones: m fine steps each)
    coarse = np.exp(1j * (omega[:, None] * (steps * m)))[:, :, None]
    fine = np.exp(1j * (omega[:, None] * steps))[:, None, :]
    return (coarse * fine).reshape(omega.size, m * m)[:, :n]


def _residues(b: list[float], a: list[float], poles: list[complex]) -> list[complex]:
    """``N(λ)/D'(λ)`` at each of a handful of simple poles (Horner's rule on plain numbers; the
    coefficients highest power first, ``b`` of lower degree than ``a``)."""
    n = len(a) - 1
    da = [c * (n - k) for k, c in enumerate(a[:-1])]  # D'
    return [polyval_one(b, lam) / polyval_one(da, lam) for lam in poles]


def _decay(x: np.ndarray, sigma: np.ndarray, latest: float) -> tuple[np.ndarray, np.ndarray | None]:
    """``(e, live)``: ``exp(x)`` of modes' exponents ``x = σ·t`` (their real parts ``sigma``, 1/s,
    times up to ``latest``, s), and where it is above zero. Where every decay is still above
    underflow at the latest time, numpy's exp whole and ``live`` None; else (a NaN part counts so)
    exp taken only where ``x ≥ −746`` and zero elsewhere: ``exp`` is exactly zero below
    ``−745.13`` (half the smallest subnormal, ``e^−744.44``), and a fast op-amp pole underflows
    over most of a step's time grid, where ``exp`` would take its slow path for nothing."""
    if min(sigma.tolist()) * latest >= _UNDERFLOW:
        return np.exp(x), None
    e = np.zeros_like(x)
    np.exp(x, out=e, where=x >= _UNDERFLOW)
    return e, e != 0


def _state_space(b: np.ndarray, a: np.ndarray, t: np.ndarray):
    import scipy.linalg  # imported here: scipy.signal alone costs the command line 0.7 s at start
    import scipy.signal

    A, B, C, D = scipy.signal.tf2ss(b, a)
    n = A.shape[0]
    aug = np.zeros((n + 1, n + 1))
    aug[:n, :n] = A
    aug[:n, n] = B[:, 0]
    phi = scipy.linalg.expm(aug[None, :, :] * t[:, None, None])
    y = phi[:, :n, n] @ C[0] + D[0, 0]
    h = np.einsum("j,tjk,k->t", C[0], phi[:, :n, :n], B[:, 0])
    return y, h


# Early times, in units of the fastest pole's time constant, where a fast op-amp pole shapes the start.
_EARLY = np.geomspace(1e-3, 20.0, 200)


def _setting(h: Rational, i: int, a: np.ndarray, t_s: np.ndarray | None):
    """What the step response of member ``i`` of ``h`` (its denominator ``a`` in ``s``, monic) is
    formed from: ``(poles, t_s, t_all, modal, uniform)``, its poles (the quadratic formula for
    degree two, without cancellation; else the member's own, :meth:`Rational.poles`, found
    once), the times ``t_s`` (:func:`default_time_grid` by default), those times followed by the
    early ones where a fast op-amp pole shapes the start, whether the poles are far enough apart
    for the modal form (:class:`_Modes`; else the state-space form), and how many of the first
    times are evenly spaced from 0 (the default grid's; 0 for times given)."""
    if a.size == 3:
        d = np.sqrt(complex(a[1] * a[1] - 4.0 * a[2]))
        q = -0.5 * (a[1] + (d if (np.conj(a[1]) * d).real >= 0 else -d))  # no cancellation
        poles = np.array([q, a[2] / q]) if q != 0 else np.zeros(2, dtype=complex)
    else:
        poles = h.poles(i)
    uniform = 0
    if t_s is None:
        t_s = default_time_grid(poles)
        uniform = t_s.size
    listed = poles.tolist()
    fast = max((abs(p) for p in listed if cmath.isfinite(p)), default=1.0)
    gap = min((abs(p - q) for k, p in enumerate(listed) for q in listed[k + 1 :]), default=np.inf)
    return poles, t_s, np.concatenate([t_s, _EARLY / fast]), gap > 1e-5 * fast, uniform


def step_response(h: Rational, t_s: np.ndarray | None = None, *, i: int = 0) -> StepResponse:
    """Unit-step response of member ``i`` of a transfer function.

    Parameters
    ----------
    h : Rational
        The transfer function.
    t_s : ndarray, optional
        Times in seconds (ascending, from 0); :func:`default_time_grid` by default.

    Returns
    -------
    StepResponse
        The response, its slope and the largest ``|slope|`` (1/s, per volt of step), which also
        looks at a fine grid of early times where a fast op-amp pole shapes the start.
    """
    b, a = h.to_s(i)
    poles, t_s, t_all, modal, uniform = _setting(h, i, a, t_s)
    y, slope = _Modes(a, t_all, poles, uniform).responses(b) if modal else _state_space(b, a, t_all)
    n = t_s.size
    return StepResponse(t_s=t_s, y=y[:n], slope_per_s=slope[:n], max_slope_per_s=float(np.abs(slope).max()))


def _pure_bandpass_slope(num: list[float], den: list[float], w_ref: float) -> float | None:
    """:func:`max_step_slope`'s closed form for one member (coefficients in ``p = s/w_ref``,
    leading zeros dropped), or None where it does not apply."""
    if len(den) == 3 and len(num) == 2 and num[1] == 0 and num[0] != 0:
        a2, a1, a0 = den
        if (a2 > 0 and a1 > 0 and a0 > 0) or (a2 < 0 and a1 < 0 and a0 < 0):
            return abs(num[0] * w_ref / a2)
    return None


def _second_order_slope(b: Sequence[float], a: Sequence[float]) -> float | None:
    """The largest ``|h(t)|``, ``t > 0``, of the impulse response of ``b(s)/a(s)`` for a monic
    quadratic ``a`` with two distinct poles in the left half-plane and ``b`` of degree two at
    most (coefficients in ``s``, highest first); None otherwise (the sampled response then).

    Less its direct part, ``b/a = d + (r1·s + r0)/a`` and ``h(t) = Σ R_i·e^{p_i t}`` with
    ``R_i = (r1·p_i + r0)/(p_i − p_j)`` and ``h(0+) = r1``. A complex pair ``σ ± jω`` gives
    ``h'(t) = 2|C|·e^{σt}·cos(ωt + arg C)``, ``C = R_1·p_1``: the extrema fall every ``π/ω`` and
    shrink by ``e^{σπ/ω}`` each time, so the first one after ``t = 0`` is the largest of them. Real
    poles give at most one extremum, where ``e^{(p1 − p2)t} = −R_2·p_2/(R_1·p_1)``. The largest
    ``|h|`` is then ``|h(0+)|`` or that first extremum's: exact, where the sampled response only
    comes within its grid's spacing (derived)."""
    if len(a) != 3 or len(b) > 3 or len(b) < 1:
        return None
    a1, a0 = float(a[1]), float(a[2])
    bb = [0.0] * (3 - len(b)) + [float(c) for c in b]
    d = bb[0]
    r1, r0 = bb[1] - d * a1, bb[2] - d * a0
    if abs(r1) <= 1e-8:  # the remainder's leading term as _polydiv strips it
        r1 = 0.0
    disc = a1 * a1 - 4.0 * a0
    if not (a1 > 0 and a0 > 0 and math.isfinite(disc)) or abs(disc) <= 1e-10 * a1 * a1 + 1e-300:
        return None  # not stable, or (nearly) a double pole: the sampled response
    if disc < 0:
        p1 = complex(-0.5 * a1, 0.5 * math.sqrt(-disc))
        r_1 = (r1 * p1 + r0) / (p1 - p1.conjugate())
        c = r_1 * p1
        if c == 0:
            return abs(r1)
        phase = cmath.phase(c)
        k = math.floor((phase - 0.5 * math.pi) / math.pi) + 1  # the first extremum after t = 0
        t1 = (0.5 * math.pi + k * math.pi - phase) / p1.imag
        if t1 <= 0:
            t1 += math.pi / p1.imag
        return max(abs(r1), abs(2.0 * (r_1 * cmath.exp(p1 * t1)).real))
    q = -0.5 * (a1 + math.sqrt(disc))
    p1, p2 = q, a0 / q
    if abs(p1 - p2) <= 1e-5 * max(abs(p1), abs(p2)):  # as _setting's gap test (step_response's)
        return None
    r_1, r_2 = (r1 * p1 + r0) / (p1 - p2), (r1 * p2 + r0) / (p2 - p1)
    best = abs(r1)
    if r_1 != 0 and r_2 != 0:
        ratio = -r_2 * p2 / (r_1 * p1)
        if ratio > 0:
            t = math.log(ratio) / (p1 - p2)
            if t > 0:
                best = max(best, abs(r_1 * math.exp(p1 * t) + r_2 * math.exp(p2 * t)))
    return best


def max_step_slopes(h: Rational) -> list[float]:
    """:func:`max_step_slope` of every member of ``h``.

    Each member tries the closed forms first (:func:`_pure_bandpass_slope`, then
    :func:`_second_order_slope`), on lists of its coefficients. Members left over with one
    denominator (the transfer functions to several nodes of one circuit) share its poles, time
    grid and modes (:class:`_Modes`, as :func:`step_response` forms them: the same largest slope
    as it finds, bit for bit). Members whose poles are too close for the modal form go through
    :func:`step_response` one by one.
    """
    return _step_slopes(h.num.tolist(), h.den.tolist(), h.w_ref.tolist(), lambda: h)


def max_step_slopes_of(nums: list[list[float]], den: list[float], w_ref: float) -> list[float]:
    """:func:`max_step_slopes` of the members ``nums[i]/den`` (one denominator, coefficients in
    ``p = s/w_ref``, highest power first, rows of one length: the lists of
    :func:`bandsmith.solver.rational.node_coefficients`), the same numbers; the arrays of a
    :class:`Rational` are formed only where a member has no closed form."""
    m = len(nums)

    def rational() -> Rational:
        return Rational(np.array(nums).reshape(m, len(nums[0])), np.array([den] * m).reshape(m, len(den)), np.full(m, float(w_ref)))

    return _step_slopes(nums, [den] * m, [float(w_ref)] * m, rational)


def _step_slopes(num_rows: list[list[float]], den_rows: list[list[float]], ws: list[float], rational) -> list[float]:
    """:func:`max_step_slopes` of the members given as rows of coefficients (each row list as long
    as the others of its kind, as a :class:`Rational`'s arrays give them) and their ``w_ref``;
    ``rational()`` gives them as a :class:`Rational`, asked for only by members that have no
    closed form."""
    out: list[float | None] = []
    groups: dict[tuple, list[tuple[int, np.ndarray]]] = {}
    width = max(len(num_rows[0]), len(den_rows[0])) if num_rows else 0
    powers: dict[float, list[float]] = {}
    last_row = den = None
    for i, (num_row, den_row, w) in enumerate(zip(num_rows, den_rows, ws)):
        num = lead_trimmed(num_row)  # Rational.item's
        if den_row is not last_row:  # (max_step_slopes_of's members share one row: trimmed once)
            last_row, den = den_row, lead_trimmed(den_row)
        slope = _pure_bandpass_slope(num, den, w)
        if slope is None:
            if w not in powers:
                powers[w] = s_powers(w, width)
            b, a = in_s(num, den, powers[w])
            slope = _second_order_slope(b, a)
            if slope is None:  # one group per denominator (as a member, in p and in s)
                groups.setdefault((tuple(a), tuple(den), w), []).append((i, np.array(b)))
        out.append(slope)
    h = rational() if groups else None
    for (key, _, _), members in groups.items():
        a = np.array(key)
        poles, _, t_all, modal, uniform = _setting(h, members[0][0], a, None)  # step_response's
        if not modal:
            for i, _ in members:
                out[i] = step_response(h, i=i).max_slope_per_s
            continue
        modes = _Modes(a, t_all, poles, uniform)
        for i, b in members:  # the impulse response, as step_response forms it
            out[i] = float(np.abs(modes.responses(b, step=False)[1]).max())
    return out


def max_step_slope(h: Rational, *, i: int = 0) -> float:
    """The largest ``|dy/dt|`` (1/s per volt of step) of member ``i``'s unit-step response.

    For a stable pure second-order band-pass ``b1·p/(a2·p² + a1·p + a0)`` (``p = s/w_ref``) it is
    ``|h(0+)| = |b1|·w_ref/a2`` exactly: the impulse response starts there and every later
    extremum is smaller by ``e^(−ω0·t/(2Q))`` (derived beside the test of the step slew in
    tests/test_requirements.py), which equals ``2π·BW·|G|``. Any other second-order transfer
    function (the voltage at another node of a two-integrator loop, say): the exact largest
    ``|h|`` of :func:`_second_order_slope`. Any other circuit: :func:`step_response`'s
    ``max_slope_per_s``. The closed forms work on lists of the member's coefficients.
    """
    w = float(h.w_ref[i])
    num, den = lead_trimmed(h.num[i].tolist()), lead_trimmed(h.den[i].tolist())
    slope = _pure_bandpass_slope(num, den, w)
    if slope is None:
        slope = _second_order_slope(*in_s(num, den, s_powers(w, max(len(num), len(den)))))
    return step_response(h, i=i).max_slope_per_s if slope is None else slope
