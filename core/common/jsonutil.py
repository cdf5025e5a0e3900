"""Helpers for writing results as JSON."""

from __future__ import annotations

import math

__all__ = ["finite_or_none"]


def finite_or_none(x: float | None) -> float | None:
    """``x`` as a plain float, or None when it is None, NaN or infinite (JSON has no NaN)."""
    return None if x is None or not math.isfinite(x) else float(x)
