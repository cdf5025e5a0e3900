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

Design (``synthesize``). Once f0, Q and the gain are set, one choice is left: the impedance level,
the tank's characteristic impedance ``Z = √(L/C) = 1/(ω0·C)``. Then

    L = 1/(ω0²·C),   R2 = Q·Z,   R1 = R2/|gain|.

Unpinned, C comes from the E6 series at the level that puts the inductor best in 10 µH–100 mH
(it is the part hardest to buy, so it counts twice), C in 100 pF–1 µF and the resistors in
1 kΩ–1 MΩ. Pinning one of R1, R2, L or C sets the level instead; a second pin over-determines it.

A pinned winding resistance ``RL`` lowers the inductor's own quality factor to ``Q_L = ω0·L/RL``.
Near f0 the lossy inductor behaves as ``L·(1 + 1/Q_L²)`` in parallel with
``RL·(1 + Q_L²) ≈ (ω0·L)²/RL``, so R2 is raised until ``R2 ∥ RL·(1 + Q_L²) = Q·Z`` and L lowered by
``1 + 1/Q_L²``; because the winding also adds a zero, the three free parts are then refined on
the measured response until f0, Q and the gain meet the target. A target Q at or above ``Q_L``
cannot be reached with that winding.
"""

from __future__ import annotations

import math
from typing import Mapping

from bandsmith.solver.netlist import Element, Netlist
from bandsmith.circuits.synthesis import Exact, Infeasible, Spec, choose_level, refine_measured
from bandsmith.circuits.topology import Component, IdealFormulas, Topology
from bandsmith.common.values import format_value

COMPONENTS = (
    Component("R1", "R", "input resistor; sets the centre gain with R2"),
    Component("R2", "R", "tank damping resistor; sets Q and the centre gain"),
    Component("L", "L", "tank inductor; sets f0 with C"),
    Component("C", "C", "tank capacitor; sets f0 with L"),
    Component("RL", "R", "inductor winding (series) resistance; lowers Q", required=False, default=0.0),
)

# A 10.7 kHz pilot-tone pick-off for a bench receiver (our own scenario): Q ≈ 10, gain ≈ −2.
EXAMPLE = {"R1": 3300.0, "R2": 6800.0, "L": 0.01, "C": 22e-9, "RL": 0.0}


# The op-amps, which carry no value: made once (an Element is immutable)
_U1 = Element("U1", "opamp", ("0", "n1", "out"))


def build(v: Mapping[str, float]) -> Netlist:
    """Netlist of the tank band-pass for validated part values (ohm, H, F)."""
    return Netlist(
        (
            Element("R1", "R", ("in", "n1"), v["R1"]),
            Element("R2", "R", ("n1", "out"), v["R2"]),
            Element("L", "L", ("n1", "out"), v["L"], series_resistance=v.get("RL", 0.0), series_ref="RL"),
            Element("C", "C", ("n1", "out"), v["C"]),
            _U1,
        )
    )


def formulas(v: Mapping[str, float]) -> IdealFormulas:
    """Textbook ideal figures (the winding resistance ignored)."""
    f0 = 1.0 / (2.0 * math.pi * math.sqrt(v["L"] * v["C"]))
    return IdealFormulas(f0_hz=f0, q=v["R2"] / math.sqrt(v["L"] / v["C"]), gain=-v["R2"] / v["R1"])


def _from_c(spec: Spec, c: float) -> dict[str, float]:
    z = 1.0 / (spec.w0 * c)
    r2 = spec.q * z
    return {"R1": r2 / spec.gain, "R2": r2, "L": z / spec.w0, "C": c}


def synthesize(spec: Spec, fixed: dict[str, float] | None = None, *, series: str = "E24") -> Exact:
    """Exact part values for a target (see the module notes); pinned parts keep their values.

    ``series`` is the one the parts will be chosen from (the capacitor level is taken in it).

    Raises
    ------
    Infeasible
        Two or more of R1, R2, L, C pinned, or a winding resistance that makes the Q unreachable.
    """
    fixed = dict(fixed or {})
    rl = float(fixed.pop("RL", 0.0))
    if len(fixed) > 1:
        raise Infeasible(
            f"once f0, Q and the gain are set the tank has one free choice, its impedance level; "
            f"{' and '.join(sorted(fixed))} are both pinned — pin only one of R1, R2, L, C"
        )
    notes = []
    if not fixed:
        c = choose_level(_from_c(spec, 1.0), {"R1": "R", "R2": "R", "L": "L", "C": "C"}, "C", series)
        values = _from_c(spec, c)
        notes.append(
            f"impedance level: C = {format_value(c, 'F')} (√(L/C) = {format_value(1.0 / (spec.w0 * c), 'Ω')}) chosen so that "
            f"the inductor, the capacitor and the resistors sit best in what is commonly stocked; pin a part with --fix to set another level"
        )
    else:
        (ref, v), = fixed.items()
        z = {"C": lambda: 1.0 / (spec.w0 * v), "L": lambda: spec.w0 * v, "R2": lambda: v / spec.q, "R1": lambda: v * spec.gain / spec.q}[ref]()
        values = _from_c(spec, 1.0 / (spec.w0 * z))
        values[ref] = v
        notes.append(f"{ref} pinned; it sets the impedance level √(L/C) = {format_value(z, 'Ω')}")
    if rl > 0:
        values = _with_winding(spec, values, rl, pinned=next(iter(fixed), None))
        ql = spec.w0 * values["L"] / rl
        notes.append(
            f"the free parts make up for the winding resistance RL = {format_value(rl, 'Ω')} (the inductor's own Q at f0 is "
            f"{ql:.4g}; its parallel equivalent ≈ (ω0·L)²/RL = {format_value(rl * (1 + ql * ql), 'Ω')}), refined on the measured response"
        )
    values["RL"] = rl
    if rl > 0:
        free = [r for r in ("R1", "R2", "L", "C") if r not in fixed]
        if not fixed:
            free.remove("C")  # the chosen capacitor level stays a standard value
        values = refine_measured(TOPOLOGY, values, free, spec)
    return Exact(values, notes)


def _with_winding(spec: Spec, values: dict[str, float], rl: float, pinned: str | None) -> dict[str, float]:
    """A first design with the winding resistance taken into account (refined afterwards)."""
    v = dict(values)
    ql = spec.w0 * v["L"] / rl
    if spec.q >= ql * (1.0 - 1e-9):
        raise Infeasible(
            f"the inductor's own Q at f0, ω0·L/RL = {ql:.4g}, is not above the target Q of {spec.q:.4g}; "
            f"no R2 can reach it — use an inductor with less winding resistance, a larger L, or a lower Q"
        )
    z = math.sqrt(v["L"] / v["C"])
    rp = rl * (1.0 + ql * ql)
    g2 = 1.0 / (spec.q * z) - 1.0 / rp
    if g2 <= 0:
        raise Infeasible(f"the winding's loss alone, RL = {format_value(rl, 'Ω')}, already damps the tank below Q {spec.q:.4g}")
    if pinned != "R2":
        v["R2"] = 1.0 / g2
    if pinned != "L":
        v["L"] = v["L"] / (1.0 + 1.0 / (ql * ql))
    if pinned != "R1":
        v["R1"] = (1.0 / (1.0 / v["R2"] + 1.0 / rp)) / spec.gain
    return v


TOPOLOGY = Topology(
    id="rlc-tank",
    title="Inverting amplifier with a parallel RLC tank",
    inverting=True,
    components=COMPONENTS,
    example=EXAMPLE,
    build=build,
    formulas=formulas,
    synthesize=synthesize,
    order=10,
    notes="Q and gain are set by resistors alone; needs an inductor, whose winding resistance lowers Q.",
)
