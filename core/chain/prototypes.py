"""Low-pass prototypes of order 1 … 8: Butterworth, Chebyshev type I and Bessel.

A prototype is a normalised all-pole low-pass ``H(s) = k / ∏(s − p_i)`` (``s`` in rad/s with the
band edge at 1 rad/s). Its poles come from :mod:`scipy.signal` (``buttap``, ``cheb1ap``,
``besselap(norm='mag')``), so the normalisation is scipy's:

- Butterworth: −3 dB at 1 rad/s, |H(0)| = 1.
- Chebyshev type I with ripple ``R`` dB: the ripple band ends at 1 rad/s, where the magnitude is
  −R dB; the passband peak is 1 (0 dB), so |H(0)| = 1 for odd N and 10^(−R/20) for even N.
- Bessel (``norm='mag'``): −3 dB at 1 rad/s, |H(0)| = 1 (not the delay-normalised Bessel).

Each prototype lists its sections: a real pole ``−α0`` (first order) or a conjugate pair
``−α ± jβ`` with pole frequency ``ωp = √(α² + β²)`` and ``Q = ωp/(2α)``.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

import numpy as np

from bandsmith.common.errors import InputError
from bandsmith.common.limits import RIPPLE_DB_MIN

__all__ = [
    "RESPONSES",
    "MIN_ORDER",
    "MAX_ORDER",
    "DEFAULT_RIPPLE_DB",
    "MAX_RIPPLE_DB",
    "PrototypeSection",
    "Prototype",
    "prototype",
    "check_order",
    "check_response",
    "check_ripple",
]

RESPONSES = ("butterworth", "chebyshev", "bessel")
MIN_ORDER, MAX_ORDER = 1, 8
DEFAULT_RIPPLE_DB = 0.5
MAX_RIPPLE_DB = 6.0
# A pole whose imaginary part is below this fraction of its magnitude is real.
_REAL_TOL = 1e-9


@dataclass(frozen=True, slots=True)
class PrototypeSection:
    """One section of a low-pass prototype (normalised, rad/s).

    Attributes
    ----------
    alpha : float
        Minus the real part of the pole (> 0).
    beta : float
        Imaginary part of the upper pole of the pair; 0 for a real pole.
    """

    alpha: float
    beta: float

    @property
    def real(self) -> bool:
        """True for a first-order section (a real pole)."""
        return self.beta == 0.0

    @property
    def w_p(self) -> float:
        """Pole frequency ``√(α² + β²)`` (rad/s, normalised)."""
        return math.hypot(self.alpha, self.beta)

    @property
    def q(self) -> float:
        """Pole Q ``ωp/(2α)``; 0.5 for a real pole, by the same formula."""
        return self.w_p / (2.0 * self.alpha)

    @property
    def pole(self) -> complex:
        """The pole in the upper half plane (or on the real axis)."""
        return complex(-self.alpha, self.beta)

    def to_json(self) -> dict:
        return {"real": self.real, "alpha": float(self.alpha), "beta": float(self.beta), "w_p": float(self.w_p), "q": None if self.real else float(self.q)}


@dataclass(frozen=True, slots=True)
class Prototype:
    """A normalised low-pass prototype ``H(s) = k / ∏(s − p_i)``.

    Attributes
    ----------
    response : str
        ``butterworth``, ``chebyshev`` or ``bessel``.
    order : int
        N, the number of poles.
    ripple_db : float or None
        Passband ripple (Chebyshev only), dB.
    poles : ndarray
        The N poles (complex, rad/s normalised), as scipy returns them.
    k : float
        Gain constant.
    """

    response: str
    order: int
    ripple_db: float | None
    poles: np.ndarray
    k: float

    @property
    def sections(self) -> tuple[PrototypeSection, ...]:
        """Real poles and conjugate pairs (one entry per pair), by ascending Q, then ωp."""
        out = []
        for p in self.poles:
            if abs(p.imag) <= _REAL_TOL * abs(p):
                out.append(PrototypeSection(float(-p.real), 0.0))
            elif p.imag > 0:
                out.append(PrototypeSection(float(-p.real), float(p.imag)))
        out.sort(key=lambda s: (s.q, s.w_p))
        return tuple(out)

    @property
    def dc_gain(self) -> float:
        """|H(0)|: 1, or 10^(−R/20) for an even-order Chebyshev."""
        return float(abs(self.k / np.prod(-self.poles)))

    @property
    def peak_gain(self) -> float:
        """The largest magnitude over frequency: 1 for all three families as normalised here."""
        return 1.0

    @property
    def edge_level_db(self) -> float:
        """Magnitude at the band edge ω = 1, dB relative to the peak: −3.01 dB or −R dB."""
        return float(20.0 * np.log10(np.abs(self.at_s(np.array([1j])))[0]))

    def at_s(self, s: np.ndarray) -> np.ndarray:
        """``H(s)`` at complex normalised frequencies (any shape)."""
        s = np.asarray(s, dtype=complex)
        return self.k / np.prod(s[..., None] - self.poles, axis=-1)

    def to_json(self) -> dict:
        return {
            "response": self.response,
            "order": int(self.order),
            "ripple_db": None if self.ripple_db is None else float(self.ripple_db),
            "sections": [s.to_json() for s in self.sections],
        }


def check_response(response: str) -> str:
    """The response family's name, lower-cased; InputError ``response`` otherwise."""
    name = str(response).strip().lower()
    if name not in RESPONSES:
        raise InputError("response", f"{response!r} is not a response; choose one of {', '.join(RESPONSES)}")
    return name


def check_order(order) -> int:
    """The prototype order as an int from 1 to 8; InputError ``order`` otherwise.

    Accepts an int or the text of one (``"4"``); refuses fractions, booleans and other types.
    """
    if isinstance(order, bool):
        raise InputError("order", f"must be an integer from {MIN_ORDER} to {MAX_ORDER}, got {order!r}")
    if isinstance(order, str):
        text = order.strip()
        if not text.lstrip("+-").isdigit():
            raise InputError("order", f"must be an integer from {MIN_ORDER} to {MAX_ORDER}, got {order!r}")
        n = int(text)
    elif isinstance(order, numbers.Integral):
        n = int(order)
    else:
        raise InputError("order", f"must be an integer from {MIN_ORDER} to {MAX_ORDER}, got {order!r}")
    if not MIN_ORDER <= n <= MAX_ORDER:
        raise InputError("order", f"must be an integer from {MIN_ORDER} to {MAX_ORDER}, got {n}")
    return n


def check_ripple(response: str, ripple_db: float | None) -> float | None:
    """The ripple in dB for a Chebyshev (default 0.5 dB), None for the others.

    A ripple given for Butterworth or Bessel, or one outside (0, 6] dB, is an InputError
    ``ripple-db``.
    """
    if response != "chebyshev":
        if ripple_db is not None:
            raise InputError("ripple-db", f"applies to chebyshev only, not to {response}")
        return None
    if ripple_db is None:
        return DEFAULT_RIPPLE_DB
    r = float(ripple_db)
    if not (math.isfinite(r) and RIPPLE_DB_MIN <= r <= MAX_RIPPLE_DB):
        raise InputError("ripple-db", f"must be from {RIPPLE_DB_MIN:g} to {MAX_RIPPLE_DB:g} dB, got {ripple_db!r}")
    return r


def prototype(response: str, order, *, ripple_db: float | None = None) -> Prototype:
    """The normalised low-pass prototype of a response family.

    Parameters
    ----------
    response : str
        ``butterworth``, ``chebyshev`` or ``bessel``.
    order : int
        N from 1 to 8.
    ripple_db : float, optional
        Chebyshev passband ripple in dB, 0 < R ≤ 6 (default 0.5); not allowed for the others.

    Raises
    ------
    InputError
        Naming ``response``, ``order`` or ``ripple-db``.
    """
    import scipy.signal  # here, not at import: it costs the window 0.6 s at start

    name = check_response(response)
    n = check_order(order)
    rp = check_ripple(name, ripple_db)
    if name == "butterworth":
        _, p, k = scipy.signal.buttap(n)
    elif name == "chebyshev":
        _, p, k = scipy.signal.cheb1ap(n, rp)
    else:
        _, p, k = scipy.signal.besselap(n, norm="mag")
    return Prototype(response=name, order=n, ripple_db=rp, poles=np.asarray(p, dtype=complex), k=float(np.real(k)))
