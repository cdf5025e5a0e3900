"""Headroom: how large every node's voltage gets, and how much input fits before something clips.

For a sine of peak ``vin_v`` at the input, every node's peak voltage is ``vin_v·max_f |V_node(f)|``
with ``V_node`` the node's response to a unit input from the netlist solve
(:meth:`bandsmith.solver.mna.MnaSystem.solve`, all frequencies in one call). Each node has a range it may
span (the circuits work on a symmetric supply ±V with every node at 0 V with no signal):

- an op-amp output: the output swing, ``−V + swing_neg_v`` to ``+V − swing_pos_v``;
- an op-amp input: the input common-mode range, ``−V + cm_neg_v`` to ``+V − cm_pos_v``;
- any other node (the input too, which a stage on the same supply drives): the rails ``±V``.

With an ideal op-amp (no shelf model) every node gets the rails. The signal is symmetric about
0 V, so a node's allowed peak is the nearer end of its range; the largest input level is the
smallest allowed-peak over peak-per-volt ratio, and the node that gives it limits first.

Method
------
The peak over frequency is searched on 301 log-spaced points from f_c/1000 to 1000·f_c (f_c the
ideal-op-amp natural frequency), then refined five times on 17 points between each node's best grid
neighbours, every node at once (one solve per pass); the magnitude is flat at its peak, so the
refined peak agrees with an independent search to 1e-8 relative (tests/test_headroom.py) even for
a Q of 26. A node whose response still rises at the edge of the
window reports the edge value.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Mapping

import numpy as np

from bandsmith.common.jsonutil import finite_or_none
from bandsmith.solver.ampmodel import amp_system
from bandsmith.common.errors import InputError
from bandsmith.solver.mna import MnaSystem, build_system
from bandsmith.solver.netlist import Element, Netlist
from bandsmith.solver.rational import reference_w, nominal_w_ref
from bandsmith.bench.shelf import OpAmp

__all__ = ["NodePeaks", "NodeLimit", "Headroom", "node_peaks", "node_limits", "headroom", "DEFAULT_SUPPLY_V"]

# ±15 V split supply: the customary analog supply (common practice, no source).
DEFAULT_SUPPLY_V = 15.0

_SPAN = 1e3
_POINTS = 301
_REFINE_POINTS = 17
_REFINE_PASSES = 5


@dataclass(frozen=True, slots=True)
class NodePeaks:
    """Peak of ``|V_node/V_in|`` over frequency for every node (input included), and where it is.

    ``peak_f_hz`` is NaN for a node whose magnitude is the same at every frequency (the input, a
    virtual ground of an ideal op-amp); a node below 1e-12 of the largest peak is taken as 0 V.
    """

    nodes: tuple[str, ...]
    peak_per_v: np.ndarray
    peak_f_hz: np.ndarray

    def of(self, node: str) -> float:
        return float(self.peak_per_v[self.nodes.index(node)])


def node_peaks(system: MnaSystem, netlist: Netlist, *, f_center_hz: float | None = None) -> NodePeaks:
    """Peak gain from the input to every node over frequency (member 0 of ``system``).

    Parameters
    ----------
    system : MnaSystem
        The circuit's pencil (any op-amp model).
    netlist : Netlist
        The netlist the system was built from (for the node names).
    f_center_hz : float, optional
        Centre of the search window; the ideal natural frequency of ``system`` by default.
    """
    if f_center_hz is None or not (math.isfinite(f_center_hz) and f_center_hz > 0):
        f_center_hz = reference_w(system) / (2.0 * math.pi)
    nodes = (netlist.input,) + tuple(n for n in netlist.nodes if n != netlist.input)
    cols = np.array([system.layout.node_index[n] for n in nodes])
    one = MnaSystem(system.G[:1], system.C[:1], system.layout, system.output_index)

    def mags(f):  # f: (F,) → |V| of every node, (F, N)
        x = one.solve(2j * np.pi * f)[0]
        return np.abs(x[:, cols])

    f = f_center_hz * np.geomspace(1.0 / _SPAN, _SPAN, _POINTS)
    m = mags(f)
    best = np.argmax(m, axis=0)  # (N,)
    lo = f[np.maximum(best - 1, 0)]
    hi = f[np.minimum(best + 1, f.size - 1)]
    peak = m[best, np.arange(len(nodes))]
    at = f[best]
    t = np.linspace(0.0, 1.0, _REFINE_POINTS)
    for _ in range(_REFINE_PASSES):
        grid = np.exp(np.log(lo)[:, None] + (np.log(hi) - np.log(lo))[:, None] * t[None, :])  # (N, P)
        mm = mags(grid.reshape(-1)).reshape(len(nodes), _REFINE_POINTS, len(nodes))
        own = mm[np.arange(len(nodes)), :, np.arange(len(nodes))]  # (N, P): node k on its own grid
        k = np.argmax(own, axis=1)
        better = own[np.arange(len(nodes)), k] > peak
        peak = np.where(better, own[np.arange(len(nodes)), k], peak)
        at = np.where(better, grid[np.arange(len(nodes)), k], at)
        lo = grid[np.arange(len(nodes)), np.maximum(k - 1, 0)]
        hi = grid[np.arange(len(nodes)), np.minimum(k + 1, _REFINE_POINTS - 1)]
    # A node at rounding-noise level (an ideal op-amp's virtual ground) is at 0 V.
    zero = peak <= 1e-12 * np.max(peak)
    peak = np.where(zero, 0.0, peak)
    flat = zero | (np.ptp(m, axis=0) <= 1e-9 * np.max(m, axis=0))
    return NodePeaks(nodes, peak, np.where(flat, np.nan, at))


@dataclass(frozen=True, slots=True)
class NodeLimit:
    """The range a node may span (V) and what sets it."""

    node: str
    low_v: float
    high_v: float
    what: str

    @property
    def amplitude_v(self) -> float:
        """Largest peak of a signal centred on 0 V that stays inside the range (0 if none)."""
        return max(0.0, min(self.high_v, -self.low_v))

    def to_json(self) -> dict:
        return {"low_v": float(self.low_v), "high_v": float(self.high_v), "what": self.what}


def node_limits(netlist: Netlist, supply_v: float, amp: OpAmp | None = None) -> dict[str, NodeLimit]:
    """The allowed range of every node on a ±``supply_v`` supply with op-amp model ``amp``."""
    if not (math.isfinite(supply_v) and supply_v > 0):
        raise InputError("supply", f"must be a finite number above zero (the ±V of a symmetric supply), got {supply_v!r}")
    nodes = (netlist.input,) + tuple(n for n in netlist.nodes if n != netlist.input)
    out = {n: NodeLimit(n, -supply_v, supply_v, "supply rails") for n in nodes}
    if amp is None:
        return out

    own: dict[str, NodeLimit] = {}

    def narrow(node, low, high, what):
        if node == netlist.ground or node not in out:
            return
        cur = own.get(node)
        if cur is None:
            own[node] = NodeLimit(node, low, high, what)
        else:
            whats = cur.what if what in cur.what else f"{cur.what} and {what}"
            own[node] = NodeLimit(node, max(cur.low_v, low), min(cur.high_v, high), whats)

    for e in netlist.opamps:
        plus, minus, o = e.nodes
        for n in (plus, minus):
            narrow(n, -supply_v + amp.cm_neg_v, supply_v - amp.cm_pos_v, "input common-mode range")
        narrow(o, -supply_v + amp.swing_neg_v, supply_v - amp.swing_pos_v, "output swing")
    out.update(own)
    return out


@dataclass(frozen=True, slots=True)
class Headroom:
    """Node peaks at the input level, each node's range, the node that limits and the input that fits.

    Attributes
    ----------
    vin_v : float
        Input peak amplitude (V) the peaks are given for.
    supply_v : float
        The symmetric supply ±V.
    amp : str or None
        The shelf model's name (None: ideal op-amp, limits from the rails only).
    node_peak_v : mapping
        Peak voltage of every node (V) at ``vin_v``.
    node_peak_f_hz : mapping
        The frequency of each peak (Hz); NaN for a node that is flat over frequency.
    limits : mapping
        :class:`NodeLimit` of every node.
    limiting_node : str or None
        The node that reaches its limit first as the input grows.
    max_vin_v : float
        Largest input peak (V) with every node inside its range (inf if no node limits).
    """

    vin_v: float
    supply_v: float
    amp: str | None
    node_peak_v: Mapping[str, float]
    node_peak_f_hz: Mapping[str, float]
    limits: Mapping[str, NodeLimit]
    limiting_node: str | None
    max_vin_v: float

    def spare_v(self, node: str) -> float:
        """Allowed peak minus the peak at ``vin_v`` (V); negative where the node clips."""
        return self.limits[node].amplitude_v - self.node_peak_v[node]

    def to_json(self) -> dict:
        f = finite_or_none

        return {
            "amp": self.amp,
            "vin_v": float(self.vin_v),
            "supply_v": float(self.supply_v),
            "node_peak_v": {k: float(v) for k, v in self.node_peak_v.items()},
            "node_peak_f_hz": {k: f(v) for k, v in self.node_peak_f_hz.items()},
            "node_limit_v": {k: float(v.amplitude_v) for k, v in self.limits.items()},
            "limits": {k: v.to_json() for k, v in self.limits.items()},
            "limiting_node": self.limiting_node,
            "max_vin_v": f(self.max_vin_v),
        }


def _loaded(netlist: Netlist, rload_ohm: float | None) -> Netlist:
    if rload_ohm is None:
        return netlist
    if not (math.isfinite(rload_ohm) and rload_ohm > 0):
        raise InputError("rload", f"must be a finite number above zero, got {rload_ohm!r}")
    return netlist.with_element(Element("RLOAD", "R", (netlist.output, netlist.ground), rload_ohm))


def headroom(
    netlist: Netlist,
    *,
    vin_v: float = 1.0,
    supply_v: float = DEFAULT_SUPPLY_V,
    amp: OpAmp | None = None,
    rload_ohm: float | None = None,
) -> Headroom:
    """Headroom of a circuit at an input level, on a ±``supply_v`` supply.

    Parameters
    ----------
    netlist : Netlist
        The circuit.
    vin_v : float
        Input peak amplitude (V).
    supply_v : float
        The symmetric supply ±V (V).
    amp : OpAmp, optional
        The shelf model: its response (one or two poles) and its swing and common-mode limits.
        None: an ideal op-amp, every node limited by the rails.
    rload_ohm : float, optional
        A load from the output to ground (ohm). The op-amp models have no output resistance, so a
        load changes no node voltage; it is in the solve for completeness.
    """
    if not (math.isfinite(vin_v) and vin_v > 0):
        raise InputError("vin", f"must be a finite number above zero, got {vin_v!r}")
    limits = node_limits(netlist, supply_v, amp)
    loaded = _loaded(netlist, rload_ohm)
    f_c = nominal_w_ref(netlist) / (2.0 * math.pi)
    if amp is None:
        system = build_system(loaded)
    else:
        system = amp_system(loaded, gbw_hz=amp.gbw_hz, a0=amp.a0, f_p2_hz=amp.f_p2_hz)
    peaks = node_peaks(system, loaded, f_center_hz=f_c)
    names = [n for n in peaks.nodes if n in limits]
    per_v = np.array([peaks.of(n) for n in names])
    allowed = np.array([limits[n].amplitude_v for n in names])
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(per_v > 0, allowed / np.where(per_v > 0, per_v, 1.0), np.inf)
    k = int(np.argmin(ratio))
    limiting = names[k] if math.isfinite(ratio[k]) else None
    return Headroom(
        vin_v=float(vin_v),
        supply_v=float(supply_v),
        amp=None if amp is None else amp.name,
        node_peak_v={n: float(p) * vin_v for n, p in zip(names, per_v)},
        node_peak_f_hz={n: float(peaks.peak_f_hz[peaks.nodes.index(n)]) for n in names},
        limits=limits,
        limiting_node=limiting,
        max_vin_v=float(ratio[k]),
    )
