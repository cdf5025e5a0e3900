"""Stability of batched polynomials: Routh–Hurwitz, with no root finding.

Used by the design search (an unstable combination is never chosen) and the tolerance spread (an
unstable trial fails).
"""

from __future__ import annotations

import numpy as np

__all__ = ["hurwitz_stable"]


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
    with np.errstate(invalid="ignore", divide="ignore"):
        a = a / a[:, :1]
        ok = np.all(np.isfinite(a), axis=1)
        if k == 1:
            return ok
        if k == 3:  # a quadratic: the two steps of the loop below written out (same arithmetic)
            a1, a2 = a[:, 1], a[:, 2]
            ok &= a1 > 0
            return ok & ((a1 * a2 - 0.0) / np.where(a1 > 0, a1, 1.0) > 0)
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
