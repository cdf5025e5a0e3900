"""Stability of batched polynomials: Routh–Hurwitz, with no root finding.

Used by the design search (an unstable combination is never chosen) and the tolerance spread (an
unstable trial fails); :func:`routh_stable`, one polynomial in plain floats that says "stable"
only where no entry came out of a near-cancellation, by the analysis's stability check.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["hurwitz_stable", "hurwitz_stable_one", "routh_stable"]


def hurwitz_stable(den: np.ndarray) -> np.ndarray:
    """True where every root of the polynomial lies in the open left half-plane (Routh–Hurwitz).

    The first column of the Routh array (E. J. Routh, *A Treatise on the Stability of a Given State
    of Motion*, 1877) is all of one sign, tested on every row at once.

    Parameters
    ----------
    den : ndarray
        Real coefficients, highest power first, shape ``(B, n + 1)`` (leading coefficient
        non-zero). A zero in the first column of the Routh array (a root on or near the axis)
        counts as not stable.
    """
    a = np.asarray(den, dtype=float)
    b, k = a.shape
    if b == 1:  # one polynomial (a design's chosen parts): the same arithmetic in Python floats
        return np.array([_routh(a[0].tolist(), None)])
    with np.errstate(invalid="ignore", divide="ignore"):
        if k == 3:
            return _quadratics_stable(a)
        a = a / a[:, :1]
        ok = np.isfinite(a[:, 0])  # every entry finite, column by column (cheaper than along rows)
        for j in range(1, k):
            ok &= np.isfinite(a[:, j])
        if k == 1:
            return ok
        width = (k + 1) // 2 + 1
        r0 = np.zeros((b, width))
        r1 = np.zeros((b, width))
        r0[:, : (k + 1) // 2] = a[:, 0::2]
        r1[:, : k // 2] = a[:, 1::2]
        for _ in range(k - 1):
            first = r1[:, 0]
            ok &= first > 0
            safe = np.where(first > 0, first, 1.0)
            nxt = np.zeros_like(r0)
            nxt[:, :-1] = (first[:, None] * r0[:, 1:] - r0[:, :1] * r1[:, 1:]) / safe[:, None]
            r0, r1 = r1, nxt
    return ok


def hurwitz_stable_one(den: list[float]) -> bool:
    """:func:`hurwitz_stable` of one polynomial given as a list of floats (highest power first):
    the same answer as its batch of one, without making arrays."""
    return _routh(den, None)


def _quadratics_stable(den: np.ndarray) -> np.ndarray:
    """:func:`hurwitz_stable` of quadratics ``(B, 3)``, column by column: each coefficient divided
    by the leading one (the quotients of the whole array's division), every one finite, then the
    loop's two steps written out, ``a1 > 0`` and ``(a1·a2 − 0·1)/a1 > 0`` (the same arithmetic;
    the columns of the transposed view, where whole rows cost more to divide and test)."""
    lead, c1, c2 = den.T
    a1, a2 = c1 / lead, c2 / lead
    ok = np.isfinite(lead / lead)  # the leading coefficient over itself: 1, or NaN where it is 0 or not finite
    ok &= np.isfinite(a1)
    ok &= np.isfinite(a2)
    positive = a1 > 0
    ok &= positive
    return ok & ((a1 * a2 - 0.0) / np.where(positive, a1, 1.0) > 0)


# A first-column entry of the Routh array formed as u − v with u − v below this share of |u| or
# |v| came out of a near-cancellation: its sign is not trusted (the caller then takes the poles).
_ROUTH_CANCELLATION = 1e-4


def routh_stable(den: list[float]) -> bool:
    """True when the first column of the Routh array of ``den`` (highest power first, leading
    coefficient nonzero) is all positive after dividing by the leading coefficient, each entry
    clear of cancellation: every root in the open left half-plane (E. J. Routh, *A Treatise on
    the Stability of a Given State of Motion*, 1877). False — "not settled here" — for a zero, a
    negative or a non-finite entry, and for an entry ``u − v`` smaller than
    :data:`_ROUTH_CANCELLATION` of ``max(|u|, |v|)``: with a repeated pair of poles near the axis,
    rounding in the rows can leave the column positive while a pole lies just beyond the axis."""
    return _routh(den, _ROUTH_CANCELLATION)


def _routh(den: list[float], margin: float | None) -> bool:
    """The rows of :func:`hurwitz_stable` for one polynomial, step by step the same IEEE
    operations in Python floats (a handful of coefficients: cheaper than arrays): divided by the
    leading coefficient (a zero one, or an entry not finite: not stable), then the Routh rows,
    each first-column entry ``u − v`` also checked clear of cancellation by ``margin`` (a share
    of ``max(|u|, |v|)``) where one is given."""
    lead = den[0]
    if lead == 0:
        return False
    a = [c / lead for c in den]
    if not all(math.isfinite(c) for c in a):
        return False
    r0, r1 = a[0::2], a[1::2]
    for _ in range(len(a) - 1):
        first = r1[0] if r1 else 0.0
        if not first > 0:
            return False
        rest = r1[1:] + [0.0] * (len(r0) - len(r1))
        if margin is not None and len(r0) > 1:  # the next row's first entry, (u − v)/first
            u, v = first * r0[1], r0[0] * rest[0]
            if not u - v > margin * max(abs(u), abs(v)):
                return False
        r0, r1 = r1, [(first * r0[j + 1] - r0[0] * rest[j]) / first for j in range(len(r0) - 1)]
    return True
