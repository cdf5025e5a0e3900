"""What the circuits' design procedures share: the target, infeasibility, the impedance level, pins.

Each circuit module's ``synthesize(spec, fixed)`` returns an :class:`Exact` (a dict of exact part
values, with notes saying what was chosen) or raises :class:`Infeasible` with a reason in plain
words. The helpers here choose an impedance level by common practice, solve for the parts left
free when some are pinned and refine a design on its measured response.
"""

from __future__ import annotations

import bisect
import functools
import itertools
import math
from dataclasses import dataclass
from typing import Callable, Mapping, Sequence

import numpy as np

from bandsmith.common.errors import InputError
from bandsmith.common.limits import TARGET_RANGES, check_range
from bandsmith.common.eseries import nearest_array, values_between

__all__ = [
    "Spec",
    "Infeasible",
    "OverDetermined",
    "Exact",
    "PREFERRED",
    "PRACTICAL",
    "MADE",
    "capacitor_series",
    "choose_level",
    "solve_pinned",
    "search_grid",
    "refine_measured",
]

# Windows of part values (SI units). PREFERRED: where the impedance level is put by default —
# resistors 1 kΩ–1 MΩ, film/ceramic capacitors 100 pF–1 µF, catalogue inductors 10 µH–100 mH
# (common practice, no source). PRACTICAL: outside it a design is feasible but draws a warning.
# MADE: outside it no such part is made, and the design is infeasible (common practice, no source).
PREFERRED = {"R": (1e3, 1e6), "C": (100e-12, 1e-6), "L": (10e-6, 100e-3)}
PRACTICAL = {"R": (100.0, 10e6), "C": (10e-12, 10e-6), "L": (100e-9, 1.0)}
MADE = {"R": (1.0, 1e9), "C": (0.1e-12, 0.1), "L": (1e-9, 100.0)}
# log10 of PREFERRED's ends and the weight of a part of each kind (an inductor twice), for choose_level
_LEVEL_WINDOWS = {kind: (math.log10(lo), math.log10(hi), 2.0 if kind == "L" else 1.0) for kind, (lo, hi) in PREFERRED.items()}
# The resistors' geometric centre aimed at when the window leaves freedom (common practice, no source).
R_CENTRE_OHM = 10e3


@dataclass(frozen=True, slots=True)
class Spec:
    """A design target.

    Parameters
    ----------
    f0_hz : float
        Centre frequency (Hz).
    q : float
        Quality factor, f0 / bandwidth.
    gain : float
        Magnitude of the centre gain (V/V); the sign follows the circuit.
    """

    f0_hz: float
    q: float
    gain: float

    def __post_init__(self):
        for name, field in (("f0_hz", "f0"), ("q", "q"), ("gain", "gain")):
            v = getattr(self, name)
            if isinstance(v, bool) or not isinstance(v, (int, float, np.floating, np.integer)):
                raise InputError(field, f"must be a number, got {v!r}")
            v = float(v)
            if not (math.isfinite(v) and v > 0):
                raise InputError(field, f"must be a finite number above zero, got {v!r}")
            check_range(field, v, *TARGET_RANGES[field], "Hz" if field == "f0" else "")
            object.__setattr__(self, name, v)

    @classmethod
    def from_bandwidth(cls, f0_hz: float, bw_hz: float, gain: float) -> "Spec":
        """A target given by its −3 dB bandwidth (Hz) instead of Q."""
        if not (isinstance(bw_hz, (int, float)) and math.isfinite(bw_hz) and bw_hz > 0):
            raise InputError("bw", f"must be a finite number above zero, got {bw_hz!r}")
        if not (isinstance(f0_hz, (int, float)) and math.isfinite(f0_hz) and f0_hz > 0):
            raise InputError("f0", f"must be a finite number above zero, got {f0_hz!r}")
        return cls(f0_hz=f0_hz, q=f0_hz / bw_hz, gain=gain)

    @property
    def w0(self) -> float:
        """Centre angular frequency (rad/s)."""
        return 2.0 * math.pi * self.f0_hz

    @property
    def bw_hz(self) -> float:
        return self.f0_hz / self.q

    def to_json(self) -> dict:
        return {"f0_hz": self.f0_hz, "q": self.q, "gain": self.gain, "bw_hz": self.bw_hz}


class Infeasible(Exception):
    """A target a circuit cannot meet; ``reason`` says why in plain words."""

    def __init__(self, reason: str):
        super().__init__(reason)
        self.reason = reason


class OverDetermined(Infeasible):
    """More pinned values than a circuit has free choices (:func:`solve_pinned`)."""


class Exact(dict):
    """Exact part values (SI units) of a synthesis, with ``notes`` on what was chosen and why."""

    def __init__(self, values: Mapping[str, float], notes: Sequence[str] = ()):
        super().__init__({k: float(v) for k, v in values.items()})
        self.notes = tuple(notes)


def capacitor_series(series: str) -> str:
    """The series a chosen capacitor level comes from: E6 (or E3) unless the series is E48 or finer."""
    if series in ("E48", "E96", "E192"):
        return series
    return "E3" if series == "E3" else "E6"


@functools.lru_cache(maxsize=None)
def _level_capacitors(cs: str) -> tuple[np.ndarray, np.ndarray]:
    """Capacitor values a level may take: E6 (or E3) from 0.1 pF to 1 F, snapped into E48+ series;
    and their log10."""
    caps = values_between(1e-13, 1.0, cs if cs in ("E3", "E6") else "E6")
    if cs not in ("E3", "E6"):  # E48 and finer have no E6 values: take their nearest members
        caps = np.unique(nearest_array(caps, cs))
    logs = np.log10(caps)
    caps.setflags(write=False)
    logs.setflags(write=False)
    return caps, logs


@functools.lru_cache(maxsize=None)
def _level_weights(kinds_of: tuple[str, ...]) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, list[int]]:
    """For parts of these kinds (in order), what :func:`choose_level` weighs them by: the sign of
    their level scaling (capacitors up, the rest down), the log10 of their PREFERRED window's
    ends (columns), their weight (an inductor twice) and the rows of the resistors. Read-only."""
    sign = np.array([1.0 if k == "C" else -1.0 for k in kinds_of])[:, None]
    lo = np.array([math.log10(PREFERRED[k][0]) for k in kinds_of])[:, None]
    hi = np.array([math.log10(PREFERRED[k][1]) for k in kinds_of])[:, None]
    weight = np.array([2.0 if k == "L" else 1.0 for k in kinds_of])  # decades outside, inductors twice
    for a in (sign, lo, hi, weight):
        a.setflags(write=False)
    return sign, lo, hi, weight, [i for i, k in enumerate(kinds_of) if k == "R"]


def choose_level(unit: Mapping[str, float], kinds: Mapping[str, str], level_ref: str, series: str) -> float:
    """Choose the impedance level of a design whose parts all scale together.

    ``unit`` holds the part values at level 1; at level ``s`` resistors and inductors are divided
    by ``s`` and capacitors multiplied by it. The level is chosen so that ``level_ref`` (a
    capacitor) is a value of :func:`capacitor_series` (taken in the design series for E48 and
    finer) and the parts sit best in :data:`PREFERRED` (an inductor counts twice: it is the part
    hardest to buy), the resistors' geometric centre near 10 kΩ breaking ties.

    The level is the one of least cost over every level on offer (:func:`_level_costs`); it is
    found first among the few levels around the cost's continuous minimum
    (:func:`_level_near_minimum`), and over every level where that cannot tell (the same level).

    Returns
    -------
    float
        The level ``s``.
    """
    cs = capacitor_series(series)
    caps, log_caps = _level_capacitor_lists(cs)
    parts = [(v, kinds[ref]) for ref, v in unit.items() if v > 0]
    unit_ref = unit[level_ref]
    i = _level_near_minimum(parts, log_caps, math.log10(unit_ref))
    if i is None:
        i = int(_level_costs(parts, _level_capacitors(cs)[1] - math.log10(unit_ref)).argmin())
    return caps[i] / unit_ref


def _level_costs(parts: list[tuple[float, str]], log_s: np.ndarray) -> np.ndarray:
    """:func:`choose_level`'s cost of every level ``log_s`` (log10 of the levels), for the parts
    ``(unit value, kind)`` above zero: the decades each part lies outside its PREFERRED window
    (an inductor's twice), plus 0.05 times the decades between the resistors' geometric centre
    and 10 kΩ."""
    values = [v for v, _ in parts]
    sign, lo, hi, weight, rows = _level_weights(tuple(k for _, k in parts))
    # log10 of every part at every level, (parts, levels): capacitors scale up, the rest down
    log_v = np.log10(values)
    lx = log_v[:, None] + sign * log_s
    # decades outside the window, max(0, lo − lx) + max(0, lx − hi): with lo < hi at most one term
    # is above zero, so the sum is max(lo − lx, lx − hi, 0) exactly (one addition fewer)
    cost = weight @ np.maximum(np.maximum(lo - lx, lx - hi), 0.0)
    if rows:
        # The resistors' least and largest log10 at each level: a resistor's is fl(log10 R − log_s),
        # and rounding is monotone, so they are those of the least and the largest unit resistor
        # (the same numbers as the reductions over the rows of lx, with two subtractions).
        r = log_v[rows].tolist()
        centre = 0.5 * ((min(r) - log_s) + (max(r) - log_s))
        cost += 0.05 * np.abs(centre - math.log10(R_CENTRE_OHM))
    return cost


@functools.lru_cache(maxsize=None)
def _level_capacitor_lists(cs: str) -> tuple[list[float], list[float]]:
    """:func:`_level_capacitors`' values and their log10 as plain lists."""
    caps, logs = _level_capacitors(cs)
    return caps.tolist(), logs.tolist()


# How far apart (relative, at least 1e-9 absolute) the least cost and the next must be for the
# few levels :func:`_level_near_minimum` weighs to decide alone: far above the rounding of either
# way of adding up a cost (some 1e-15 of it), far below the gap to any other level (below).
_LEVEL_MARGIN = 1e-9


def _level_near_minimum(parts: list[tuple[float, str]], log_caps: list[float], log_unit: float) -> int | None:
    """:func:`choose_level`'s level, found among the few levels around the cost's minimum: its
    index, or None where this cannot tell (the caller then weighs every level).

    With ``t = log10 s``, part ``i`` lies at ``lx_i = log10 v_i ± t`` (+ for a capacitor), inside
    its window for ``t`` in an interval ``[a_i, b_i]``, so its cost ``w_i·max(lo_i − lx_i,
    lx_i − hi_i, 0)`` is ``w_i`` times the distance from ``t`` to that interval; the resistors'
    term is ``0.05·|t − t_c|`` (``t_c`` = the centre of their least and largest log10 less 4).
    The cost is a sum of convex functions of ``t``, so convex, and its slope is a sum of the
    ``±w_i`` (integers) or zero, plus ±0.05: never below 0.05 in size. Its minimum is where the
    slope, rising by ``w_i`` at every ``a_i`` and ``b_i`` and by 0.1 at ``t_c`` from
    ``−Σw_i − 0.05``, first reaches zero; away from it the cost rises by at least 0.05 × 0.145
    decade (the least step between two levels on offer, of any series) = 7e-3 from one level to
    the next. So the level of least cost is one of the two around that minimum (the one level at
    an end where the minimum lies beyond it), ahead of every other by far more than any rounding
    (a minimum within rounding of a level, where its bisection may go either way, has that level
    in both pairs): the costs of those two levels, as the distances to the intervals and to
    ``t_c`` in plain floats (within a few units in the last place of :func:`_level_costs`' for
    the same level), decide where the least is ahead of the other by :data:`_LEVEL_MARGIN`, else
    (a near tie, which the order of rounding might settle either way) None. None also without
    resistors (the cost may then be flat over several levels, where the first wins) or with a
    value that is not finite."""
    windows = []  # (a_i, b_i, w_i)
    events = []
    resistors = []
    total = every = 0.0
    for v, kind in parts:
        lv = math.log10(v)
        every += lv  # (not finite once any is not)
        lo, hi, w = _LEVEL_WINDOWS[kind]
        if kind == "C":
            a, b = lo - lv, hi - lv
        else:
            a, b = lv - hi, lv - lo
            if kind == "R":
                resistors.append(lv)
        windows.append((a, b, w))
        events += ((a, w), (b, w))
        total += w
    if not resistors or not math.isfinite(every):
        return None
    t_c = 0.5 * (min(resistors) + max(resistors)) - math.log10(R_CENTRE_OHM)
    events.append((t_c, 0.1))
    events.sort()
    slope = -total - 0.05
    for t_min, rise in events:
        slope += rise
        if slope > 0.0:
            break
    j = bisect.bisect_left(log_caps, t_min + log_unit)
    best = second = math.inf
    at = None
    for k in range(max(j - 1, 0), min(j + 1, len(log_caps))):
        t = log_caps[k] - log_unit
        cost = 0.05 * abs(t - t_c)
        for a, b, w in windows:
            if t < a:
                cost += w * (a - t)
            elif t > b:
                cost += w * (t - b)
        if cost < best:
            best, second, at = cost, best, k
        elif cost < second:
            second = cost
    return at if second - best > _LEVEL_MARGIN * max(1.0, best) else None


def solve_pinned(
    x0: Sequence[float],
    parts: Callable[[np.ndarray], Mapping[str, float]],
    pins: Mapping[str, float],
    defaults: Sequence[tuple[str, Callable[[np.ndarray], float]]],
    *,
    extra: Sequence[Callable[[np.ndarray], float]] = (),
) -> tuple[np.ndarray, tuple[str, ...]]:
    """Solve for a design's free parameters so that pinned parts take their pinned values.

    Parameters
    ----------
    x0 : sequence of float
        Starting values of the ``n`` parameters.
    parts : callable
        ``θ -> {ref: value}``: every part that can be pinned, for parameters ``θ``; a part that is
        not realisable there may come out zero, negative or NaN.
    pins : mapping
        Pinned values by reference.
    defaults : sequence of (name, callable)
        Residual functions of the default choices (equal capacitors, a chosen gain, ...), in
        order of priority; as many as the pins leave free are used, the first workable set wins.
    extra : sequence of callable
        Further residual equations always used (a pinned ratio, say).

    Returns
    -------
    (ndarray, tuple of str)
        The parameters and the names of the defaults used.

    Raises
    ------
    Infeasible
        More pins than free parameters, or no set of defaults admits a solution.
    """
    import scipy.optimize

    n = len(x0)
    need = n - len(pins) - len(extra)
    if need < 0:
        raise OverDetermined(f"{len(pins) + len(extra)} pinned values over-determine a circuit with {n} free choices; pin at most {n - len(extra)}")
    refs = list(pins)
    target = np.log(np.array([pins[r] for r in refs], dtype=float))

    def residual(th, chosen):
        p = parts(th)
        vals = np.array([p[r] for r in refs], dtype=float)
        with np.errstate(invalid="ignore", divide="ignore"):
            res = np.log(np.where(vals > 0, vals, np.nan)) - target
        rest = [f(th) for _, f in chosen] + [f(th) for f in extra]
        out = np.concatenate([res, np.asarray(rest, dtype=float)])
        return np.where(np.isfinite(out), out, 1e3)

    starts = [np.asarray(x0, dtype=float)]
    rng = np.random.default_rng(1)
    starts += [starts[0] + rng.normal(0.0, 0.7, n) for _ in range(4)]
    for chosen in itertools.combinations(defaults, need):
        for start in starts:
            try:
                sol = scipy.optimize.least_squares(lambda th: residual(th, chosen), start, method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15, max_nfev=400 * (n + 1))
            except (ValueError, np.linalg.LinAlgError):
                continue
            if not (np.all(np.isfinite(sol.x)) and np.max(np.abs(residual(sol.x, chosen)), initial=0.0) < 1e-11):
                continue
            if n and np.linalg.cond(sol.jac) > 1e10:
                break  # these defaults repeat what the pins already fix: try the next set
            return sol.x, tuple(name for name, _ in chosen)
    raise Infeasible("no set of part values meets the target with " + ", ".join(f"{r} pinned" for r in refs) + "; pin other parts or fewer")


def search_grid(q: float, *, slack: float = 1.35) -> np.ndarray:
    """A measuring grid in ω/ω0 for designs near a target of quality factor ``q``.

    Dense (steps of at most 2 %, and of a tenth of the relative bandwidth) from below the lower
    to above the upper −3 dB point of the target, widened by ``slack``; coarse (26 % steps) from
    1/30 to 30 beyond it, so that a far-off peak is still found.
    """
    half = 0.5 / q
    root = math.sqrt(1.0 + half * half)
    lo, hi = (root - half) / slack, (root + half) * slack
    step = min(0.02, 0.1 / q)
    dense = np.exp(np.arange(math.log(lo), math.log(hi) + step, step))
    coarse = np.logspace(-1.5, 1.5, 31)
    coarse = coarse[(coarse < lo) | (coarse > dense[-1])]
    return np.sort(np.concatenate([coarse, dense]))


def refine_measured(
    topology,
    values: Mapping[str, float],
    free: Sequence[str],
    spec: Spec,
    *,
    steps: int = 30,
) -> dict[str, float]:
    """Adjust three free parts until the measured f0, Q and |gain| meet the target (Newton's method).

    For circuits whose closed-form design is only approximate (an inductor with winding
    resistance). Each step measures the design and three perturbations in one batched solve.

    Raises
    ------
    Infeasible
        When the iteration does not reach the target to 1e-12.
    """
    from bandsmith.analysis.analyzer import transfer_function
    from bandsmith.analysis.figures import measure

    vals = dict(values)
    free = list(free)
    goal = np.log([spec.f0_hz, spec.q, spec.gain])
    h_step = 1e-6
    netlist = topology.build(vals)
    for _ in range(steps):
        base = np.array([vals[r] for r in free])
        over = {r: np.full(len(free) + 1, vals[r]) for r in free}
        for j, r in enumerate(free):
            over[r][j + 1] *= math.exp(h_step)
        with np.errstate(all="ignore"):
            fig = measure(transfer_function(netlist, overrides=over, w_ref=spec.w0))
        y = np.log(np.abs(np.column_stack([fig.f0_hz, fig.q, fig.gain_center])))
        if not np.all(np.isfinite(y)):
            raise Infeasible("the design does not settle on a band-pass peak near the target")
        err = y[0] - goal
        if np.max(np.abs(err)) < 1e-12:
            return vals
        jac = (y[1:] - y[0]).T / h_step
        try:
            delta = np.linalg.solve(jac, -err)
        except np.linalg.LinAlgError:
            raise Infeasible("the free parts cannot move f0, Q and gain independently here") from None
        big = np.max(np.abs(delta))
        if big > 0.5:
            delta *= 0.5 / big
        new = base * np.exp(delta)
        for r, v in zip(free, new):
            vals[r] = float(v)
    raise Infeasible("the design does not converge on the target")
