"""Tolerance spread of a candidate: Monte Carlo trials, yield and the worst case.

Every part varies by its tolerance — per kind (R, C, L) with per-part overrides — and the op-amp's
GBW by its own spread:

- ``uniform``: value·(1 + U(−p, p));
- ``normal``: value·(1 + N(0, p/3)), so that the tolerance is three standard deviations.

The trials are drawn from a seeded :class:`numpy.random.Generator` in fixed chunks of
:data:`CHUNK` trials, one column per part with a value above zero (netlist order, an inductor's
winding resistance after it) and one for the GBW, so the same seed gives the same numbers whatever
the op-amp. Each chunk is evaluated in one batched call: through :class:`bandsmith.solver.expansion.Expansion`
(the transfer-function coefficients as polynomials in the part values) where the netlist allows,
otherwise through the MNA solver (:func:`bandsmith.analysis.analyzer.transfer_function`). No Python loop runs per
trial.

The figures of a trial are those of :mod:`bandsmith.analysis.figures`. A second-order band-pass
``b1·p/(a2·p² + a1·p + a0)`` (any circuit here with an ideal op-amp) has them in closed form —
``ω0 = √(a0/a2)``, ``Q = √(a0·a2)/|a1|``, centre gain ``b1/a1`` and ``−3 dB`` points
``ω0·(√(1 + 1/(4Q²)) ∓ 1/(2Q))``, the same values :func:`bandsmith.analysis.figures.measure` finds — otherwise
they are measured on a search grid of each trial's own, centred on the first-order estimate of its
f0 and as wide as three times its estimated half-bandwidth (robust from Q = 0.5 to beyond 100); a
trial whose measurement lands away from its estimate is measured again with the global search of
:func:`bandsmith.analysis.figures.measure`.

A trial passes when it is stable (Routh–Hurwitz on its denominator), its figures are defined and
its f0, Q and centre gain lie within the window (±P, ±P, ±D dB) around the nominal figures, which
are computed with the same op-amp model as the trials. Unstable trials and trials without a peak
count as failures, never as errors.

The worst case evaluates every corner of the tolerance box (each varying part at ±p) when at most
:data:`MAX_CORNER_PARTS` quantities vary — one batched call of 2^n corners — and otherwise the
corners the sensitivities point to (each part pushed in the direction that raises, or lowers, the
figure).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields
from types import MappingProxyType
from typing import Any, Callable, Mapping

import numpy as np

from bandsmith.analysis.analyzer import Tolerances, transfer_function, within_tolerances
from bandsmith.common.errors import InputError
from bandsmith.solver.expansion import Expansion, ExpansionUnavailable, Variable, circuit_variables
from bandsmith.analysis.figures import Figures, measure
from bandsmith.solver.mna import IDEAL, OpAmpModel, build_system
from bandsmith.solver.netlist import Netlist
from bandsmith.solver.rational import Rational, reference_w

__all__ = [
    "DEFAULT_TOLERANCES",
    "DISTRIBUTIONS",
    "STAT_KEYS",
    "CHUNK",
    "MAX_CORNER_PARTS",
    "SpreadSettings",
    "SpreadCancelled",
    "WorstCase",
    "Spread",
    "Envelope",
    "part_tolerances",
    "run_spread",
    "worst_case",
    "sample_parts",
    "magnitude_envelope",
    "stats",
    "hurwitz_stable",
]

#: Tolerances by kind when none is given (fractions): resistors 1 %, capacitors 5 %, inductors 10 %.
DEFAULT_TOLERANCES = MappingProxyType({"R": 0.01, "C": 0.05, "L": 0.10})
KINDS = ("R", "C", "L")
DISTRIBUTIONS = ("uniform", "normal")
STAT_KEYS = ("mean", "std", "min", "p1", "p5", "p50", "p95", "p99", "max")
#: Trials drawn and evaluated together (keeps the peak memory of a large run modest).
CHUNK = 20_000
#: Up to this many varying quantities every corner of the tolerance box is evaluated.
MAX_CORNER_PARTS = 12
MAX_TOLERANCE = 0.5
MAX_TRIALS = 5_000_000
_GRID_POINTS = 49
_SENS_STEP = 1e-4
_WIDE_CHUNK = 256


# ---------------------------------------------------------------------------------------------
# Settings
# ---------------------------------------------------------------------------------------------
def _fraction(value: Any, field_name: str, *, upper: float | None = None, positive: bool = False) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.floating, np.integer)):
        raise InputError(field_name, f"{value!r} is not a number")
    v = float(value)
    if not math.isfinite(v) or v < 0 or (positive and v == 0):
        raise InputError(field_name, f"must be a finite number {'above' if positive else 'of'} zero{'' if positive else ' or more'}, got {v!r}")
    if upper is not None and v > upper:
        raise InputError(field_name, f"{100 * v:g} % is beyond a part tolerance; at most {100 * upper:g} %")
    return v


def _whole(value: Any, field_name: str, *, low: int, high: int) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        if isinstance(value, float) and value.is_integer():
            value = int(value)
        else:
            raise InputError(field_name, f"{value!r} is not a whole number")
    v = int(value)
    if not low <= v <= high:
        raise InputError(field_name, f"must be a whole number from {low} to {high}, got {v}")
    return v


@dataclass(frozen=True, slots=True)
class SpreadSettings:
    """How a tolerance spread is run (stored by the window under ``extras["spread"]``).

    Parameters
    ----------
    tolerances : mapping
        Fractions (0.01 = 1 %) by kind (``"R"``, ``"C"``, ``"L"``) or by part reference
        (``"C2"``); a reference wins over its kind. Kinds not given keep
        :data:`DEFAULT_TOLERANCES`. An inductor's winding resistance (``RL``) is a resistor.
        At most 50 %.
    gbw_tol : float
        Fractional spread of the op-amp's GBW (needs a finite op-amp when above zero).
    dist : {"uniform", "normal"}
        ``uniform``: value·(1 + U(−p, p)); ``normal``: value·(1 + N(0, p/3)).
    trials : int
        Number of Monte Carlo trials, 1 to 5 000 000.
    seed : int
        Seed of the random generator (0 or more); the same seed gives the same numbers.
    window_f0, window_q : float
        Yield window: the largest relative deviation of f0 and Q from nominal (fractions, > 0;
        defaults ±5 % and ±10 %).
    window_gain_db : float
        Yield window for the centre gain in dB (> 0; default ±1 dB).
    """

    tolerances: Mapping[str, float] = field(default_factory=lambda: dict(DEFAULT_TOLERANCES))
    gbw_tol: float = 0.0
    dist: str = "uniform"
    trials: int = 10_000
    seed: int = 1
    window_f0: float = 0.05
    window_q: float = 0.10
    window_gain_db: float = 1.0

    def __post_init__(self):
        if not isinstance(self.tolerances, Mapping):
            raise InputError("tol", "must map kinds or part references to fractions")
        merged = dict(DEFAULT_TOLERANCES)
        for key, p in self.tolerances.items():
            if not isinstance(key, str) or not key.strip():
                raise InputError("tol", f"{key!r} is not a kind (R, C, L) or a part reference")
            merged[key.strip()] = _fraction(p, f"tol {key.strip()}", upper=MAX_TOLERANCE)
        object.__setattr__(self, "tolerances", MappingProxyType(dict(sorted(merged.items()))))
        object.__setattr__(self, "gbw_tol", _fraction(self.gbw_tol, "gbw-tol", upper=MAX_TOLERANCE))
        if self.dist not in DISTRIBUTIONS:
            raise InputError("dist", f"{self.dist!r} is not a distribution; choose uniform or normal")
        object.__setattr__(self, "trials", _whole(self.trials, "trials", low=1, high=MAX_TRIALS))
        object.__setattr__(self, "seed", _whole(self.seed, "seed", low=0, high=2**63 - 1))
        object.__setattr__(self, "window_f0", _fraction(self.window_f0, "window-f0", positive=True))
        object.__setattr__(self, "window_q", _fraction(self.window_q, "window-q", positive=True))
        object.__setattr__(self, "window_gain_db", _fraction(self.window_gain_db, "window-gain-db", positive=True))

    def __hash__(self):
        return hash((tuple(self.tolerances.items()), self.gbw_tol, self.dist, self.trials, self.seed, self.window_f0, self.window_q, self.window_gain_db))

    @property
    def window(self) -> Tolerances:
        """The yield window as :class:`bandsmith.analysis.analyzer.Tolerances`."""
        return Tolerances(f0=self.window_f0, q=self.window_q, gain_db=self.window_gain_db)

    def to_json(self) -> dict:
        """A plain JSON object (the session's ``extras["spread"]``)."""
        return {
            "tolerances": {k: float(v) for k, v in self.tolerances.items()},
            "gbw_tol": float(self.gbw_tol),
            "dist": self.dist,
            "trials": int(self.trials),
            "seed": int(self.seed),
            "window": {"f0": float(self.window_f0), "q": float(self.window_q), "gain_db": float(self.window_gain_db)},
        }

    @classmethod
    def from_json(cls, obj: Any) -> "SpreadSettings":
        """Read :meth:`to_json`'s object back; missing keys take their defaults.

        Raises
        ------
        InputError
            For a value of the wrong type or out of range, or an unknown key (field ``spread``
            or the setting's own name).
        """
        if not isinstance(obj, Mapping):
            raise InputError("spread", "the spread settings must be a JSON object")
        known = {"tolerances", "gbw_tol", "dist", "trials", "seed", "window"}
        extra = set(obj) - known
        if extra:
            raise InputError("spread", f"unknown setting {sorted(extra)[0]!r}")
        kw: dict[str, Any] = {}
        if "tolerances" in obj:
            if not isinstance(obj["tolerances"], Mapping):
                raise InputError("spread", "tolerances must be a JSON object")
            kw["tolerances"] = dict(obj["tolerances"])
        for key in ("gbw_tol", "dist", "trials", "seed"):
            if key in obj:
                kw[key] = obj[key]
        if "window" in obj:
            w = obj["window"]
            if not isinstance(w, Mapping) or set(w) - {"f0", "q", "gain_db"}:
                raise InputError("spread", "window must be an object with f0, q and gain_db")
            for key, name in (("f0", "window_f0"), ("q", "window_q"), ("gain_db", "window_gain_db")):
                if key in w:
                    kw[name] = w[key]
        if "dist" in kw and not isinstance(kw["dist"], str):
            raise InputError("dist", f"{kw['dist']!r} is not a distribution; choose uniform or normal")
        return cls(**kw)


class SpreadCancelled(Exception):
    """Raised by :func:`run_spread` when its ``cancel`` callback asks it to stop."""


# ---------------------------------------------------------------------------------------------
# Results
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class WorstCase:
    """Extreme figures over the corners of the tolerance box.

    Attributes
    ----------
    method : str
        ``"all corners"``, ``"sensitivity corners"`` or ``"nominal"`` (nothing varies).
    corner_count : int
        Corners evaluated.
    f0_hz, q, gain_center_db : tuple of float
        ``(lowest, highest)`` over the stable corners (NaN when none is).
    corners : mapping
        For each of ``"f0_hz"``, ``"q"``, ``"gain_center_db"``: the ``(lowest, highest)`` corners,
        each a mapping of part reference (and ``"gbw"``) to its signed deviation (fraction).
    unstable_corners : int
        Corners whose circuit is unstable or has no band-pass peak.
    """

    method: str
    corner_count: int
    f0_hz: tuple[float, float]
    q: tuple[float, float]
    gain_center_db: tuple[float, float]
    corners: Mapping[str, tuple[Mapping[str, float], Mapping[str, float]]]
    unstable_corners: int = 0

    def to_json(self) -> dict:
        return {
            "f0_hz": [float(v) for v in self.f0_hz],
            "q": [float(v) for v in self.q],
            "gain_center_db": [float(v) for v in self.gain_center_db],
            "corners": {k: [dict(lo), dict(hi)] for k, (lo, hi) in self.corners.items()},
            "method": self.method,
            "corner_count": int(self.corner_count),
            "unstable_corners": int(self.unstable_corners),
        }


@dataclass(frozen=True, slots=True)
class Spread:
    """A finished Monte Carlo run.

    Attributes
    ----------
    settings : SpreadSettings
    tolerances : mapping
        The fraction applied to each part (reference → p), parts with a value above zero.
    opamp : OpAmpModel
        The nominal op-amp of the trials.
    nominal : Figures
        Nominal figures (batch of one), same op-amp model.
    f0_hz, q, gain_center, gain_center_db : ndarray
        Per-trial figures, shape ``(trials,)``; NaN where a trial has no peak.
    measured : ndarray of bool
        Trials that are stable and have every figure defined.
    passed : ndarray of bool
        Trials within the window (implies ``measured``).
    worst : WorstCase
    method : str
        ``"expansion"`` or ``"solver"``: how the trials were evaluated.
    values : mapping or None
        The sampled values by part reference (and ``"gbw"``), when asked for.
    """

    settings: SpreadSettings
    tolerances: Mapping[str, float]
    opamp: OpAmpModel
    nominal: Figures
    f0_hz: np.ndarray
    q: np.ndarray
    gain_center: np.ndarray
    gain_center_db: np.ndarray
    measured: np.ndarray
    passed: np.ndarray
    worst: WorstCase
    method: str
    values: Mapping[str, np.ndarray] | None = None

    @property
    def yield_fraction(self) -> float:
        """Share of all trials that pass (failures to measure count as failing)."""
        return float(np.count_nonzero(self.passed)) / float(self.passed.size)

    @property
    def failed_trials(self) -> int:
        """Trials that are unstable or without a band-pass peak."""
        return int(self.measured.size - np.count_nonzero(self.measured))

    def stats(self, name: str) -> dict[str, float]:
        """:data:`STAT_KEYS` of a figure (``"f0_hz"``, ``"q"``, ``"gain_center_db"``) over measured trials."""
        return stats(getattr(self, name)[self.measured])

    def to_json(self) -> dict:
        """CONTRACT's tolerance object (issue 5), with a few keys more."""
        s = self.settings
        return {
            "trials": int(s.trials),
            "seed": int(s.seed),
            "dist": s.dist,
            "tolerances": {k: float(v) for k, v in self.tolerances.items()},
            "gbw_tol": float(s.gbw_tol) if not self.opamp.ideal else None,
            "opamp": self.opamp.to_json(),
            "nominal": self.nominal.to_json(),
            "f0_hz": self.stats("f0_hz"),
            "q": self.stats("q"),
            "gain_center_db": self.stats("gain_center_db"),
            "window": {"f0": float(s.window_f0), "q": float(s.window_q), "gain_db": float(s.window_gain_db)},
            "yield": self.yield_fraction,
            "passed_trials": int(np.count_nonzero(self.passed)),
            "failed_trials": self.failed_trials,
            "worst_case": self.worst.to_json(),
            "method": self.method,
        }


@dataclass(frozen=True, slots=True)
class Envelope:
    """Percentiles of the magnitude over trials: ``magnitude_db[i]`` is percentile ``percentiles[i]``."""

    f_hz: np.ndarray
    percentiles: tuple[float, ...]
    magnitude_db: np.ndarray
    trials: int


def stats(x: np.ndarray) -> dict[str, float]:
    """Mean, sample standard deviation, extremes and percentiles 1, 5, 50, 95, 99 of the finite values.

    NaN throughout when no value is finite.
    """
    x = np.asarray(x, dtype=float)
    x = x[np.isfinite(x)]
    if x.size == 0:
        return {k: math.nan for k in STAT_KEYS}
    p = np.percentile(x, [1.0, 5.0, 50.0, 95.0, 99.0])
    return {
        "mean": float(np.mean(x)),
        "std": float(np.std(x, ddof=1)) if x.size > 1 else 0.0,
        "min": float(np.min(x)),
        "p1": float(p[0]),
        "p5": float(p[1]),
        "p50": float(p[2]),
        "p95": float(p[3]),
        "p99": float(p[4]),
        "max": float(np.max(x)),
    }


# ---------------------------------------------------------------------------------------------
# Stability and figures of a batch
# ---------------------------------------------------------------------------------------------
def hurwitz_stable(den: np.ndarray) -> np.ndarray:
    """True where every root of the polynomial lies in the open left half-plane (Routh–Hurwitz).

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


def _closed_form(num: np.ndarray, den: np.ndarray, w_ref: float) -> tuple[Figures, np.ndarray]:
    """Figures of ``b1·p/(a2·p² + a1·p + a0)`` (rows of ``num``, ``den`` lowest power first)."""
    b1 = num[0]
    a0, a1, a2 = den[0], den[1], den[2]
    with np.errstate(invalid="ignore", divide="ignore"):
        stable = ((a0 > 0) & (a1 > 0) & (a2 > 0)) | ((a0 < 0) & (a1 < 0) & (a2 < 0))
        ratio = a0 / a2
        x0 = np.sqrt(np.where(ratio > 0, ratio, np.nan))
        q = x0 * np.abs(a2 / a1)
        f0 = x0 * (w_ref / (2.0 * math.pi))
        gain = b1 / a1
        half = 1.0 / (2.0 * q)
        root = np.sqrt(1.0 + half * half)
        mag = np.abs(gain)
        fig = Figures(
            f0_hz=f0,
            q=q,
            bw_hz=f0 / q,
            f_low_hz=f0 * (root - half),
            f_high_hz=f0 * (root + half),
            gain_center=gain,
            gain_center_db=20.0 * np.log10(np.where(mag > 0, mag, np.nan)),
            phase_center_deg=np.where(np.isfinite(gain), np.where(gain < 0, 180.0, 0.0), np.nan),
        )
    return fig, stable & np.isfinite(q) & np.isfinite(gain)


def _put(fig: Figures, idx: np.ndarray, part: Figures) -> Figures:
    out = {}
    for f in fields(Figures):
        a = np.array(getattr(fig, f.name), dtype=float)
        a[idx] = getattr(part, f.name)
        out[f.name] = a
    return Figures(**out)


def _measure_wide(h: Rational) -> Figures:
    """:func:`measure` with its default (global) search, a few hundred members at a time."""
    parts = []
    for start in range(0, h.batch, _WIDE_CHUNK):
        sl = slice(start, start + _WIDE_CHUNK)
        parts.append(measure(Rational(h.num[sl], h.den[sl], h.w_ref[sl])))
    return Figures(**{f.name: np.concatenate([getattr(p, f.name) for p in parts]) for f in fields(Figures)})


class _Evaluator:
    """Figures of batches of part values (ratios to nominal), by expansion or by the solver."""

    def __init__(self, netlist: Netlist, opamp: OpAmpModel, w_ref: float, nominal: Figures, engine: str = "auto"):
        if engine not in ("auto", "expansion", "solver"):
            raise ValueError(f"unknown engine {engine!r}")
        self.netlist = netlist
        self.opamp = opamp
        self.w_ref = w_ref
        self.nominal = nominal.item()
        self.variables: tuple[Variable, ...] = circuit_variables(netlist, opamp)
        self.expansion: Expansion | None = None
        if engine != "solver":
            try:
                self.expansion = Expansion(netlist, opamp, w_ref=w_ref)
            except ExpansionUnavailable:
                if engine == "expansion":
                    raise
        self.method = "expansion" if self.expansion is not None else "solver"
        self._sens: dict[str, np.ndarray] | None = None

    def rational(self, ratios: np.ndarray) -> Rational:
        if self.expansion is not None:
            return self.expansion.rational(ratios)
        overrides, gbw, a0 = {}, None, None
        for j, v in enumerate(self.variables):
            col = v.value * ratios[:, j]
            if v.kind == "gbw":
                gbw = col
            elif v.kind == "a0":
                a0 = col
            else:
                overrides[v.name] = col
        h = transfer_function(self.netlist, self.opamp, overrides=overrides, gbw_hz=gbw, a0=a0, w_ref=self.w_ref)
        bad = ~np.all(np.isfinite(ratios) & (ratios > 0), axis=1)
        if bad.any():
            num, den = h.num.copy(), h.den.copy()
            num[bad] = np.nan
            den[bad] = np.nan
            h = Rational(num, den, h.w_ref)
        return h

    def figures(self, ratios: np.ndarray, *, tracked: bool = True) -> tuple[Figures, np.ndarray]:
        """Figures and stability of each row of ``ratios`` (shape ``(B, len(variables))``)."""
        if self.expansion is not None and self.expansion.pure_bandpass:
            num, den = self.expansion.coefficients(ratios)
            return _closed_form(num, den, self.w_ref)
        h = self.rational(ratios)
        stable = hurwitz_stable(h.den)
        fig = self._measure_tracked(h, ratios) if tracked else _measure_wide(h)
        return fig, stable & fig.valid

    def sensitivities(self) -> dict[str, np.ndarray]:
        """``∂ln y/∂ln x`` of f0, Q and |gain| to every variable (central differences, step 1e-4)."""
        if self._sens is None:
            n = len(self.variables)
            rows = np.ones((2 * n, n))
            for j in range(n):
                rows[2 * j, j] = math.exp(_SENS_STEP)
                rows[2 * j + 1, j] = math.exp(-_SENS_STEP)
            fig, _ = self.figures(rows, tracked=False)
            out = {}
            for key, y in (("f0", fig.f0_hz), ("q", fig.q), ("gain", np.abs(fig.gain_center))):
                with np.errstate(invalid="ignore", divide="ignore"):
                    ly = np.log(y)
                s = (ly[0::2] - ly[1::2]) / (2.0 * _SENS_STEP)
                out[key] = np.where(np.isfinite(s), s, 0.0)
            self._sens = out
        return self._sens

    def _measure_tracked(self, h: Rational, ratios: np.ndarray) -> Figures:
        """Measure each member on a grid of its own around its first-order f0 and bandwidth."""
        sens = self.sensitivities()
        nom = self.nominal
        with np.errstate(invalid="ignore", divide="ignore"):
            lr = np.log(ratios)
            ln_f0 = np.full(h.batch, math.log(nom.f0_hz))
            ln_q = np.full(h.batch, math.log(nom.q))
            for j in range(lr.shape[1]):
                if sens["f0"][j] or sens["q"][j]:
                    ln_f0 += sens["f0"][j] * lr[:, j]
                    ln_q += sens["q"][j] * lr[:, j]
            q_est = np.clip(np.exp(ln_q), 0.05, 1e4)
            f0_est = np.exp(ln_f0)
            half = 3.0 * np.arcsinh(1.0 / (2.0 * q_est)) + 0.01
            centre = f0_est * (2.0 * math.pi) / self.w_ref
            ok_est = np.isfinite(centre) & np.isfinite(half)
            centre = np.where(ok_est, centre, 1.0)
            half = np.where(ok_est, half, 1.0)
            t = np.linspace(-1.0, 1.0, _GRID_POINTS)
            grid = centre[:, None] * np.exp(half[:, None] * t[None, :])
            fig = measure(h, grid=grid)
            off = np.abs(np.log(fig.f0_hz / f0_est)) > 0.5 * half
            off |= np.abs(np.log(fig.q / q_est)) > math.log(2.0)
            redo = (~fig.valid | off | ~ok_est) & np.all(np.isfinite(h.den), axis=1)
        idx = np.flatnonzero(redo)
        if idx.size:
            wide = _measure_wide(Rational(h.num[idx], h.den[idx], h.w_ref[idx]))
            fig = _put(fig, idx, wide)
        return fig


# ---------------------------------------------------------------------------------------------
# Running a spread
# ---------------------------------------------------------------------------------------------
def _kind(v: Variable) -> str:
    return "R" if v.kind in ("R", "RS") else v.kind


def part_tolerances(netlist: Netlist, settings: SpreadSettings) -> dict[str, float]:
    """The tolerance (fraction) of every part with a value above zero, by reference.

    A part's own entry wins over its kind's; an inductor's winding resistance is a resistor.

    Raises
    ------
    InputError
        For a tolerance key that is neither a kind (R, C, L) nor a part of the circuit.
    """
    parts = [v for v in circuit_variables(netlist) if v.kind not in ("gbw", "a0")]
    refs = {v.name for v in parts} | {e.ref for e in netlist.passives} | {e.series_ref for e in netlist.passives if e.series_ref}
    for key in settings.tolerances:
        if key not in KINDS and key not in refs:
            names = ", ".join(sorted(refs))
            raise InputError("tol", f"{key!r} is neither a kind (R, C, L) nor a part of this circuit ({names})")
    return {v.name: float(settings.tolerances.get(v.name, settings.tolerances[_kind(v)])) for v in parts}


def _nominal(netlist: Netlist, opamp: OpAmpModel, w_ref: float) -> Figures:
    fig = measure(transfer_function(netlist, opamp, w_ref=w_ref))
    if not bool(fig.valid[0]):
        raise InputError("circuit", "the nominal circuit has no band-pass peak; there is nothing to spread")
    return fig


def _setup(netlist: Netlist, settings: SpreadSettings, opamp: OpAmpModel):
    if settings.gbw_tol > 0 and opamp.ideal:
        raise InputError("gbw-tol", "a GBW spread needs a finite op-amp (give its GBW); an ideal op-amp has none")
    tol = part_tolerances(netlist, settings)
    parts = [v for v in circuit_variables(netlist, opamp) if v.kind not in ("gbw", "a0")]
    spread = np.array([tol[v.name] for v in parts] + [settings.gbw_tol])
    return tol, parts, spread


def _draws(settings: SpreadSettings, spread: np.ndarray, total: int):
    """Chunks ``(start, ratios)`` of the trial ratios, one column per part and one for the GBW."""
    rng = np.random.default_rng(settings.seed)
    for start in range(0, total, CHUNK):
        m = min(CHUNK, total - start)
        if settings.dist == "uniform":
            z = rng.uniform(-1.0, 1.0, size=(m, spread.size))
        else:
            z = rng.standard_normal(size=(m, spread.size)) / 3.0
        yield start, 1.0 + z * spread


def _columns(ev: _Evaluator, drawn: np.ndarray) -> np.ndarray:
    """Drawn part/GBW ratios → the evaluator's variables (A0 held at nominal)."""
    cols = []
    k = 0
    for v in ev.variables:
        if v.kind == "a0":
            cols.append(np.ones(drawn.shape[0]))
        elif v.kind == "gbw":
            cols.append(drawn[:, -1])
        else:
            cols.append(drawn[:, k])
            k += 1
    return np.column_stack(cols)


def run_spread(
    netlist: Netlist,
    settings: SpreadSettings = SpreadSettings(),
    *,
    opamp: OpAmpModel = IDEAL,
    progress: Callable[[int, int], None] | None = None,
    cancel: Callable[[], bool] | None = None,
    keep_values: bool = False,
    engine: str = "auto",
) -> Spread:
    """Monte Carlo tolerance spread, yield and worst case of a circuit.

    Parameters
    ----------
    netlist : Netlist
        The circuit at its nominal values.
    settings : SpreadSettings
        Tolerances, distribution, trial count, seed and yield window.
    opamp : OpAmpModel
        The op-amp of every trial (its GBW varies by ``settings.gbw_tol``).
    progress : callable, optional
        ``progress(done, total)`` after each chunk of trials.
    cancel : callable, optional
        Asked before each chunk; returning True raises :class:`SpreadCancelled`.
    keep_values : bool
        Keep the sampled values (``Spread.values``), ``8·trials`` bytes per part.
    engine : {"auto", "expansion", "solver"}
        How trials are evaluated; ``auto`` takes the expansion where the netlist allows.

    Returns
    -------
    Spread

    Raises
    ------
    InputError
        For a tolerance of a part the circuit does not have, a GBW spread with an ideal op-amp,
        or a nominal circuit without a band-pass peak.
    """
    tol, parts, spread = _setup(netlist, settings, opamp)
    w_ref = reference_w(build_system(netlist))
    nominal = _nominal(netlist, opamp, w_ref)
    ev = _Evaluator(netlist, opamp, w_ref, nominal, engine)
    n = settings.trials
    f0 = np.empty(n)
    q = np.empty(n)
    gain = np.empty(n)
    measured = np.empty(n, dtype=bool)
    passed = np.empty(n, dtype=bool)
    kept = np.empty((n, spread.size)) if keep_values else None
    window = settings.window
    for start, drawn in _draws(settings, spread, n):
        if cancel is not None and cancel():
            raise SpreadCancelled()
        sl = slice(start, start + drawn.shape[0])
        fig, ok = ev.figures(_columns(ev, drawn))
        f0[sl] = fig.f0_hz
        q[sl] = fig.q
        gain[sl] = fig.gain_center
        measured[sl] = ok
        passed[sl] = ok & within_tolerances(fig, nominal.item(), window)
        if kept is not None:
            kept[sl] = drawn
        if progress is not None:
            progress(sl.stop, n)
    with np.errstate(divide="ignore", invalid="ignore"):
        gain_db = 20.0 * np.log10(np.abs(gain))
    values = None
    if kept is not None:
        values = {v.name: kept[:, j] * v.value for j, v in enumerate(parts)}
        if not opamp.ideal:
            values["gbw"] = kept[:, -1] * opamp.gbw_hz
    worst = _worst(ev, tol, parts, settings.gbw_tol if not opamp.ideal else 0.0, opamp)
    return Spread(
        settings=settings,
        tolerances=MappingProxyType(tol),
        opamp=opamp,
        nominal=nominal,
        f0_hz=f0,
        q=q,
        gain_center=gain,
        gain_center_db=gain_db,
        measured=measured,
        passed=passed,
        worst=worst,
        method=ev.method,
        values=values,
    )


def sample_parts(netlist: Netlist, settings: SpreadSettings = SpreadSettings(), *, opamp: OpAmpModel = IDEAL) -> dict[str, np.ndarray]:
    """The part values (SI units) :func:`run_spread` draws for these settings, by reference.

    Includes ``"gbw"`` (Hz) for a finite op-amp.
    """
    _, parts, spread = _setup(netlist, settings, opamp)
    drawn = np.concatenate([d for _, d in _draws(settings, spread, settings.trials)])
    out = {v.name: drawn[:, j] * v.value for j, v in enumerate(parts)}
    if not opamp.ideal:
        out["gbw"] = drawn[:, -1] * opamp.gbw_hz
    return out


def _worst(ev: _Evaluator, tol: Mapping[str, float], parts: list[Variable], gbw_tol: float, opamp: OpAmpModel) -> WorstCase:
    names = [v.name for v in parts if tol[v.name] > 0]
    p = [tol[nm] for nm in names]
    if gbw_tol > 0:
        names.append("gbw")
        p.append(gbw_tol)
    p = np.array(p)
    index = {v.name: j for j, v in enumerate(ev.variables)}
    nom = ev.nominal
    keys = ("f0_hz", "q", "gain_center_db")
    if not names:
        same = {k: (float(getattr(nom, k)), float(getattr(nom, k))) for k in keys}
        return WorstCase("nominal", 0, same["f0_hz"], same["q"], same["gain_center_db"], MappingProxyType({k: ({}, {}) for k in keys}))
    if len(names) <= MAX_CORNER_PARTS:
        method = "all corners"
        signs = 1.0 - 2.0 * ((np.arange(2 ** len(names))[:, None] >> np.arange(len(names))[None, :]) & 1)
    else:
        method = "sensitivity corners"
        sens = ev.sensitivities()
        rows = []
        for key in ("f0", "q", "gain"):
            s = np.array([sens[key][index[nm]] for nm in names])
            d = np.where(s >= 0, 1.0, -1.0)
            rows += [-d, d]
        signs = np.array(rows)
    ratios = np.ones((signs.shape[0], len(ev.variables)))
    for j, nm in enumerate(names):
        ratios[:, index[nm]] = 1.0 + signs[:, j] * p[j]
    fig, ok = ev.figures(ratios)
    gain_db = fig.gain_center_db
    out = {}
    corners = {}
    for key, y in (("f0_hz", fig.f0_hz), ("q", fig.q), ("gain_center_db", gain_db)):
        y = np.where(ok, y, np.nan)
        if not np.any(np.isfinite(y)):
            out[key] = (math.nan, math.nan)
            corners[key] = ({}, {})
            continue
        lo, hi = int(np.nanargmin(y)), int(np.nanargmax(y))
        out[key] = (float(y[lo]), float(y[hi]))
        corners[key] = tuple(MappingProxyType({nm: float(signs[i, j] * p[j]) for j, nm in enumerate(names)}) for i in (lo, hi))
    return WorstCase(
        method=method,
        corner_count=int(signs.shape[0]),
        f0_hz=out["f0_hz"],
        q=out["q"],
        gain_center_db=out["gain_center_db"],
        corners=MappingProxyType(corners),
        unstable_corners=int(np.count_nonzero(~ok)),
    )


def worst_case(netlist: Netlist, settings: SpreadSettings = SpreadSettings(), *, opamp: OpAmpModel = IDEAL, engine: str = "auto") -> WorstCase:
    """The worst case alone (every corner of the tolerance box, or the sensitivity corners)."""
    tol, parts, _ = _setup(netlist, settings, opamp)
    w_ref = reference_w(build_system(netlist))
    ev = _Evaluator(netlist, opamp, w_ref, _nominal(netlist, opamp, w_ref), engine)
    return _worst(ev, tol, parts, settings.gbw_tol if not opamp.ideal else 0.0, opamp)


def magnitude_envelope(
    netlist: Netlist,
    settings: SpreadSettings,
    f_hz: np.ndarray,
    *,
    opamp: OpAmpModel = IDEAL,
    trials: int = 2000,
    percentiles: tuple[float, ...] = (5.0, 50.0, 95.0),
) -> Envelope:
    """Percentiles of the magnitude (dB) over the first ``trials`` trials of a spread, at ``f_hz``.

    The trials are the same as :func:`run_spread`'s first ones for these settings.
    """
    _, parts, spread = _setup(netlist, settings, opamp)
    w_ref = reference_w(build_system(netlist))
    ev = _Evaluator(netlist, opamp, w_ref, _nominal(netlist, opamp, w_ref))
    count = min(int(trials), settings.trials)
    if count < 1:
        raise InputError("trials", "the envelope needs at least one trial")
    chunks, got = [], 0
    for _, d in _draws(settings, spread, settings.trials):  # every chunk the count reaches into
        chunks.append(d[: count - got])
        got += chunks[-1].shape[0]
        if got >= count:
            break
    drawn = np.concatenate(chunks)
    h = ev.rational(_columns(ev, drawn))
    f = np.asarray(f_hz, dtype=float)
    mags = np.empty((count, f.size))
    for start in range(0, count, 500):
        sl = slice(start, start + 500)
        with np.errstate(divide="ignore", invalid="ignore"):
            mags[sl] = 20.0 * np.log10(np.abs(Rational(h.num[sl], h.den[sl], h.w_ref[sl]).at_f(f)))
    return Envelope(f_hz=f, percentiles=tuple(float(x) for x in percentiles), magnitude_db=np.nanpercentile(mags, percentiles, axis=0), trials=count)
