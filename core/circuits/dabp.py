"""Dual-amplifier band-pass (``dabp``): a parallel tank whose inductor is simulated by two op-amps.

Netlist: R1 from the input to the tank node ``n``, R2 and C1 from ``n`` to ground; from ``n`` a
chain R3 → U1's output ``v1`` → C2 → ``p`` → R4 → U2's output ``out`` → R5 → ``q`` → R6 → ground.
U1 has its non-inverting input on ``q`` and its inverting input on ``n``; U2 its non-inverting
input on ``n`` and its inverting input on ``p``. Both op-amps hold ``n``, ``p`` and ``q`` at one
voltage, so the chain looks from ``n`` like an inductor ``L = C2·R3·R4·R6/R5`` to ground, and
``out = (1 + R5/R6)·V(n)``.

Notes
-----
With ideal op-amps (derived by nodal analysis; checked with sympy in the tests), with
``K = 1 + R5/R6`` and ``Rp = R1·R2/(R1 + R2)``,

    H(s) = K·(s/(R1·C1)) / (s² + s/(Rp·C1) + R5/(R3·R4·R6·C1·C2)),

so ``ω0 = √(R5/(R3·R4·R6·C1·C2))``, ``Q = ω0·Rp·C1`` and the centre gain is
``+K·R2/(R1 + R2)``. With R2 left out and R5 = R6 this is the classical dual-amplifier band-pass
of gain 2 and ``Q = R1/R`` (equal R3, R4 and capacitors): from memory, after A. S. Sedra and
J. L. Espinoza, "Sensitivity and frequency limitations of biquadratic active filters", IEEE
Trans. Circuits and Systems 22 (1975); the divider R1–R2 and the ratio R5/R6 are our way of
setting any gain.

Design (``synthesize``): ``K = max(2, 2·|H0|)`` — the divider then halves the input for gains
of 1 and more — ``R3 = R4 = √(K − 1)/(ω0·√(C1·C2))``, ``Rp = Q/(ω0·C1)``, ``R1 = K·Rp/|H0|``,
``R2 = K·Rp/(K − |H0|)`` and ``R5 = (K − 1)·R6`` with R6 at ``1/(ω0·√(C1·C2))``. The centre gain
is free; with equal capacitors the resistor spread is at most about ``2Q`` : 1. Of the ways to
connect the two op-amps' inputs to ``n``, ``p`` and ``q`` that give this ideal response, the one
above is stable with finite op-amps and needs the least GBW (checked here by nodal analysis):
about half that of the Tow–Thomas loop at the same target, and nearly independent of K.
"""

from __future__ import annotations

import math
from typing import Mapping

from bandsmith.circuits.scaled import Pair, synthesize_scaled
from bandsmith.circuits.synthesis import Exact, Spec
from bandsmith.circuits.topology import Component, IdealFormulas, Topology
from bandsmith.solver.netlist import Element, Netlist

COMPONENTS = (
    Component("R1", "R", "input resistor; with R2 sets Q and divides the input"),
    Component("R2", "R", "tank node to ground; with R1 sets Q and the gain"),
    Component("C1", "C", "tank capacitor to ground"),
    Component("R3", "R", "simulated inductor's first resistor; tunes f0"),
    Component("C2", "C", "simulated inductor's capacitor"),
    Component("R4", "R", "simulated inductor's second resistor; tunes f0"),
    Component("R5", "R", "output amplifier's feedback resistor (K = 1 + R5/R6)"),
    Component("R6", "R", "output amplifier's resistor to ground (K = 1 + R5/R6)"),
)

# A 1.2 kHz tone-burst receiver for a pipeline leak sensor (our own scenario): Q ≈ 12, gain ≈ +1.
EXAMPLE = {"R1": 316e3, "R2": 324e3, "C1": 10e-9, "R3": 13e3, "C2": 10e-9, "R4": 13.3e3, "R5": 13e3, "R6": 13.3e3}


# The op-amps, which carry no value: made once (an Element is immutable)
_U1 = Element("U1", "opamp", ("q", "n", "v1"))
_U2 = Element("U2", "opamp", ("n", "p", "out"))


def build(v: Mapping[str, float]) -> Netlist:
    """Netlist of the dual-amplifier band-pass for validated part values (ohm, F)."""
    return Netlist(
        (
            Element("R1", "R", ("in", "n"), v["R1"]),
            Element("R2", "R", ("n", "0"), v["R2"]),
            Element("C1", "C", ("n", "0"), v["C1"]),
            Element("R3", "R", ("n", "v1"), v["R3"]),
            Element("C2", "C", ("v1", "p"), v["C2"]),
            Element("R4", "R", ("p", "out"), v["R4"]),
            Element("R5", "R", ("out", "q"), v["R5"]),
            Element("R6", "R", ("q", "0"), v["R6"]),
            _U1,
            _U2,
        )
    )


def formulas(v: Mapping[str, float]) -> IdealFormulas:
    """Textbook ideal figures from the transfer function above."""
    k = 1.0 + v["R5"] / v["R6"]
    rp = v["R1"] * v["R2"] / (v["R1"] + v["R2"])
    w0 = math.sqrt(v["R5"] / (v["R3"] * v["R4"] * v["R6"] * v["C1"] * v["C2"]))
    return IdealFormulas(f0_hz=w0 / (2.0 * math.pi), q=w0 * rp * v["C1"], gain=k * v["R2"] / (v["R1"] + v["R2"]))


def gain_k(spec: Spec) -> float:
    """The output amplifier's gain K the design uses: ``max(2, 2·|H0|)``."""
    return max(2.0, 2.0 * spec.gain)


def _unit(spec: Spec, c1: float, c2: float, ratio: float | None) -> dict[str, float]:
    k = 1.0 + ratio
    w = spec.w0
    r = math.sqrt(k - 1.0) / (w * math.sqrt(c1 * c2))
    rp = spec.q / (w * c1)
    return {"R1": k * rp / spec.gain, "R2": k * rp / (k - spec.gain), "C1": c1, "R3": r, "C2": c2, "R4": r}


def synthesize(spec: Spec, fixed: dict[str, float] | None = None, *, series: str = "E24") -> Exact:
    """Exact part values for a target (see the module notes); pinned parts keep their values.

    Raises
    ------
    Infeasible
        R5 and R6 both pinned with ``1 + R5/R6`` at or below the gain, or pins that leave no solution.
    """
    return synthesize_scaled(
        spec, fixed, series, name="dual-amplifier", unit=_unit, ratio=lambda s: gain_k(s) - 1.0,
        pair=Pair("R6", "R5", "R3"),
        ratio_ok=lambda s, r: None if 1.0 + r > s.gain else f"the gain 1 + R5/R6 must exceed the centre gain {s.gain:.4g}",
    )


TOPOLOGY = Topology(
    id="dabp",
    title="Dual-amplifier band-pass (simulated-inductor tank)",
    inverting=False,
    components=COMPONENTS,
    example=EXAMPLE,
    build=build,
    formulas=formulas,
    synthesize=synthesize,
    order=40,
    notes=(
        "Two op-amps; Q by the input divider R1 ∥ R2, gain set independently (K = 1 + R5/R6 and the divider), "
        "resistor spread about 2Q : 1; low sensitivity to the op-amps."
    ),
)
