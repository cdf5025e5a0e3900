"""Normalised sensitivities ``S = ∂ln y/∂ln x`` by central differences in ``ln x``.

Every caller perturbs each quantity up and down by the same step in ``ln x`` — the analysis of
one candidate (its parts, ideal op-amp) and the tolerance spread (its parts and the op-amp's GBW)
— and reads the slopes the same way. With a step of 1e-4 the truncation error is of order
``step² ≈ 1e-8`` (central difference, common practice, no source).
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["SENS_STEP", "perturbed_ratios", "log_slopes"]

#: The step in ``ln x`` of the central differences.
SENS_STEP = 1e-4


def perturbed_ratios(n: int) -> np.ndarray:
    """Ratios to nominal for ``n`` quantities, shape ``(2n, n)``: row ``2j`` has quantity ``j``
    up by the step (``e^+step``), row ``2j + 1`` down (``e^−step``), every other entry 1."""
    rows = np.ones((2 * n, n))
    for j in range(n):
        rows[2 * j, j] = math.exp(SENS_STEP)
        rows[2 * j + 1, j] = math.exp(-SENS_STEP)
    return rows


def log_slopes(y: np.ndarray) -> np.ndarray:
    """``(ln y_up − ln y_down)/(2·step)`` along the last axis, whose members alternate up, down."""
    ly = np.log(y)
    return (ly[..., 0::2] - ly[..., 1::2]) / (2.0 * SENS_STEP)
