"""Units of parts and the display units used at the edges (JSON, text, window).

Inside the core every quantity is SI: ohm, farad, henry, volt per second, ampere. A few figures
are shown in the unit a data sheet uses — slew rate in V/µs, output current in mA — and the
conversions to those live here, so that the edges all scale the same way.
"""

from __future__ import annotations

__all__ = ["PART_UNITS", "part_unit", "to_v_per_us", "to_ma"]

#: Unit symbol of each part kind (resistor, capacitor, inductor).
PART_UNITS: dict[str, str] = {"R": "Ω", "L": "H", "C": "F"}


def part_unit(kind: str) -> str:
    """Unit symbol of a part kind (``"R"`` → ``"Ω"``); ``""`` for a kind without one."""
    return PART_UNITS.get(kind, "")


def to_v_per_us(v_per_s: float) -> float:
    """A slew rate in V/s shown in V/µs (the data-sheet unit)."""
    return v_per_s * 1e-6


def to_ma(a: float) -> float:
    """A current in A shown in mA."""
    return a * 1e3
