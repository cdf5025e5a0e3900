"""How far a circuit's figures may stray from the ideal-op-amp ones, and the test of it."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from bandsmith.analysis.figures import Figures
from bandsmith.common.errors import InputError

__all__ = ["Tolerances", "tolerances_each", "within_tolerances"]


@dataclass(frozen=True, slots=True)
class Tolerances:
    """How far the finite-op-amp figures may stray from the ideal ones.

    ``f0`` and ``q`` are fractions (0.01 = 1 %); ``gain_db`` is in dB.
    """

    f0: float = 0.01
    q: float = 0.05
    gain_db: float = 0.5

    def __post_init__(self):
        for name in ("f0", "q", "gain_db"):
            v = getattr(self, name)
            if not (math.isfinite(v) and v > 0):
                raise InputError(f"tol-{name.replace('_', '-')}", f"must be a finite number above zero, got {v!r}")


def tolerances_each(tolerances: Tolerances | Sequence[Tolerances], n: int) -> list[Tolerances]:
    """Each of ``n`` candidates' tolerances: one set for all, or one per candidate as given."""
    return [tolerances] * n if isinstance(tolerances, Tolerances) else list(tolerances)


def within_tolerances(fig: Figures, ref: Figures, tol: Tolerances | Sequence[Tolerances], counts: Sequence[int] | None = None) -> np.ndarray:
    """True where ``fig`` is within ``tol`` of the reference figures (scalars in ``ref``, or one
    per member of ``fig``). With a tolerance per candidate, ``counts`` gives each one's number of
    members (in order): each member is held to its own candidate's tolerances.

    A member whose f0, Q or centre gain is not a number or infinite (figures not defined,
    :attr:`Figures.valid`) fails that figure's own test, its tolerance being finite
    (:class:`Tolerances` checks it): ``|NaN| ≤ t`` and ``∞ ≤ t`` are false, so no test of
    :attr:`Figures.valid` is needed beside them."""
    if isinstance(tol, Tolerances):
        f0, q, gain_db = tol.f0, tol.q, tol.gain_db
    else:
        f0, q, gain_db = (np.repeat([getattr(t, name) for t in tol], counts) for name in ("f0", "q", "gain_db"))
    with np.errstate(invalid="ignore"):
        ok = np.abs(fig.f0_hz / ref.f0_hz - 1.0) <= f0
        ok &= np.abs(fig.q / ref.q - 1.0) <= q
        ok &= np.abs(fig.gain_center_db - ref.gain_center_db) <= gain_db
        ok &= np.sign(fig.gain_center) == np.sign(ref.gain_center)
    return ok
