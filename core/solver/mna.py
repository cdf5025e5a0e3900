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

from bandsmith.solver.netlist import Netlist

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
        from bandsmith.common.errors import InputError

        if self.gbw_hz is not None and not (np.isfinite(self.gbw_hz) and self.gbw_hz > 0):
            raise InputError("gbw", f"{self.gbw_hz!r} is not a usable gain-bandwidth; it must be above zero")
        if not (np.isfinite(self.a0) and self.a0 > 0):
            raise InputError("a0", f"{self.a0!r} is not a usable open-loop gain; it must be above zero")
        from bandsmith.common.limits import A0_RANGE, FREQ_RANGE_HZ, check_range

        if self.gbw_hz is not None:
            check_range("gbw", float(self.gbw_hz), *FREQ_RANGE_HZ, "Hz")
        check_range("a0", float(self.a0), *A0_RANGE)

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
    # Each op-amp's term ``−(1/A0 + s/ωt)`` as ``(row, column, 1/A0, 1/ωt)`` with ``(B,)`` arrays
    # (zeros for the ideal op-amp); None where the system was built otherwise (a second pole).
    amp_terms: tuple[tuple[int, int, np.ndarray, np.ndarray], ...] | None = None

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
    gbw = gbw_hz if gbw_hz is not None else opamp.gbw_hz
    gain0 = a0 if a0 is not None else opamp.a0

    def quantity(kind: str, ref: str) -> np.ndarray:
        if kind == "g":
            return 1.0 / vals[ref]
        if kind == "rs":
            return vals[ref + ".rs"]
        if kind == "a0":
            return 1.0 / np.broadcast_to(np.asarray(gain0, float), (size,))
        if kind == "wt":
            return 1.0 / (2.0 * np.pi * np.broadcast_to(np.asarray(gbw, float), (size,)))
        return vals[ref]  # "c", "l"

    known: dict[tuple[str, str], np.ndarray] = {}
    for which, i, j, sign, q in _stamps(netlist, layout):
        m = G if which == "G" else C
        if q is None:
            m[:, i, j] += sign
            continue
        if q[0] in _OPAMP_TERMS and gbw is None:
            continue  # the ideal op-amp: 1/A0 = 1/ωt = 0
        y = known.get(q)
        if y is None:
            y = known[q] = quantity(*q)
        if sign > 0:
            m[:, i, j] += y
        else:
            m[:, i, j] -= y

    terms = []
    for e in netlist.opamps:
        row, col = layout.opamp_row[e.ref], layout.node_index[e.nodes[2]]
        if gbw is None:
            terms.append((row, col, np.zeros(size), np.zeros(size)))
        else:
            terms.append((row, col, known[("a0", e.ref)], known[("wt", e.ref)]))
    return MnaSystem(G, C, layout, layout.node_index[netlist.output], tuple(terms))


_OPAMP_TERMS = ("a0", "wt")


def _stamps(netlist: Netlist, layout: MnaLayout) -> list[tuple[str, int, int, float, tuple[str, str] | None]]:
    """Every entry of the pencil, in stamping order: ``(matrix, row, column, sign, quantity)``.

    ``matrix`` is ``"G"`` or ``"C"``; ``quantity`` is None for the constant 1 or ``(kind, ref)``:
    ``"g"`` a resistor's conductance, ``"c"`` a capacitance, ``"l"`` an inductance, ``"rs"`` a
    winding resistance, ``"a0"`` and ``"wt"`` an op-amp's ``1/A0`` and ``1/ωt`` (both zero for the
    ideal op-amp). The one place the stamps of the module notes are written down.
    """
    idx, gnd = layout.node_index, netlist.ground
    out = []

    def admittance(which, a, b, q):
        ia = idx[a] if a != gnd else None
        ib = idx[b] if b != gnd else None
        if ia is not None:
            out.append((which, ia, ia, 1.0, q))
        if ib is not None:
            out.append((which, ib, ib, 1.0, q))
        if ia is not None and ib is not None:
            out.append((which, ia, ib, -1.0, q))
            out.append((which, ib, ia, -1.0, q))

    for e in netlist.elements:
        if e.kind == "R":
            admittance("G", *e.nodes, ("g", e.ref))
        elif e.kind == "C":
            admittance("C", *e.nodes, ("c", e.ref))
        elif e.kind == "L":
            row = layout.inductor_row[e.ref]
            for node, sign in zip(e.nodes, (1.0, -1.0)):
                if node != gnd:
                    out.append(("G", idx[node], row, sign, None))
                    out.append(("G", row, idx[node], sign, None))
            out.append(("G", row, row, -1.0, ("rs", e.ref)))
            out.append(("C", row, row, -1.0, ("l", e.ref)))
    src, inp = layout.source_row, idx[netlist.input]
    out.append(("G", inp, src, 1.0, None))
    out.append(("G", src, inp, 1.0, None))
    for e in netlist.opamps:
        row = layout.opamp_row[e.ref]
        plus, minus, o = e.nodes
        if o == gnd:
            raise ValueError(f"{e.ref}: op-amp output on ground")
        out.append(("G", idx[o], row, 1.0, None))  # output current enters the output node
        if plus != gnd:
            out.append(("G", row, idx[plus], 1.0, None))
        if minus != gnd:
            out.append(("G", row, idx[minus], -1.0, None))
        out.append(("G", row, idx[o], -1.0, ("a0", e.ref)))
        out.append(("C", row, idx[o], -1.0, ("wt", e.ref)))
    return out


def solve_at(netlist: Netlist, s: complex) -> tuple[np.ndarray, MnaLayout]:
    """All unknowns of the netlist's own values at one complex frequency ``s`` (rad/s), ideal
    op-amps, unit input source: ``(x, layout)`` with ``x`` of shape ``(n,)``.

    The stamps of :func:`build_system` (:func:`_stamps`) added as plain numbers into one complex
    matrix: a batch of one through :func:`build_system` costs some forty array operations."""
    layout = MnaLayout.of(netlist)
    n = layout.size
    a = [[0j] * n for _ in range(n)]
    parts = {e.ref: e for e in netlist.elements}
    for which, i, j, sign, q in _stamps(netlist, layout):
        if q is None:
            y = 1.0
        elif q[0] in _OPAMP_TERMS:
            continue  # ideal op-amps
        else:
            kind, ref = q
            e = parts[ref]
            y = 1.0 / e.value if kind == "g" else e.series_resistance if kind == "rs" else e.value
        a[i][j] += sign * (s * y if which == "C" else y)
    b = np.zeros(n, dtype=complex)
    b[layout.source_row] = 1.0
    return np.linalg.solve(np.array(a), b), layout
