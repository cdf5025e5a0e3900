"""A small netlist model: the circuit as the analysis sees it.

The input is an ideal voltage source from ``input`` to ``ground``. Elements are resistors,
inductors (with their winding's series resistance), capacitors and op-amps. An op-amp's nodes are,
in order, non-inverting input, inverting input and output; its output drives the output node
against ground.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Mapping

from bandsmith.common.errors import InputError

__all__ = ["Element", "Netlist", "PASSIVE_KINDS", "ELEMENT_KINDS"]

PASSIVE_KINDS = ("R", "L", "C")
ELEMENT_KINDS = PASSIVE_KINDS + ("opamp",)


@dataclass(frozen=True, slots=True)
class Element:
    """One element of a netlist.

    Parameters
    ----------
    ref : str
        Reference designator (``R1``, ``C2``, ``U1``).
    kind : str
        ``"R"`` (ohm), ``"L"`` (henry), ``"C"`` (farad) or ``"opamp"``.
    nodes : tuple of str
        Two nodes for a passive part; (non-inverting, inverting, output) for an op-amp.
    value : float
        Value in SI units; ``0.0`` for an op-amp.
    series_resistance : float
        Inductors only: the winding's series resistance in ohm (may be zero).
    series_ref : str, optional
        Inductors only: the part reference under which the series resistance is known (``RL``);
        batched analyses override it by that name.
    """

    ref: str
    kind: str
    nodes: tuple[str, ...]
    value: float = 0.0
    series_resistance: float = 0.0
    series_ref: str | None = None

    def __post_init__(self):
        # the checks in this order for every kind: the kind, the node count, the value, the two
        # ends, the series resistance (a passive part, the common case, looked at first)
        kind, nodes = self.kind, self.nodes
        if kind in PASSIVE_KINDS:
            if len(nodes) != 2:
                raise InputError(self.ref, f"a {kind} element has 2 nodes, got {len(nodes)}")
            value = self.value
            if not math.isfinite(value) or value <= 0.0:
                raise InputError(self.ref, f"{value!r} is not a usable value; it must be a finite number above zero")
            if nodes[0] == nodes[1]:
                raise InputError(self.ref, "both ends on the same node")
        elif kind == "opamp":
            if len(nodes) != 3:
                raise InputError(self.ref, f"a {kind} element has 3 nodes, got {len(nodes)}")
        else:
            raise InputError(self.ref, f"unknown element kind {kind!r}")
        rs = self.series_resistance
        if not math.isfinite(rs) or rs < 0.0:
            raise InputError(self.ref, "series resistance must be a finite number of zero or more")

    def to_json(self) -> dict:
        """The element as the README's NETLIST entry."""
        out = {"ref": self.ref, "kind": self.kind, "nodes": list(self.nodes)}
        if self.kind != "opamp":
            out["value"] = float(self.value)
        if self.kind == "L":
            out["series_resistance"] = float(self.series_resistance)
            if self.series_ref:
                out["series_ref"] = self.series_ref
        return out


@dataclass(frozen=True, slots=True)
class Netlist:
    """A circuit driven by an ideal voltage source at ``input``; the response is taken at ``output``.

    ``elements`` is a tuple of :class:`Element`. Nodes are strings; ``ground`` is the reference.
    """

    elements: tuple[Element, ...]
    ground: str = "0"
    input: str = "in"
    output: str = "out"
    nodes: tuple[str, ...] = field(init=False)
    #: The op-amps, in order (read by every analysis, several times over)
    opamps: tuple[Element, ...] = field(init=False, repr=False, compare=False)

    def __post_init__(self):
        elements = self.elements
        # in one pass: the references (their duplicates looked for only when the set comes out
        # short), every node in the order first met (a dict keeps its keys' order), the op-amps
        refs = set()
        seen = {}
        amps = []
        for e in elements:
            refs.add(e.ref)
            for n in e.nodes:
                seen[n] = None
            if e.kind == "opamp":
                amps.append(e)
        if len(refs) < len(elements):
            refs = [e.ref for e in elements]
            dup = {r for r in refs if refs.count(r) > 1}
            raise InputError(sorted(dup)[0], "reference used twice in the netlist")
        # every node but ground and the input
        seen.pop(self.ground, None)
        seen.pop(self.input, None)
        if self.output not in seen and self.output != self.input:
            raise InputError("netlist", f"output node {self.output!r} is not connected")
        object.__setattr__(self, "nodes", tuple(seen))
        object.__setattr__(self, "opamps", tuple(amps))

    @property
    def passives(self) -> tuple[Element, ...]:
        return tuple(e for e in self.elements if e.kind in PASSIVE_KINDS)

    def element(self, ref: str) -> Element:
        for e in self.elements:
            if e.ref == ref:
                return e
        raise KeyError(ref)

    def values(self) -> dict[str, float]:
        """Part values by reference (SI units), op-amps left out; series resistances by ``series_ref``."""
        out = {e.ref: float(e.value) for e in self.passives}
        for e in self.passives:
            if e.kind == "L" and e.series_ref:
                out[e.series_ref] = float(e.series_resistance)
        return out

    def with_values(self, values: Mapping[str, float]) -> "Netlist":
        """A copy with some parts' values set (by reference; the others as they are)."""
        return Netlist(tuple(Element(e.ref, e.kind, e.nodes, float(values[e.ref]), e.series_resistance, e.series_ref) if e.ref in values else e
                             for e in self.elements), self.ground, self.input, self.output)

    def with_element(self, element: Element) -> "Netlist":
        """A copy with one more element (a load resistor, say)."""
        return Netlist(self.elements + (element,), self.ground, self.input, self.output)

    def driving(self, load: "Netlist", tag: str = "next:") -> "Netlist":
        """A copy whose output also drives ``load`` (the next stage of a chain, say).

        ``load``'s input node is joined to this output and its ground to this ground; its other
        nodes and its references get ``tag`` in front. Input and output stay this netlist's.
        """

        def node(n: str) -> str:
            if n == load.ground:
                return self.ground
            if n == load.input:
                return self.output
            return tag + n

        extra = tuple(  # (every field given: dataclasses.replace looks them up for each element)
            Element(tag + e.ref, e.kind, tuple(node(n) for n in e.nodes), e.value, e.series_resistance,
                    tag + e.series_ref if e.series_ref else None)
            for e in load.elements
        )
        return Netlist(self.elements + extra, self.ground, self.input, self.output)

    def to_json(self) -> dict:
        """The netlist as the README's NETLIST object."""
        return {
            "ground": self.ground,
            "input": self.input,
            "output": self.output,
            "elements": [e.to_json() for e in self.elements],
        }
