"""The worst case of a tolerance spread: every corner of the tolerance box, or the sensitivity corners."""

from __future__ import annotations

import math
from dataclasses import dataclass
from types import MappingProxyType
from typing import Mapping

import numpy as np

from bandsmith.solver.expansion import Variable
from bandsmith.solver.mna import IDEAL, OpAmpModel
from bandsmith.solver.netlist import Netlist
from bandsmith.spread.spread_settings import MAX_CORNER_PARTS, SpreadSettings
from bandsmith.spread.evaluator import Evaluator, prepare_spread

__all__ = ["WorstCase", "worst_case", "worst_of"]


@dataclass(frozen=True, slots=True)
class WorstCase:
    """Extreme figures over the corners of the tolerance box.

    Attributes
    ----------
    method : str
        ``"all corners"``, ``"sensitivity corners"`` or ``"nominal"`` (nothing varies).
    corner_count : int
        Corners evaluated.
    f0_hz, q, gain_center_db : tuple of float
        ``(lowest, highest)`` over the stable corners (NaN when none is).
    corners : mapping
        For each of ``"f0_hz"``, ``"q"``, ``"gain_center_db"``: the ``(lowest, highest)`` corners,
        each a mapping of part reference (and ``"gbw"``) to its signed deviation (fraction).
    unstable_corners : int
        Corners whose circuit is unstable or has no band-pass peak.
    """

    method: str
    corner_count: int
    f0_hz: tuple[float, float]
    q: tuple[float, float]
    gain_center_db: tuple[float, float]
    corners: Mapping[str, tuple[Mapping[str, float], Mapping[str, float]]]
    unstable_corners: int = 0

    def to_json(self) -> dict:
        return {
            "f0_hz": [float(v) for v in self.f0_hz],
            "q": [float(v) for v in self.q],
            "gain_center_db": [float(v) for v in self.gain_center_db],
            "corners": {k: [dict(lo), dict(hi)] for k, (lo, hi) in self.corners.items()},
            "method": self.method,
            "corner_count": int(self.corner_count),
            "unstable_corners": int(self.unstable_corners),
        }


def worst_of(ev: Evaluator, tol: Mapping[str, float], parts: list[Variable], gbw_tol: float) -> WorstCase:
    names = [v.name for v in parts if tol[v.name] > 0]
    p = [tol[nm] for nm in names]
    if gbw_tol > 0:
        names.append("gbw")
        p.append(gbw_tol)
    p = np.array(p)
    index = {v.name: j for j, v in enumerate(ev.variables)}
    nom = ev.nominal
    keys = ("f0_hz", "q", "gain_center_db")
    if not names:
        same = {k: (float(getattr(nom, k)), float(getattr(nom, k))) for k in keys}
        return WorstCase("nominal", 0, same["f0_hz"], same["q"], same["gain_center_db"], MappingProxyType({k: ({}, {}) for k in keys}))
    if len(names) <= MAX_CORNER_PARTS:
        method = "all corners"
        signs = 1.0 - 2.0 * ((np.arange(2 ** len(names))[:, None] >> np.arange(len(names))[None, :]) & 1)
    else:
        method = "sensitivity corners"
        sens = ev.sensitivities()
        rows = []
        for key in ("f0", "q", "gain"):
            s = np.array([sens[key][index[nm]] for nm in names])
            d = np.where(s >= 0, 1.0, -1.0)
            rows += [-d, d]
        signs = np.array(rows)
    ratios = np.ones((signs.shape[0], len(ev.variables)))
    for j, nm in enumerate(names):
        ratios[:, index[nm]] = 1.0 + signs[:, j] * p[j]
    fig, ok = ev.figures(ratios)
    gain_db = fig.gain_center_db
    out = {}
    corners = {}
    for key, y in (("f0_hz", fig.f0_hz), ("q", fig.q), ("gain_center_db", gain_db)):
        y = np.where(ok, y, np.nan)
        if not np.any(np.isfinite(y)):
            out[key] = (math.nan, math.nan)
            corners[key] = ({}, {})
            continue
        lo, hi = int(np.nanargmin(y)), int(np.nanargmax(y))
        out[key] = (float(y[lo]), float(y[hi]))
        corners[key] = tuple(MappingProxyType({nm: float(signs[i, j] * p[j]) for j, nm in enumerate(names)}) for i in (lo, hi))
    return WorstCase(
        method=method,
        corner_count=int(signs.shape[0]),
        f0_hz=out["f0_hz"],
        q=out["q"],
        gain_center_db=out["gain_center_db"],
        corners=MappingProxyType(corners),
        unstable_corners=int(np.count_nonzero(~ok)),
    )


def worst_case(netlist: Netlist, settings: SpreadSettings = SpreadSettings(), *, opamp: OpAmpModel = IDEAL, engine: str = "auto") -> WorstCase:
    """The worst case alone (every corner of the tolerance box, or the sensitivity corners)."""
    prep = prepare_spread(netlist, settings, opamp, engine)
    return worst_of(prep.evaluator, prep.tolerances, prep.parts, settings.gbw_tol)  # setup_spread refused a spread GBW of an ideal op-amp
