"""Yield under part tolerances: a first-order estimate from the sensitivities, confirmed by Monte Carlo.

Estimate
--------
With every part ``x_i`` off by a relative deviation ``δ_i`` drawn uniformly from ``±p_i`` (as
:func:`bandsmith.spread.tolerance.run_spread` draws them), the figures move to first order in the
logarithms of the parts as

    ln(y/y0) ≈ Σ_i S_i(y) · ln(1 + δ_i),          S_i(y) = ∂ln y/∂ln x_i,

for ``y`` in f0, Q and the centre-gain magnitude. A uniform deviation has variance ``p²/3``, so each
figure's relative spread (one standard deviation) is the root-sum-square

    σ(y) ≈ √(Σ_i (S_i(y) · p_i)² / 3),

and the part that matters most is the one with the largest share ``(S_i·p_i)²`` of the variance of
the figure most likely to leave its window.

The yield is the probability that all three figures stay inside the window at once

    |f0/f0_nom − 1| ≤ w_f0,  |Q/Q_nom − 1| ≤ w_q,  |ΔG| ≤ w_dB.

The figures are strongly correlated in some circuits (Q and gain of a Sallen–Key move together), so
this is the joint probability, not a product of three. It is integrated over the parts' own uniform
law with a fixed set of :data:`POINTS` seeded points per part (so the estimate is a pure function of
the sensitivities and tolerances; one standard error at most √(0.25/8192) = 0.55 percentage points): no circuit is
evaluated, only the linear model above. A normal approximation of the three log deviations
(covariance ``Σ_i S_i(a)·S_i(b)·p_i²/3``) would agree where many parts contribute (central limit
theorem) but overstates the yield by 11 points where one part dominates (one uniform part
with ``w = p/2``: normal 61 %, exact 50 %), which is why the uniform law is integrated instead.
A figure whose largest deviation at any point, ``Σ_i |S_i|·max_u |ln(1 + p_i·u)|`` (the
triangle inequality; with a margin of 1e-9 for the product's rounding), lies inside its window
stays inside at every point: it is not evaluated (in a compare, Q and the gain mostly are not).

Confirmation
------------
:func:`confirm_yield` runs a short fixed-seed Monte Carlo (:func:`bandsmith.spread.tolerance.run_spread`,
ideal op-amp, same tolerances, window and distribution), which also catches what the first-order
model misses (a figure that bends far from nominal, an unstable corner).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from operator import mul
from typing import Mapping

import numpy as np

from bandsmith.solver.netlist import Netlist
from bandsmith.spread.tolerance import SpreadSettings, run_spread
from bandsmith.verdict.limits import VerdictLimits

__all__ = ["POINTS", "FIGURES", "YieldEstimate", "estimate_yield", "confirm_yield", "part_tolerances_of"]

#: Points (per part) the window probability is integrated with.
POINTS = 8_192
_POINTS_SEED = 15
#: The three figures (their sensitivity keys), in the order of the rows of the model.
FIGURES = ("f0", "q", "gain")
_FIGURE_WORDS = {"f0": "f0", "q": "Q", "gain": "the centre gain"}
_DB_PER_NEPER = 20.0 / math.log(10.0)


@functools.lru_cache(maxsize=32)
def _points(parts: int) -> np.ndarray:
    """Fixed uniform points on [−1, 1], shape ``(parts, POINTS)``."""
    u = np.random.default_rng(_POINTS_SEED + parts).uniform(-1.0, 1.0, size=(parts, POINTS))
    u.setflags(write=False)
    return u


@functools.lru_cache(maxsize=64)
def _log_deviations(p: tuple[float, ...]) -> np.ndarray:
    """``ln(1 + p_i·u)`` at the fixed points, shape ``(parts, POINTS)`` (cached: tolerances repeat)."""
    d = np.log1p(np.array(p)[:, None] * _points(len(p)))
    d.setflags(write=False)
    return d


@functools.lru_cache(maxsize=64)
def _reach(p: tuple[float, ...]) -> list[float]:
    """Each part's largest ``|ln(1 + p_i·u)|`` over the fixed points (cached: tolerances repeat)."""
    return np.abs(_log_deviations(p)).max(axis=1).tolist()


@functools.lru_cache(maxsize=16)
def _window_ends(window_f0: float, window_q: float, window_gain_db: float) -> tuple[list[float], list[float]]:
    """:func:`_window`'s lower and upper ends as plain floats, per figure (f0, Q, gain): what a
    single figure's row is compared with (the same float64 numbers as the columns)."""
    lo, hi = _window(window_f0, window_q, window_gain_db)
    return lo[:, 0].tolist(), hi[:, 0].tolist()


@functools.lru_cache(maxsize=16)
def _inner_edges(window_f0: float, window_q: float, window_gain_db: float) -> list[float]:
    """The yield window's nearer end from zero in log units, per figure (f0, Q, gain)."""
    lo, hi = _window_ends(window_f0, window_q, window_gain_db)
    return [min(-a, b) for a, b in zip(lo, hi)]


def _dot_abs(values: list[float], weights: list[float]) -> float:
    """``Σ |v|·w`` of two short lists (a bound: its rounding is covered by the caller's margin)."""
    total = 0.0
    for v, w in zip(values, weights):
        total += abs(v) * w
    return total


@functools.lru_cache(maxsize=16)
def _window(window_f0: float, window_q: float, window_gain_db: float) -> tuple[np.ndarray, np.ndarray]:
    """The yield window in log units, columns ``(3, 1)`` of its lower and upper ends (f0, Q, gain):
    asymmetric for the ratios, symmetric for the gain in dB. Read-only."""
    lo = np.array([math.log1p(-window_f0) if window_f0 < 1 else -math.inf,
                   math.log1p(-window_q) if window_q < 1 else -math.inf,
                   -window_gain_db / _DB_PER_NEPER])[:, None]
    hi = np.array([math.log1p(window_f0), math.log1p(window_q), window_gain_db / _DB_PER_NEPER])[:, None]
    lo.setflags(write=False)
    hi.setflags(write=False)
    return lo, hi


@dataclass(frozen=True, slots=True)
class YieldEstimate:
    """A first-order yield estimate.

    Attributes
    ----------
    fraction : float
        Estimated share of parts sets within the window (0 to 1).
    sigma : mapping
        First-order relative spread (one standard deviation) of each figure: ``f0`` and ``q`` as
        fractions, ``gain_db`` in dB.
    within : mapping
        Probability of each figure alone staying inside its window (``f0``, ``q``, ``gain``).
    figure : str
        The figure most likely to leave its window (``f0``, ``q`` or ``gain``).
    part : str or None
        The part with the largest share of that figure's variance (None when nothing varies).
    share : float
        That part's share of the figure's variance (0 to 1).
    """

    fraction: float
    sigma: Mapping[str, float]
    within: Mapping[str, float]
    figure: str
    part: str | None
    share: float

    @property
    def figure_words(self) -> str:
        return _FIGURE_WORDS[self.figure]

    def to_json(self) -> dict:
        return {
            "yield_pct": 100.0 * self.fraction,
            "sigma": {"f0_pct": 100.0 * self.sigma["f0"], "q_pct": 100.0 * self.sigma["q"], "gain_db": self.sigma["gain_db"]},
            "figure": self.figure,
            "part": self.part,
            "part_share_pct": 100.0 * self.share,
        }


def part_tolerances_of(parts: Mapping[str, str], values: Mapping[str, float], limits: VerdictLimits) -> dict[str, float]:
    """The tolerance of every part with a value above zero (reference → fraction), ``parts`` mapping
    reference → kind."""
    return {ref: limits.tolerance_of(ref, kind) for ref, kind in parts.items() if values.get(ref, 0.0) > 0}


_NONE: Mapping[str, float] = {}


def _row_sum(values: list[float]) -> float:
    """The sum of a few floats as numpy sums a row (``ndarray.sum`` of a contiguous row, its
    pairwise summation: below eight terms one after the other from zero; from eight to 128, eight
    running sums over the terms eight apart, joined as ``((r0 + r1) + (r2 + r3)) + ((r4 + r5) +
    (r6 + r7))``, then the rest one after the other), so that the estimate's spreads are numpy's
    own to the last bit; longer rows are left to numpy."""
    n = len(values)
    if n < 8:
        total = 0.0
        for v in values:
            total += v
        return total
    if n > 128:
        return float(np.sum(values))
    r = values[:8]
    stop = n - n % 8
    for i in range(8, stop, 8):
        r = [a + b for a, b in zip(r, values[i : i + 8])]
    total = ((r[0] + r[1]) + (r[2] + r[3])) + ((r[4] + r[5]) + (r[6] + r[7]))
    for v in values[stop:]:
        total += v
    return total


def estimate_yield(
    sensitivity: Mapping[str, Mapping[str, float]], tolerances: Mapping[str, float], limits: VerdictLimits = VerdictLimits(),
    *, seen: dict | None = None,
) -> YieldEstimate:
    """First-order yield of a candidate (see the module notes).

    Parameters
    ----------
    sensitivity : mapping
        ``{"f0": {ref: S}, "q": {...}, "gain": {...}}``, the normalised sensitivities
        (:attr:`bandsmith.analysis.analyzer.Analysis.sensitivity`).
    tolerances : mapping
        Tolerance (fraction, uniform over ±p) of every varying part, by reference; parts not here do
        not vary.
    limits : VerdictLimits
        The yield window.
    seen : dict, optional
        A dict the caller passes to every estimate of one judging of several candidates (a
        compare's): candidates whose model is the same number for number (the same parts,
        tolerances, sensitivities and window: a compare's Tow–Thomas and Åkerberg–Mossberg on the
        same parts) share the one estimate, made once (a pure function of those numbers).

    Returns
    -------
    YieldEstimate
    """
    refs, p = [], []
    for r, t in tolerances.items():
        if t > 0:
            refs.append(r)
            p.append(float(t))
    n_parts = len(refs)
    # the sensitivities, row by row (f0, Q, gain), a non-finite one taken as zero
    flat = [float(row.get(r, 0.0)) for row in [sensitivity.get(k, _NONE) for k in FIGURES] for r in refs]
    if not all(map(math.isfinite, flat)):
        flat = [v if math.isfinite(v) else 0.0 for v in flat]
    window = (limits.window_f0, limits.window_q, limits.window_gain_db)
    if seen is not None:
        # the models met so far with these parts, compared number for number as lists (hashing
        # every float of a key costs more than comparing the few models of a judging)
        model = (p, flat, window)
        models = seen.setdefault(("yield", tuple(refs)), [])
        for other, known in models:
            if other == model:
                return known
    # each part's share of each figure's log variance, (S·p)²/3, and their sums (in plain numbers:
    # numpy's square and division are the same IEEE operations; a row's sum as numpy sums a row);
    # and the figures that can leave their window: one whose largest deviation at any point,
    # Σ_i |S_i|·max|ln(1 + p_i·u)| (triangle inequality), lies inside it with a margin for the
    # product's rounding stays inside at every point, and its row is not formed (all inside)
    tp = tuple(p)
    reach, inner = _reach(tp), _inner_edges(*window)
    contrib, totals, rows = [], [], []
    for f in range(len(FIGURES)):
        row = flat[f * n_parts : (f + 1) * n_parts]
        c = [x * x / 3.0 for x in map(mul, row, p)]  # (S·p)·(S·p)/3
        contrib.append(c)
        totals.append(_row_sum(c))
        if not _dot_abs(row, reach) * (1.0 + 1e-9) < inner[f]:
            rows.append(f)
    within = [1.0] * len(FIGURES)
    fraction = 1.0
    if len(rows) == 1:
        # one figure (a compare's rule): its row of log deviations at the fixed points as a 1-D
        # product (numpy's (1, parts) row product, bit for bit: tested), compared with its
        # window's ends as plain floats, counted once (the joint count is its own)
        f = rows[0]
        lo, hi = _window_ends(*window)
        x = np.array(flat[f * n_parts : (f + 1) * n_parts]) @ _log_deviations(tp)
        inside = x >= lo[f]
        inside &= x <= hi[f]
        fraction = within[f] = np.count_nonzero(inside) / x.shape[0]
    elif rows:
        # their log deviations at the fixed points, (rows, points), and where they are inside
        lo, hi = _window(*window)
        s = np.array(flat).reshape(len(FIGURES), n_parts)
        x = (s if len(rows) == len(FIGURES) else s[rows]) @ _log_deviations(tp)
        inside = x >= lo[rows]
        inside &= x <= hi[rows]
        every = inside[0]
        for row in inside[1:]:
            every = every & row
        n = x.shape[1]
        fraction = np.count_nonzero(every) / n
        for f, row in zip(rows, inside):  # row by row: contiguous, quicker than axis=1
            within[f] = np.count_nonzero(row) / n
    k = within.index(min(within)) if refs else 0  # the first of the least, as argmin
    total = totals[k]
    if refs and total > 0:
        # the first part (in the circuit's order) of the largest share: parts whose shares are the
        # same in theory (equal sensitivities and tolerances) differ only in rounding, which must not choose
        shares = contrib[k]
        top = max(shares) * (1.0 - 1e-6)
        j = 0
        while not shares[j] >= top:
            j += 1
        part, share = refs[j], shares[j] / total
    else:
        part, share = None, 0.0
    sd = [math.sqrt(t) for t in totals]
    est = YieldEstimate(  # (fraction, sigma, within, figure, part, share)
        fraction, {"f0": math.expm1(sd[0]), "q": math.expm1(sd[1]), "gain_db": sd[2] * _DB_PER_NEPER},
        dict(zip(FIGURES, within)), FIGURES[k], part, share,
    )
    if seen is not None:
        models.append((model, est))
    return est


def confirm_yield(netlist: Netlist, tolerances: Mapping[str, float], limits: VerdictLimits = VerdictLimits(), *, trials: int | None = None, seed: int | None = None) -> float:
    """The yield of a short fixed-seed Monte Carlo (ideal op-amp) with these part tolerances and window.

    ``tolerances`` by reference (parts not in it are held exact); ``trials`` and ``seed`` default to
    the limits' ``mc_trials`` and ``mc_seed``. The same candidate always gives the same number, so
    recent results are kept (a comparison re-judged after one candidate changed runs only that
    candidate's Monte Carlo again).
    """
    return _confirm(
        netlist,
        tuple(sorted((r, float(p)) for r, p in tolerances.items())),
        limits.mc_trials if trials is None else int(trials),
        limits.mc_seed if seed is None else int(seed),
        (limits.window_f0, limits.window_q, limits.window_gain_db),
    )


@functools.lru_cache(maxsize=256)
def _confirm(netlist: Netlist, tolerances: tuple[tuple[str, float], ...], trials: int, seed: int, window: tuple[float, float, float]) -> float:
    settings = SpreadSettings(
        tolerances={"R": 0.0, "C": 0.0, "L": 0.0, **dict(tolerances)},
        trials=trials,
        seed=seed,
        window_f0=window[0],
        window_q=window[1],
        window_gain_db=window[2],
    )
    return run_spread(netlist, settings).yield_fraction
