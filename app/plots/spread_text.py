"""How a tolerance spread's numbers are written, in the window's tables and in the report: plain
Python, so that the report and the window's texts need no Qt to use them."""

from __future__ import annotations

import math

from bandsmith.common.values import format_value

__all__ = ["count_text", "figure_text"]


def count_text(n: int) -> str:
    """A count with its thousands apart: 10 000."""
    return f"{int(n):,}".replace(",", " ")


def figure_text(key: str, x: float | None, *, deviation: bool = False) -> str:
    """A figure of the spread (``key`` ``"f0_hz"``, ``"q"`` or ``"gain_center_db"``): f0 in Hz, Q
    plain, the gain in signed dB; with ``deviation`` a standard deviation (fewer digits, the gain
    without a sign). "—" for None or a value that is not finite."""
    if x is None or not math.isfinite(x):
        return "—"
    if key == "f0_hz":
        return format_value(x, "Hz", digits=3 if deviation else 5)
    if key == "q":
        return f"{x:.3g}" if deviation else f"{x:.4g}"
    return f"{x:.3f} dB" if deviation else f"{x:+.3f} dB"
