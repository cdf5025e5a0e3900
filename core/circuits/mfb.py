"""Multiple-feedback (Delyiannis–Friend) band-pass on one inverting op-amp (``mfb``).

Netlist: R1 from the input to node ``a``; R2 from ``a`` to ground; C1 from ``a`` to the inverting
input ``m``; C2 from ``a`` to the output; R3 from ``m`` to the output; the non-inverting input
grounded.

Notes
-----
With an ideal op-amp,

    H(s) = −(s/(R1·C2)) / (s² + s·(C1 + C2)/(R3·C1·C2) + (1/R1 + 1/R2)/(R3·C1·C2)),

so ``ω0 = √((1/R1 + 1/R2)/(R3·C1·C2))``, ``Q = ω0·R3·C1·C2/(C1 + C2)`` and the centre gain is
``H0 = −R3·C1/(R1·(C1 + C2))``.

References
----------
S. Franco, *Design with Operational Amplifiers and Analog Integrated Circuits*, 3rd ed.,
McGraw-Hill, ch. 3 (the multiple-feedback band-pass, labels mapped to ours).
"""

from __future__ import annotations

import math
from typing import Mapping

from ..netlist import Element, Netlist
from ..topology import Component, IdealFormulas, Topology

COMPONENTS = (
    Component("R1", "R", "input resistor; sets the centre gain"),
    Component("R2", "R", "shunt resistor to ground; tunes f0 without touching the gain"),
    Component("R3", "R", "feedback resistor; sets Q and bandwidth"),
    Component("C1", "C", "capacitor to the inverting input"),
    Component("C2", "C", "capacitor to the output"),
)

# A 2 kHz alarm-tone detector for a machine-room monitor (our own scenario): Q ≈ 5, gain ≈ −4.
EXAMPLE = {"R1": 10e3, "R2": 866.0, "R3": 82e3, "C1": 10e-9, "C2": 10e-9}


def build(v: Mapping[str, float]) -> Netlist:
    """Netlist of the multiple-feedback band-pass for validated part values (ohm, F)."""
    return Netlist(
        (
            Element("R1", "R", ("in", "a"), v["R1"]),
            Element("R2", "R", ("a", "0"), v["R2"]),
            Element("C1", "C", ("a", "m"), v["C1"]),
            Element("C2", "C", ("a", "out"), v["C2"]),
            Element("R3", "R", ("m", "out"), v["R3"]),
            Element("U1", "opamp", ("0", "m", "out")),
        )
    )


def formulas(v: Mapping[str, float]) -> IdealFormulas:
    """Textbook ideal figures."""
    r1, r2, r3, c1, c2 = (v[k] for k in ("R1", "R2", "R3", "C1", "C2"))
    w0 = math.sqrt((1.0 / r1 + 1.0 / r2) / (r3 * c1 * c2))
    return IdealFormulas(
        f0_hz=w0 / (2.0 * math.pi),
        q=w0 * r3 * c1 * c2 / (c1 + c2),
        gain=-r3 * c1 / (r1 * (c1 + c2)),
    )


TOPOLOGY = Topology(
    id="mfb",
    title="Multiple-feedback band-pass (Delyiannis–Friend)",
    inverting=True,
    components=COMPONENTS,
    example=EXAMPLE,
    build=build,
    formulas=formulas,
    order=20,
    notes="No inductor, low sensitivity; the centre gain is limited to below 2·Q² with equal capacitors.",
)
