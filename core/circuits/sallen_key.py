"""Sallen–Key band-pass around a non-inverting amplifier of gain K (``sallen-key``).

Netlist (the variant with the shunt capacitor at node ``a``): R1 from the input to ``a``; C1 from
``a`` to ground; R2 from ``a`` to the output (positive feedback); C2 from ``a`` to the
non-inverting input ``b``; R3 from ``b`` to ground. The amplifier's gain resistors are in the
netlist: RA from the inverting input ``m`` to ground, RB from the output to ``m``, so that
``K = 1 + RB/RA`` and a finite op-amp acts on them too.

Notes
-----
With an ideal op-amp,

    H(s) = (K·s/(R1·C1)) / (s² + s·[1/(R1·C1) + (1−K)/(R2·C1) + 1/(R3·C1) + 1/(R3·C2)]
                            + (R1 + R2)/(R1·R2·R3·C1·C2)).

With all resistors equal to R and both capacitors equal to C: ``ω0 = √2/(RC)``,
``Q = √2/(4 − K)``, centre gain ``K/(4 − K)``; the circuit is unstable for ``K ≥ 4``.

References
----------
S. Franco, *Design with Operational Amplifiers and Analog Integrated Circuits*, 3rd ed.,
McGraw-Hill, ch. 3 (the Sallen–Key band-pass, labels mapped to ours).
"""

from __future__ import annotations

import math
from typing import Mapping

from ..netlist import Element, Netlist
from ..topology import Component, IdealFormulas, Topology

COMPONENTS = (
    Component("R1", "R", "input resistor"),
    Component("R2", "R", "positive-feedback resistor from the output"),
    Component("R3", "R", "resistor from the non-inverting input to ground"),
    Component("C1", "C", "shunt capacitor to ground"),
    Component("C2", "C", "series capacitor to the non-inverting input"),
    Component("RA", "R", "amplifier gain resistor to ground (K = 1 + RB/RA)"),
    Component("RB", "R", "amplifier feedback resistor (K = 1 + RB/RA)"),
)

# A 500 Hz hum-band probe for a vibration logger (our own scenario): Q ≈ 1.8, gain ≈ +4.
EXAMPLE = {"R1": 4530.0, "R2": 4530.0, "R3": 4530.0, "C1": 100e-9, "C2": 100e-9, "RA": 10e3, "RB": 22.1e3}


def build(v: Mapping[str, float]) -> Netlist:
    """Netlist of the Sallen–Key band-pass for validated part values (ohm, F)."""
    return Netlist(
        (
            Element("R1", "R", ("in", "a"), v["R1"]),
            Element("C1", "C", ("a", "0"), v["C1"]),
            Element("R2", "R", ("a", "out"), v["R2"]),
            Element("C2", "C", ("a", "b"), v["C2"]),
            Element("R3", "R", ("b", "0"), v["R3"]),
            Element("RA", "R", ("m", "0"), v["RA"]),
            Element("RB", "R", ("out", "m"), v["RB"]),
            Element("U1", "opamp", ("b", "m", "out")),
        )
    )


def formulas(v: Mapping[str, float]) -> IdealFormulas:
    """Textbook ideal figures from the transfer function above."""
    r1, r2, r3, c1, c2 = (v[k] for k in ("R1", "R2", "R3", "C1", "C2"))
    k = 1.0 + v["RB"] / v["RA"]
    a1 = 1.0 / (r1 * c1) + (1.0 - k) / (r2 * c1) + 1.0 / (r3 * c1) + 1.0 / (r3 * c2)
    w0 = math.sqrt((r1 + r2) / (r1 * r2 * r3 * c1 * c2))
    q = w0 / a1 if a1 > 0 else math.inf
    return IdealFormulas(f0_hz=w0 / (2.0 * math.pi), q=q, gain=(k / (r1 * c1)) / a1 if a1 > 0 else math.inf)


TOPOLOGY = Topology(
    id="sallen-key",
    title="Sallen–Key band-pass (non-inverting, gain K)",
    inverting=False,
    components=COMPONENTS,
    example=EXAMPLE,
    build=build,
    formulas=formulas,
    order=30,
    notes="Non-inverting; Q rises steeply as K nears 4, so high-Q stages need tight gain resistors.",
)
