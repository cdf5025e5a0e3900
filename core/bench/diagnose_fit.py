"""The fits behind :func:`bandsmith.bench.diagnose.diagnose`: residual model, one-part, pair and all-parts fits.

The residual, the three kinds of fit and the test for parts the data cannot tell apart are
described in :mod:`bandsmith.bench.diagnose`; this module holds the numerical work, the words are
in :mod:`bandsmith.bench.diagnose_words`.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from typing import Mapping

import numpy as np
import scipy.optimize
import scipy.special

from bandsmith.analysis.analyzer import transfer_function
from bandsmith.bench.measured import Measurement
from bandsmith.design.candidate import Candidate
from bandsmith.solver.mna import OpAmpModel
from bandsmith.solver.rational import nominal_w_ref

__all__ = ["DB_PER_NEPER", "EDGE", "Fits", "ResidualModel", "fit_everything", "mag_rms", "rms", "se_pct", "chi2_point", "confounded_groups"]


DB_PER_NEPER = 20.0 / math.log(10.0)
_PRIOR_DB = 0.01  # residual (dB) per tolerance moved: the faint pull towards the design
_FD_STEP = 1e-6
# Rows × points evaluated at once by the model (bounds its temporaries to a few tens of MB).
_CHUNK_POINTS = 2_000_000
_CONFIDENCE = 0.999
_NULL_RATIO = 1e-4


class ResidualModel:
    """Residuals of many parameter sets at once (one batched transfer-function evaluation)."""

    def __init__(self, candidate: Candidate, m: Measurement, parts: tuple[str, ...], opamp: OpAmpModel, mode: str):
        self.netlist = candidate.netlist
        self.nominal = np.array([candidate.values[p] for p in parts], dtype=float)
        self.parts = parts
        self.opamp = opamp
        self.f = m.f_hz
        self.mode = mode
        self.w_ref = nominal_w_ref(self.netlist)
        self.meas_db = m.mag_db
        self.meas_h = m.h
        self.inv_meas_h = None if m.h is None else 1.0 / m.h
        self.calls = 0

    def h(self, x: np.ndarray) -> np.ndarray:
        """Complex response ``(B, F)`` for log-changes ``x`` of shape ``(B, n)``."""
        x = np.atleast_2d(x)
        over = {p: self.nominal[j] * np.exp(x[:, j]) for j, p in enumerate(self.parts)}
        self.calls += 1
        return transfer_function(self.netlist, self.opamp, overrides=over, w_ref=self.w_ref).at_f(self.f)

    def split(self, hm: np.ndarray) -> tuple[np.ndarray, np.ndarray | None]:
        """Magnitude error (dB) and phase error (rad) of model responses ``(B, F)``."""
        if self.mode == "complex":
            ratio = hm * self.inv_meas_h  # a product: numpy's complex division is several times slower
            return DB_PER_NEPER * np.log(np.abs(ratio)), np.angle(ratio)
        return 20.0 * np.log10(np.abs(hm)) - self.meas_db, None

    def residual(self, x: np.ndarray) -> np.ndarray:
        """``(B, R)`` residuals in dB (phase as dB-equivalent)."""
        x = np.atleast_2d(x)
        rows = max(1, _CHUNK_POINTS // max(self.f.size, 1))
        if x.shape[0] > rows:  # bounded temporaries: a few rows of a long measurement at a time
            return np.concatenate([self.residual(x[k : k + rows]) for k in range(0, x.shape[0], rows)])
        mag, ph = self.split(self.h(x))
        return mag if ph is None else np.concatenate([mag, DB_PER_NEPER * ph], axis=1)

    def sum_sq(self, x: np.ndarray) -> np.ndarray:
        """``(B,)`` sums of squared residuals, a few rows at a time (no ``(B, R)`` array)."""
        x = np.atleast_2d(x)
        rows = max(1, _CHUNK_POINTS // max(self.f.size, 1))
        out = []
        for k in range(0, x.shape[0], rows):
            r = self.residual(x[k : k + rows])
            out.append(np.sum(r * r, axis=1))
        return np.concatenate(out)


def fit_subsets(model: ResidualModel, subsets: np.ndarray, x0: np.ndarray, lo: np.ndarray, hi: np.ndarray, iters: int = 40):
    """Bounded Gauss–Newton (LM-damped) fits of many small parameter subsets at once.

    ``subsets`` ``(K, m)`` part indices; ``x0`` ``(K, m)`` start. Returns ``x (K, m)``, the sums of
    squares ``S (K,)`` and the Gauss–Newton matrices ``JᵀJ (K, m, m)`` at the end.
    """
    K, m = subsets.shape
    n = len(model.parts)
    lo_k, hi_k = lo[subsets], hi[subsets]

    def full(x):
        X = np.zeros((K, n))
        np.put_along_axis(X, subsets, x, axis=1)
        return X

    x = np.clip(x0, lo_k, hi_k)
    r = model.residual(full(x))
    S = np.sum(r * r, axis=1)
    lam = np.full(K, 1e-3)
    eye = np.eye(m)
    A = np.zeros((K, m, m))
    for _ in range(iters):
        X = np.repeat(full(x)[:, None, :], m, axis=1)  # (K, m, n)
        kk, jj = np.meshgrid(np.arange(K), np.arange(m), indexing="ij")
        X[kk, jj, subsets] += _FD_STEP
        rp = model.residual(X.reshape(K * m, n)).reshape(K, m, -1)
        J = (rp - r[:, None, :]) / _FD_STEP  # (K, m, R)
        A = J @ J.transpose(0, 2, 1)
        g = np.einsum("kmr,kr->km", J, r)
        diag = np.einsum("kii->ki", A)[:, :, None] * eye
        step = -np.linalg.solve(A + lam[:, None, None] * (diag + 1e-12 * eye), g[:, :, None])[:, :, 0]
        xn = np.clip(x + step, lo_k, hi_k)
        rn = model.residual(full(xn))
        Sn = np.sum(rn * rn, axis=1)
        better = Sn < S
        moved = np.max(np.abs(xn - x), axis=1)
        gain = np.where(better, (S - Sn) / np.maximum(S, 1e-300), 0.0)
        x[better], r[better], S[better] = xn[better], rn[better], Sn[better]
        lam = np.where(better, lam / 3.0, lam * 4.0)
        if np.all((better & (gain < 1e-12)) | (moved < 1e-10) | (lam > 1e8)):
            break
    return x, S, A


def se_pct(x: np.ndarray, A: np.ndarray, sigma2: float) -> list[float]:
    """Standard errors (in % of the part) of log-changes ``x`` from their Gauss–Newton matrix."""
    try:
        cov = sigma2 * np.linalg.inv(A)
    except np.linalg.LinAlgError:
        return [math.nan] * len(x)
    d = np.diag(cov)
    return [float(100.0 * math.exp(xi) * math.sqrt(v)) if v >= 0 and math.isfinite(v) else math.nan for xi, v in zip(x, d)]


def chi2_point(dof: int) -> float:
    """The ``_CONFIDENCE`` point of χ² with ``dof`` degrees of freedom."""
    return float(scipy.special.chdtri(dof, 1.0 - _CONFIDENCE))


def rms(a: np.ndarray) -> float:
    return float(np.sqrt(np.mean(a * a)))


def confounded_groups(J: np.ndarray, parts: tuple[str, ...]) -> tuple[tuple[tuple[str, ...], ...], list[np.ndarray], int]:
    """Groups of parts the data cannot tell apart, the null directions (in log-change), and the rank."""
    # The thin SVD: only the right singular vectors are used; full_matrices=True would build the
    # (2N × 2N) left factor, memory growing with the square of the points. A J with fewer rows
    # than parts (a tiny measurement) still needs every right vector, so it takes the full one.
    _, s, vt = np.linalg.svd(J, full_matrices=J.shape[0] < J.shape[1])
    s_full = np.zeros(len(parts))
    s_full[: s.size] = s
    null = s_full <= _NULL_RATIO * max(s_full[0], 1e-300)
    rank = int(np.count_nonzero(~null))
    if not null.any():
        return (), [], rank
    V0 = vt[null].T  # (n, k), orthonormal
    P = V0 @ V0.T
    involved = np.diag(P) > 1e-2
    groups: list[set[int]] = []
    for i in np.flatnonzero(involved):
        linked = [g for g in groups if any(abs(P[i, j]) > 1e-3 for j in g)]
        merged = {int(i)}.union(*linked) if linked else {int(i)}
        groups = [g for g in groups if g not in linked] + [merged]
    out = tuple(tuple(parts[i] for i in sorted(g)) for g in sorted(groups, key=min))
    dirs = [V0[:, k] for k in range(V0.shape[1])]
    return out, dirs, rank


@dataclass(frozen=True, slots=True)
class Fits:
    """Every fit of one diagnosis (log-changes of the parts, sums of squares in dB²)."""

    lo: np.ndarray
    hi: np.ndarray
    S0: float  # the design itself
    x1: np.ndarray  # one part alone: (n, 1), S1 (n,), A1 (n, 1, 1)
    S1: np.ndarray
    A1: np.ndarray
    pairs: np.ndarray  # (K, 2) part indices, x2 (K, 2), S2 (K,), A2 (K, 2, 2)
    x2: np.ndarray
    S2: np.ndarray
    A2: np.ndarray
    xf: np.ndarray  # every part together
    Sf: float
    groups: tuple[tuple[str, ...], ...]
    dirs: list
    rank: int
    sigma2: float

    def explains(self, S: float, dropped: int) -> bool:
        """Whether a fit with ``dropped`` fewer parameters fits as well as every part free."""
        return S - self.Sf <= self.sigma2 * chi2_point(max(dropped, 1))


def fit_everything(model: ResidualModel, rng: Mapping[str, float], tol_log: np.ndarray) -> Fits:
    """Each part alone, each pair, every part together; what the data cannot tell apart; the scatter."""
    parts = model.parts
    n = len(parts)
    r_range = np.array([rng[p] for p in parts])
    lo, hi = np.log1p(-r_range), np.log1p(r_range)
    R = model.residual(np.zeros((1, n)))
    S0 = float(np.sum(R * R))

    # Each part alone: scan its range, then refine all of them together.
    grid = np.linspace(0.0, 1.0, 25)
    xs = lo[:, None] + (hi - lo)[:, None] * grid[None, :]  # (n, G)
    X = np.zeros((n * grid.size, n))
    X[np.arange(n * grid.size), np.repeat(np.arange(n), grid.size)] = xs.reshape(-1)
    Sg = model.sum_sq(X).reshape(n, grid.size)
    start = xs[np.arange(n), np.argmin(Sg, axis=1)][:, None]
    x1, S1, A1 = fit_subsets(model, np.arange(n)[:, None], start, lo, hi)

    # Pairs of parts (all at once), from the pair's one-part values.
    pairs = np.array(list(itertools.combinations(range(n), 2)), dtype=int).reshape(-1, 2)
    if pairs.size:
        x2, S2, A2 = fit_subsets(model, pairs, 0.5 * x1[pairs, 0], lo, hi)
    else:
        x2, S2, A2 = np.zeros((0, 2)), np.zeros(0), np.zeros((0, 2, 2))

    xf = fit_all_parts(model, lo, hi, tol_log, x1, S1, pairs, x2, S2)
    Rf = model.residual(xf[None, :])[0]
    Sf = float(np.sum(Rf * Rf))
    Sf = min(Sf, S0, float(S1.min()) if n else S0, float(S2.min()) if pairs.size else S0)

    # What the data can tell apart (central differences at the fit, scaled by tolerance).
    Xc = np.repeat(xf[None, :], 2 * n, axis=0)
    Xc[:n] += 1e-5 * np.eye(n)
    Xc[n:] -= 1e-5 * np.eye(n)
    rc = model.residual(Xc)
    J = ((rc[:n] - rc[n:]) / 2e-5).T
    groups, dirs, rank = confounded_groups(J, parts)

    # Statistics: scatter from the all-parts fit.
    dof = max(R.size - rank, 1)
    sigma2 = max(Sf / dof, 1e-30)
    return Fits(lo, hi, S0, x1, S1, A1, pairs, x2, S2, A2, xf, Sf, groups, dirs, rank, sigma2)


def fit_all_parts(model: ResidualModel, lo, hi, tol_log, x1, S1, pairs, x2, S2) -> np.ndarray:
    """Every part together (bounded least squares with the faint pull to the design), started
    from the best one- or two-part fit."""
    n = len(model.parts)
    prior_w = _PRIOR_DB / tol_log

    def fun(x):
        return np.concatenate([model.residual(x[None, :])[0], prior_w * x])

    def jac(x):
        X = np.repeat(x[None, :], n + 1, axis=0)
        X[1:] += _FD_STEP * np.eye(n)
        r = model.residual(X)
        J = ((r[1:] - r[0]) / _FD_STEP).T
        return np.vstack([J, np.diag(prior_w)])

    x_start = np.zeros(n)
    if pairs.size and S2.min() < S1.min():
        k = int(np.argmin(S2))
        x_start[pairs[k]] = x2[k]
    elif n:
        k = int(np.argmin(S1))
        x_start[k] = x1[k, 0]
    pad = 1e-9 * (hi - lo)
    x_start = np.clip(x_start, lo + pad, hi - pad)
    sol = scipy.optimize.least_squares(fun, x_start, jac=jac, bounds=(lo, hi), method="trf", x_scale=tol_log, xtol=1e-12, ftol=1e-12, gtol=1e-12, max_nfev=200)
    return sol.x


EDGE = 1e-6  # a log-change this close to its bound is at the edge of the range


def mag_rms(model: ResidualModel, x) -> np.ndarray:
    mag, _ = model.split(model.h(np.atleast_2d(x)))
    return np.sqrt(np.mean(mag * mag, axis=1))
