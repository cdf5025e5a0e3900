"""Plot axes shared by the window and the report.

:class:`LogAxis` reads a log axis in SI-prefixed numbers (100, 1k, 10k) rather than powers of ten.
"""

from __future__ import annotations

import math

import pyqtgraph as pg

from bandsmith.common.values import format_value

__all__ = ["LogAxis"]


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
