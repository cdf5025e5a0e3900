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
from typing import Mapping, Sequence

import numpy as np
from numpy.linalg import LinAlgError

try:  # numpy's own solver gufunc, which numpy.linalg.solve calls after its argument checks
    from numpy.linalg import _umath_linalg
except ImportError:  # (a numpy that moved it: numpy.linalg.solve itself, the same numbers)
    _umath_linalg = None

from bandsmith.solver.netlist import Netlist

__all__ = ["OpAmpModel", "MnaLayout", "MnaSystem", "build_system", "solve_at", "solve_at_many", "solve_complex"]


def _singular(err: str, flag: int) -> None:
    raise LinAlgError("Singular matrix")


def solve_complex(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """:func:`numpy.linalg.solve` of complex ``a`` (``(..., n, n)``) and complex ``b`` (``(..., n)``
    or ``(..., n, k)``, broadcast as it broadcasts them): its own gufunc (LAPACK's gesv on each
    matrix) under its own error handling (a singular matrix raises ``LinAlgError``), without its
    argument checks and conversions, which cost more than a small solve: the same numbers (tested).
    For arrays already of that form: complex128, ``b`` of one or more dimensions."""
    if _umath_linalg is None:
        return np.linalg.solve(a, b)
    with np.errstate(call=_singular, invalid="call", over="ignore", divide="ignore", under="ignore"):
        return (_umath_linalg.solve1 if b.ndim == 1 else _umath_linalg.solve)(a, b, signature="DD->D")


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
    gbw = gbw_hz if gbw_hz is not None else opamp.gbw_hz
    gain0 = a0 if a0 is not None else opamp.a0
    plan = _plan(netlist, gbw is None, first_sight=_scalars(overrides, gbw, gain0))
    if plan is None:  # a structure's first pencil, of one member: stamped straight from the netlist
        return _stamped_directly(netlist, overrides or {}, gbw, gain0)
    layout, n = plan.layout, plan.layout.size
    columns, size = _quantities(netlist, plan.quantities, overrides, gbw, gain0)
    if size == 1 and all(type(c) is float for c in columns):
        G, C = _stamped_one(plan, columns)
    else:  # each stamp added in turn, as the module notes write it, into flat (B, n·n) arrays
        G = np.zeros((size, n * n))
        C = np.zeros((size, n * n))
        for m, stamps in ((G, plan.g_stamps), (C, plan.c_stamps)):
            for flat, col, sign in stamps:
                y = 1.0 if col < 0 else columns[col]
                if sign > 0:
                    m[:, flat] += y
                else:
                    m[:, flat] -= y
    terms = []
    for row, col, a0_k, wt_k in plan.amp_columns:
        if a0_k is None:
            terms.append((row, col, np.zeros(size), np.zeros(size)))
        else:
            terms.append((row, col, _column(columns[a0_k], size), _column(columns[wt_k], size)))
    return MnaSystem(G.reshape(size, n, n), C.reshape(size, n, n), layout, layout.node_index[netlist.output], tuple(terms))


def _scalars(overrides, gbw, gain0) -> bool:
    """True when every value given is one number (a batch of one)."""
    return all(isinstance(v, (int, float)) for v in (overrides or {}).values()) and all(
        v is None or isinstance(v, (int, float)) for v in (gbw, gain0))


def _stamped_directly(netlist: Netlist, over: Mapping, gbw, gain0) -> MnaSystem:
    """A batch of one stamped straight from :func:`_stamps` as plain numbers, each entry's stamps
    summed in stamping order (the numbers of the plan's path, without making a plan: a
    structure met once, the first design of a circuit in a process, does not pay for one)."""
    layout = MnaLayout.of(netlist)
    n = layout.size
    parts = {e.ref: e for e in netlist.elements}
    g, c = [0.0] * (n * n), [0.0] * (n * n)
    known: dict[tuple[str, str], float] = {}
    for which, i, j, sign, q in _stamps(netlist, layout):
        if q is None:
            y = 1.0
        elif q[0] in _OPAMP_TERMS and gbw is None:
            continue  # the ideal op-amp: 1/A0 = 1/ωt = 0
        else:
            y = known.get(q)
            if y is None:
                y = known[q] = _value(q, parts, over, gbw, gain0, 1)
        m = g if which == "G" else c
        k = i * n + j
        m[k] = m[k] + y if sign > 0 else m[k] - y
    terms = []
    for e in netlist.opamps:
        row, col = layout.opamp_row[e.ref], layout.node_index[e.nodes[2]]
        if gbw is None:
            terms.append((row, col, np.zeros(1), np.zeros(1)))
        else:
            terms.append((row, col, np.full(1, known[("a0", e.ref)]), np.full(1, known[("wt", e.ref)])))
    return MnaSystem(np.array(g).reshape(1, n, n), np.array(c).reshape(1, n, n), layout, layout.node_index[netlist.output], tuple(terms))


def _stamped_one(plan: "_Plan", columns: list[float]) -> tuple[np.ndarray, np.ndarray]:
    """A batch of one as plain numbers: every stamp added in turn into a list per matrix, as
    :func:`solve_at` adds them (the same IEEE sums as the arrays'), ``(G, C)`` flat ``(1, n·n)``."""
    out = []
    for stamps in (plan.g_stamps, plan.c_stamps):
        m = [0.0] * (plan.layout.size * plan.layout.size)
        for flat, col, sign in stamps:
            y = 1.0 if col < 0 else columns[col]
            m[flat] = m[flat] + y if sign > 0 else m[flat] - y
        out.append(np.array([m]))
    return out[0], out[1]


@dataclass(frozen=True, slots=True)
class _Plan:
    """How a netlist's structure stamps its pencil (:func:`_plan`): the layout, the quantities in
    column order (``(kind, ref)`` as :func:`_stamps` names them), each matrix's stamps in stamping
    order as ``(flat entry, quantity column or −1 for the constant 1, sign)``, and each op-amp's
    ``(row, column, 1/A0 column, 1/ωt column)`` (None for the ideal op-amp)."""

    layout: MnaLayout
    quantities: tuple[tuple[str, str], ...]
    g_stamps: tuple[tuple[int, int, float], ...]
    c_stamps: tuple[tuple[int, int, float], ...]
    amp_columns: tuple[tuple[int, int, int | None, int | None], ...]


def _plan(netlist: Netlist, ideal: bool, *, first_sight: bool = False) -> _Plan | None:
    """The :class:`_Plan` of a netlist's structure (its elements' kinds, references and nodes, and
    its ground and input; not their values), with the op-amps' terms left out when ``ideal``;
    worked out once per structure (up to :data:`_PLANS_KEPT` of them kept; then the store starts
    again, which a dict does in one step whatever another thread is doing). With
    ``first_sight``, None the first time a structure is asked for: its caller stamps that one
    pencil directly and the plan is made when the structure comes again."""
    key = (ideal, netlist.ground, netlist.input, tuple((e.kind, e.ref, e.nodes) for e in netlist.elements))
    plan = _PLANS.get(key)
    if plan is None:
        if first_sight and key not in _SEEN:
            if len(_SEEN) >= _PLANS_KEPT:
                _SEEN.clear()
            _SEEN.add(key)
            return None
        if len(_PLANS) >= _PLANS_KEPT:
            _PLANS.clear()
        plan = _PLANS[key] = _make_plan(netlist, ideal)
    return plan


_SEEN: set[tuple] = set()
_PLANS: dict[tuple, _Plan] = {}
_PLANS_KEPT = 256


def _make_plan(netlist: Netlist, ideal: bool) -> _Plan:
    """A structure's :class:`_Plan`, from its stamps (:func:`_stamps`) in stamping order."""
    layout = MnaLayout.of(netlist)
    n = layout.size
    column: dict[tuple[str, str], int] = {}
    stamps: dict[str, list[tuple[int, int, float]]] = {"G": [], "C": []}
    for which, i, j, sign, q in _stamps(netlist, layout):
        if q is not None and q[0] in _OPAMP_TERMS and ideal:
            continue  # the ideal op-amp: 1/A0 = 1/ωt = 0
        if q is not None and q not in column:
            column[q] = len(column)
        stamps[which].append((i * n + j, -1 if q is None else column[q], sign))
    amps = []
    for e in netlist.opamps:
        row, col = layout.opamp_row[e.ref], layout.node_index[e.nodes[2]]
        amps.append((row, col, None, None) if ideal else (row, col, column[("a0", e.ref)], column[("wt", e.ref)]))
    return _Plan(layout, tuple(column), tuple(stamps["G"]), tuple(stamps["C"]), tuple(amps))


def _quantities(netlist: Netlist, quantities, overrides, gbw, gain0) -> tuple[list, int]:
    """Each quantity's value, a float or a ``(B,)`` array (overrides by part reference, an
    inductor's winding resistance by its ``series_ref`` or ``"<ref>.rs"``), and the batch size."""
    over = overrides or {}
    size = 1
    for v in over.values():
        size = max(size, np.size(v))
    if gbw is not None:
        size = max(size, np.size(gbw))
    if gain0 is not None:
        size = max(size, np.size(gain0))
    parts = {e.ref: e for e in netlist.elements}
    return [_value(q, parts, over, gbw, gain0, size) for q in quantities], size


def _value(q: tuple[str, str], parts: Mapping, over: Mapping, gbw, gain0, size: int):
    """One quantity's value (a float, or a ``(size,)`` array where a given value is one)."""
    kind, ref = q
    if kind == "a0":
        return 1.0 / _as_column(gain0, size)
    if kind == "wt":
        return 1.0 / (2.0 * np.pi * _as_column(gbw, size))
    if kind == "rs":
        e = parts[ref]
        given = over.get(e.series_ref, e.series_resistance) if e.series_ref else e.series_resistance
        return _as_column(over.get(ref + ".rs", given), size)
    v = _as_column(over.get(ref, parts[ref].value), size)  # "g", "c", "l"
    return 1.0 / v if kind == "g" else v


def _as_column(v, size: int):
    """A value as a float, or a ``(size,)`` float array."""
    if isinstance(v, (int, float)):
        return float(v)
    return np.broadcast_to(np.asarray(v, dtype=float), (size,))


def _column(v, size: int) -> np.ndarray:
    """A quantity (a float or a ``(size,)`` array) as a ``(size,)`` array of its own."""
    return np.full(size, v) if type(v) is float else np.array(v, dtype=float)


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
    return solve_complex(np.array(a), b), layout


def solve_at_many(systems: Sequence[tuple[Netlist, complex]]) -> list[tuple[np.ndarray, MnaLayout]]:
    """:func:`solve_at` of several netlists, each at its own complex frequency ``s`` (rad/s):
    ``(x, layout)`` of each, in order, with the numbers :func:`solve_at` gives each alone.

    Notes
    -----
    Each matrix comes from its structure's kept :class:`_Plan` (ideal op-amps; made once per
    structure) instead of the stamps worked out afresh. Every conductance-side stamp ``±y`` is
    real and every capacitance-side stamp ``±s·y`` imaginary (``s`` on the imaginary axis), so
    :func:`solve_at`'s complex sum of one entry is the sum of its real stamps in stamping order
    beside the sum of its imaginary ones: the plan's G stamps summed in order, and its C stamps as
    ``Im(s)·y`` summed in order, are the same two parts (up to the sign of an exact zero). The
    matrices of one size are solved in one stacked :func:`solve_complex` (LAPACK's gesv on
    each matrix of the stack: the same numbers as alone, tested).
    """
    out: list = [None] * len(systems)
    by_size: dict[int, list[tuple[int, np.ndarray, MnaLayout]]] = {}
    for k, (netlist, s) in enumerate(systems):
        s = complex(s)
        if s.real != 0.0:  # off the imaginary axis: the complex sums of solve_at itself
            out[k] = solve_at(netlist, s)
            continue
        plan = _plan(netlist, True)
        columns, _ = _quantities(netlist, plan.quantities, None, None, None)
        n = plan.layout.size
        g, c = [0.0] * (n * n), [0.0] * (n * n)
        for flat, col, sign in plan.g_stamps:
            y = 1.0 if col < 0 else columns[col]
            g[flat] = g[flat] + y if sign > 0 else g[flat] - y
        b = s.imag
        for flat, col, sign in plan.c_stamps:
            y = b * (1.0 if col < 0 else columns[col])
            c[flat] = c[flat] + y if sign > 0 else c[flat] - y
        a = np.empty(n * n, dtype=complex)
        a.real, a.imag = g, c
        by_size.setdefault(n, []).append((k, a.reshape(n, n), plan.layout))
    for n, members in by_size.items():
        rhs = np.zeros((len(members), n, 1), dtype=complex)
        for m, (_, _, layout) in enumerate(members):
            rhs[m, layout.source_row, 0] = 1.0
        x = solve_complex(np.stack([a for _, a, _ in members]), rhs)[..., 0]
        for m, (k, _, layout) in enumerate(members):
            out[k] = (x[m], layout)
    return out
