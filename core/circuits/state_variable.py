"""Three-amplifier state-variable (KHN) filter at its band-pass output (``state-variable``).

Netlist: U1 is the summing amplifier — R1 from the input, R2 from the band-pass output ``out``
and R7 to ground meet at its non-inverting input ``p``; R5 from the low-pass output ``lp`` and
R6 from its own output ``hp`` (the high-pass output) meet at its inverting input ``n``. U2 is an
inverting integrator — R3 from ``hp`` to ``m2``, C1 from ``m2`` to ``out``. U3 is an inverting
integrator — R4 from ``out`` to ``m3``, C2 from ``m3`` to ``lp``.

Notes
-----
With ideal op-amps (derived by nodal analysis; checked with sympy in the tests), writing
``k = R6/R5``, ``τ1 = R3·C1``, ``τ2 = R4·C2`` and ``Gs = 1/R1 + 1/R2 + 1/R7``,

    H(s) = −(1 + k)·(1/(R1·Gs))·(s/τ1) / (s² + s·(1 + k)·(1/(R2·Gs))/τ1 + k/(τ1·τ2)),

so ``ω0 = √(k/(τ1·τ2))``, ``ω0/Q = (1 + k)/(R2·Gs·τ1)`` and the centre gain is ``−R2/R1``.

Design (``synthesize``): ``R5 = R6`` (k = 1), ``R3 = R4 = R = 1/(ω0·√(C1·C2))``; then
``R2·Gs = 2·Q·√(C2/C1)`` fixes R7 once R2/R1 = |H0| is chosen:

    1/R7 = (2·Q·√(C2/C1) − 1 − |H0|)/R2.

The gain is therefore tied to Q: it cannot exceed ``2·Q − 1`` with equal capacitors (R7 then
drops out); a larger gain needs an added gain stage, and the design says so. R1, R2 and R7 are
centred on R (their geometric mean equal to R), a resistor spread of about
``2Q − 1 − |H0|`` : 1.

References
----------
W. J. Kerwin, L. P. Huelsman and R. W. Newcomb, "State-variable synthesis for insensitive
integrated circuit transfer functions", IEEE J. Solid-State Circuits 2 (1967) (from memory). The
transfer function above is derived here, not copied.
"""

from __future__ import annotations

import math
from typing import Mapping

from bandsmith.circuits.scaled import Pair, synthesize_scaled
from bandsmith.circuits.synthesis import Exact, Infeasible, Spec
from bandsmith.circuits.topology import Component, IdealFormulas, Topology
from bandsmith.solver.netlist import Element, Netlist

COMPONENTS = (
    Component("R1", "R", "input resistor to the summer's + input; with R2 sets the centre gain (−R2/R1)"),
    Component("R2", "R", "band-pass feedback to the summer's + input; with R7 sets Q"),
    Component("R7", "R", "summer's + input to ground; sets Q for a given gain"),
    Component("R3", "R", "first integrator's resistor; tunes f0"),
    Component("R4", "R", "second integrator's resistor; tunes f0"),
    Component("C1", "C", "first integrator's capacitor (band-pass output)"),
    Component("C2", "C", "second integrator's capacitor (low-pass output)"),
    Component("R5", "R", "low-pass feedback to the summer's − input"),
    Component("R6", "R", "summer's feedback resistor (R6/R5 scales ω0²)"),
)

# A 3.2 kHz tachometer-pulse filter for a spindle monitor (our own scenario): Q ≈ 15, gain ≈ −2.
EXAMPLE = {"R1": 27e3, "R2": 54.9e3, "R7": 2.05e3, "R3": 10e3, "R4": 10e3, "C1": 4.99e-9, "C2": 4.99e-9, "R5": 10e3, "R6": 10e3}


# The op-amps, which carry no value: made once (an Element is immutable)
_U1 = Element("U1", "opamp", ("p", "n", "hp"))
_U2 = Element("U2", "opamp", ("0", "m2", "out"))
_U3 = Element("U3", "opamp", ("0", "m3", "lp"))


def build(v: Mapping[str, float]) -> Netlist:
    """Netlist of the state-variable band-pass for validated part values (ohm, F)."""
    return Netlist(
        (
            Element("R1", "R", ("in", "p"), v["R1"]),
            Element("R2", "R", ("out", "p"), v["R2"]),
            Element("R7", "R", ("p", "0"), v["R7"]),
            Element("R5", "R", ("lp", "n"), v["R5"]),
            Element("R6", "R", ("hp", "n"), v["R6"]),
            _U1,
            Element("R3", "R", ("hp", "m2"), v["R3"]),
            Element("C1", "C", ("m2", "out"), v["C1"]),
            _U2,
            Element("R4", "R", ("out", "m3"), v["R4"]),
            Element("C2", "C", ("m3", "lp"), v["C2"]),
            _U3,
        )
    )


def formulas(v: Mapping[str, float]) -> IdealFormulas:
    """Textbook ideal figures from the transfer function above."""
    k = v["R6"] / v["R5"]
    t1, t2 = v["R3"] * v["C1"], v["R4"] * v["C2"]
    gs = 1.0 / v["R1"] + 1.0 / v["R2"] + 1.0 / v["R7"]
    w0 = math.sqrt(k / (t1 * t2))
    return IdealFormulas(f0_hz=w0 / (2.0 * math.pi), q=w0 * v["R2"] * gs * t1 / (1.0 + k), gain=-v["R2"] / v["R1"])


def max_gain(spec: Spec) -> float:
    """The largest centre gain with equal capacitors and k = 1: ``2Q − 1``."""
    return 2.0 * spec.q - 1.0


def _unit(spec: Spec, c1: float, c2: float, ratio: float | None) -> dict[str, float]:
    k = ratio
    w = spec.w0
    r = math.sqrt(k) / (w * math.sqrt(c1 * c2))
    # ω0/Q = (1 + k)/(R2·Gs·R·C1), so R2·Gs = (1 + k)·Q/(ω0·R·C1)
    r2gs = (1.0 + k) * spec.q / (w * r * c1)
    most = r2gs - 1.0  # the largest centre gain these capacitors allow
    spare = most - spec.gain  # R2/R7
    if not spare > 0:
        tied = (f"the state-variable band-pass's centre gain is tied to Q: with these capacitors it reaches "
                f"at most {most:.4g} (2·Q − 1 = {2.0 * spec.q - 1.0:.4g} with equal capacitors), ")
        if not most > 0:  # no gain at all (Q of 0.5 or below with equal capacitors)
            raise Infeasible(tied + f"so at Q {spec.q:.4g} it gives no gain at all; choose another circuit")
        raise Infeasible(tied + f"and {spec.gain:.4g} was asked; design for gain {most:.4g} and add a gain stage of "
                         f"{spec.gain / most:.4g}, or choose another circuit")
    # R1 = R2/G, R7 = R2/spare: their geometric mean with R2 put at R
    r2 = r * (spec.gain * spare) ** (1.0 / 3.0)
    return {"R1": r2 / spec.gain, "R2": r2, "R7": r2 / spare, "R3": r, "R4": r, "C1": c1, "C2": c2}


def synthesize(spec: Spec, fixed: dict[str, float] | None = None, *, series: str = "E24") -> Exact:
    """Exact part values for a target (see the module notes); pinned parts keep their values.

    Raises
    ------
    Infeasible
        A gain of ``2Q − 1`` or more (the gain is tied to Q), or pins that leave no solution.
    """
    return synthesize_scaled(
        spec, fixed, series, name="state-variable", unit=_unit, ratio=lambda s: 1.0, pair=Pair("R5", "R6", "R3"),
        ratio_ok=lambda s, r: None if r > 0 else "the ratio must be positive",
        notes=(f"the centre gain is tied to Q: at most 2·Q − 1 = {max_gain(spec):.4g} here (R7 sets Q below that)",),
    )


TOPOLOGY = Topology(
    id="state-variable",
    title="State-variable (KHN) filter, band-pass output",
    inverting=True,
    components=COMPONENTS,
    example=EXAMPLE,
    build=build,
    formulas=formulas,
    synthesize=synthesize,
    order=50,
    notes=(
        "Three op-amps; f0 by R3/R4, Q by R7, resistor spread about 2Q : 1 at most. The centre gain is tied to Q "
        "(at most 2·Q − 1); above that add a gain stage."
    ),
)
