"""Modified nodal analysis of a netlist, batched over variants and vectorised over frequency.

The circuit equations are written as ``(G + s·C) x = b``. The unknowns ``x`` are the voltages of
every node but ground, then the input source's current, then one branch current per inductor and
one output current per op-amp. Every matrix entry is at most first order in ``s``:

- a resistor stamps its conductance into ``G``; a capacitor its capacitance into ``C``;
- an inductor has the branch row ``V_a − V_b − (R_s + s·L)·I_L = 0``;
- an op-amp has the row ``V+ − V− − (1/A0 + s/ω_t)·V_out = 0`` with ``ω_t = 2π·GBW``, which is the
  single-pole model ``A(s) = A0 / (1 + s·A0/ω_t)`` written as ``V_out/A(s) = V+ − V−``; the ideal
  op-amp has ``1/A0 = 1/ω_t = 0`` (a nullor);
- the source row is ``V_in = 1``, so the solution at the output node is the transfer function.

Arrays carry a leading batch axis ``B`` (Monte Carlo trials, part perturbations, GBW values); the
netlist's own values are used where no override is given.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import numpy as np

from .netlist import Netlist

__all__ = ["OpAmpModel", "MnaLayout", "MnaSystem", "build_system", "solve_at"]


@dataclass(frozen=True, slots=True)
class OpAmpModel:
    """Single-pole op-amp ``A(s) = A0 / (1 + s·A0/(2π·GBW))``; ``gbw_hz=None`` is the ideal op-amp.

    Parameters
    ----------
    gbw_hz : float or None
        Gain-bandwidth product in Hz, or None for an ideal (infinite-gain) op-amp.
    a0 : float
        Open-loop DC gain (V/V), used only when ``gbw_hz`` is given.
    """

    gbw_hz: float | None = None
    a0: float = 1e5

    def __post_init__(self):
        from .errors import InputError

        if self.gbw_hz is not None and not (np.isfinite(self.gbw_hz) and self.gbw_hz > 0):
            raise InputError("gbw", f"{self.gbw_hz!r} is not a usable gain-bandwidth; it must be above zero")
        if not (np.isfinite(self.a0) and self.a0 > 0):
            raise InputError("a0", f"{self.a0!r} is not a usable open-loop gain; it must be above zero")

    @property
    def ideal(self) -> bool:
        return self.gbw_hz is None

    def to_json(self) -> dict | None:
        if self.ideal:
            return None
        return {"gbw_hz": float(self.gbw_hz), "a0": float(self.a0)}


IDEAL = OpAmpModel()


@dataclass(frozen=True, slots=True)
class MnaLayout:
    """Where each unknown sits in the MNA vector."""

    node_index: Mapping[str, int]
    source_row: int
    inductor_row: Mapping[str, int]
    opamp_row: Mapping[str, int]
    size: int

    @classmethod
    def of(cls, netlist: Netlist) -> "MnaLayout":
        nodes = (netlist.input,) + tuple(n for n in netlist.nodes if n != netlist.input)
        node_index = {n: i for i, n in enumerate(nodes)}
        k = len(nodes)
        source_row = k
        k += 1
        inductor_row = {}
        for e in netlist.elements:
            if e.kind == "L":
                inductor_row[e.ref] = k
                k += 1
        opamp_row = {}
        for e in netlist.opamps:
            opamp_row[e.ref] = k
            k += 1
        return cls(node_index, source_row, inductor_row, opamp_row, k)


@dataclass(frozen=True, slots=True)
class MnaSystem:
    """The batched pencil ``G + s·C`` (shape ``(B, n, n)`` each) and its layout."""

    G: np.ndarray
    C: np.ndarray
    layout: MnaLayout
    output_index: int

    @property
    def batch(self) -> int:
        return self.G.shape[0]

    def matrix(self, s: np.ndarray) -> np.ndarray:
        """``G + s·C`` at complex frequencies ``s`` of shape ``(F,)`` or ``(B, F)``: ``(B, F, n, n)``."""
        s = np.asarray(s, dtype=complex)
        if s.ndim == 1:
            s = s[None, :]
        return self.G[:, None, :, :] + s[:, :, None, None] * self.C[:, None, :, :]

    def source_vector(self) -> np.ndarray:
        b = np.zeros(self.layout.size)
        b[self.layout.source_row] = 1.0
        return b

    def solve(self, s: np.ndarray, rhs: np.ndarray | None = None) -> np.ndarray:
        """All unknowns at ``s`` for the unit input source (or ``rhs``, shape ``(n,)``): ``(B, F, n)``."""
        a = self.matrix(s)
        b = self.source_vector() if rhs is None else np.asarray(rhs)
        b = np.broadcast_to(b.astype(complex), a.shape[:-1])[..., None]
        return np.linalg.solve(a, b)[..., 0]

    def solve_adjoint(self, s: np.ndarray) -> np.ndarray:
        """Solution ``y`` of ``(G + s·C)^T y = e_out``: ``y[k]`` is the output per unit excitation of row k."""
        a = np.swapaxes(self.matrix(s), -1, -2)
        e = np.zeros(self.layout.size, dtype=complex)
        e[self.output_index] = 1.0
        e = np.broadcast_to(e, a.shape[:-1])[..., None]
        return np.linalg.solve(a, e)[..., 0]

    def transfer(self, s: np.ndarray) -> np.ndarray:
        """Output over input voltage at ``s``: ``(B, F)`` complex."""
        return self.solve(s)[..., self.output_index]


def _batch_values(netlist: Netlist, overrides: Mapping[str, np.ndarray | float] | None) -> tuple[dict, int]:
    overrides = dict(overrides or {})
    size = 1
    for v in overrides.values():
        size = max(size, np.size(v))
    vals = {}
    for e in netlist.passives:
        v = overrides.get(e.ref, e.value)
        vals[e.ref] = _column(v, size)
        if e.kind == "L":
            key = e.ref + ".rs"
            given = overrides.get(e.series_ref, e.series_resistance) if e.series_ref else e.series_resistance
            vals[key] = _column(overrides.get(key, given), size)
    return vals, size


def _column(v, size: int) -> np.ndarray:
    """A value or a ``(size,)`` array as a ``(size,)`` float array (np.full for a scalar: quicker
    than broadcast_to at these sizes)."""
    if isinstance(v, (int, float)):
        return np.full(size, float(v))
    return np.broadcast_to(np.asarray(v, dtype=float), (size,))


def build_system(
    netlist: Netlist,
    opamp: OpAmpModel = IDEAL,
    *,
    overrides: Mapping[str, np.ndarray | float] | None = None,
    gbw_hz: np.ndarray | None = None,
    a0: np.ndarray | None = None,
) -> MnaSystem:
    """Stamp a netlist into a batched MNA pencil.

    Parameters
    ----------
    netlist : Netlist
        The circuit.
    opamp : OpAmpModel
        The op-amp model used for every op-amp of the netlist.
    overrides : mapping, optional
        Part values by reference (SI units), scalars or arrays of shape ``(B,)``. An inductor's
        series resistance is overridden by its ``series_ref`` (``"RL"``) or by ``"<ref>.rs"``.
    gbw_hz, a0 : ndarray, optional
        Per-variant op-amp GBW (Hz) and open-loop gain, shape ``(B,)``; they replace ``opamp``'s.

    Returns
    -------
    MnaSystem
        ``G`` and ``C`` of shape ``(B, n, n)``.
    """
    layout = MnaLayout.of(netlist)
    vals, size = _batch_values(netlist, overrides)
    if gbw_hz is not None:
        size = max(size, np.size(gbw_hz))
    if a0 is not None:
        size = max(size, np.size(a0))
    n = layout.size
    G = np.zeros((size, n, n))
    C = np.zeros((size, n, n))
    idx = layout.node_index
    gnd = netlist.ground

    def stamp_admittance(m, a, b, y):
        ia = idx.get(a) if a != gnd else None
        ib = idx.get(b) if b != gnd else None
        if ia is not None:
            m[:, ia, ia] += y
        if ib is not None:
            m[:, ib, ib] += y
        if ia is not None and ib is not None:
            m[:, ia, ib] -= y
            m[:, ib, ia] -= y

    for e in netlist.elements:
        if e.kind == "R":
            stamp_admittance(G, *e.nodes, 1.0 / vals[e.ref])
        elif e.kind == "C":
            stamp_admittance(C, *e.nodes, vals[e.ref])
        elif e.kind == "L":
            row = layout.inductor_row[e.ref]
            a, b = e.nodes
            for node, sign in ((a, 1.0), (b, -1.0)):
                if node != gnd:
                    G[:, idx[node], row] += sign
                    G[:, row, idx[node]] += sign
            G[:, row, row] -= vals[e.ref + ".rs"]
            C[:, row, row] -= vals[e.ref]

    src = layout.source_row
    G[:, idx[netlist.input], src] += 1.0
    G[:, src, idx[netlist.input]] += 1.0

    for e in netlist.opamps:
        row = layout.opamp_row[e.ref]
        plus, minus, out = e.nodes
        if out == gnd:
            raise ValueError(f"{e.ref}: op-amp output on ground")
        G[:, idx[out], row] += 1.0  # output current enters the output node
        if plus != gnd:
            G[:, row, idx[plus]] += 1.0
        if minus != gnd:
            G[:, row, idx[minus]] -= 1.0
        gbw = gbw_hz if gbw_hz is not None else opamp.gbw_hz
        if gbw is not None:
            gain0 = a0 if a0 is not None else opamp.a0
            G[:, row, idx[out]] -= 1.0 / np.broadcast_to(np.asarray(gain0, float), (size,))
            C[:, row, idx[out]] -= 1.0 / (2.0 * np.pi * np.broadcast_to(np.asarray(gbw, float), (size,)))

    return MnaSystem(G, C, layout, idx[netlist.output])


def solve_at(netlist: Netlist, s: complex) -> tuple[np.ndarray, MnaLayout]:
    """All unknowns of the netlist's own values at one complex frequency ``s`` (rad/s), ideal
    op-amps, unit input source: ``(x, layout)`` with ``x`` of shape ``(n,)``.

    The same stamps as :func:`build_system`, written straight into one complex matrix (a batch of
    one through :func:`build_system` costs some forty array operations)."""
    layout = MnaLayout.of(netlist)
    n = layout.size
    a = [[0j] * n for _ in range(n)]
    idx = layout.node_index
    gnd = netlist.ground

    def admittance(p, q, y):
        ip = idx[p] if p != gnd else None
        iq = idx[q] if q != gnd else None
        if ip is not None:
            a[ip][ip] += y
        if iq is not None:
            a[iq][iq] += y
        if ip is not None and iq is not None:
            a[ip][iq] -= y
            a[iq][ip] -= y

    for e in netlist.elements:
        if e.kind == "R":
            admittance(*e.nodes, 1.0 / e.value)
        elif e.kind == "C":
            admittance(*e.nodes, s * e.value)
        elif e.kind == "L":
            row = layout.inductor_row[e.ref]
            for node, sign in zip(e.nodes, (1.0, -1.0)):
                if node != gnd:
                    a[idx[node]][row] += sign
                    a[row][idx[node]] += sign
            a[row][row] -= e.series_resistance + s * e.value
    src, inp = layout.source_row, idx[netlist.input]
    a[inp][src] += 1.0
    a[src][inp] += 1.0
    for e in netlist.opamps:
        row = layout.opamp_row[e.ref]
        plus, minus, out = e.nodes
        if out == gnd:
            raise ValueError(f"{e.ref}: op-amp output on ground")
        a[idx[out]][row] += 1.0
        if plus != gnd:
            a[row][idx[plus]] += 1.0
        if minus != gnd:
            a[row][idx[minus]] -= 1.0
    b = np.zeros(n, dtype=complex)
    b[src] = 1.0
    return np.linalg.solve(np.array(a), b), layout
