"""DC operating point of a netlist: capacitors open, inductors shorted, ideal op-amps.

Nodal analysis (Kirchhoff's current law at every node whose voltage is not fixed) with each op-amp
a nullor: its two inputs at the same voltage, its output delivering whatever current that takes.
An inductor is its winding resistance (a short when that is zero: its two nodes are merged).
Input bias currents, when given, flow into every op-amp input pin.

References
----------
C.-W. Ho, A. E. Ruehli and P. A. Brennan, "The modified nodal approach to network analysis",
IEEE Trans. Circuits Syst. CAS-22 (1975), 504–509 (the stamps used here, with the nullor for the
ideal op-amp).
"""

from __future__ import annotations

from typing import Iterable, Mapping

import numpy as np

from bandsmith.common.errors import InputError
from bandsmith.solver.netlist import Element

__all__ = ["floating_nodes", "dc_operating_point"]


class _Merge:
    """Union-find over node names (an inductor without winding resistance joins its two nodes)."""

    def __init__(self):
        self.parent: dict[str, str] = {}

    def find(self, n: str) -> str:
        self.parent.setdefault(n, n)
        while self.parent[n] != n:
            self.parent[n] = self.parent[self.parent[n]]
            n = self.parent[n]
        return n

    def join(self, a: str, b: str) -> None:
        ra, rb = self.find(a), self.find(b)
        if ra != rb:
            self.parent[rb] = ra


def _conductive(e: Element) -> bool:
    return e.kind in ("R", "L")


def floating_nodes(elements: Iterable[Element], driven: Iterable[str]) -> tuple[str, ...]:
    """Nodes with no DC path (through resistors and inductors) to a driven node.

    ``driven`` are the nodes whose voltage is set (ground, the supply, a source); every op-amp
    output counts as driven too. Capacitors carry no DC, so a node reached only through them floats.
    """
    elements = tuple(elements)
    m = _Merge()
    nodes: list[str] = []
    for e in elements:
        for n in e.nodes:
            m.find(n)
            if n not in nodes:
                nodes.append(n)
    for e in elements:
        if _conductive(e):
            m.join(e.nodes[0], e.nodes[1])
    roots = {m.find(n) for n in driven} | {m.find(e.nodes[2]) for e in elements if e.kind == "opamp"}
    return tuple(n for n in nodes if m.find(n) not in roots)


def dc_operating_point(
    elements: Iterable[Element],
    fixed: Mapping[str, float],
    *,
    bias_current_a: float = 0.0,
) -> dict[str, float]:
    """Every node's DC voltage (V).

    Parameters
    ----------
    elements : iterable of Element
        Resistors, inductors, capacitors and op-amps.
    fixed : mapping
        Nodes held at a voltage (ground at 0 V, the supply, a source's DC level), in volts.
    bias_current_a : float
        Input bias current into each op-amp input pin, in A (0 for an ideal op-amp).

    Raises
    ------
    InputError
        (field ``bias``) when a node has no DC path to a driven node, or the equations are singular.
    """
    elements = tuple(elements)
    loose = floating_nodes(elements, fixed)
    if loose:
        raise InputError("bias", f"node {loose[0]!r} has no DC path (it is reached only through capacitors)")
    m = _Merge()
    for e in elements:
        for n in e.nodes:
            m.find(n)
        if e.kind == "L" and e.series_resistance == 0.0:
            m.join(e.nodes[0], e.nodes[1])
    for n in fixed:
        m.find(n)
    held: dict[str, float] = {}
    for n, v in fixed.items():
        r = m.find(n)
        if r in held and held[r] != v:
            raise InputError("bias", f"node {n!r} is shorted to another node held at a different voltage")
        held[r] = float(v)
    free = sorted({m.find(n) for n in m.parent} - set(held))
    amps = [e for e in elements if e.kind == "opamp"]
    index = {n: i for i, n in enumerate(free)}
    size = len(free) + len(amps)
    a = np.zeros((size, size))
    b = np.zeros(size)

    def stamp_g(n1: str, n2: str, g: float) -> None:
        for p, q, sign in ((n1, n2, 1.0), (n2, n1, 1.0)):
            if p in index:
                a[index[p], index[p]] += g
                if q in index:
                    a[index[p], index[q]] -= g
                else:
                    b[index[p]] += g * held[q]

    for e in elements:
        if e.kind == "R":
            stamp_g(m.find(e.nodes[0]), m.find(e.nodes[1]), 1.0 / e.value)
        elif e.kind == "L" and e.series_resistance > 0.0:
            stamp_g(m.find(e.nodes[0]), m.find(e.nodes[1]), 1.0 / e.series_resistance)
    for k, e in enumerate(amps):
        col = len(free) + k
        plus, minus, out = (m.find(n) for n in e.nodes)
        if out in index:  # the output current enters the output node
            a[index[out], col] -= 1.0
        for n in (plus, minus):  # bias current leaves the node into the pin
            if n in index:
                b[index[n]] -= bias_current_a
        for n, sign in ((plus, 1.0), (minus, -1.0)):
            if n in index:
                a[col, index[n]] += sign
            else:
                b[col] -= sign * held[n]
    try:
        x = np.linalg.solve(a, b) if size else np.zeros(0)
    except np.linalg.LinAlgError:
        raise InputError("bias", "the DC equations are singular (an op-amp without DC feedback?)") from None
    volts = {**held, **{n: float(x[i]) for n, i in index.items()}}
    return {n: volts[m.find(n)] for n in m.parent}
