"""The limits a candidate is judged against: one documented, settable object.

Every limit names its source, or says "common practice, no source" where it is the trade's rule of
thumb rather than a published figure. A user changes them with :func:`dataclasses.replace` (or the
command line's options); :meth:`VerdictLimits.to_json` / :meth:`VerdictLimits.from_json` keep them in a
session.

Each limit has one of two weights: crossing a *marginal* limit makes a candidate ``marginal`` (it can
be built, with care or a better part); crossing a *hard* limit makes it ``not buildable``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields
from types import MappingProxyType
from typing import Any, Mapping

from bandsmith.common.errors import InputError
from bandsmith.analysis.inductor import ORDINARY_INDUCTOR_Q
from bandsmith.spread.tolerance import DEFAULT_TOLERANCES

__all__ = ["VerdictLimits", "LIMIT_SOURCES"]

#: Where each limit comes from (shown by ``--help`` and in the docs).
LIMIT_SOURCES = MappingProxyType({
    "r_spread_marginal": "common practice, no source (matched resistors from one series track over a few decades)",
    "r_spread_max": "common practice, no source",
    "c_spread_marginal": "common practice, no source (film and C0G parts from 100 pF to 1 µF, two decades apart)",
    "c_spread_max": "common practice, no source",
    "r_min_ohm": "common practice, no source (below it the part loads the op-amp's output and its driver)",
    "r_max_ohm": "common practice, no source (above it bias current, leakage, noise and stray capacitance matter)",
    "c_min_f": "common practice, no source (a few pF of board and pin stray then shift it by several per cent)",
    "c_max_f": "common practice, no source (above it only electrolytic or high-k parts: loss, drift, tolerance)",
    "l_min_h": "common practice, no source",
    "l_max_h": "common practice, no source",
    "gbw_ordinary_hz": "common practice, no source (general-purpose voltage-feedback op-amps: about 1 to 10 MHz)",
    "gbw_max_hz": "common practice, no source (beyond it high-speed op-amps, layout and stability dominate)",
    "slew_ordinary_v_per_us": "common practice, no source (general-purpose op-amps: about 0.5 to 20 V/µs)",
    "iout_ordinary_ma": "common practice, no source (general-purpose op-amps drive about 10 to 20 mA)",
    "opamp_slew_v_per_us": "the session's op-amp datasheet (unknown when not given)",
    "opamp_iout_ma": "the session's op-amp datasheet (unknown when not given)",
    "yield_marginal": "common practice, no source",
    "yield_min": "common practice, no source",
    "tolerances": "common practice, no source (ordinary stocked parts: metal film 1 %, film or C0G 5 %, inductors 10 %)",
    "window_f0": "same window as the tolerance spread's default (bandsmith.spread.tolerance.SpreadSettings)",
    "window_q": "same window as the tolerance spread's default",
    "window_gain_db": "same window as the tolerance spread's default",
    "inductor_q_ordinary": "bandsmith.analysis.inductor.ORDINARY_INDUCTOR_Q (common practice, no source)",
    "inductor_q_max": "common practice, no source (the best ferrite pot cores and toroids reach a few hundred)",
    "mc_trials": "a short check: about ±1 percentage point of standard error at 2 000 trials",
    "mc_seed": "fixed so that the same candidate always gets the same verdict",
    "confirm_band": "chosen here: estimates this close to a yield limit are checked by Monte Carlo",
    "confirm_sigma": "chosen here: beyond this relative spread the first-order model is checked over a wider band",
})


def _positive(name: str, value: Any, *, none_ok: bool = False) -> float | None:
    if value is None and none_ok:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(name.replace("_", "-"), f"{value!r} is not a number")
    v = float(value)
    if not (math.isfinite(v) and v > 0):
        raise InputError(name.replace("_", "-"), f"must be a finite number above zero, got {value!r}")
    return v


@dataclass(frozen=True, slots=True)
class VerdictLimits:
    """The limits of a verdict (SI units unless the name says otherwise; fractions 0.01 = 1 %).

    Figure errors are judged against the design tolerances the candidate was designed with
    (:class:`bandsmith.analysis.analyzer.Tolerances`, by default f0 ±1 %, Q ±5 %, gain ±0.5 dB),
    not against a limit of this object: beyond them a candidate is never ``buildable``.

    Parameters
    ----------
    r_spread_marginal, r_spread_max : float
        Largest over smallest resistor: ``marginal`` above 1 000 : 1, ``not buildable`` above
        5 000 : 1.
    c_spread_marginal, c_spread_max : float
        The same for capacitors: 100 : 1 and 10 000 : 1.
    r_min_ohm, r_max_ohm : float
        Practical resistors, 100 Ω to 10 MΩ (``marginal`` outside).
    c_min_f, c_max_f : float
        Practical capacitors, 47 pF to 10 µF (``marginal`` outside).
    l_min_h, l_max_h : float
        Practical inductors, 100 nH to 1 H (``marginal`` outside).
    gbw_ordinary_hz : float
        Required GBW above this (10 MHz) needs a fast op-amp: ``marginal``.
    gbw_max_hz : float
        Required GBW above this (50 MHz) is beyond what a band-pass stage should ask: ``not buildable``.
        A session's op-amp (``Conditions.gbw_hz``) slower than the required GBW also makes it
        ``not buildable``.
    slew_ordinary_v_per_us, iout_ordinary_ma : float
        What an ordinary op-amp offers (10 V/µs, 20 mA): ``marginal`` above.
    opamp_slew_v_per_us, opamp_iout_ma : float or None
        The session's op-amp, when known: ``not buildable`` above.
    yield_marginal, yield_min : float
        Yield under ``tolerances`` within the window: ``marginal`` below 90 %, ``not buildable``
        below 50 %.
    tolerances : mapping
        Part tolerances by kind (``R``, ``C``, ``L``) or reference; default R 1 %, C 5 %, L 10 %
        (uniform over ±p, as :func:`bandsmith.spread.tolerance.run_spread` draws them).
    window_f0, window_q, window_gain_db : float
        The yield window around the nominal figures: ±5 %, ±10 %, ±1 dB.
    inductor_q_ordinary, inductor_q_max : float
        An inductor whose winding must reach a Q above 200 (ordinary small inductors) is ``marginal``,
        above 500 ``not buildable``. The Q needed keeps the circuit's Q within its design tolerance
        (:func:`bandsmith.analysis.inductor.inductor_q_needed`).
    mc_trials, mc_seed : int
        The short Monte Carlo that confirms a yield estimate.
    confirm_band : float
        Estimates within this distance of a yield limit (0.05 = 5 percentage points) are confirmed.
    confirm_sigma : float
        Where a figure's first-order relative spread exceeds this (5 %), the first-order model
        bends, and estimates within twice ``confirm_band`` of a yield limit are confirmed.
    """

    r_spread_marginal: float = 1_000.0
    r_spread_max: float = 5_000.0
    c_spread_marginal: float = 100.0
    c_spread_max: float = 10_000.0
    r_min_ohm: float = 100.0
    r_max_ohm: float = 10e6
    c_min_f: float = 47e-12
    c_max_f: float = 10e-6
    l_min_h: float = 100e-9
    l_max_h: float = 1.0
    gbw_ordinary_hz: float = 10e6
    gbw_max_hz: float = 50e6
    slew_ordinary_v_per_us: float = 10.0
    iout_ordinary_ma: float = 20.0
    opamp_slew_v_per_us: float | None = None
    opamp_iout_ma: float | None = None
    yield_marginal: float = 0.90
    yield_min: float = 0.50
    tolerances: Mapping[str, float] = field(default_factory=lambda: dict(DEFAULT_TOLERANCES))
    window_f0: float = 0.05
    window_q: float = 0.10
    window_gain_db: float = 1.0
    inductor_q_ordinary: float = ORDINARY_INDUCTOR_Q
    inductor_q_max: float = 500.0
    mc_trials: int = 2_000
    mc_seed: int = 1
    confirm_band: float = 0.05
    confirm_sigma: float = 0.05

    def __post_init__(self):
        for f in fields(self):
            if f.name in ("tolerances", "mc_trials", "mc_seed"):
                continue
            none_ok = f.name in ("opamp_slew_v_per_us", "opamp_iout_ma")
            object.__setattr__(self, f.name, _positive(f.name, getattr(self, f.name), none_ok=none_ok))
        for name in ("yield_marginal", "yield_min"):
            if getattr(self, name) > 1:
                raise InputError(name.replace("_", "-"), f"is a fraction of trials, at most 1 (100 %), got {getattr(self, name)!r}")
        if self.yield_min > self.yield_marginal:
            raise InputError("yield-min", f"{100 * self.yield_min:g} % is above the marginal yield {100 * self.yield_marginal:g} %")
        for lo, hi in (("r_spread_marginal", "r_spread_max"), ("c_spread_marginal", "c_spread_max"),
                       ("r_min_ohm", "r_max_ohm"), ("c_min_f", "c_max_f"), ("l_min_h", "l_max_h"),
                       ("gbw_ordinary_hz", "gbw_max_hz"), ("inductor_q_ordinary", "inductor_q_max")):
            if getattr(self, lo) > getattr(self, hi):
                raise InputError(lo.replace("_", "-"), f"{getattr(self, lo):g} is above {hi.replace('_', '-')} {getattr(self, hi):g}")
        if not isinstance(self.tolerances, Mapping):
            raise InputError("tol", "must map kinds or part references to fractions")
        merged = dict(DEFAULT_TOLERANCES)
        for key, p in self.tolerances.items():
            if isinstance(p, bool) or not isinstance(p, (int, float)) or not (math.isfinite(p) and 0 <= p <= 0.5):
                raise InputError(f"tol {key}", f"must be a fraction from 0 to 0.5 (50 %), got {p!r}")
            merged[str(key)] = float(p)
        object.__setattr__(self, "tolerances", MappingProxyType(dict(sorted(merged.items()))))
        for name, low in (("mc_trials", 100), ("mc_seed", 0)):
            v = getattr(self, name)
            if isinstance(v, bool) or not isinstance(v, int) or v < low:
                raise InputError(name.replace("_", "-"), f"must be a whole number of {low} or more, got {v!r}")

    def key(self) -> tuple:
        """Every limit in one hashable tuple (equal limits, equal keys): what a cache keys on,
        worked out once instead of at every lookup."""
        return tuple(tuple(v.items()) if isinstance(v, Mapping) else v for v in (getattr(self, f.name) for f in fields(self)))

    def __hash__(self):
        return hash(self.key())

    def tolerance_of(self, ref: str, kind: str) -> float:
        """The tolerance of part ``ref`` of ``kind``: by reference, else by kind, else 0."""
        return float(self.tolerances.get(ref, self.tolerances.get(kind, 0.0)))

    def to_json(self) -> dict:
        """A plain JSON object of every limit (the field names listed once, in :data:`_NAMES`;
        ``tolerances`` is the one mapping among them)."""
        out = {name: getattr(self, name) for name in _NAMES}
        out["tolerances"] = dict(self.tolerances)
        return out

    @classmethod
    def from_json(cls, obj: Any) -> "VerdictLimits":
        """Read :meth:`to_json`'s object back; missing keys take their defaults, unknown keys are bad input."""
        if not isinstance(obj, Mapping):
            raise InputError("limits", "the verdict limits must be a JSON object")
        names = {f.name for f in fields(cls)}
        extra = sorted(set(obj) - names)
        if extra:
            raise InputError("limits", f"unknown limit {extra[0]!r}")
        return cls(**dict(obj))


#: The limits' field names, in their order (what :meth:`VerdictLimits.to_json` writes).
_NAMES = tuple(f.name for f in fields(VerdictLimits))
