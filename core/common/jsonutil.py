"""Helpers for writing results as JSON."""

from __future__ import annotations

import math

__all__ = ["finite_or_none", "finite_or_none_each"]


def finite_or_none(x: float | None) -> float | None:
    """``x`` as a plain float, or None when it is None, NaN or infinite (JSON has no NaN)."""
    return None if x is None or not math.isfinite(x) else float(x)


def finite_or_none_each(values) -> list[float | None]:
    """:func:`finite_or_none` of each of ``values``, in order (one call for the many numbers of
    one JSON object)."""
    isfinite = math.isfinite
    return [None if x is None or not isfinite(x) else float(x) for x in values]
