"""A SPICE netlist of a circuit built for one supply: the bias network, the coupling and the load.

The same element lines and op-amp macro-model as the candidate export (:mod:`bandsmith.files.exports`),
with the supply ``VSUP`` (divider) or the reference source ``VREF`` (buffered), the input source
``VIN`` (DC 0, AC 1) ahead of the input coupling capacitor, and ``.op`` and ``.ac`` lines.
"""

from __future__ import annotations

from bandsmith.board.bias import REF, SOURCE, SUPPLY, LOAD, BiasedCircuit
from bandsmith.files.exports import _num, element_lines, opamp_subckt_lines
from bandsmith.solver.mna import OpAmpModel
from bandsmith.solver.netlist import Netlist

__all__ = ["biased_spice"]


def biased_spice(biased: BiasedCircuit, *, gbw_hz: float | None = None, a0: float = 1e5, points_per_decade: int = 50) -> str:
    """The SPICE text (SPICE3 syntax, ending in ``.end``) of a biased circuit.

    Parameters
    ----------
    biased : BiasedCircuit
        From :func:`bandsmith.board.bias.bias_circuit`.
    gbw_hz : float, optional
        The op-amp's GBW in Hz; None approximates an ideal op-amp.
    a0 : float
        The macro-model's DC gain.
    points_per_decade : int
        Points per decade of the ``.ac`` sweep (from a decade below the lower coupling corner to
        a hundred times the band's upper edge).
    """
    s = biased.settings
    opamp = OpAmpModel(gbw_hz, a0)
    f1 = min(c.corner_hz for c in biased.coupling) / 10.0
    f2 = float(biased.figures_split.f_high_hz) * 100.0
    nl = Netlist(biased.elements, ground="0", input=SOURCE, output=LOAD)
    lines = [
        f"* Bandsmith single-supply build: supply {_num(s.supply_v)} V, reference {s.reference} "
        f"({biased.reference_v:.6g} V), load {_num(s.rload_ohm)} ohm",
        f"* source node {SOURCE} (VIN), op-amp output out, load node {LOAD}, reference node {REF}, ground 0",
        "* op-amp input bias currents are not in this netlist",
    ]
    if s.reference == "divider":
        lines.append(f"VSUP {SUPPLY} 0 DC {_num(s.supply_v)}")
    else:
        lines.append(f"VREF {REF} 0 DC {_num(s.supply_v / 2.0)}")
    lines.append(f"VIN {SOURCE} 0 DC 0 AC 1")
    lines += element_lines(nl)
    lines += opamp_subckt_lines(opamp)
    lines += [".op", f".ac dec {int(points_per_decade)} {_num(f1)} {_num(f2)}", ".end"]
    return "\n".join(lines) + "\n"
