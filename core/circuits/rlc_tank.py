"""Inverting op-amp band-pass with a parallel RLC tank in the feedback path (``rlc-tank``).

Netlist: R1 from the input to the inverting input ``n1``; R2, L and C in parallel from ``n1`` to
the output; the non-inverting input grounded. The inductor carries its winding's series
resistance ``RL`` (optional, default 0), which lowers Q.

Notes
-----
With an ideal op-amp and ``RL = 0``, the feedback admittance is ``1/R2 + sC + 1/(sL)`` and

    H(s) = −(s/(R1·C)) / (s² + s/(R2·C) + 1/(L·C)),

so ``ω0 = 1/√(LC)``, ``Q = R2·√(C/L) = R2/√(L/C)``, bandwidth ``1/(2π·R2·C)`` and
``H(jω0) = −R2/R1``: the parallel-resonance relations of any circuit-theory text.
"""

from __future__ import annotations

import math
from typing import Mapping

from ..netlist import Element, Netlist
from ..topology import Component, IdealFormulas, Topology

COMPONENTS = (
    Component("R1", "R", "input resistor; sets the centre gain with R2"),
    Component("R2", "R", "tank damping resistor; sets Q and the centre gain"),
    Component("L", "L", "tank inductor; sets f0 with C"),
    Component("C", "C", "tank capacitor; sets f0 with L"),
    Component("RL", "R", "inductor winding (series) resistance; lowers Q", required=False, default=0.0),
)

# A 10.7 kHz pilot-tone pick-off for a bench receiver (our own scenario): Q ≈ 10, gain ≈ −2.
EXAMPLE = {"R1": 3300.0, "R2": 6800.0, "L": 0.01, "C": 22e-9, "RL": 0.0}


def build(v: Mapping[str, float]) -> Netlist:
    """Netlist of the tank band-pass for validated part values (ohm, H, F)."""
    return Netlist(
        (
            Element("R1", "R", ("in", "n1"), v["R1"]),
            Element("R2", "R", ("n1", "out"), v["R2"]),
            Element("L", "L", ("n1", "out"), v["L"], series_resistance=v.get("RL", 0.0), series_ref="RL"),
            Element("C", "C", ("n1", "out"), v["C"]),
            Element("U1", "opamp", ("0", "n1", "out")),
        )
    )


def formulas(v: Mapping[str, float]) -> IdealFormulas:
    """Textbook ideal figures (the winding resistance ignored)."""
    f0 = 1.0 / (2.0 * math.pi * math.sqrt(v["L"] * v["C"]))
    return IdealFormulas(f0_hz=f0, q=v["R2"] / math.sqrt(v["L"] / v["C"]), gain=-v["R2"] / v["R1"])


TOPOLOGY = Topology(
    id="rlc-tank",
    title="Inverting amplifier with a parallel RLC tank",
    inverting=True,
    components=COMPONENTS,
    example=EXAMPLE,
    build=build,
    formulas=formulas,
    order=10,
    notes="Q and gain are set by resistors alone; needs an inductor, whose winding resistance lowers Q.",
)
