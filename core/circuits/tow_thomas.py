"""Tow–Thomas two-integrator loop at its band-pass output (``tow-thomas``).

Netlist: U1 is a lossy inverting integrator — R1 from the input to its inverting input ``m1``,
C1 and the damping resistor R2 from ``m1`` to its output ``out`` (the band-pass output), R3 from
the inverter's output ``v3`` back to ``m1``. U2 is an inverting integrator — R4 from ``out`` to
``m2``, C2 from ``m2`` to its output ``v2``. U3 is a unity inverter — R5 from ``v2`` to ``m3``,
R6 from ``m3`` to ``v3``. Every non-inverting input is grounded.

Notes
-----
With ideal op-amps (derived by nodal analysis; checked with sympy in the tests),

    H(s) = −(s/(R1·C1)) / (s² + s/(R2·C1) + R6/(R3·R4·R5·C1·C2)),

so ``ω0 = √(R6/(R3·R4·R5·C1·C2))``, ``Q = ω0·R2·C1`` and the centre gain is ``−R2/R1``: f0
(R3 or R4), Q (R2) and gain (R1) are set one at a time.

Design (``synthesize``): R5 = R6 (a unity inverter), ``R3 = R4 = R = 1/(ω0·√(C1·C2))``,
``R2 = Q/(ω0·C1)`` and ``R1 = R2/|H0|`` — with equal capacitors ``R2 = Q·R``: a resistor spread
of about Q : 1 (or |H0| : 1 where the gain exceeds Q). The capacitor level comes from the E6
series (see :mod:`bandsmith.circuits.scaled`).

Finite op-amps: the two integrators' phase errors add in the loop and Q rises by about
``4·Q·f0/GBW`` (first order in 1/GBW, derived), so a high-Q stage needs a GBW near
``4·Q·f0/tol_Q`` — the rule S. Franco, *Design with Operational Amplifiers and Analog Integrated
Circuits*, 3rd ed., McGraw-Hill, Example 6.9, applies to a biquad's Q.

References
----------
J. Tow, "Active RC filters — a state-space realization", Proc. IEEE 56 (1968); L. C. Thomas,
"The biquad: part I", IEEE Trans. Circuit Theory 18 (1971) (from memory). The transfer function
above is derived here, not copied.
"""

from __future__ import annotations

import math
from typing import Mapping

from bandsmith.circuits.scaled import Pair, synthesize_scaled
from bandsmith.circuits.synthesis import Exact, Spec
from bandsmith.circuits.topology import Component, IdealFormulas, Topology
from bandsmith.solver.netlist import Element, Netlist

COMPONENTS = (
    Component("R1", "R", "input resistor; sets the centre gain (−R2/R1)"),
    Component("R2", "R", "damping resistor across C1; sets Q (and bandwidth)"),
    Component("R3", "R", "loop resistor from the inverter back to the first integrator; tunes f0"),
    Component("R4", "R", "second integrator's resistor; tunes f0"),
    Component("C1", "C", "first (lossy) integrator's capacitor"),
    Component("C2", "C", "second integrator's capacitor"),
    Component("R5", "R", "inverter's input resistor"),
    Component("R6", "R", "inverter's feedback resistor (R6/R5 scales ω0²)"),
)

# A 6.4 kHz pilot-tone pick-off for a wired intercom (our own scenario): Q ≈ 25, gain ≈ −3.
EXAMPLE = {"R1": 82.5e3, "R2": 249e3, "R3": 10e3, "R4": 10e3, "C1": 2.49e-9, "C2": 2.49e-9, "R5": 10e3, "R6": 10e3}


def loop_formulas(v: Mapping[str, float]) -> IdealFormulas:
    """Ideal figures of the two-integrator loop (Tow–Thomas and Åkerberg–Mossberg alike)."""
    w0 = math.sqrt(v["R6"] / (v["R3"] * v["R4"] * v["R5"] * v["C1"] * v["C2"]))
    return IdealFormulas(f0_hz=w0 / (2.0 * math.pi), q=w0 * v["R2"] * v["C1"], gain=-v["R2"] / v["R1"])


def loop_unit(spec: Spec, c1: float, c2: float, ratio: float | None) -> dict[str, float]:
    """The loop's filter parts for capacitors c1, c2 (F) and inverter ratio R6/R5."""
    w = spec.w0
    r = math.sqrt(ratio) / (w * math.sqrt(c1 * c2))
    r2 = spec.q / (w * c1)
    return {"R1": r2 / spec.gain, "R2": r2, "R3": r, "R4": r, "C1": c1, "C2": c2}


# The two-integrator loops' shared design procedure (Topology.procedure): loop_synthesize names the
# circuit only in its messages.
LOOP_PROCEDURE = "two-integrator loop"


def loop_synthesize(spec: Spec, fixed, series: str, name: str) -> Exact:
    return synthesize_scaled(
        spec, fixed, series, name=name, unit=loop_unit, ratio=lambda s: 1.0, pair=Pair("R5", "R6", "R3"),
        ratio_ok=lambda s, r: None if r > 0 else "the ratio must be positive",
    )


# The op-amps, which carry no value: made once (an Element is immutable)
_U1 = Element("U1", "opamp", ("0", "m1", "out"))
_U2 = Element("U2", "opamp", ("0", "m2", "v2"))
# the inverter U3, its non-inverting input at ground (Tow–Thomas) or at m2 (Åkerberg–Mossberg)
_U3 = {plus: Element("U3", "opamp", (plus, "m3", "v3")) for plus in ("0", "m2")}


def loop_netlist(v: Mapping[str, float], inverter_plus: str) -> Netlist:
    """The two-integrator loop's netlist (Tow–Thomas and Åkerberg–Mossberg alike) for part values (ohm, F).

    ``inverter_plus`` is the node of the inverter U3's non-inverting input: ground (``"0"``) in
    the Tow–Thomas loop, the second integrator's summing node ``m2`` in the Åkerberg–Mossberg one.
    """
    return Netlist(
        (
            Element("R1", "R", ("in", "m1"), v["R1"]),
            Element("R2", "R", ("m1", "out"), v["R2"]),
            Element("C1", "C", ("m1", "out"), v["C1"]),
            Element("R3", "R", ("v3", "m1"), v["R3"]),
            _U1,
            Element("R4", "R", ("out", "m2"), v["R4"]),
            Element("C2", "C", ("m2", "v2"), v["C2"]),
            _U2,
            Element("R5", "R", ("v2", "m3"), v["R5"]),
            Element("R6", "R", ("m3", "v3"), v["R6"]),
            _U3[inverter_plus] if inverter_plus in _U3 else Element("U3", "opamp", (inverter_plus, "m3", "v3")),
        )
    )


def build(v: Mapping[str, float]) -> Netlist:
    """Netlist of the Tow–Thomas band-pass for validated part values (ohm, F)."""
    return loop_netlist(v, "0")


def synthesize(spec: Spec, fixed: dict[str, float] | None = None, *, series: str = "E24") -> Exact:
    """Exact part values for a target (see the module notes); pinned parts keep their values.

    Raises
    ------
    Infeasible
        Pins that leave no solution.
    """
    return loop_synthesize(spec, fixed, series, "Tow–Thomas")


TOPOLOGY = Topology(
    id="tow-thomas",
    title="Tow–Thomas two-integrator loop (band-pass output)",
    inverting=True,
    components=COMPONENTS,
    example=EXAMPLE,
    build=build,
    formulas=loop_formulas,
    synthesize=synthesize,
    order=60,
    procedure=LOOP_PROCEDURE,
    notes=(
        "Three op-amps; f0, Q and gain set one at a time (R3/R4, R2, R1), resistor spread about Q : 1. "
        "Q rises with finite op-amp GBW (about 4·Q·f0/GBW)."
    ),
)
