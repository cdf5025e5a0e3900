"""Åkerberg–Mossberg two-integrator loop at its band-pass output (``akerberg-mossberg``).

Netlist: as the Tow–Thomas loop (:mod:`bandsmith.circuits.tow_thomas`) — U1 the lossy inverting
integrator (R1 in, R2 and C1 across it, R3 back from ``v3``), U2 the inverting integrator (R4
from ``out`` to ``m2``, C2 from ``m2`` to ``v2``), U3 the inverter (R5 from ``v2`` to ``m3``, R6
from ``m3`` to ``v3``) — except that the inverter's non-inverting input sits on the second
integrator's summing node ``m2`` instead of ground. Ideally ``m2`` is a virtual ground and nothing
changes; with real op-amps U2's error voltage at ``m2`` is fed forward through U3 and cancels most
of the loop's phase error, so Q rises far less with finite GBW than in the Tow–Thomas loop.

Notes
-----
With ideal op-amps the transfer function is the Tow–Thomas one (derived by nodal analysis; checked
with sympy in the tests):

    H(s) = −(s/(R1·C1)) / (s² + s/(R2·C1) + R6/(R3·R4·R5·C1·C2)),

``ω0 = √(R6/(R3·R4·R5·C1·C2))``, ``Q = ω0·R2·C1``, centre gain ``−R2/R1``; the design is the
Tow–Thomas one (equal capacitors, ``R3 = R4 = R5 = R6 = R``, ``R2 = Q·R``, ``R1 = R2/|H0|``),
a resistor spread of about Q : 1.

References
----------
D. Åkerberg and K. Mossberg, "A versatile active RC building block with inherent compensation for
the finite bandwidth of the amplifier", IEEE Trans. Circuits and Systems 21 (1974) (from memory).
The circuit's placement of the inverter's input was confirmed here by nodal analysis: of the
ways to connect the second integrator and inverter that give the ideal loop, this one is stable
and needs about half the GBW of the Tow–Thomas loop.
"""

from __future__ import annotations

from typing import Mapping

from bandsmith.circuits.synthesis import Exact, Spec
from bandsmith.circuits.topology import Topology
from bandsmith.circuits.tow_thomas import COMPONENTS, LOOP_PROCEDURE, loop_formulas, loop_netlist, loop_synthesize
from bandsmith.solver.netlist import Netlist

# the same parts and roles as the Tow–Thomas loop: only where the inverter's + input goes differs

# A 4.5 kHz carrier pick-off for a power-line data probe (our own scenario): Q ≈ 30, gain ≈ −5.
EXAMPLE = {"R1": 21e3, "R2": 105e3, "R3": 3.48e3, "R4": 3.48e3, "C1": 10e-9, "C2": 10e-9, "R5": 3.57e3, "R6": 3.48e3}


def build(v: Mapping[str, float]) -> Netlist:
    """Netlist of the Åkerberg–Mossberg band-pass for validated part values (ohm, F)."""
    return loop_netlist(v, "m2")


def synthesize(spec: Spec, fixed: dict[str, float] | None = None, *, series: str = "E24") -> Exact:
    """Exact part values for a target (the Tow–Thomas design); pinned parts keep their values."""
    return loop_synthesize(spec, fixed, series, "Åkerberg–Mossberg")


TOPOLOGY = Topology(
    id="akerberg-mossberg",
    title="Åkerberg–Mossberg two-integrator loop (band-pass output)",
    inverting=True,
    components=COMPONENTS,
    example=EXAMPLE,
    build=build,
    formulas=loop_formulas,
    synthesize=synthesize,
    order=70,
    procedure=LOOP_PROCEDURE,
    notes=(
        "Three op-amps; the Tow–Thomas loop with the inverter's + input on the second integrator's summing "
        "node, which cancels most of the op-amps' phase error: about half the GBW of the Tow–Thomas loop."
    ),
)
