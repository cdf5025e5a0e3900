"""A source resistance in series with a circuit's input, as an element of its netlist.

A sensor or a previous stage with an output resistance ``Rs`` drives the circuit through that
resistance. It is put into the netlist as the resistor ``RSOURCE`` from the ideal source node to
the circuit's former input node, so that every analysis (response, required GBW, output current,
noise — its own thermal noise included —, tolerance spread) sees it. Common practice, no source.
"""

from __future__ import annotations

from dataclasses import replace

from bandsmith.solver.netlist import Element, Netlist

__all__ = ["SOURCE_REF", "SOURCE_NODE", "with_source"]

SOURCE_REF = "RSOURCE"
SOURCE_NODE = "in:rs"


def with_source(netlist: Netlist, rsource_ohm: float | None) -> Netlist:
    """The netlist driven through a series source resistance (ohm); unchanged for None.

    The circuit's input node is renamed ``SOURCE_NODE`` and ``RSOURCE`` joins it to the ideal
    source at the netlist's ``input``. The output stays the same node (a circuit whose output is
    its input — none of ours — would get the renamed node as its output).
    """
    if rsource_ohm is None:
        return netlist
    old = netlist.input

    def node(n: str) -> str:
        return SOURCE_NODE if n == old else n

    elements = tuple(replace(e, nodes=tuple(node(n) for n in e.nodes)) for e in netlist.elements)
    rs = Element(SOURCE_REF, "R", (old, SOURCE_NODE), float(rsource_ohm))
    output = node(netlist.output)
    return Netlist((rs,) + elements, netlist.ground, old, output)
