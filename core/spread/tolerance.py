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
``ω0·(√(1 + 1/(4Q²)) ∓ 1/(2Q))``, by :func:`bandsmith.analysis.figures.biquad_figures`. Otherwise,
in a chunk (:mod:`bandsmith.spread.trialfigures`, one contiguous array per coefficient), the peak
and the half-power points are the exact roots in closed form where their polynomials are
quadratics or cubics (one op-amp with a finite GBW, the tank with a winding resistance), and else
(several op-amps with a finite GBW) found by Newton's method started at the trial's first-order
estimate of f0 and, for the band edges, at the bandwidth the curvature of ``|H|²`` at the peak
gives. A trial for which that fails, whose ``|H|²`` three estimated half-bandwidths either side of
its estimate is above the peak found, or whose figures land away from its estimate is measured
again with the global search of :func:`bandsmith.analysis.figures.measure`.

A trial passes when it is stable (Routh–Hurwitz on its denominator), its figures are defined and
its f0, Q and centre gain lie within the window (±P, ±P, ±D dB) around the nominal figures, which
are computed with the same op-amp model as the trials. Unstable trials and trials without a peak
count as failures, never as errors.

The worst case evaluates every corner of the tolerance box (each varying part at ±p) when at most
:data:`MAX_CORNER_PARTS` quantities vary — one batched call of 2^n corners — and otherwise the
corners the sensitivities point to (each part pushed in the direction that raises, or lowers, the
figure).

Layout: the settings are in :mod:`bandsmith.spread.spread_settings`, the batch evaluation and the
draws in :mod:`bandsmith.spread.evaluator`, the worst case in :mod:`bandsmith.spread.worst`, the
magnitude envelope in :mod:`bandsmith.spread.envelope`; this module runs a spread and re-exports
the rest.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from types import MappingProxyType
from typing import Callable, Mapping

import numpy as np

from bandsmith.analysis.analyzer import within_tolerances
from bandsmith.analysis.figures import Figures
from bandsmith.solver.mna import IDEAL, OpAmpModel
from bandsmith.solver.netlist import Netlist
from bandsmith.solver.stability import hurwitz_stable
from bandsmith.spread.spread_settings import (
    CHUNK,
    DEFAULT_TOLERANCES,
    DISTRIBUTIONS,
    KINDS,
    MAX_CORNER_PARTS,
    MAX_TOLERANCE,
    MAX_TRIALS,
    STAT_KEYS,
    SpreadCancelled,
    SpreadSettings,
)
from bandsmith.spread.evaluator import Evaluator, draws, drawn_values, evaluator_columns, part_tolerances, prepare_spread, setup_spread
from bandsmith.spread.worst import WorstCase, worst_case, worst_of
from bandsmith.spread.envelope import Envelope, magnitude_envelope

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
    "KINDS",
    "MAX_TOLERANCE",
    "MAX_TRIALS",
]


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
        """The README's tolerance object (``bandsmith tolerance``), with a few keys more."""
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
    prep = prepare_spread(netlist, settings, opamp, engine)
    ev = prep.evaluator
    f0, q, gain, measured, passed, kept = _trials(ev, settings, prep.spread, prep.nominal, progress, cancel, keep_values)
    with np.errstate(divide="ignore", invalid="ignore"):
        gain_db = 20.0 * np.log10(np.abs(gain))
    values = None if kept is None else drawn_values(prep.parts, opamp, kept)
    worst = worst_of(ev, prep.tolerances, prep.parts, settings.gbw_tol)  # setup_spread refused a spread GBW of an ideal op-amp
    return Spread(
        settings=settings,
        tolerances=MappingProxyType(prep.tolerances),
        opamp=opamp,
        nominal=prep.nominal,
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


def _trials(ev: Evaluator, settings: SpreadSettings, spread: np.ndarray, nominal: Figures, progress, cancel, keep_values: bool):
    """Every trial, chunk by chunk: f0, Q, centre gain, measured and passed masks, and the drawn
    ratios when they are kept (else None)."""
    n = settings.trials
    f0 = np.empty(n)
    q = np.empty(n)
    gain = np.empty(n)
    measured = np.empty(n, dtype=bool)
    passed = np.empty(n, dtype=bool)
    kept = np.empty((n, spread.size)) if keep_values else None
    window = settings.window
    for start, drawn in draws(settings, spread, n):
        if cancel is not None and cancel():
            raise SpreadCancelled()
        sl = slice(start, start + drawn.shape[0])
        fig, ok = ev.figures(evaluator_columns(ev, drawn))
        f0[sl] = fig.f0_hz
        q[sl] = fig.q
        gain[sl] = fig.gain_center
        measured[sl] = ok
        passed[sl] = ok & within_tolerances(fig, nominal.item(), window)
        if kept is not None:
            kept[sl] = drawn
        if progress is not None:
            progress(sl.stop, n)
    return f0, q, gain, measured, passed, kept


def sample_parts(netlist: Netlist, settings: SpreadSettings = SpreadSettings(), *, opamp: OpAmpModel = IDEAL) -> dict[str, np.ndarray]:
    """The part values (SI units) :func:`run_spread` draws for these settings, by reference.

    Includes ``"gbw"`` (Hz) for a finite op-amp.
    """
    _, parts, spread = setup_spread(netlist, settings, opamp)
    return drawn_values(parts, opamp, np.concatenate([d for _, d in draws(settings, spread, settings.trials)]))


