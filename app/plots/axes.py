"""Plot axes shared by the window and the report.

:class:`LogAxis` reads a log axis in SI-prefixed numbers (100, 1k, 10k) rather than powers of ten;
:class:`FrequencyAxis`, the report's, labels only the decades and the 2 and 5 between them.
"""

from __future__ import annotations

import math

import pyqtgraph as pg

from bandsmith.common.values import format_value

__all__ = ["LogAxis", "FrequencyAxis"]


class LogAxis(pg.AxisItem):
    """A logarithmic axis whose ticks read 100, 1k, 10k, 1M (SI prefixes, no exponents).

    With ``plain=True`` the ticks are plain numbers (0.01, 0.1, 1, 10) for dimensionless ratios,
    where "10m" would read as metres or milli-something.
    """

    def __init__(self, orientation, *, plain: bool = False, **kw):
        super().__init__(orientation, **kw)
        self._plain = plain
        self.enableAutoSIPrefix(False)

    def tickStrings(self, values, scale, spacing):
        if not self.logMode:
            return super().tickStrings(values, scale, spacing)
        out = []
        for v in values:
            x = 10.0**v
            if not math.isfinite(x):
                out.append("")
            elif self._plain:
                out.append(f"{x:g}")
            else:
                out.append(format_value(x, "", digits=3).replace(" ", ""))
        return out


class FrequencyAxis(pg.AxisItem):
    """A log-frequency axis whose ticks read 100, 1k, 10k (not 10² or 1000)."""

    def tickStrings(self, values, scale, spacing):
        if not self.logMode:
            return super().tickStrings(values, scale, spacing)
        return [_tick_hz(10.0 ** v) if _labelled(v) else "" for v in values]


def _labelled(log_f: float) -> bool:
    """Label the decades and the 2 and 5 between them; the other minor ticks only get grid lines."""
    if not math.isfinite(log_f):
        return False
    mantissa = 10.0 ** (log_f - math.floor(log_f + 1e-9))
    return any(abs(mantissa - m) < 1e-6 * m for m in (1.0, 2.0, 5.0))


def _tick_hz(f: float) -> str:
    text = format_value(f, "", digits=3).strip()
    return text.replace(" ", "")
