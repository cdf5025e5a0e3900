"""The bank's bill of materials: distinct values, quantities, op-amps packed into duals and quads.

A value counts once per kind and value (a 10 kΩ resistor and a 10 kΩ anything else are not
confused: only resistors, capacitors and inductors carry values). Op-amps are packed into quad
packages, the last one or two into a dual (common practice, no source: one package type per board
where possible, and duals and quads share the standard pin-outs of their families).
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from typing import Iterable, Mapping

from bandsmith.circuits import get_topology
from bandsmith.common.units import PART_UNITS
from bandsmith.common.values import format_value

__all__ = ["BomLine", "bom_lines", "distinct_count", "opamp_count", "pack_opamps"]


@dataclass(frozen=True, slots=True)
class BomLine:
    """One line of the bill of materials.

    Attributes
    ----------
    kind : str
        ``R``, ``C`` or ``L``.
    value : float
        SI units.
    text : str
        The value with its unit, e.g. ``"10 nF"``.
    refs : tuple of str
        ``"CH3.R1"``-style references of every part with this value (channels counted from 1).
    """

    kind: str
    value: float
    text: str
    refs: tuple[str, ...]

    @property
    def quantity(self) -> int:
        return len(self.refs)


def _key(kind: str, value: float) -> tuple[str, float]:
    return kind, float(f"{value:.9g}")  # rounding noise from scaling is not a new value


def _parts(circuit: str, chosen: Mapping[str, float]) -> Iterable[tuple[str, str, float]]:
    topo = get_topology(circuit)
    for c in topo.components:
        v = chosen.get(c.ref, 0.0)
        if c.required or v > 0:
            yield c.ref, c.kind, float(v)


def bom_lines(designs: Iterable[tuple[str, Mapping[str, float]]]) -> tuple[BomLine, ...]:
    """Every distinct value of ``(circuit, chosen)`` designs, by kind then value."""
    found: dict = {}
    for n, (circuit, chosen) in enumerate(designs, start=1):
        for ref, kind, v in _parts(circuit, chosen):
            found.setdefault(_key(kind, v), []).append(f"CH{n}.{ref}")
    order = {"R": 0, "C": 1, "L": 2}
    items = sorted(found.items(), key=lambda kv: (order.get(kv[0][0], 9), kv[0][1]))
    texts = [format_value(v, PART_UNITS[kind], digits=4) for (kind, v), _ in items]
    clash = {t for t, n in Counter(texts).items() if n > 1}  # exact values that print alike keep more digits
    return tuple(
        BomLine(kind, v, format_value(v, PART_UNITS[kind], digits=9) if t in clash else t, tuple(refs))
        for ((kind, v), refs), t in zip(items, texts)
    )


def distinct_count(designs: Iterable[tuple[str, Mapping[str, float]]]) -> int:
    """Number of distinct (kind, value) pairs among the designs' parts."""
    return len(bom_lines(designs))


def opamp_count(netlist) -> int:
    """Op-amps in a netlist (:class:`bandsmith.solver.netlist.Netlist`)."""
    return sum(1 for e in netlist.elements if e.kind == "opamp")


def pack_opamps(total: int) -> dict:
    """Quads, and a dual for a remainder of one or two (a remainder of three takes a quad).

    Returns ``{"opamps", "quads", "duals", "packages", "spare"}``.
    """
    quads, rest = divmod(int(total), 4)
    duals = 0
    if rest == 3:
        quads += 1
    elif rest:
        duals = 1
    return {"opamps": int(total), "quads": quads, "duals": duals, "packages": quads + duals, "spare": 4 * quads + 2 * duals - int(total)}
