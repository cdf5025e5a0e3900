"""What a tolerance spread is asked to do: tolerances, distribution, trials, seed and yield window."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any, Mapping

import numpy as np

from bandsmith.analysis.analyzer import Tolerances
from bandsmith.common.errors import InputError

__all__ = ["DEFAULT_TOLERANCES", "KINDS", "DISTRIBUTIONS", "STAT_KEYS", "CHUNK", "MAX_CORNER_PARTS", "MAX_TOLERANCE", "MAX_TRIALS", "SpreadSettings", "SpreadCancelled"]


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
