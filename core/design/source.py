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


def input_resistor(netlist: Netlist) -> str | None:
    """The resistor that alone joins the source node to the circuit, or None.

    When exactly one element touches the netlist's input and it is a resistor, that resistor is in
    series with the source, so a source resistance adds to it (common practice, no source).
    """
    touching = [e for e in netlist.elements if netlist.input in e.nodes]
    if len(touching) == 1 and touching[0].kind == "R":
        return touching[0].ref
    return None


def absorb_source(netlist: Netlist, values: dict[str, float], rsource_ohm: float | None,
                  pinned: tuple[str, ...] = ()) -> tuple[dict[str, float], tuple[str, ...]]:
    """Exact part values with the input resistor lowered by a known source resistance.

    Parameters
    ----------
    netlist : Netlist
        The circuit built from ``values`` (without the source).
    values : dict
        Exact part values (SI).
    rsource_ohm : float or None
        The source resistance (ohm).
    pinned : tuple of str
        Parts the user fixed: never changed.

    Returns
    -------
    values, notes
        The values to build (``R_in − Rs`` in place of ``R_in``: the circuit driven through ``Rs``
        then has exactly the designed response) and a note saying so, or the values unchanged
        with a note on why the source cannot be absorbed.
    """
    if rsource_ohm is None:
        return dict(values), ()
    ref = input_resistor(netlist)
    rs = float(rsource_ohm)
    if ref is None:
        return dict(values), (f"the source resistance {rs:.4g} Ω cannot be absorbed: no single resistor takes the input; it is analysed as given",)
    if ref in pinned:
        return dict(values), (f"the source resistance {rs:.4g} Ω is not absorbed: {ref} is pinned",)
    if values[ref] <= rs:
        return dict(values), (f"the source resistance {rs:.4g} Ω is not absorbed: it exceeds {ref} = {values[ref]:.4g} Ω",)
    out = dict(values)
    out[ref] = values[ref] - rs
    return out, (f"{ref} is lowered by the source resistance {rs:.4g} Ω (to {out[ref]:.5g} Ω), so the source completes it",)
