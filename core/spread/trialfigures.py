"""Figures of large batches of trials, worked on one contiguous array per coefficient.

:mod:`bandsmith.analysis.figures` keeps a batch of polynomials as a ``(B, k)`` array; numpy runs
an operation on a column of it (strided) or on a ``(B, k)`` array broadcast against a ``(B, 1)``
column several times slower than on a whole contiguous ``(B,)`` array. Here a batch of
polynomials is a list of ``k`` arrays ``(B,)``, highest power first ("rows"), and every step of
the measurement is written on those rows:

- the coefficients of the expansion, scaled as :meth:`bandsmith.solver.expansion.Expansion.rational`
  scales them (largest denominator coefficient ±1);
- stability by Routh–Hurwitz, the same arithmetic as :func:`bandsmith.solver.stability.hurwitz_stable`
  (a structural zero of the Routh array is skipped: it only ever meets ``first > 0`` tests);
- ``|H|² = P(u)/Q(u)`` at ``u = (ω/w_ref)²`` and the slope ``P'Q − PQ'``, summed in the order of
  the products of :mod:`bandsmith.analysis.figures` (those products run through BLAS, whose
  fused multiply-adds can round a slope coefficient with a weight other than ±1, ±2 differently:
  a unit in the last place);
- peak and half-power points: exact roots in closed form where :func:`bandsmith.analysis.figures.measure`
  takes them (quadratics and cubics, the same arithmetic), otherwise Newton's method started at
  the trial's first-order estimate of f0 and Q (:func:`tracked_points`); a trial for which it
  fails or lands away from its estimate is measured again by the caller with the global search.

The tracked search of :mod:`bandsmith.analysis.figures` brackets the same roots on a 49-point grid
and refines them by Newton's method: both converge to the roots of the same polynomials, so the
figures agree to rounding (Newton's method from a first-order estimate within a per cent of the
root converges quadratically: four steps for the peak and three for the band edges to the last
digit, against 49 evaluations of ``|H|²`` per trial on the grid).
"""

from __future__ import annotations

import numpy as np

from bandsmith.analysis.figures import CLOSED_FORM_FROM
from bandsmith.analysis.figures import Figures, figures_at, real_positive_roots_eig
from bandsmith.solver.polyroots import cubic_roots_rows, quadratic_roots_rows
from bandsmith.solver.rational import polyval_rows  # (Horner on rows: a list of k arrays or a (k, B) array)

__all__ = [
    "Rows", "CLOSED_FORM_FROM", "scaled_rows", "finite_rows", "hurwitz_rows", "sq_mag_rows", "slope_rows",
    "polyval_rows", "real_positive_roots_rows", "by_roots_rows", "tracked_points", "figures_rows",
]

Rows = list  # a batch of polynomials: k arrays (B,), highest power first

# Newton's method on the tracked roots: at most this many steps; converged when a step is below
# _CONVERGED of the root (quadratic convergence: the next, last, step leaves rounding error only)
_NEWTON_MOST = 12
_CONVERGED = 1e-9


def _max_abs_rows(c: Rows) -> np.ndarray:
    """The largest magnitude of the coefficients of each member (NaN propagates, as max does)."""
    scale = np.abs(c[0])
    for r in c[1:]:
        scale = np.maximum(scale, np.abs(r))
    return scale


def finite_rows(c: Rows) -> np.ndarray:
    """Mask of the members whose every coefficient is finite."""
    ok = np.isfinite(c[0])
    for r in c[1:]:
        ok &= np.isfinite(r)
    return ok


def scaled_rows(num_c: np.ndarray, den_c: np.ndarray, num_powers, den_powers) -> tuple[Rows, Rows]:
    """The expansion's coefficients (``(len(powers), B)``, lowest power first, the powers present)
    as rows of every power, highest first, divided by the largest denominator magnitude."""
    b = num_c.shape[1]
    with np.errstate(invalid="ignore", divide="ignore"):
        scale = _max_abs_rows(den_c)
        out = []
        for c, powers in ((num_c, num_powers), (den_c, den_powers)):
            top = powers[-1]
            rows = [None] * (top + 1)
            for r, p in enumerate(powers):
                rows[top - p] = c[r] / scale
            zero = None
            for i, r in enumerate(rows):
                if r is None:
                    if zero is None:
                        zero = np.zeros(b) / scale  # 0, or NaN where the scale is NaN
                    rows[i] = zero
            out.append(rows)
    return out[0], out[1]


def hurwitz_rows(den: Rows) -> np.ndarray:
    """:func:`bandsmith.solver.stability.hurwitz_stable` on rows (the same arithmetic)."""
    k = len(den)
    with np.errstate(invalid="ignore", divide="ignore"):
        a = [d / den[0] for d in den]
        ok = finite_rows(a)
        if k == 1:
            return ok
        if k == 3:
            a1, a2 = a[1], a[2]
            ok &= a1 > 0
            return ok & ((a1 * a2 - 0.0) / np.where(a1 > 0, a1, 1.0) > 0)
        width = (k + 1) // 2 + 1
        # None marks a structural zero of the Routh array
        r0 = [a[i] for i in range(0, k, 2)] + [None] * (width - (k + 1) // 2)
        r1 = [a[i] for i in range(1, k, 2)] + [None] * (width - k // 2)
        for _ in range(k - 1):
            first = r1[0]
            if first is None:
                return np.zeros_like(ok)
            pos = first > 0
            ok &= pos
            safe = np.where(pos, first, 1.0)
            nxt = []
            for i in range(width - 1):
                x, y = r0[i + 1], r1[i + 1]
                if x is None and y is None:
                    nxt.append(None)
                    continue
                if x is None:  # (first·0 − r0₀·y)/safe
                    v = r0[0] * y
                    np.negative(v, out=v)
                elif y is None:
                    v = first * x
                else:
                    v = first * x
                    v -= r0[0] * y
                v /= safe
                nxt.append(v)
            nxt.append(None)
            r0, r1 = r1, nxt
    return ok


def sq_mag_rows(c: Rows) -> Rows:
    """``|c(jx)|²`` as a polynomial in ``u = x²`` (rows, highest first): the sums of
    :func:`bandsmith.analysis.figures._sq_mag_u` in the order of its product."""
    k = len(c)
    acc: list = [None] * k
    for i in range(k):
        for j in range(k):
            if (i + j) % 2:
                continue
            ei, ej = k - 1 - i, k - 1 - j
            w = round((1j**ei * (-1j) ** ej).real)
            r = k - 1 - (ei + ej) // 2
            t = c[i] * c[j]
            if acc[r] is None:
                acc[r] = t if w > 0 else np.negative(t, out=t)
            elif w > 0:
                acc[r] += t
            else:
                acc[r] -= t
    return acc


def slope_rows(pu: Rows, qu: Rows) -> Rows:
    """``P'Q − PQ'`` in ``u`` (rows, highest first), as :func:`bandsmith.analysis.figures._slope_u`
    sums it (to a unit in the last place: no fused multiply-add here)."""
    m, n = len(pu), len(qu)
    b = pu[0].shape[0]
    if m + n < 3:
        return [np.zeros(b)]
    deg = m + n - 3
    acc: list = [None] * (deg + 1)
    for i in range(m):
        a = m - 1 - i
        for j in range(n):
            bb = n - 1 - j
            p = a + bb - 1
            if p < 0 or a == bb:
                continue
            t = pu[i] * qu[j]
            t *= float(a - bb)
            r = deg - p
            if acc[r] is None:
                acc[r] = t
            else:
                acc[r] += t
    return [np.zeros(b) if x is None else x for x in acc]


def _polyder_rows(c: Rows) -> Rows:
    k = len(c)
    if k == 1:
        return [np.zeros_like(c[0])]
    return [c[i] * float(k - 1 - i) for i in range(k - 1)]


def _poly_sub_rows(a: Rows, b: Rows) -> Rows:
    """``a − b`` (rows of possibly different lengths), as ``figures._poly_sub`` computes it."""
    n = max(len(a), len(b))
    out = []
    for i in range(n):
        ia, ib = i - (n - len(a)), i - (n - len(b))
        if ia >= 0 and ib >= 0:
            out.append(a[ia] - b[ib])
        elif ia >= 0:
            out.append(a[ia] + 0.0)
        else:
            out.append(0.0 - b[ib])
    return out


def _ratio_rows(pu: Rows, qu: Rows, u: np.ndarray) -> np.ndarray:
    return polyval_rows(pu, u) / polyval_rows(qu, u)


def _half_power_rows(pu: Rows, qu: Rows, peak2: np.ndarray) -> Rows:
    """``P − ½·peak²·Q``: its positive roots are where ``|H|² = P/Q`` is half the peak's."""
    half_peak = 0.5 * peak2
    return _poly_sub_rows(pu, [q * half_peak for q in qu])


def real_positive_roots_rows(c: Rows) -> list[np.ndarray]:
    """``figures._real_positive_roots`` on rows: a list of root arrays, NaN where a root is not
    real and positive (the same arithmetic)."""
    k = len(c)
    b = c[0].shape[0]
    if k < 2:
        return []
    c = list(c)
    tiny = 1e-14 * _max_abs_rows(c)
    for _ in range(k - 1):
        low = np.abs(c[0]) <= tiny
        if not low.any():
            break
        shifted = [c[1]] + [c[i + 1] + c[i] for i in range(1, k - 1)] + [0.0 + c[k - 1]]
        c = [np.where(low, s, x) for s, x in zip(shifted, c)]
    lead = np.where(np.abs(c[0]) <= tiny, tiny, c[0])
    if k in (3, 4) and b >= CLOSED_FORM_FROM:
        roots, bad = (quadratic_roots_rows if k == 3 else cubic_roots_rows)(lead, *c[1:], positive=True)
        if bad.any():
            full = np.stack(c, axis=1)[bad]
            eig = real_positive_roots_eig(full, lead[bad][:, None])
            for j, r in enumerate(roots):
                r[bad] = eig[:, j]
        return [np.where(r > 0, r, np.nan) for r in roots]
    eig = real_positive_roots_eig(np.stack(c, axis=1), lead[:, None])
    return [eig[:, j] for j in range(eig.shape[1])]


def _argmax_pick(vals: list[np.ndarray], cands: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """The value and candidate at ``argmax`` over the lists (first maximum, a NaN first of all)."""
    best, pick = vals[0], cands[0]
    for v, cnd in zip(vals[1:], cands[1:]):
        take = (v > best) | (np.isnan(v) & ~np.isnan(best))
        best = np.where(take, v, best)
        pick = np.where(take, cnd, pick)
    return best, pick


def by_roots_rows(pu: Rows, qu: Rows, slope: Rows):
    """``figures._by_roots`` on rows: peak and half-power points (in ``u``) as exact roots."""
    b = pu[0].shape[0]
    # a candidate array without a member (NaN throughout) is never argmax's choice: left out
    cand = [cd for cd in real_positive_roots_rows(slope) if not np.isnan(cd).all()]
    if not cand:
        nan = np.full(b, np.nan)
        return nan, nan, nan
    with np.errstate(invalid="ignore", divide="ignore"):
        vals = [_ratio_rows(pu, qu, np.nan_to_num(cd, nan=1.0)) for cd in cand]
    vals = [np.where(np.isfinite(cd), v, -np.inf) for cd, v in zip(cand, vals)]
    best, pick = _argmax_pick(vals, cand)
    u_pk = np.where(np.isfinite(best), pick, np.nan)
    with np.errstate(invalid="ignore", divide="ignore"):
        peak2 = _ratio_rows(pu, qu, u_pk)
        half_roots = [r for r in real_positive_roots_rows(_half_power_rows(pu, qu, peak2)) if not np.isnan(r).all()]
    low = np.full(b, -np.inf)
    high = np.full(b, np.inf)
    with np.errstate(invalid="ignore"):
        for r in half_roots:
            np.maximum(low, np.where(r < u_pk, r, -np.inf), out=low)
            np.minimum(high, np.where(r > u_pk, r, np.inf), out=high)
    u_low = np.where(np.isfinite(low), low, np.nan)
    u_high = np.where(np.isfinite(high), high, np.nan)
    return u_pk, u_low, u_high


def _newton(poly: Rows, x: list[np.ndarray], live: np.ndarray) -> tuple[list[np.ndarray], list[np.ndarray], np.ndarray]:
    """Newton's method on ``poly`` from each start in ``x`` (arrays, updated in place): the roots,
    the derivative at the step before the last and a mask of the members whose every root
    converged. Once every ``live`` member has converged one more step is taken (quadratic
    convergence: it leaves rounding error only); at most :data:`_NEWTON_MOST` steps."""
    dpoly = _polyder_rows(poly)
    last = False
    d = x
    steps = x
    for n in range(_NEWTON_MOST):
        d = [polyval_rows(dpoly, xi) for xi in x]
        steps = [polyval_rows(poly, xi) / di for xi, di in zip(x, d)]
        for xi, st in zip(x, steps):
            xi -= st
        if last:
            break
        if n >= 1:
            last = bool((_converged(x, steps, live) | ~live).all())
    return x, d, _converged(x, steps, live)


def _converged(x: list[np.ndarray], steps: list[np.ndarray], like: np.ndarray) -> np.ndarray:
    """Mask of the members whose every last Newton step is below :data:`_CONVERGED` of its root."""
    ok = np.ones_like(like)
    for xi, st in zip(x, steps):
        ok &= np.abs(st) <= _CONVERGED * np.abs(xi)
    return ok


def tracked_points(pu: Rows, qu: Rows, slope: Rows, u0: np.ndarray, q_est: np.ndarray, edges: tuple[np.ndarray, np.ndarray], live: np.ndarray):
    """Peak and half-power points (in ``u``) by Newton's method from first-order estimates.

    Parameters
    ----------
    pu, qu, slope : rows
        ``|H|² = P/Q`` in ``u`` and ``P'Q − PQ'``.
    u0 : ndarray
        Estimated peak, ``u = (ω/w_ref)²``.
    q_est : ndarray
        Estimated Q, for members whose curvature at the peak gives none: the half-power points
        start at ``u_pk·(√(1 + 1/4Q²) ∓ 1/2Q)²``, Q from that curvature.
    edges : (ndarray, ndarray)
        The ends of the span the estimate vouches for (``u``): a value of ``|H|²`` there above
        the peak found means a higher peak elsewhere, and the member fails.
    live : ndarray of bool
        Members worth waiting for (finite coefficients).

    Returns
    -------
    u_pk, u_low, u_high : ndarray
        NaN where the member failed.
    failed : ndarray of bool
    """
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        (u_pk,), (ds,), ok = _newton(slope, [np.array(u0, dtype=float)], live)
        ok &= (ds < 0) & (u_pk > 0)  # a maximum: the slope falls through zero
        p_pk, q_pk = polyval_rows(pu, u_pk), polyval_rows(qu, u_pk)
        peak2 = p_pk / q_pk
        ok &= (_ratio_rows(pu, qu, edges[0]) < peak2) & (_ratio_rows(pu, qu, edges[1]) < peak2)
        half = _half_power_rows(pu, qu, peak2)
        # 1/2Q from the curvature at the peak: d²|H|²/du² = S'/Q², and a second-order band-pass
        # has |H|²(u0 ± Δu) ≈ ½|H|²(u0) with Δu² = −2|H|²/(d²|H|²/du²) = u0²/Q² (derived, sympy)
        t = np.sqrt(-2.0 * p_pk * q_pk / ds) / (2.0 * u_pk)
        t = np.where(np.isfinite(t) & (t > 0), t, 0.5 / q_est)
        r = np.sqrt(1.0 + t * t)
        lo, hi = r - t, r + t
        (u_low, u_high), _, ok2 = _newton(half, [u_pk * (lo * lo), u_pk * (hi * hi)], live & ok)
        ok &= ok2 & (u_low > 0) & (u_low < u_pk) & (u_high > u_pk)
    nan = np.nan
    return np.where(ok, u_pk, nan), np.where(ok, u_low, nan), np.where(ok, u_high, nan), ~ok


def figures_rows(num: Rows, den: Rows, w_ref: np.ndarray, u_pk, u_low, u_high) -> Figures:
    """``figures._figures`` on rows: the figures from the peak and half-power points."""
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        p = 1j * np.sqrt(u_pk)
        hc = polyval_rows(num, p) / polyval_rows(den, p)
    return figures_at(w_ref, u_pk, u_low, u_high, None, hc)
