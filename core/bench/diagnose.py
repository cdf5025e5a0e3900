"""Which parts explain a measurement: fit a candidate's part values to a measured response.

Model and residual
------------------
The model is the candidate's transfer function (:func:`bandsmith.analysis.analyzer.transfer_function`, the
op-amp model given, ideal by default) at the measured frequencies. The parameters are the
natural logarithms of each fitted part's value over its design value, each bounded to
``[ln(1 − P), ln(1 + P)]`` for its range ``P`` (default: three times the usual tolerance of its
kind, R 1 %, C 5 %, L 10 %). The residual at each point is

- with phase, the complex log-ratio ``ln(H_model/H_measured)``: its real part is the magnitude
  error, its imaginary part the phase error (wrapped, so the phase reference of the file does not
  matter modulo 360°); both are written in dB (the phase in radians times 20/ln 10), so that
  1 dB of magnitude weighs as much as 6.6° of phase, the weights of the complex logarithm;
- without phase, the magnitude error in dB.

Fits
----
- Every fitted part together: :func:`scipy.optimize.least_squares` (``trf``, bounded), with the
  Jacobian by finite differences of all parts in one batched evaluation. A faint pull towards the
  design values (0.01 dB of residual per tolerance moved) decides the directions the data cannot
  see — several parts of a second-order band-pass are not separately identifiable, since its
  response has only three free figures — and costs nothing measurable elsewhere.
- Each part alone, and each pair of parts: every such fit at once, by a vectorised bounded
  Gauss–Newton (Levenberg–Marquardt damping) over a batch of sub-problems; one-part fits start from
  the best point of a scan across their range.

"Explains it": a fit with fewer parts explains the deviation when its sum of squares exceeds the
all-parts fit's by no more than the 99.9 % point of χ² (with as many degrees of freedom as
parameters dropped) times the scatter estimated from the all-parts fit; the same test against
the design values says whether there is anything to explain at all.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field
from typing import Mapping

import numpy as np
import scipy.optimize
import scipy.special

from bandsmith.analysis.analyzer import transfer_function
from bandsmith.design.candidate import Candidate
from bandsmith.common.errors import InputError
from bandsmith.analysis.figures import measure
from bandsmith.bench.measured import Measurement
from bandsmith.solver.mna import IDEAL, OpAmpModel, build_system
from bandsmith.solver.rational import reference_w
from bandsmith.bench.readoff import ReadOff, read_off_measurement
from bandsmith.spread.tolerance import DEFAULT_TOLERANCES  # the same part tolerances as the spread

__all__ = [
    "DEFAULT_TOLERANCES",
    "RANGE_FACTOR",
    "PartFit",
    "Diagnosis",
    "default_ranges",
    "diagnose",
]

RANGE_FACTOR = 3.0
DB_PER_NEPER = 20.0 / math.log(10.0)
_PRIOR_DB = 0.01  # residual (dB) per tolerance moved: the faint pull towards the design
_FD_STEP = 1e-6
# Rows × points evaluated at once by the model (bounds its temporaries to a few tens of MB).
_CHUNK_POINTS = 2_000_000
_CONFIDENCE = 0.999
_MISFIT_DB = 0.5  # common practice, no source: beyond this the model itself is in doubt
_NULL_RATIO = 1e-4


@dataclass(frozen=True, slots=True)
class PartFit:
    """One part fitted alone (the others at their design values), or one part of a pair fit.

    ``explained`` is the share of the deviation from the design (sum of squares) this part
    removes, relative to what every part together removes: 1 explains all of it.
    ``change_se_pct`` is the standard error of ``change_pct`` from the scatter left by the
    all-parts fit (linearised).
    """

    part: str
    value: float
    change_pct: float
    residual_db_rms: float
    explained: float
    at_bound: bool
    change_se_pct: float = math.nan

    def to_json(self) -> dict:
        se = float(self.change_se_pct)
        return {
            "part": self.part, "value": float(self.value), "change_pct": float(self.change_pct),
            "change_se_pct": se if math.isfinite(se) else None,
            "residual_db_rms": float(self.residual_db_rms), "explained_pct": float(100.0 * self.explained),
            "at_bound": bool(self.at_bound),
        }


@dataclass(frozen=True, slots=True)
class Diagnosis:
    """The fit of a candidate to a measurement and what it says.

    Attributes
    ----------
    topology_id : str
    mode : str
        ``"complex"`` (magnitude and phase) or ``"magnitude"``.
    measured : ReadOff
        f0, Q and centre gain read off the measurement.
    nominal : mapping
        Every part's design value.
    parts : tuple of str
        The parts fitted.
    ranges : mapping
        Each fitted part's allowed relative range (fraction).
    fitted : mapping
        Fitted values of the fitted parts (all together).
    change_pct : mapping
        Their change from the design, in %.
    at_bound : tuple of str
        Parts that ended at the edge of their range.
    residual_db_rms, residual_phase_deg_rms : float
        What the all-parts fit leaves (magnitude in dB rms; phase in degrees rms, NaN without phase).
    nominal_residual_db_rms, nominal_residual_phase_deg_rms : float
        The deviation of the design itself from the measurement.
    alone : tuple of PartFit
        One-part fits, best first.
    pair : tuple of PartFit or None
        The best two-part fit (each entry its part's value in that fit).
    confounded : tuple of tuple of str
        Groups of fitted parts the measurement cannot tell apart.
    verdict : str
        ``matches``, ``one-part``, ``mostly-one-part``, ``two-parts`` or ``several``.
    summary : str
        The diagnosis in plain words.
    explanation : mapping
        The change (%) of each part in the fewest-parts explanation the verdict names (empty for
        ``matches``; the all-parts fit for ``several``).
    notes : tuple of str
    design_figures, fitted_figures : dict
        FIGURES (CONTRACT.md) of the model with the design and with the fitted values.
    """

    topology_id: str
    mode: str
    measured: ReadOff
    nominal: Mapping[str, float]
    parts: tuple[str, ...]
    ranges: Mapping[str, float]
    fitted: Mapping[str, float]
    change_pct: Mapping[str, float]
    at_bound: tuple[str, ...]
    residual_db_rms: float
    residual_phase_deg_rms: float
    nominal_residual_db_rms: float
    nominal_residual_phase_deg_rms: float
    alone: tuple[PartFit, ...]
    pair: tuple[PartFit, PartFit] | None
    confounded: tuple[tuple[str, ...], ...]
    verdict: str
    summary: str
    explanation: Mapping[str, float] = field(default_factory=dict)
    notes: tuple[str, ...] = ()
    design_figures: dict = field(default_factory=dict)
    fitted_figures: dict = field(default_factory=dict)

    @property
    def fitted_values(self) -> dict[str, float]:
        """Every part: the fitted value where fitted, else the design value."""
        out = dict(self.nominal)
        out.update(self.fitted)
        return out

    def to_json(self) -> dict:
        """CONTRACT's FIT object (see ``bandsmith fit``)."""

        def f(x):
            return float(x) if math.isfinite(x) else None

        return {
            "topology": self.topology_id,
            "mode": self.mode,
            "measured": self.measured.to_json(),
            "nominal": {k: float(v) for k, v in self.nominal.items()},
            "parts": list(self.parts),
            "range_pct": {k: round(100.0 * float(v), 9) for k, v in self.ranges.items()},
            "fitted": {k: float(v) for k, v in self.fitted.items()},
            "change_pct": {k: float(v) for k, v in self.change_pct.items()},
            "at_bound": list(self.at_bound),
            "alone": [a.to_json() for a in self.alone],
            "pair": None if self.pair is None else [a.to_json() for a in self.pair],
            "confounded": [list(g) for g in self.confounded],
            "residual_db_rms": f(self.residual_db_rms),
            "residual_phase_deg_rms": f(self.residual_phase_deg_rms),
            "nominal_residual_db_rms": f(self.nominal_residual_db_rms),
            "nominal_residual_phase_deg_rms": f(self.nominal_residual_phase_deg_rms),
            "verdict": self.verdict,
            "summary": self.summary,
            "explanation_pct": {k: float(v) for k, v in self.explanation.items()},
            "notes": list(self.notes),
            "design_figures": self.design_figures,
            "fitted_figures": self.fitted_figures,
        }


def default_ranges(
    candidate: Candidate, parts: tuple[str, ...], tolerances: Mapping[str, float] | None = None
) -> dict[str, float]:
    """Each part's range: ``RANGE_FACTOR`` × the tolerance of its kind (R 1 %, C 5 %, L 10 %)."""
    tol = dict(DEFAULT_TOLERANCES)
    tol.update(tolerances or {})
    topo = candidate.topology
    return {r: min(RANGE_FACTOR * tol[topo.component(r).kind], 0.95) for r in parts}


class _Model:
    """Residuals of many parameter sets at once (one batched transfer-function evaluation)."""

    def __init__(self, candidate: Candidate, m: Measurement, parts: tuple[str, ...], opamp: OpAmpModel, mode: str):
        self.netlist = candidate.netlist
        self.nominal = np.array([candidate.values[p] for p in parts], dtype=float)
        self.parts = parts
        self.opamp = opamp
        self.f = m.f_hz
        self.mode = mode
        self.w_ref = reference_w(build_system(self.netlist))
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


def _fit_subsets(model: _Model, subsets: np.ndarray, x0: np.ndarray, lo: np.ndarray, hi: np.ndarray, iters: int = 40):
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


def _se_pct(x: np.ndarray, A: np.ndarray, sigma2: float) -> list[float]:
    """Standard errors (in % of the part) of log-changes ``x`` from their Gauss–Newton matrix."""
    try:
        cov = sigma2 * np.linalg.inv(A)
    except np.linalg.LinAlgError:
        return [math.nan] * len(x)
    d = np.diag(cov)
    return [float(100.0 * math.exp(xi) * math.sqrt(v)) if v >= 0 and math.isfinite(v) else math.nan for xi, v in zip(x, d)]


def _chi2(dof: int) -> float:
    """The ``_CONFIDENCE`` point of χ² with ``dof`` degrees of freedom."""
    return float(scipy.special.chdtri(dof, 1.0 - _CONFIDENCE))


def _rms(a: np.ndarray) -> float:
    return float(np.sqrt(np.mean(a * a)))


def _pct_words(pct: float) -> str:
    a = abs(pct)
    num = f"{a:.0f}" if a >= 9.5 else f"{a:.1f}".rstrip("0").rstrip(".")
    if num == "0":
        num = f"{a:.2f}".rstrip("0").rstrip(".")
    return f"about {num} % {'high' if pct > 0 else 'low'}"


def _confounded(J: np.ndarray, parts: tuple[str, ...]) -> tuple[tuple[tuple[str, ...], ...], list[np.ndarray], int]:
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


def _null_words(group: tuple[str, ...], dirs: list[np.ndarray], parts: tuple[str, ...]) -> str:
    idx = [parts.index(p) for p in group]
    names = " and ".join([", ".join(group[:-1]), group[-1]]) if len(group) > 1 else group[0]
    if len(dirs) == 1:
        v = dirs[0][idx]
        big = np.abs(v) > 1e-3 * np.max(np.abs(v))
        if np.all(big) and np.allclose(np.abs(v), np.abs(v[0]), rtol=0.05):
            up = [p for p, c in zip(group, v) if c > 0]
            down = [p for p, c in zip(group, v) if c < 0]
            if len(up) > len(down):
                up, down = down, up

            def join(xs):
                return " and ".join([", ".join(xs[:-1]), xs[-1]]) if len(xs) > 1 else xs[0]

            return (
                f"{names} are not separately identifiable: raising {join(up)} and lowering {join(down)} by the same "
                f"factor leaves the response unchanged, so the fit over all of them picks the smallest such change"
            )
    return (
        f"{names} are not separately identifiable: the response fixes fewer combinations of them than there are "
        f"parts, so the fit over all of them picks the smallest change that fits"
    )


def diagnose(
    candidate: Candidate,
    measurement: Measurement,
    *,
    parts: tuple[str, ...] | list[str] | None = None,
    ranges: float | Mapping[str, float] | None = None,
    tolerances: Mapping[str, float] | None = None,
    opamp: OpAmpModel | None = None,
    use_phase: bool = True,
) -> Diagnosis:
    """Fit a candidate's part values to a measurement and rank the parts that explain it.

    Parameters
    ----------
    candidate : Candidate
        The design the board was built from.
    measurement : Measurement
        The measured response.
    parts : sequence of str, optional
        Parts to fit; by default every part whose value is above zero.
    ranges : float or mapping, optional
        Allowed relative change (fraction, below 1), for all parts or by reference; by default
        ``RANGE_FACTOR`` × the tolerance of each part's kind.
    tolerances : mapping, optional
        Tolerance by kind (``{"R": 0.01, "C": 0.05, "L": 0.1}``) for the default ranges.
    opamp : OpAmpModel, optional
        The op-amp model; ideal by default.
    use_phase : bool
        Fit the complex response where the measurement has phase (default), else magnitude only.
    """
    topo = candidate.topology
    values = dict(candidate.values)
    notes: list[str] = []
    if parts is None:
        parts = tuple(r for r in topo.refs if values.get(r, 0.0) > 0)
        zero = [r for r in topo.refs if values.get(r, 0.0) <= 0]
        if zero:
            notes.append(f"{', '.join(zero)} {'is' if len(zero) == 1 else 'are'} zero in the design and not fitted")
    else:
        parts = tuple(dict.fromkeys(p.strip() for p in parts if p.strip()))
        if not parts:
            raise InputError("parts", "no part named; give references such as C1,R2")
        for p in parts:
            if p not in topo.refs:
                raise InputError("parts", f"{p!r} is not a part of {topo.id}; its parts are {', '.join(topo.refs)}")
            if values.get(p, 0.0) <= 0:
                raise InputError("parts", f"{p} is zero in the design; a part at zero cannot be fitted as a relative change")
    if measurement.points < len(parts) + 2:
        raise InputError("measured", f"{measurement.points} points are too few to fit {len(parts)} parts")
    tol = dict(DEFAULT_TOLERANCES)
    for k, v in (tolerances or {}).items():
        if k not in tol:
            raise InputError("tol", f"{k!r} is not a part kind; use R, C or L")
        if not (math.isfinite(v) and v > 0):
            raise InputError(f"tol {k}", "must be above zero")
        tol[k] = float(v)
    if ranges is None:
        rng = default_ranges(candidate, parts, tol)
    elif isinstance(ranges, Mapping):
        rng = default_ranges(candidate, parts, tol)
        for k, v in ranges.items():
            if k not in parts:
                raise InputError("range", f"{k!r} is not one of the fitted parts ({', '.join(parts)})")
            rng[k] = float(v)
    else:
        rng = {p: float(ranges) for p in parts}
    for k, v in rng.items():
        if not (math.isfinite(v) and 0 < v < 1):
            raise InputError("range", f"must be above 0 % and below 100 %, got {100 * v:g} % for {k}")

    mode = "complex" if (use_phase and measurement.has_phase) else "magnitude"
    op = opamp if opamp is not None else IDEAL
    model = _Model(candidate, measurement, parts, op, mode)
    if mode == "complex":
        _, ph0 = model.split(model.h(np.zeros((1, len(parts)))))
        off = float(np.degrees(np.median(ph0)))
        if abs(off) > 90.0:
            notes.append(
                f"the measured phase is about {off:+.0f}° away from the design's (an instrument's phase reference or "
                f"an inverted connection?): fitted on the magnitude only"
            )
            mode = "magnitude"
            model = _Model(candidate, measurement, parts, op, mode)

    n = len(parts)
    r_range = np.array([rng[p] for p in parts])
    lo, hi = np.log1p(-r_range), np.log1p(r_range)
    tol_log = np.array([math.log1p(tol[topo.component(p).kind]) for p in parts])
    R = model.residual(np.zeros((1, n)))
    S0 = float(np.sum(R * R))

    # Each part alone: scan its range, then refine all of them together.
    grid = np.linspace(0.0, 1.0, 25)
    xs = lo[:, None] + (hi - lo)[:, None] * grid[None, :]  # (n, G)
    X = np.zeros((n * grid.size, n))
    X[np.arange(n * grid.size), np.repeat(np.arange(n), grid.size)] = xs.reshape(-1)
    Sg = model.sum_sq(X).reshape(n, grid.size)
    start = xs[np.arange(n), np.argmin(Sg, axis=1)][:, None]
    x1, S1, A1 = _fit_subsets(model, np.arange(n)[:, None], start, lo, hi)

    # Pairs of parts (all at once), from the pair's one-part values.
    pairs = np.array(list(itertools.combinations(range(n), 2)), dtype=int).reshape(-1, 2)
    if pairs.size:
        x2, S2, A2 = _fit_subsets(model, pairs, 0.5 * x1[pairs, 0], lo, hi)
    else:
        x2, S2, A2 = np.zeros((0, 2)), np.zeros(0), np.zeros((0, 2, 2))

    # Every part together, from the best fit so far.
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
    xf = sol.x
    Rf = model.residual(xf[None, :])[0]
    Sf = float(np.sum(Rf * Rf))
    Sf = min(Sf, S0, float(S1.min()) if n else S0, float(S2.min()) if pairs.size else S0)

    # What the data can tell apart (central differences at the fit, scaled by tolerance).
    Xc = np.repeat(xf[None, :], 2 * n, axis=0)
    Xc[:n] += 1e-5 * np.eye(n)
    Xc[n:] -= 1e-5 * np.eye(n)
    rc = model.residual(Xc)
    J = ((rc[:n] - rc[n:]) / 2e-5).T
    groups, dirs, rank = _confounded(J, parts)

    # Statistics: scatter from the all-parts fit.
    n_res = R.size
    dof = max(n_res - rank, 1)
    sigma2 = max(Sf / dof, 1e-30)

    def explains(S, dropped):
        return S - Sf <= sigma2 * _chi2(max(dropped, 1))

    deviation = max(S0 - Sf, 1e-300)

    def mag_rms(x):
        mag, _ = model.split(model.h(np.atleast_2d(x)))
        return np.sqrt(np.mean(mag * mag, axis=1))

    X1 = np.zeros((n, n))
    X1[np.arange(n), np.arange(n)] = x1[:, 0]
    rms1 = mag_rms(X1)
    edge = 1e-6
    alone = [
        PartFit(
            part=parts[j],
            value=float(values[parts[j]] * math.exp(x1[j, 0])),
            change_pct=float(100.0 * math.expm1(x1[j, 0])),
            residual_db_rms=float(rms1[j]),
            explained=float(np.clip((S0 - S1[j]) / deviation, 0.0, 1.0)),
            at_bound=bool(x1[j, 0] <= lo[j] + edge or x1[j, 0] >= hi[j] - edge),
            change_se_pct=_se_pct(x1[j], A1[j], sigma2)[0],
        )
        for j in range(n)
    ]
    order = np.argsort(S1, kind="stable")
    alone = [alone[j] for j in order]
    S1_sorted = S1[order]

    best_pair = None
    if pairs.size:
        k = int(np.argmin(S2))
        Xp = np.zeros((1, n))
        Xp[0, pairs[k]] = x2[k]
        prms = float(mag_rms(Xp)[0])
        se2 = _se_pct(x2[k], A2[k], sigma2)
        best_pair = tuple(
            PartFit(
                part=parts[j], value=float(values[parts[j]] * math.exp(x2[k, c])), change_pct=float(100.0 * math.expm1(x2[k, c])),
                residual_db_rms=prms, explained=float(np.clip((S0 - S2[k]) / deviation, 0.0, 1.0)),
                at_bound=bool(x2[k, c] <= lo[j] + edge or x2[k, c] >= hi[j] - edge),
                change_se_pct=se2[c],
            )
            for c, j in enumerate(pairs[k])
        )

    mag_f, ph_f = model.split(model.h(xf[None, :]))
    mag_0, ph_0 = model.split(model.h(np.zeros((1, n))))
    res_db, res_ph = _rms(mag_f), (float(np.degrees(_rms(ph_f))) if ph_f is not None else math.nan)
    nom_db, nom_ph = _rms(mag_0), (float(np.degrees(_rms(ph_0))) if ph_0 is not None else math.nan)
    at_bound = tuple(parts[j] for j in range(n) if xf[j] <= lo[j] + edge or xf[j] >= hi[j] - edge)
    fitted = {p: float(values[p] * math.exp(xf[j])) for j, p in enumerate(parts)}
    change = {p: float(100.0 * math.expm1(xf[j])) for j, p in enumerate(parts)}

    # The words.
    scatter = f"{res_db:.2g} dB rms" + (f" and {res_ph:.2g}° rms" if math.isfinite(res_ph) else "")
    sentences: list[str] = []
    if S0 - Sf <= sigma2 * _chi2(max(rank, 1)):
        verdict = "matches"
        explanation = {}
        sentences.append(
            f"The measurement matches the design within its scatter ({nom_db:.2g} dB rms from the design); "
            f"no part needs to be blamed."
        )
    elif n and explains(S1_sorted[0], rank - 1):
        verdict = "one-part"
        a = alone[0]
        explanation = {a.part: a.change_pct}
        sentences.append(f"{a.part} {_pct_words(a.change_pct)} explains it: alone it leaves {a.residual_db_rms:.2g} dB rms, as little as every part free.")
        rivals = [b for b, S in zip(alone[1:], S1_sorted[1:]) if explains(S, rank - 1)]
        if rivals:
            alt = "; ".join(f"{b.part} {_pct_words(b.change_pct)}" for b in rivals[:3])
            sentences.append(f"Equally well: {alt} — the measurement cannot tell these apart; check those parts first.")
    elif best_pair is not None and explains(float(S2.min()), rank - 2):
        verdict = "two-parts"
        a, b = best_pair
        explanation = {a.part: a.change_pct, b.part: b.change_pct}
        lead = alone[0]
        sentences.append(
            f"{a.part} {_pct_words(a.change_pct)} together with {b.part} {_pct_words(b.change_pct)} explain it "
            f"({a.residual_db_rms:.2g} dB rms); no single part does: the best alone, {lead.part} "
            f"{_pct_words(lead.change_pct)}, leaves {lead.residual_db_rms:.2g} dB rms."
        )
        rivals = [tuple(parts[j] for j in pairs[k]) for k in np.argsort(S2)[1:4] if explains(float(S2[k]), rank - 2)]
        if rivals:
            sentences.append("Other pairs fit as well: " + "; ".join(" with ".join(p) for p in rivals) + ".")
    elif n and alone[0].explained >= 0.8:
        verdict = "mostly-one-part"
        a = alone[0]
        explanation = {a.part: a.change_pct}
        sentences.append(f"{a.part} {_pct_words(a.change_pct)} explains most of it ({100 * a.explained:.0f} % of the deviation); the rest needs more parts.")
    else:
        verdict = "several"
        explanation = dict(change)
        moved = sorted(parts, key=lambda p: -abs(change[p]))
        txt = ", ".join(f"{p} {change[p]:+.1f} %" for p in moved[:4])
        sentences.append(f"No one or two parts explain it; with every part free the fit moves {txt} ({scatter}).")
    if verdict != "matches" and groups:
        for g in groups:
            sentences.append(_null_words(g, dirs, parts) + ".")
    if res_db > _MISFIT_DB:
        sentences.append(
            f"Even with every part free the model leaves {res_db:.2g} dB rms: the board may differ from the design in "
            f"more than part values (the op-amp, a wrong or missing part, wiring, or the measurement set-up)."
        )
    if verdict != "matches" and at_bound:
        sentences.append(
            f"{', '.join(at_bound)} reached the edge of {'its' if len(at_bound) == 1 else 'their'} allowed range; widen the range if "
            f"{'it' if len(at_bound) == 1 else 'they'} may be further off."
        )
    if measurement.points < 20:
        notes.append(f"only {measurement.points} points: the fit is only as good as the sweep is dense")

    h_design = transfer_function(candidate.netlist, op, w_ref=model.w_ref)
    h_fit = transfer_function(candidate.netlist, op, overrides={p: np.array([fitted[p]]) for p in parts}, w_ref=model.w_ref)
    return Diagnosis(
        topology_id=topo.id,
        mode=mode,
        measured=read_off_measurement(measurement),
        nominal=values,
        parts=parts,
        ranges=rng,
        fitted=fitted,
        change_pct=change,
        at_bound=at_bound,
        residual_db_rms=res_db,
        residual_phase_deg_rms=res_ph,
        nominal_residual_db_rms=nom_db,
        nominal_residual_phase_deg_rms=nom_ph,
        alone=tuple(alone),
        pair=best_pair,
        confounded=groups,
        verdict=verdict,
        summary=" ".join(sentences),
        explanation=explanation,
        notes=tuple(notes),
        design_figures=measure(h_design).to_json(),
        fitted_figures=measure(h_fit).to_json(),
    )
