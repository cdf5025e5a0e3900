"""Real roots of batched real quadratics and cubics in closed form.

A companion-matrix eigenvalue call costs about a microsecond and a half per polynomial (LAPACK
is called once per member), which dominates the figures of a GBW ladder. Quadratics and cubics
have closed-form roots; done carelessly those lose every digit of a small root beside a large one
(an op-amp pole ten decades above the band is exactly that), so here:

- the cubic's *dominant* real root comes from the trigonometric or Cardano form, which is
  accurate for the root of largest magnitude; where the only real root is the small one, it is
  taken from the reversed polynomial (roots ``1/u``), in which it is the dominant one;
- the other two come from deflating that root with the well-conditioned form of Vieta's
  relations and the cancellation-free quadratic formula;
- every real root is polished by two Newton steps on the original polynomial.

References: the trigonometric and Cardano forms and the cancellation-free quadratic formula as in
Press et al., *Numerical Recipes*, 3rd ed., §5.6 (from memory). Members whose result is not
finite are reported through a mask so that the caller can fall back to eigenvalues.
"""

from __future__ import annotations

import numpy as np

__all__ = ["quadratic_roots", "cubic_roots", "quadratic_roots_rows", "cubic_roots_rows", "companion_roots"]

# A complex pair whose imaginary part is below this fraction of its modulus counts as a double
# real root (the same threshold the eigenvalue path uses).
NEAR_REAL = 1e-7


def _quadratic(e: np.ndarray, f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Real roots of ``u² + e·u + f`` (NaN for a complex pair), cancellation-free."""
    disc = e * e - 4.0 * f
    sq = np.sqrt(np.abs(disc))
    q = -0.5 * (e + np.copysign(sq, e))
    nonzero = q != 0
    if nonzero.all():
        r2 = f / q
    else:
        r2 = np.divide(f, q, out=np.zeros_like(q), where=nonzero)
    if (disc >= 0).all():  # every pair real (no NaN either): the masks below are no-ops
        return q, r2
    r1 = q
    near = (disc < 0) & (0.5 * sq <= NEAR_REAL * np.sqrt(np.abs(f)))
    r1 = np.where(near, -0.5 * e, r1)
    r2 = np.where(near, -0.5 * e, r2)
    real = (disc >= 0) | near
    return np.where(real, r1, np.nan), np.where(real, r2, np.nan)


def quadratic_roots(c: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Real roots of ``c0·u² + c1·u + c2`` (rows of ``c``, shape ``(B, 3)``): ``(B, 2)`` and a mask.

    NaN marks a complex root; the mask is True where the member must be solved another way
    (a zero leading coefficient or non-finite coefficients).
    """
    roots, bad = quadratic_roots_rows(c[:, 0], c[:, 1], c[:, 2])
    return np.stack(roots, axis=1), bad


def quadratic_roots_rows(c0, c1, c2, *, positive: bool = False) -> tuple[list[np.ndarray], np.ndarray]:
    """:func:`quadratic_roots` with the coefficients as separate arrays ``(B,)``: a list of the two
    root arrays and the mask. Every operation works on whole contiguous arrays (a ``(B, 2)`` array
    broadcast against a ``(B, 1)`` column runs several times slower); the arithmetic is the same.

    ``positive``: only the positive roots are wanted; a root array with no member that is
    positive, zero or within 6e-300 of zero is returned unpolished (two polish steps, each at most
    half the root plus 1e-300, never move a root below −6e-300 across zero, so such an array stays
    negative or NaN)."""
    with np.errstate(all="ignore"):
        lead = c0
        e = c1 / lead
        f = c2 / lead
        r1, r2 = _quadratic(e, f)
        roots = _polish([r1, r2], [None, e, f], positive=positive)
    bad = ~(np.isfinite(e) & np.isfinite(f))
    return roots, bad


def _first_largest(x: np.ndarray, y: np.ndarray, first=None) -> np.ndarray:
    """Elementwise the one of larger magnitude, ``x`` on a tie or where ``x`` is NaN, ``y`` where
    it alone is NaN: argmax's choice over ``[x, y]``. ``first``: the arrays ``x`` was chosen from,
    for the NaN test of a chain."""
    nan_x = np.isnan(x) if first is None else np.isnan(first[0]) | np.isnan(first[1])
    take = (np.abs(y) > np.abs(x)) | (np.isnan(y) & ~nan_x)
    return np.where(take, y, x)


def _dominant_real(a: np.ndarray, b: np.ndarray, c: np.ndarray) -> np.ndarray:
    """The real root of largest magnitude of the monic ``u³ + a·u² + b·u + c``."""
    q = (a * a - 3.0 * b) / 9.0
    r = (2.0 * a * a * a - 9.0 * a * b + 27.0 * c) / 54.0
    q3 = q * q * q
    three = r * r < q3
    every = bool(three.all())  # every member has three real roots (then the masks are no-ops)
    if every:
        sq = np.sqrt(q)
        theta = np.arccos(np.clip(r / (sq * sq * sq), -1.0, 1.0))
    else:
        sq = np.sqrt(np.where(three, q, 0.0))
        theta = np.arccos(np.clip(np.where(three, r / np.where(three, sq * sq * sq, 1.0), 0.0), -1.0, 1.0))
    a3 = a / 3.0
    m2sq = -2.0 * sq
    # The three trigonometric roots t0 ≤ t2 ≤ t1 (cosines of θ/3 and (θ ± 2π)/3); the first of
    # largest magnitude is taken (a NaN first of all, as argmax would).
    # - t0 + t1 = −2√q·cos((θ + π)/3) − 2a/3 with |2√q·cos((θ + π)/3)| ≤ √q: where 2|a|/3 exceeds
    #   √q by more than rounding, t0 (a > 0) or t1 (a < 0) is the larger, and only it is computed;
    # - the middle one can be the largest only by rounding, where it nearly meets another (θ near
    #   0 or π): t2 − t0 ≥ 0.74·√q·(π − θ) and t1 − t2 ≥ 0.74·√q·θ, against rounding below
    #   1e-14·(√q + |a/3|); all three are computed there alone.
    abs_a3 = np.abs(a3)
    dec = 2.0 * abs_a3 - sq > 1e-12 * (sq + abs_a3)
    unused = ~three  # members that take the Cardano form
    if (unused | (dec & (a3 > 0))).all():
        pick = m2sq * np.cos(theta / 3.0) - a3
    elif (unused | (dec & (a3 < 0))).all():
        pick = m2sq * np.cos((theta + 2.0 * np.pi) / 3.0) - a3
    else:
        pick = _first_largest(m2sq * np.cos(theta / 3.0) - a3, m2sq * np.cos((theta + 2.0 * np.pi) / 3.0) - a3)
    clear = 0.74 * sq * np.minimum(theta, np.pi - theta) > 1e-12 * (sq + abs_a3)
    near = three & ~clear
    if near.any():
        m, th, a3n = m2sq[near], theta[near], a3[near]
        t0 = m * np.cos(th / 3.0) - a3n
        t1 = m * np.cos((th + 2.0 * np.pi) / 3.0) - a3n
        t2 = m * np.cos((th - 2.0 * np.pi) / 3.0) - a3n
        pick[near] = _first_largest(_first_largest(t0, t1), t2, first=(t0, t1))
    if every:
        return pick
    big = -np.copysign(np.cbrt(np.abs(r) + np.sqrt(np.where(three, 0.0, r * r - q3))), r)
    card = big + np.divide(q, big, out=np.zeros_like(big), where=big != 0) - a3
    return np.where(three, pick, card)


def cubic_roots(c: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Real roots of ``c0·u³ + c1·u² + c2·u + c3`` (rows of ``c``, ``(B, 4)``): ``(B, 3)`` and a mask.

    NaN marks a complex root; the mask is True where the member must be solved another way.
    """
    roots, bad = cubic_roots_rows(c[:, 0], c[:, 1], c[:, 2], c[:, 3])
    return np.stack(roots, axis=1), bad


def cubic_roots_rows(c0, c1, c2, c3, *, positive: bool = False) -> tuple[list[np.ndarray], np.ndarray]:
    """:func:`cubic_roots` with the coefficients as separate arrays ``(B,)``: a list of the three
    root arrays and the mask (see :func:`quadratic_roots_rows`, also for ``positive``)."""
    with np.errstate(all="ignore"):
        lead = c0
        a = c1 / lead
        b = c2 / lead
        k = c3 / lead
        r_fwd = _dominant_real(a, b, k)
        dominant = np.abs(r_fwd) ** 3 >= np.abs(k)
        r1 = r_fwd
        rev = ~(dominant | (k == 0))
        if rev.any():  # only there is the reversed root taken (computed for those members alone)
            kr, ar, br = k[rev], a[rev], b[rev]
            # the reversed polynomial u³ + (b/k)·u² + (a/k)·u + 1/k has the roots 1/u
            r_rev = 1.0 / _dominant_real(br / kr, ar / kr, 1.0 / kr)
            r1 = r_fwd.copy()
            r1[rev] = np.where(np.isfinite(r_rev), r_rev, r_fwd[rev])
        big = np.abs(r1) ** 3 >= np.abs(k)
        zero = r1 == 0
        safe = np.where(zero, 1.0, r1)
        f = np.where(zero, b, -k / safe)
        e = np.where(zero, a, np.where(big, (f - b) / safe, a + r1))
        s1, s2 = _quadratic(e, f)
        roots = _polish([r1, s1, s2], [None, a, b, k], positive=positive)
    bad = ~(np.isfinite(a) & np.isfinite(b) & np.isfinite(k) & np.isfinite(r1))
    return roots, bad


def _polish(roots: list[np.ndarray], monic: list, steps: int = 2, *, positive: bool = False) -> list[np.ndarray]:
    """Two Newton steps on every finite root of the monic polynomial ``monic`` (coefficients
    highest first, the leading 1 given as None); a step that is not finite or grows is not taken.
    Works in place on its own copies (fewer fresh arrays)."""
    n = len(monic)
    # derivative coefficients (n − 1 − i)·c_i; the leading one is n − 1
    d = [float(n - 1)] + [monic[i] * float(n - 1 - i) for i in range(1, n - 1)]
    out = []
    for x in roots:
        # a step is at most half the root (plus 1e-300): after two, a root below −6e-300 is still negative
        if positive and not (x >= -6e-300).any():
            out.append(x)
            continue
        x = x.copy()
        for _ in range(steps):
            p = x + monic[1]  # 1·x is x
            for i in range(2, n):
                p *= x
                p += monic[i]
            if n == 2:
                dp = np.full_like(x, d[0])
            else:  # Horner from d0: (d0·x + d1)·x + …
                dp = x * d[0]
                dp += d[1]
                for i in range(2, n - 1):
                    dp *= x
                    dp += d[i]
            p /= dp  # the step
            ok = np.isfinite(p)
            lim = np.abs(x)
            lim *= 0.5
            lim += 1e-300
            ok &= np.abs(p, out=dp) <= lim
            np.subtract(x, p, out=x, where=ok)
        out.append(x)
    return out


def companion_roots(p: np.ndarray) -> np.ndarray:
    """``numpy.roots(p)`` of a real 1-D coefficient array (highest power first), bit for bit: the
    same stripping of leading and trailing zeros (each trailing zero a root at 0), the same
    companion matrix and the same ``numpy.linalg.eigvals`` call (real where every root is), without
    ``numpy.roots``'s general-purpose checks, which cost as much again for a handful of
    coefficients."""
    p = np.asarray(p, dtype=float)
    nonzero = [k for k, v in enumerate(p.tolist()) if v != 0]  # a handful: plain Python is quicker
    if not nonzero:
        return np.array([])
    first, last = nonzero[0], nonzero[-1]
    trailing = p.size - 1 - last  # zeros after the last nonzero entry: roots at 0
    p = p[first : last + 1]
    n = p.size - 1
    if n > 0:
        companion = np.eye(n, k=-1)
        companion[0, :] = -p[1:] / p[0]
        roots = np.linalg.eigvals(companion)
    else:
        roots = np.array([])
    return roots if trailing == 0 else np.concatenate([roots, np.zeros(trailing, roots.dtype)])
